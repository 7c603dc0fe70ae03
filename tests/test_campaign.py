"""The week's optimizer on the examples of its issue: each plan comes out as an observer would choose.

Reference: the optimum is checked by exhaustive search over every set of the week's candidate
blocks that keeps the rules the solver states (no overlap with the overhead, each request
once, a target's event once a week under the week rules ``best``/``first``, one monitor visit a
night and its gap across nights, no other block of a monitored target on its visit's night):
the definition of the best plan, independent of the solver (HiGHS, Huangfu & Hall 2018, Math.
Prog. Comp. 10, 119). Where no exhaustive search is run, the property checked follows from
optimality alone (a plan that leaves room for a block worth something is not optimal; dropping
repeats from the every-night plan gives a plan the week rule allows).
The target tables are small and hand-made at an invented site: they set up the cases, their
values are never expected results.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest

import planner
import planner.pipeline
from planner.inputs.catalogue import parse_catalogue
from planner.scheduling import schedule
from planner.scheduling.choose import FIRST_NIGHT_FACTOR
from planner.scheduling.requests import request_kinds
from planner.scheduling.solver import choose_options
from planner.sky.limits import REASONS as LIMIT_REASONS
from test_schedule import altitude, availability_rows  # the same invented sky as the scheduler tests
from test_solver import random_options
from site_files import TEST_RIDGE

#: Totals are sums of at most ~30 scores of order 100: equal to 1e-6 unless a different set is chosen.
TOTAL_TOL = 1e-6
#: Block edges are sums of Julian dates (2.46e6 d): one millisecond of slack covers the rounding.
TIME_TOL_D = 1e-3 / 86400.0

J0 = 2461382.0  # 2026-12-07 12:00 UTC (JD): the noon before the first night
NIGHT_LABELS = ("2026-12-07", "2026-12-08", "2026-12-09")
#: Loss codes of planner.scheduling.losses (its docstring's table)
LOSS_CODES = {"never_rises", "no_darkness", "outside_nights", "too_short", "better_night", "lost"} | set(LIMIT_REASONS)

# observe = photometry: series whose contacts are unknown, so each stretch must hold the event
CATALOGUE = """\
name,ra,dec,period_d,e,omega_deg,tp,priority,visit_h,visit_gap_h,observe
Pulsar Ridge V1,10,20,0.3,0.0,90,2461000.5,1,,,photometry
Lantern RV,40,20,5.0,0.0,90,2461000.5,2,1.0,20,photometry
Keystone EB,60,30,3.9,0.0,90,2461000.5,4,,,photometry
Small One,80,10,9.0,0.0,90,2461000.5,1,,,photometry
Small Two,90,10,7.0,0.0,90,2461000.5,1,,,photometry
Small Three,100,10,8.0,0.0,90,2461000.5,1,,,photometry
"""


@pytest.fixture(scope="module")
def targets():
    with pytest.warns(UserWarning, match="no event to predict"):  # events come as visible rows here
        return parse_catalogue(CATALOGUE)


def nights_table(n=3):
    k = np.arange(n, dtype=float)
    return pd.DataFrame({
        "night": list(NIGHT_LABELS[:n]), "sunset_jd_utc": J0 + k + 0.20, "dark_start_jd_utc": J0 + k + 0.26,
        "dark_end_jd_utc": J0 + k + 0.74, "sunrise_jd_utc": J0 + k + 0.80,
        "moon_illumination": np.full(n, 0.4), "darkness_sun_alt_deg": np.full(n, -18.0)})


def visible_row(target, ti, night_k, start, end, event="periastron", sep=70.0, fraction=1.0):
    """One visible-event row; start/end in days after the noon starting night ``night_k``."""
    s, e = J0 + night_k + start, J0 + night_k + end
    return {"target": target, "event": event, "label": event, "cycle": 0, "bjd_tdb": 0.5 * (s + e),
            "sigma_d": 0.002, "duration_d": np.nan, "eclipses": pd.NA, "target_index": ti,
            "night": NIGHT_LABELS[night_k], "alt_deg": 50.0, "window_start_jd_utc": s, "window_end_jd_utc": e,
            "observable_fraction": fraction, "observable_start_jd_utc": s, "observable_end_jd_utc": e,
            "moon_sep_deg": sep, "moon_illumination": 0.4, "jd_utc": 0.5 * (s + e)}


# --- the reference: exhaustive search over the week's candidates ---------------------------------

def _week_key(c):
    return f"{int(c['target_index'])}|{c['event']}|{c['slot']}"


def solver_values(cands, rule):
    """The value the solver maximises for each candidate: its score; under ``first`` a request's
    score halves for each night it waits (:data:`FIRST_NIGHT_FACTOR`, the rule's documented cost)."""
    rank = cands["night"].map({n: i for i, n in enumerate(NIGHT_LABELS)}).to_numpy(float)
    first = (rule == "first") & (cands["request"] != "monitor").to_numpy()
    return cands["score"].to_numpy(float) * np.where(first, FIRST_NIGHT_FACTOR ** rank, 1.0)


def _night_sets(c, overhead_d):
    """Every set of one night's candidates with no overlap (overhead included), as index tuples."""
    order = sorted(range(len(c)), key=lambda i: c[i]["start_jd_utc"])
    out = []

    def grow(k, chosen, last_end):
        out.append(tuple(chosen))
        for j in range(k, len(order)):
            i = order[j]
            if c[i]["start_jd_utc"] >= last_end + overhead_d:
                grow(j + 1, chosen + [i], c[i]["end_jd_utc"])

    grow(0, [], -np.inf)
    return out


def allowed(chosen, rule):
    """Whether a set of candidate rows (dicts) keeps every rule of the week but the overlap."""
    groups = [c["group"] for c in chosen]
    if len(groups) != len(set(groups)):
        return False
    fixed = [c for c in chosen if c["request"] != "monitor"]
    if rule != "every":
        keys = [_week_key(c) for c in fixed]
        if len(keys) != len(set(keys)):
            return False
    watched = {(c["target_index"], c["night"]) for c in chosen if c["request"] == "monitor"}
    if any((c["target_index"], c["night"]) in watched for c in fixed):
        return False
    mon = sorted((c for c in chosen if c["request"] == "monitor"), key=lambda c: c["start_jd_utc"])
    for a_i, a in enumerate(mon):
        for b in mon[a_i + 1:]:
            if a["target_index"] == b["target_index"] and b["start_jd_utc"] - a["start_jd_utc"] < a["gap_d"] - TIME_TOL_D:
                return False
    return True


def exhaustive_best(cands, overhead_d, rule):
    """Largest total value over every allowed set of the week's candidates (night by night)."""
    rows = cands.assign(value=solver_values(cands, rule)).to_dict("records")
    per_night = []
    for label in NIGHT_LABELS:
        mine = [r for r in rows if r["night"] == label]
        sets = [[mine[i] for i in s] for s in _night_sets(mine, overhead_d)]
        per_night.append([s for s in sets if allowed(s, rule)])
    best = 0.0

    def walk(k, chosen, total):
        nonlocal best
        if k == len(per_night):
            best = max(best, total)
            return
        for s in per_night[k]:
            if allowed(chosen + s, rule):
                walk(k + 1, chosen + s, total + sum(r["value"] for r in s))

    walk(0, [], 0.0)
    return best


def gap_days(targets):
    return targets["visit_gap_h"].fillna(0.0).to_numpy(float) / 24.0


def with_gaps(cands, targets):
    return cands.assign(gap_d=np.where(cands["request"] == "monitor",
                                       gap_days(targets)[cands["target_index"].to_numpy(int)], 0.0))


# --- (a) a nightly monitor target against a pulsator's many short maxima -------------------------

def test_nightly_monitor_target_gets_a_visit_every_night_beside_a_pulsator(targets):
    # Issue example: a priority-1 pulsator's 3.4-h maxima fill the dark time (three a night, 29 min
    # apart, less than the 1-h visit and its overhead), a priority-2 RV monitor (visit_h 1,
    # visit_gap_h 20) is observable all night; the old plan gave the monitor 0 nights.
    rows = [visible_row("Pulsar Ridge V1", 0, k, s, s + 0.14) for k in range(3) for s in (0.27, 0.43, 0.59)]
    opts = schedule.ScheduleOptions(overhead_min=10.0)
    plan, cands, report = schedule.plan_week_report(pd.DataFrame(rows), availability_rows(1, "Lantern RV"), targets,
                                                    nights_table(), altitude, options=opts)
    visits = plan[plan["target"] == "Lantern RV"]
    assert list(visits["night"]) == list(NIGHT_LABELS)
    assert np.all(np.diff(visits["start_jd_utc"].to_numpy()) >= 20.0 / 24.0 - TIME_TOL_D)
    assert np.allclose((visits["end_jd_utc"] - visits["start_jd_utc"]) * 24.0, 1.0)
    # the pulsator keeps the rest of each night: two maxima a night
    assert plan[plan["target"] == "Pulsar Ridge V1"].groupby("night").size().to_dict() == dict.fromkeys(NIGHT_LABELS, 2)
    assert report.optimal
    best = exhaustive_best(with_gaps(cands, targets), 10.0 / 1440.0, "every")
    assert plan["score"].sum() == pytest.approx(best, abs=TOTAL_TOL)
    assert report.objective == pytest.approx(best, abs=TOTAL_TOL)


# --- (b) one long valuable eclipse against three shorter blocks ----------------------------------

def _eclipse_and_three(eclipse_fraction):
    """A 7.7-h eclipse window and three 2.2-h windows inside it, 0.02 d apart, on one night."""
    rows = [visible_row("Keystone EB", 2, 0, 0.30, 0.62, event="primary_conjunction", fraction=eclipse_fraction)]
    rows += [visible_row(name, ti, 0, s, s + 0.09)
             for name, ti, s in (("Small One", 3, 0.31), ("Small Two", 4, 0.42), ("Small Three", 5, 0.53))]
    return pd.DataFrame(rows)


def _eclipse_case(targets, eclipse_fraction):
    opts = schedule.ScheduleOptions(overhead_min=10.0)
    plan, cands, report = schedule.plan_week_report(_eclipse_and_three(eclipse_fraction), None, targets,
                                                    nights_table(1), altitude, options=opts)
    eclipse = cands.loc[cands["target"] == "Keystone EB", "score"].max()
    shorts = cands[cands["target"] != "Keystone EB"].groupby("target")["score"].max()  # each one's best stretch
    return plan, cands, report, eclipse, shorts


@pytest.mark.parametrize("eclipse_fraction", [1.0, 0.5])
def test_long_eclipse_wins_over_three_short_blocks_when_worth_more(targets, eclipse_fraction):
    # Issue example: a priority-4 eclipse over 7.7 h lost to three shorter priority-1 blocks.
    # Fully observable, it is worth more than the three together and must win; with half of its
    # window observable it is worth less and the three win: the sum decides either way.
    plan, cands, report, eclipse, shorts = _eclipse_case(targets, eclipse_fraction)
    assert len(shorts) == 3
    if eclipse > shorts.sum():
        assert list(plan["target"]) == ["Keystone EB"]
    else:
        assert sorted(plan["target"]) == sorted(shorts.index)
    best = exhaustive_best(with_gaps(cands, targets), 10.0 / 1440.0, "every")
    assert report.optimal and report.objective == pytest.approx(best, abs=TOTAL_TOL)
    assert plan["score"].sum() == pytest.approx(best, abs=TOTAL_TOL)


def test_the_eclipse_case_sets_both_outcomes(targets):
    # precondition of the case above: the two eclipse fractions put its value on either side of the sum
    margin = [_eclipse_case(targets, f)[3] - _eclipse_case(targets, f)[4].sum() for f in (1.0, 0.5)]
    assert margin[0] > 0 > margin[1]


# --- (c) the week rules best and first leave no room unused ----------------------------------------

SERIES_TARGETS = ((0, "Pulsar Ridge V1"), (2, "Keystone EB"), (3, "Small One"), (4, "Small Two"), (5, "Small Three"))


def random_week(rng, per_night=5):
    """Series windows of the fixed-event targets, each target's events recurring over the nights."""
    rows = []
    for k in range(len(NIGHT_LABELS)):
        for _ in range(per_night):
            ti, name = SERIES_TARGETS[int(rng.integers(0, len(SERIES_TARGETS)))]
            s = rng.uniform(0.26, 0.66)
            rows.append(visible_row(name, ti, k, s, s + rng.uniform(0.03, 0.10),
                                    event=str(rng.choice(["periastron", "primary_conjunction"])),
                                    sep=float(rng.uniform(5, 120)), fraction=float(rng.uniform(0.3, 1.0))))
    return pd.DataFrame(rows)


def fits(cand, blocks, overhead_d):
    """Whether ``cand`` (a row) overlaps none of ``blocks``, the overhead kept on both sides."""
    return bool(np.all((cand["end_jd_utc"] + overhead_d <= blocks["start_jd_utc"])
                       | (blocks["end_jd_utc"] + overhead_d <= cand["start_jd_utc"])))


def week_keys(frame):
    return (frame["target_index"].astype(int).astype(str) + "|" + frame["event"].astype(str) + "|"
            + frame["slot"].astype(str))


@pytest.mark.parametrize("rule", ["best", "first"])
def test_week_rules_leave_no_fitting_candidate_out_and_keep_the_every_night_value(targets, rule):
    # Issue example: "best" and "first" left several nights with 2.7 of 11 dark hours used while
    # blocks that fit there were left out. An optimal plan cannot do that (adding a block worth
    # something would raise its total), and it is worth at least the every-night plan with each
    # event kept only on its best night (that plan keeps the week rule).
    rng = np.random.default_rng(20261207)
    overhead_d = 10.0 / 1440.0
    checked = repeated = 0
    for case in range(6):
        visible = random_week(rng)
        monitor = availability_rows(1, "Lantern RV", nights=(case % 3,), start=0.27, end=0.73)
        plan, cands, report = schedule.plan_week_report(visible, monitor, targets, nights_table(), altitude,
                                                        options=schedule.ScheduleOptions(overhead_min=10.0,
                                                                                         repeats=rule))
        every = schedule.plan_week(visible, monitor, targets, nights_table(), altitude,
                                   options=schedule.ScheduleOptions(overhead_min=10.0))
        assert report.optimal, case
        fixed = plan[plan["request"] != "monitor"]
        assert not week_keys(fixed).duplicated().any(), case
        # maximality: every left-out candidate worth something is shut out by a rule it would break
        used_groups, used_keys = set(plan["group"]), set(week_keys(fixed))
        watched = set(zip(plan.loc[plan["request"] == "monitor", "target_index"],
                          plan.loc[plan["request"] == "monitor", "night"]))
        rest = cands[(cands["request"] != "monitor") & (cands["score"] > 0)]
        for _, c in rest.iterrows():
            if c["group"] in used_groups or _week_key(c) in used_keys or (c["target_index"], c["night"]) in watched:
                continue
            assert not fits(c, plan, overhead_d), (case, c["target"], c["night"])
            checked += 1
        # value: at least the every-night plan with each event on its best night only
        ev_fixed = every[every["request"] != "monitor"]
        repeated += int(week_keys(ev_fixed).duplicated().any())
        ev_value = pd.Series(solver_values(ev_fixed, rule), index=ev_fixed.index)
        kept = ev_value.groupby(week_keys(ev_fixed)).max().sum()
        kept += every.loc[every["request"] == "monitor", "score"].sum()
        assert report.objective >= kept - TOTAL_TOL, case
        assert report.objective == pytest.approx(solver_values(plan, rule).sum(), abs=TOTAL_TOL)
        # and the total is the exhaustive optimum under the rule
        assert report.objective == pytest.approx(exhaustive_best(with_gaps(cands, targets), overhead_d, rule),
                                                 abs=TOTAL_TOL), case
    assert repeated > 0  # the every-night plan repeats events: the rule had work to do
    assert checked > 0  # some left-out candidates were free of every rule and had to be checked for room


# --- (d) every request of the week is served or explained ------------------------------------------

SITE = TEST_RIDGE
HEADER = "name,ra,dec,period_d,e,omega_deg,tc,tc_err_d,time_system,k_ms,priority,events,duration_h"
#: one UTC minute: how losses and the schedule name one event instance
MINUTE_D = 1.0 / 1440.0


def ra_culminating_at(jd_utc, lon_deg=-3.12):
    """Right ascension (deg) on the site's meridian at ``jd_utc`` (astropy apparent sidereal time)."""
    import astropy.units as u
    from astropy.time import Time

    return float(Time(jd_utc, format="jd", scale="utc").sidereal_time("apparent", longitude=lon_deg * u.deg).deg)


def site_at_midnight(tmp_path):
    """(site, mid, ra): the test site, the middle of its first night's darkness (UTC JD) and the
    right ascension on its meridian then."""
    (tmp_path / "site.toml").write_text(SITE)
    site = planner.read_site(tmp_path / "site.toml")
    n = planner.night_table(site, dt.date(2026, 12, 7), 1)
    mid = 0.5 * float(n["dark_start_jd_utc"].iloc[0] + n["dark_end_jd_utc"].iloc[0])
    ra = ra_culminating_at(mid)
    return site, mid, ra


def crowded_week(tmp_path, rule):
    """Three nights of five transiting targets whose transits overlap near midnight (Wren-5's
    transit is Wren-1's, to the minute, at a quarter of its priority: lost every night, even
    with baselines cut), one target that never rises (dec -80 deg at latitude 37.6 N: highest altitude 90 - 117.6 < 0 deg, by
    spherical geometry) and one that culminates at noon."""
    site, mid, ra = site_at_midnight(tmp_path)
    rows = [f"Wren-1,{ra:.4f},30,1.02,0,,{mid:.6f},0.0003,JD_UTC,,4,,3.0",
            f"Wren-2,{ra + 5:.4f},25,1.01,0,,{mid + 1 / 24:.6f},0.0003,JD_UTC,,2,,2.0",
            f"Wren-3,{ra - 5:.4f},35,0.99,0,,{mid - 1 / 24:.6f},0.0003,JD_UTC,,1,,2.0",
            f"Wren-4,{ra + 10:.4f},20,2.5,0,,{mid + 2.5 / 24:.6f},0.0003,JD_UTC,,3,,1.5",
            f"Wren-5,{ra + 1:.4f},31,1.02,0,,{mid:.6f},0.0003,JD_UTC,,1,,3.0",
            f"Deep South,{ra:.4f},-80,1.5,0,,{mid:.6f},0.0003,JD_UTC,,5,,2.0",
            f"Noon Star,{(ra + 180) % 360:.4f},20,1.3,0,,{mid:.6f},0.0003,JD_UTC,,5,,2.0"]
    cat = parse_catalogue(HEADER + "\n" + "\n".join(rows) + "\n")
    settings = planner.pipeline.PlanSettings(schedule=schedule.ScheduleOptions(overhead_min=10.0, repeats=rule))
    return planner.make_plan(cat, site, dt.date(2026, 12, 7), 3, settings)


def iso_z_to_jd(texts):
    """UTC Julian dates of ISO times ending in Z (read by astropy)."""
    from astropy.time import Time

    texts = [str(t).removesuffix("Z") for t in texts]
    return Time(texts, format="isot", scale="utc").jd if texts else np.zeros(0)


def same_instance(frame, target, event, jd_utc, column="event_jd_utc"):
    """Rows of ``frame`` naming the event instance (target, event, UTC time within a minute)."""
    return frame[(frame["target"] == target) & (frame["event"] == event)
                 & (np.abs(frame[column].to_numpy(float) - jd_utc) < MINUTE_D)]


@pytest.mark.parametrize("rule", ["every", "best"])
def test_every_request_is_in_the_schedule_or_unscheduled_with_its_reason(tmp_path, rule):
    pl = crowded_week(tmp_path, rule)
    assert pl.report.optimal
    kinds = request_kinds(pl.events, pl.targets)
    wanted = pl.events[kinds != ""]
    assert len(wanted) > len(pl.schedule) > 0  # a crowded week: some requests must go
    codes = {}
    for _, r in wanted.iterrows():
        in_plan = len(same_instance(pl.schedule, r["target"], r["event"], r["jd_utc"]))
        listed = same_instance(pl.unscheduled.assign(jd=iso_z_to_jd(pl.unscheduled["event_utc"])),
                               r["target"], r["event"], r["jd_utc"], "jd")
        assert in_plan + len(listed) == 1, (r["target"], r["event"], r["night"])  # one or the other, once
        if len(listed):
            codes[(r["target"], r["event"], r["night"], round(r["jd_utc"] / MINUTE_D))] = listed["reason_code"].iloc[0]
    assert set(codes.values()) <= LOSS_CODES
    assert len(pl.unscheduled) == len(codes)  # nothing listed that is not a request
    south = {c for k, c in codes.items() if k[0] == "Deep South"}
    assert south == {"never_rises"} and {k[2] for k in codes if k[0] == "Deep South"} == set(NIGHT_LABELS)
    assert "lost" in codes.values()
    if rule == "best":
        assert "better_night" in codes.values()
    overhead_d = 10.0 / 1440.0
    for _, u in pl.unscheduled.iterrows():
        if u["reason_code"] == "better_night":  # names the night the event is done on
            done = pl.schedule[(pl.schedule["target"] == u["target"]) & (pl.schedule["event"] == u["event"])]
            assert set(done["night"]) == {u["reason"].removeprefix("done on ").removesuffix(" instead")}
        if u["reason_code"] != "lost":
            continue
        jd = iso_z_to_jd([u["event_utc"]])[0]
        mine = same_instance(pl.candidates, u["target"], u["event"], jd)
        assert len(mine) > 0
        named = u["reason"].removeprefix("lost to higher-value blocks: ").split(", ")
        assert named and named != ["the week's other blocks"]
        for name in named:  # "<target> <event in words> (<value>)"
            head, value = name.rsplit(" (", 1)
            rivals = pl.schedule[[f"{t} {e.replace('_', ' ')}" == head for t, e in zip(pl.schedule["target"],
                                                                                       pl.schedule["event"])]]
            rivals = rivals[np.round(rivals["score"]).astype(int).astype(str) == value.rstrip(")")]
            assert len(rivals) > 0, name
            # the named block really overlaps a candidate of the lost request, overhead included
            assert any(not fits(c, rivals, overhead_d) for _, c in mine.iterrows()), name



def test_a_window_of_days_gets_the_limit_that_stops_it_in_the_dark(tmp_path):
    # "Low Night" culminates at noon: at midnight it stands at dec - (90 - lat) = 20 - 52.4 < 0 deg
    # (spherical geometry), so in darkness the altitude limit stops it; by day it is high. A
    # 1-day epoch error spreads its conjunction over days of daylight and darkness alike.
    site, mid, ra = site_at_midnight(tmp_path)
    rows = [f"Low Night,{(ra + 180) % 360:.4f},20,9.3,0,,{mid + 1.0:.6f},1.0,JD_UTC,,3,,2.0",
            f"Noon Transit,{(ra + 180) % 360:.4f},20,9.7,0,,{mid + 1.5:.6f},0.0003,JD_UTC,,3,,2.0"]
    cat = parse_catalogue(HEADER + "\n" + "\n".join(rows) + "\n")
    pl = planner.make_plan(cat, site, dt.date(2026, 12, 7), 3)
    low = pl.unscheduled[pl.unscheduled["target"] == "Low Night"]
    wide = pl.events[pl.events["target"] == "Low Night"]
    assert (wide["window_end_jd_utc"] - wide["window_start_jd_utc"]).min() > 1.0  # days of daylight in it
    assert len(low) > 0 and set(low["reason_code"]) == {"altitude"}
    # a 2-hour transit at noon: its window misses every night's darkness
    noon = pl.unscheduled[pl.unscheduled["target"] == "Noon Transit"]
    assert set(noon["reason_code"]) == {"no_darkness"}
    assert set(noon["reason"]) == {"in daylight or twilight: its window misses the night's darkness"}

# --- a time limit that stops the solver early ---------------------------------------------------

def keeps_the_rules(opts, chosen, overhead_d):
    """Whether the chosen options keep every rule choose_options states (checked directly)."""
    c = opts[chosen]
    for _, part in c.groupby("telescope"):
        part = part.sort_values("start_jd_utc")
        if np.any(part["end_jd_utc"].to_numpy()[:-1] + overhead_d > part["start_jd_utc"].to_numpy()[1:]):
            return False
    if c.loc[c["instance"] != "", "instance"].duplicated().any():
        return False
    group_gap = opts.groupby("monitor")["gap_d"].max()
    for label, part in c[c["monitor"] != ""].groupby("monitor"):
        if np.any(np.diff(np.sort(part["start_jd_utc"].to_numpy())) < group_gap[label]):
            return False
    return True


@pytest.mark.parametrize("n_options, time_limit_s", [(2000, 0.05), (400, 0.05)])
def test_a_time_limit_that_stops_the_solver_early_still_gives_a_valid_plan_and_its_gap(n_options, time_limit_s):
    # 2000 random options in 0.05 s: on the 2-core development machine HiGHS stops before it has
    # any plan of its own (the solver then raised "found no plan"); the issue asks that the best
    # plan found is used when the limit expires, so a plan keeping every rule must come out with
    # its gap. On a faster machine HiGHS may have its own plan by then: the checks hold either way.
    rng = np.random.default_rng(11)
    opts = random_options(rng, n_options)
    chosen, report = choose_options(opts, 0.01, exclusive=("instance",), spacing=("monitor", "gap_d"),
                                    time_limit_s=time_limit_s)
    assert chosen.any() and keeps_the_rules(opts, chosen, 0.01)
    assert report.objective == pytest.approx(opts["value"][chosen].sum())
    assert report.bound >= report.objective - TOTAL_TOL
    if not report.optimal:
        assert report.status.startswith("time limit reached") and report.gap > 0
        assert f"{100 * report.gap:.2f}%" in report.describe()
    # the bound is a true bound: the proven optimum (no time limit) lies between plan and bound
    _, full = choose_options(opts, 0.01, exclusive=("instance",), spacing=("monitor", "gap_d"), time_limit_s=60.0)
    assert full.optimal
    assert report.objective - TOTAL_TOL <= full.objective <= report.bound * (1 + 1e-4) + TOTAL_TOL


def test_overlap_only_bound_equals_exhaustive_search_without_groups():
    # With no groups the overlap rule is the whole programme, so its bound (weighted interval
    # scheduling) must equal the exhaustive optimum (brute force over every subset, n <= 9).
    import itertools

    from planner.scheduling.solver import _interval_bound

    rng = np.random.default_rng(5)
    for case in range(150):
        opts = random_options(rng, int(rng.integers(1, 10)))
        overhead = float(rng.choice([0.0, 0.01]))
        s, e, v = (opts[c].to_numpy(float) for c in ("start_jd_utc", "end_jd_utc", "value"))
        tel = opts["telescope"].to_numpy(object)
        best = 0.0
        for k in range(1, len(opts) + 1):
            for sub in itertools.combinations(range(len(opts)), k):
                sub = np.array(sub)
                apart = True
                for t in set(tel[sub]):
                    m = sub[tel[sub] == t]
                    m = m[np.argsort(s[m])]
                    apart &= bool(np.all(e[m][:-1] + overhead <= s[m][1:]))
                if apart:
                    best = max(best, v[sub].sum())
        assert _interval_bound(tel, s, e + overhead, v) == pytest.approx(best, abs=TOTAL_TOL), case
