"""RV visits at the orbital phases a catalogue row asks for (columns rv_phases, rv_phase_tol).

Reference system: HAT-P-2 b, Pal et al. 2010, MNRAS 401, 2665 (abstract): transit epoch
Tc = 2454387.49375 BJD_TDB, P = 5.6334729 d, e = 0.5171, omega = 185.22 deg (the star's omega);
the coordinates are those tests/test_coverage.py uses (RA 245.15 deg, Dec +41.05 deg). The time of
periastron comes from radvel (Fulton et al. 2018, PASP 130, 044504: ``radvel.orbit.
timetrans_to_timeperi``), true anomalies from ``radvel.orbit.true_anomaly``, and UTC -> BJD_TDB
from astropy's ``Time.light_travel_time`` for a geocentric observer. A wanted phase is a
mean-anomaly phase after periastron, frac((t - Tp) / P), the convention of phase coverage; its
window is the set of times whose phase lies within the tolerance of it, found here by a dense
evaluation of that phase from radvel's Tp.
"""

from __future__ import annotations

import datetime as dt

import astropy.units as u
import numpy as np
import pytest
import radvel
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

import planner
from planner.errors import InputErrors
from planner.inputs.catalogue import parse_catalogue
from planner.inputs.observation_log import parse_log
from planner.orbits.events import predict_events
from planner.outputs import sheets
from planner.outputs.log_template import log_template_frame
from planner.scheduling.phase_requests import phase_event_name, wanted_phase_events
from site_files import TEST_RIDGE

P, TC, E, W_DEG = 5.6334729, 2454387.49375, 0.5171, 185.22
RA, DEC = 245.15, 41.05
TP = radvel.orbit.timetrans_to_timeperi(TC, P, E, np.radians(W_DEG))
#: Instance times agree with radvel's Tp + P (n + phase) to 1e-6 d (0.09 s): radvel solves for Tp
#: to about 1e-8 d (tests/test_coverage.py), and 3,000 orbits of float64 arithmetic add 1e-9 d.
TIME_TOL_D = 1e-6
#: Step of the dense evaluation of the phase (days, 4.3 s): window edges agree to one step.
GRID_STEP_D = 5e-5
#: Block edges are compared in UTC after astropy's light time: 1 s covers the planner's
#: interpolated light time and the bisection of interval edges (0.05 s).
EDGE_TOL_D = 1.0 / 86400.0
SITE = TEST_RIDGE
#: A night of late May 2027, when HAT-P-2 culminates near midnight at the test site.
NIGHT = dt.date(2027, 5, 24)


def hatp2(phases="0.25;0.9", tol="", errors="", events=""):
    head = "name,ra,dec,period_d,e,omega_deg,tc,k_ms,events,rv_phases,rv_phase_tol"
    row = f"HAT-P-2 b,{RA},{DEC},{P},{E},{W_DEG},{TC},983.9,{events},{phases},{tol}"
    if errors:
        head, row = head + ",period_err_d,tc_err_d,e_err,omega_err_deg", row + "," + errors
    return parse_catalogue(f"{head}\n{row}\n", "cat.csv")


def mean_phase_of(t_bjd):
    """Mean-anomaly phase after radvel's periastron of BJD_TDB times."""
    return np.mod((np.asarray(t_bjd, float) - TP) / P, 1.0)


def utc_to_bjd(jd_utc):
    """BJD_TDB of UTC Julian dates seen from the geocentre (astropy)."""
    t = Time(np.asarray(jd_utc, float), format="jd", scale="utc", location=EarthLocation.from_geocentric(0, 0, 0, u.m))
    return (t.tdb + t.light_travel_time(SkyCoord(RA * u.deg, DEC * u.deg))).jd


def runs(mask, t):
    """(start, end) times of each run of True in ``mask`` over the grid ``t``."""
    edges = np.flatnonzero(np.diff(mask.astype(int)))
    starts = [t[0]] if mask[0] else []
    ends = []
    for k in edges:
        (starts if mask[k + 1] else ends).append(t[k + 1] if mask[k + 1] else t[k])
    if mask[-1]:
        ends.append(t[-1])
    return np.array(starts), np.array(ends)


def test_windows_are_the_times_whose_mean_anomaly_is_within_the_tolerance():
    targets = hatp2(tol="0.03")
    start, end = 2461180.0, 2461215.0
    ev = wanted_phase_events(targets, start, end)
    t = np.arange(start - 0.5, end + 0.5, GRID_STEP_D)
    for phase in (0.25, 0.9):
        mine = ev[ev["event"] == phase_event_name(phase)]
        dist = np.abs(np.mod(mean_phase_of(t) - phase + 0.5, 1.0) - 0.5)  # circular distance in phase
        lo, hi = runs(dist <= 0.03, t)
        keep = (hi >= start) & (lo < end)  # windows reaching into the span
        assert len(mine) == keep.sum() == 6
        half = 0.03 * P
        assert np.all(np.abs((mine["bjd_tdb"] - half).to_numpy() - lo[keep]) <= GRID_STEP_D)
        assert np.all(np.abs((mine["bjd_tdb"] + half).to_numpy() - hi[keep]) <= GRID_STEP_D)
        n = np.rint((mine["bjd_tdb"].to_numpy() - TP) / P - phase)
        assert np.all(np.abs(mine["bjd_tdb"].to_numpy() - (TP + P * (n + phase))) <= TIME_TOL_D)
        assert np.allclose(mine["duration_d"], 2 * half) and (mine["label"] == f"phase {phase:g}").all()


def test_a_wanted_phase_is_mean_anomaly_not_true_anomaly():
    # the transit of Pal et al. sits at radvel's mean-anomaly phase of Tc: a wanted phase equal to
    # it falls on the published transits Tc + n P, where radvel's true anomaly is 90 deg - omega
    phase_tc = float(np.mod((TC - TP) / P, 1.0))
    ev = wanted_phase_events(hatp2(phases=f"{phase_tc:.6f};0.25"), 2461180.0, 2461215.0)
    at_tc = ev[ev["event"] == phase_event_name(phase_tc)]["bjd_tdb"].to_numpy()
    n = np.rint((at_tc - TC) / P)
    assert np.all(np.abs(at_tc - (TC + n * P)) <= 1e-6 * P + TIME_TOL_D)  # the phase is printed to 1e-6
    nu = radvel.orbit.true_anomaly(at_tc, TP, P, E)
    assert np.all(np.abs(np.mod(nu - np.radians(90.0 - W_DEG) + np.pi, 2 * np.pi) - np.pi) <= 1e-4)
    # phase 0.25 is a quarter of the orbit's time after periastron: for e = 0.52 radvel's true
    # anomaly there is 141.5 deg, far past 90 deg, as the star sweeps fast through periastron
    quarter = ev[ev["event"] == "phase_0.25"]["bjd_tdb"].to_numpy()
    nu_q = np.degrees(radvel.orbit.true_anomaly(quarter, TP, P, E))
    big_e = 2 * np.arctan(np.sqrt((1 - E) / (1 + E)) * np.tan(np.radians(nu_q) / 2))
    assert np.allclose(np.mod(big_e - E * np.sin(big_e), 2 * np.pi), np.pi / 2, atol=1e-7)
    assert np.all(nu_q > 130.0)


def test_uncertainty_is_the_periastron_uncertainty_carried_to_the_phase():
    # a periastron epoch: linear propagation of Tp and P only, sigma^2 = sigma_T^2 + (x sigma_P)^2
    # with x the orbits since the epoch (the variance of a sum of independent terms, e.g.
    # Bevington & Robinson, Data Reduction and Error Analysis, 3rd ed. 2003, ch. 3; the chapter
    # is cited from memory)
    cat = parse_catalogue("name,ra,dec,period_d,period_err_d,e,omega_deg,tp,tp_err_d,k_ms,rv_phases\n"
                          f"HAT-P-2 b,{RA},{DEC},{P},0.0000061,{E},{W_DEG},{TP:.6f},0.0021,983.9,0.4\n", "cat.csv")
    ev = wanted_phase_events(cat, 2461180.0, 2461215.0)
    x = (ev["bjd_tdb"].to_numpy() - cat["epoch_bjd_tdb"][0]) / P
    assert np.allclose(ev["sigma_d"], np.hypot(0.0021, x * 0.0000061), rtol=1e-12)
    assert np.all(np.floor(x + 1e-9) == ev["cycle"])
    # a Tc epoch with e and omega errors: at phase 0 the instances are the periastron passages
    # and carry the events engine's periastron uncertainty (the same seeded spread)
    cat = hatp2(phases="0", errors="0.0000061,0.00074,0.0033,0.95")
    ev = wanted_phase_events(cat, 2461180.0, 2461215.0)
    peri = predict_events(cat, 2461180.0 - P, 2461215.0 + P, kinds=["periastron"])
    peri = peri[np.isin(np.round(peri["bjd_tdb"], 6), np.round(ev["bjd_tdb"], 6))]
    assert len(peri) == len(ev) == 6
    assert np.allclose(peri["sigma_d"].to_numpy(), ev["sigma_d"].to_numpy(), rtol=1e-9)
    assert (peri["cycle"].to_numpy() == ev["cycle"].to_numpy()).all()


@pytest.fixture(scope="module")
def week(tmp_path_factory):
    """A one-night plan whose wanted phase has an instance mid-darkness, another at noon."""
    path = tmp_path_factory.mktemp("site") / "site.toml"
    path.write_text(SITE)
    site = planner.read_site(path)
    night = planner.night_table(site, NIGHT, 1).iloc[0]
    mid_bjd = float(utc_to_bjd([0.5 * (night["dark_start_jd_utc"] + night["dark_end_jd_utc"])])[0])
    dark = round(float(mean_phase_of(mid_bjd)), 3)
    day = round(dark + 0.45 / P, 3)  # 10.8 h later: late morning, the window in daylight
    # periastron only besides the phases (an RV maximum's window would share the visit)
    targets = hatp2(phases=f"{dark};{day}", events="periastron")
    return site, targets, dark, day, planner.make_plan(targets, site, NIGHT, 1)


def test_a_wanted_phase_in_the_night_gets_one_visit_inside_its_window(week):
    site, targets, dark, day, plan = week
    mine = plan.schedule[plan.schedule["event"] == phase_event_name(dark)]
    assert len(mine) == 1
    b = mine.iloc[0]
    assert b["request"] == "rv_visit" and b["label"] == f"phase {dark:g}"
    assert abs((b["end_jd_utc"] - b["start_jd_utc"]) - 0.5 / 24) <= EDGE_TOL_D  # default visit_h 0.5 h
    # the whole visit at mean-anomaly phases within 0.02 (the default tolerance) of the wanted one
    # (no element errors: the window is not widened)
    edges = utc_to_bjd([b["start_jd_utc"], b["end_jd_utc"]])
    dist = np.abs(np.mod(mean_phase_of(edges) - dark + 0.5, 1.0) - 0.5)
    assert np.all(dist <= 0.02 + EDGE_TOL_D / P)
    # the solver may move it over the window's observable stretch
    lo, hi = b["earliest_start_jd_utc"], b["latest_start_jd_utc"]
    span = utc_to_bjd([lo, hi + 0.5 / 24])
    assert np.all(np.abs(np.mod(mean_phase_of(span) - dark + 0.5, 1.0) - 0.5) <= 0.02 + EDGE_TOL_D / P)
    assert hi - lo > 1.0 / 24
    text = sheets.action(b)
    assert text == (f"one RV spectrum of about 30 min at orbital phase {dark:g} "
                    f"(mean anomaly {360 * dark:.4g} deg from periastron)")


@pytest.fixture(scope="module")
def merged(week):
    """The plan of :func:`week` with the default events of an RV target (rv_max, rv_min, ...)."""
    site, _, dark, day, _ = week
    return planner.make_plan(hatp2(phases=f"{dark};{day}"), site, NIGHT, 1)


def test_a_wanted_phase_near_an_rv_extremum_shares_its_visit(week, merged):
    dark, plan = week[2], merged
    served = [s.split(";") for s in plan.schedule["serves"]]
    both = [names for names in served if phase_event_name(dark) in names]
    assert len(both) == 1 and "rv_max" in both[0]
    b = plan.schedule.iloc[[phase_event_name(dark) in names for names in served]].iloc[0]
    edges = utc_to_bjd([b["start_jd_utc"], b["end_jd_utc"]])
    assert np.all(np.abs(np.mod(mean_phase_of(edges) - dark + 0.5, 1.0) - 0.5) <= 0.02 + EDGE_TOL_D / P)


def test_the_target_page_and_rv_chart_show_the_wanted_phase(week, merged):
    from planner.outputs import charts, week_page
    from planner.timescales import clock

    site, _, dark, day, _ = week
    plan = merged
    page = week_page.target_html(plan, 0, [])
    shared = [phase_event_name(dark) in str(x).split(";") for x in plan.schedule["serves"]]
    start = plan.schedule["start_jd_utc"][shared].iloc[0]
    block = f"block {clock.jd_utc_to_local_iso([start], site.timezone)[0][11:16]}-"
    for what in (f"phase {dark:g}", "RV maximum"):  # the merged visit serves both instances
        row = page.split(f"<td>{what}</td>")[1].split("</tr>")[0]
        assert block in row and "not scheduled" not in row
    row = page.split(f"<td>phase {day:g}</td>")[1].split("</tr>")[0]
    assert "not scheduled" in row
    fig = charts.rv_figure(plan.targets.iloc[0], plan.schedule)
    lines = [a for a in fig.axes[0].lines if a.get_gid() == "wanted_phase"]
    assert sorted(float(ln.get_xdata()[0]) for ln in lines) == [dark, day]


def test_a_wanted_phase_in_daylight_is_unscheduled_with_its_reason(week):
    site, targets, dark, day, plan = week
    assert not (plan.schedule["event"] == phase_event_name(day)).any()
    row = plan.unscheduled[plan.unscheduled["event"] == phase_event_name(day)]
    assert len(row) == 1 and row["request"].iloc[0] == "rv_visit"
    assert row["reason_code"].iloc[0] == "no_darkness"


def test_a_logged_visit_in_the_window_serves_the_wanted_phase(week):
    site, targets, dark, day, plan = week
    template = log_template_frame(plan.schedule)
    is_phase = (plan.schedule["event"] == phase_event_name(dark)).to_numpy()
    assert (template["purpose"][is_phase] == "visit").all()  # the log has no phase purposes: a visit
    done = template.assign(outcome="done")
    again = planner.make_plan(targets, site, NIGHT, 1, log=parse_log(done.to_csv(index=False), targets, "log.csv"))
    assert not (again.schedule["event"] == phase_event_name(dark)).any()
    # the same visits logged ten days earlier are outside the window: the phase is still wanted
    early = template.assign(outcome="done", start=[s.replace("2027-05-2", "2027-05-1") for s in template["start"]],
                            end=[s.replace("2027-05-2", "2027-05-1") for s in template["end"]])
    later = planner.make_plan(targets, site, NIGHT, 1, log=parse_log(early.to_csv(index=False), targets, "log.csv"))
    assert (later.schedule["event"] == phase_event_name(dark)).sum() == 1


def test_bad_phase_cells_are_reported_row_by_row_in_one_run():
    text = ("name,ra,dec,period_d,e,omega_deg,tc,k_ms,rv_phases,rv_phase_tol\n"
            "A,10,20,5.0,0.1,30,2461000.5,50,0.25;quarter,\n"
            "B,10,20,5.0,0.1,30,2461000.5,50,1.0,\n"
            "C,10,20,5.0,0.1,30,2461000.5,50,0.3,0.5\n"
            "D,10,20,5.0,,,2461000.5,50,0.3,\n"
            "E,10,20,5.0,0.1,30,2461000.5,50,0.3,0\n"
            "F,10,20,5.0,0.1,30,2461000.5,50,0.3;0.30,\n")
    with pytest.raises(InputErrors) as err:
        parse_catalogue(text, "cat.csv")
    assert str(err.value).splitlines() == [
        "cat.csv, row 2, column rv_phases: 'quarter' is not an orbital phase; expected a ;-list of numbers "
        "0 <= phase < 1 such as 0.25;0.75",
        "cat.csv, row 3, column rv_phases: 1.0 is outside 0 <= phase < 1 (mean anomaly / 360 deg after periastron)",
        "cat.csv, row 4, column rv_phase_tol: 0.5 is outside 0 < tolerance < 0.5 (the half-width of each wanted "
        "phase's window, in orbits)",
        "cat.csv, row 5, column rv_phases: wanted orbital phases need an orbit with a periastron (e, omega_deg and "
        "tp or tc); this row is a linear ephemeris",
        "cat.csv, row 6, column rv_phase_tol: 0 is outside 0 < tolerance < 0.5 (the half-width of each wanted "
        "phase's window, in orbits)",
        "cat.csv, row 7, column rv_phases: phase 0.30 is listed twice",
    ]


@pytest.fixture(scope="module")
def chain(week):
    """HAT-P-2 b with a 0.3 d timing sigma over three nights: the RV maximum's window reaches from
    the night of its moment into the night before, where periastron could share its visit, and
    holds the wanted phase too; a chain of three requests that can each merge with it."""
    site, _, dark, _, _ = week
    return planner.make_plan(hatp2(phases=f"{dark}", errors="0.0001,0.3,0.01,1"), site,
                             NIGHT - dt.timedelta(days=1), 3)


def test_an_instance_a_merged_block_serves_from_another_night_is_not_listed_as_lost(chain):
    plan = chain
    merged = plan.schedule[["rv_max" in str(s).split(";")[1:] for s in plan.schedule["serves"]]]
    assert len(merged) == 1
    rv_max = plan.events[plan.events["event"] == "rv_max"]
    assert len(rv_max) == 1 and rv_max["night"].iloc[0] != merged["night"].iloc[0]  # the case in point
    assert "rv_max" not in set(plan.unscheduled["event"])


def test_a_chain_of_mergeable_requests_does_not_shut_out_its_third(chain):
    # one request merges with one other: periastron + RV maximum on the first night leaves the
    # wanted phase free to share a visit with apastron on the next (one exclusive group of all
    # four requests let one block serve two and lose the other two)
    plan = chain
    served = sorted(n for s in plan.schedule["serves"] for n in str(s).split(";"))
    phase = [n for n in served if n.startswith("phase_")]
    assert len(plan.schedule) == 2 and len(phase) == 1
    assert served == sorted(["periastron", "rv_max", "apastron", phase[0]])
    assert plan.unscheduled.empty and plan.report.status == "optimal"
