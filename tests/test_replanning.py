"""Re-planning from an observation log: done events drop out, the rest adapts.

The plans are of the bundled demo scenario (invented targets at an invented site); what is
checked is the behaviour the log must have, each expectation derived in the test from the first
plan or from the elements (phases computed here from Tp and P, as the definition
M = 2 pi (t - Tp) / P gives them), never a stored number.
"""

import datetime as dt

import numpy as np
import pandas as pd
import pytest

import planner
from planner import cli
from conftest import REPO, SAMPLE_TARGETS
from planner.inputs.observation_log import parse_log
from planner.outputs import sheets
from planner.outputs.log_template import log_template_frame

SITE = REPO / "sample_targets" / "site.toml"
FIRST = dt.date(2026, 12, 7)
#: Times of the same block in two plans agree to the solver's grid (they are the same candidates).
TIME_TOL_D = 1.0 / 86400.0


@pytest.fixture(scope="module")
def demo():
    targets = planner.read_catalogue(SAMPLE_TARGETS)
    site = planner.read_site(SITE)
    return targets, site, planner.make_plan(targets, site, FIRST, 3)


def keys(schedule):
    return {(t, e, round(s * 1440)) for t, e, s in zip(schedule["target"], schedule["event"], schedule["start_jd_utc"])}


def log_of(schedule, targets, outcome_by_night):
    frame = log_template_frame(schedule)
    frame["outcome"] = [outcome_by_night.get(n, "planned") for n in schedule["night"]]
    return parse_log(frame.to_csv(index=False), targets, "log.csv")


def test_replanning_after_a_logged_night_drops_exactly_the_done_events(demo):
    targets, site, plan = demo
    log = log_of(plan.schedule, targets, {"2026-12-07": "done"})
    again = planner.make_plan(targets, site, FIRST, 3, log=log)
    first_night = plan.schedule[plan.schedule["night"] == "2026-12-07"]
    single = first_night[~first_night["request"].isin(["rv_sequence", "monitor"])]
    done_events = {(t, e, round(j * 1440)) for t, e, j in zip(single["target"], single["event"],
                                                              single["event_jd_utc"].fillna(0))}
    for t, e, j in zip(again.schedule["target"], again.schedule["event"], again.schedule["event_jd_utc"].fillna(0)):
        assert (t, e, round(j * 1440)) not in done_events
    # a sequence's logged visits fill its first slots: only later slots of that passage remain
    told = 0
    for t, e, j in zip(*(first_night.loc[first_night["request"] == "rv_sequence", c] for c in
                         ("target", "event", "event_jd_utc"))):
        logged = int(((first_night["target"] == t) & (first_night["event"] == e)).sum())
        rest = again.schedule[(again.schedule["target"] == t) & (again.schedule["event"] == e)
                              & (np.round(again.schedule["event_jd_utc"] * 1440) == round(j * 1440))]
        assert (rest["slot"] > logged).all()
        # and they know which visits the log holds: the sheet says so, not "not in the plan"
        wanted = ";".join(str(k) for k in range(1, logged + 1))
        assert (rest["logged_parts"] == wanted).all()
        for _, block in rest.assign(planned_slots=sheets.planned_slots(rest)).iterrows():
            if block["slot"] == logged + 1:
                named = f"visit {logged} logged already" if logged == 1 else f"and {logged} logged already"
                assert named in sheets.action(block)
                told += 1
    assert told >= 1  # the demo's first night logs two visits of Tessel-3's passage
    # the other nights' blocks stay feasible, so the new optimum is worth at least as much (less
    # the solver's 0.1 % move penalty); a block may move (an RV window reaching into the freed
    # night, a monitor visit to the time that frees), but no request of theirs is dropped
    later = plan.schedule[plan.schedule["night"] != "2026-12-07"]
    assert plan.report.optimal and again.report.optimal
    assert again.schedule["score"].sum() >= later["score"].sum() * (1 - 1e-3)
    served = set(zip(again.schedule["target"], again.schedule["event"]))
    assert set(zip(later["target"], later["event"])) <= served


def test_a_done_event_is_listed_as_logged_not_as_unobservable(demo):
    # the first plan's single blocks of night 1, logged done, have no block in the new plan; their
    # requests are in unscheduled.csv as observed already, not as too short or below a limit
    targets, site, plan = demo
    again = planner.make_plan(targets, site, FIRST, 3, log=log_of(plan.schedule, targets, {"2026-12-07": "done"}))
    first_night = plan.schedule[(plan.schedule["night"] == "2026-12-07")
                                & ~plan.schedule["request"].isin(["rv_sequence", "monitor"])]
    from planner.timescales.clock import jd_utc_to_iso_z

    un = again.unscheduled
    assert len(first_night)
    for t, e, when in zip(first_night["target"], first_night["event"], jd_utc_to_iso_z(first_night["event_jd_utc"])):
        rows = un[(un["target"] == t) & (un["event"] == e) & (un["event_utc"] == when)]  # that instance
        assert len(rows) and set(rows["reason_code"]) == {"logged"}, (t, e, when, rows["reason_code"].tolist())
    # without the log, none of the plan's requests is called logged
    assert "logged" not in set(plan.unscheduled["reason_code"])


def test_a_lost_night_keeps_its_requests_and_a_done_one_frees_the_week(demo):
    targets, site, plan = demo
    lost = planner.make_plan(targets, site, FIRST, 3, log=log_of(plan.schedule, targets, {"2026-12-07": "lost"}))
    assert keys(lost.schedule) == keys(plan.schedule)  # a lost observation counts for nothing


def test_a_lost_rare_event_is_rescheduled_on_the_next_night_that_sees_it():
    # A 20-hour transit centred on 2026-12-08 09:00 UTC, of a target near the pole (never below
    # 32 deg at 37.6 N): the night of the 7th sees its ingress (23:00 UTC) with the baseline
    # before it, the night of the 8th its egress (19:00 UTC) with the baseline after. Planned
    # "first", it goes to the 7th; that night is clouded out (logged lost), and the plan made
    # again from the 8th takes the egress half.
    cat = pd.DataFrame({"name": ["Long Transit"], "ra": [10.0], "dec": [85.0], "period_d": [40.0], "e": [0.0],
                        "tc": [2461382.875], "tc_err_d": [0.001], "duration_h": [20.0], "priority": [3],
                        "events": ["primary_conjunction"], "observe": ["photometry"], "week_rule": ["first"]})
    targets = planner.read_catalogue(cat)
    site = planner.read_site(SITE)
    plan = planner.make_plan(targets, site, FIRST, 2)
    assert list(plan.schedule["night"]) == ["2026-12-07"] and "T1" in plan.schedule["covers"].iloc[0]
    log = log_of(plan.schedule, targets, {"2026-12-07": "lost"})
    later = planner.make_plan(targets, site, dt.date(2026, 12, 8), 1, log=log)
    assert list(later.schedule["night"]) == ["2026-12-08"]
    assert "T4" in later.schedule["covers"].iloc[0] and "post" in later.schedule["covers"].iloc[0]


def test_a_partial_log_leaves_the_new_parts_worth_their_share_and_the_sheet_says_so():
    # The long transit of the test above, planned for the night of the 8th alone: its block
    # covers T4 and the baseline after. The log already holds that baseline ('post', partial):
    # the same block is worth half (1 of its 2 parts is new), and its Why shows the factor, so
    # the printed factors multiply to the printed score.
    from planner.outputs import sheets

    cat = pd.DataFrame({"name": ["Long Transit"], "ra": [10.0], "dec": [85.0], "period_d": [40.0], "e": [0.0],
                        "tc": [2461382.875], "tc_err_d": [0.001], "duration_h": [20.0], "priority": [3],
                        "events": ["primary_conjunction"], "observe": ["photometry"]})
    targets = planner.read_catalogue(cat)
    site = planner.read_site(SITE)
    night = dt.date(2026, 12, 8)
    plan = planner.make_plan(targets, site, night, 1)
    first = plan.schedule.iloc[0]
    assert first["covers"] == "T4;post" and first["logged_parts"] == ""
    frame = log_template_frame(plan.schedule).assign(outcome="partial", covers="post")
    again = planner.make_plan(targets, site, night, 1, log=parse_log(frame.to_csv(index=False), targets, "log.csv"))
    b = again.schedule.iloc[0]
    assert (b["covers"], b["logged_parts"]) == ("T4;post", "post")
    assert abs(b["score"] - 0.5 * first["score"]) <= 1e-9 * first["score"]
    why = sheets.reasons(b)
    assert why[2] == "new parts x0.50 (post-baseline logged already)"
    points = sum(b[c] for c in ("pts_coverage", "pts_airmass", "pts_moon", "pts_timing"))
    assert abs(b["x_priority"] * b["x_rarity"] * 0.5 * points - b["score"]) <= 1e-9 * b["score"]
    assert "logged_parts" in planner.display_frame(again.schedule, site.timezone)


def test_a_transit_logged_as_transit_serves_a_linear_ephemeris_given_as_tc():
    # the long transit above with no e or omega: a linear ephemeris whose tc makes its event a
    # primary conjunction; the observer logs it under the usual word, 'transit'
    cat = pd.DataFrame({"name": ["Lin Transit"], "ra": [10.0], "dec": [85.0], "period_d": [40.0],
                        "tc": [2461382.875], "tc_err_d": [0.001], "duration_h": [20.0], "priority": [3]})
    targets = planner.read_catalogue(cat)
    site = planner.read_site(SITE)
    night = dt.date(2026, 12, 8)
    plan = planner.make_plan(targets, site, night, 1)
    assert list(plan.schedule["event"]) == ["periodic"] and list(plan.schedule["label"]) == ["primary conjunction"]
    frame = log_template_frame(plan.schedule).assign(outcome="done", purpose="transit")
    again = planner.make_plan(targets, site, night, 1, log=parse_log(frame.to_csv(index=False), targets, "log.csv"))
    assert again.schedule.empty
    assert list(again.unscheduled["reason_code"]) == ["logged"]


def test_monitor_visits_keep_their_gap_from_the_last_logged_visit(demo):
    targets, site, plan = demo
    gap_d = float(targets.loc[targets["name"] == "Lantisca-4", "visit_gap_h"].iloc[0]) / 24.0
    visits = plan.schedule[(plan.schedule["target"] == "Lantisca-4") & (plan.schedule["kind"] == "flexible")]
    second = visits[visits["night"] == "2026-12-08"]["start_jd_utc"].iloc[0]
    # a visit logged late on the night before, closer than the gap to the planned one
    late = second - gap_d + 2.0 / 24.0
    iso = planner.display_frame(pd.DataFrame({**{c: [np.nan] for c in plan.schedule.columns},
                                              "start_jd_utc": [late], "end_jd_utc": [late + 1 / 24]}),
                                None)["start_utc"][0]
    log = parse_log(f"target,start,purpose,outcome\nLantisca-4,{iso},visit,done\n", targets, "log.csv")
    again = planner.make_plan(targets, site, FIRST, 3, log=log)
    starts = again.schedule[(again.schedule["target"] == "Lantisca-4")
                            & (again.schedule["kind"] == "flexible")]["start_jd_utc"].to_numpy()
    assert np.all((starts < late) | (starts >= late + gap_d - TIME_TOL_D))


def test_phase_bins_ask_for_visits_in_the_empty_bins_only():
    cat = pd.read_csv(SAMPLE_TARGETS, comment="#")
    cat["phase_bins"] = np.where(cat["name"] == "Lantisca-4", 10, np.nan)
    targets = planner.read_catalogue(cat)
    site = planner.read_site(SITE)
    ti = int(np.flatnonzero(targets["name"] == "Lantisca-4")[0])
    tp, p = float(targets["tp_bjd_tdb"][ti]), float(targets["period_d"][ti])
    # the week's nights see phases 0.20-0.36 (bins 2 and 3) of this 39-day orbit: exposures in
    # every bin but 3 leave that one empty
    times = tp + p * (20 + np.array([0.05, 0.15, 0.25, 0.45, 0.55, 0.65, 0.75, 0.85, 0.95]))
    log = parse_log("target,start,purpose,outcome\n" + "".join(f"Lantisca-4,{t:.6f},visit,done\n" for t in times),
                    targets, "log.csv")
    plan = planner.make_plan(targets, site, FIRST, 7, log=log)
    phase_visits = plan.schedule[plan.schedule["label"].astype(str).str.startswith("phase bin")]
    assert len(phase_visits)
    mid_bjd = 0.5 * (phase_visits["start_jd_utc"] + phase_visits["end_jd_utc"]).to_numpy()
    bins = np.floor(np.mod((mid_bjd - tp) / p, 1.0) * 10).astype(int)
    assert set(bins) == {3}  # 9.5 min of light time against a 3.9-day bin: no edge case here
    assert len(phase_visits) == 1  # a bin is filled once
    # its value: 1 + the share of the orbit in its empty run (1 bin of 10) times the visit's own
    # score; the sheet's factors multiply to it
    from planner.outputs import sheets

    b = phase_visits.iloc[0]
    points = sum(b[c] for c in ("pts_coverage", "pts_airmass", "pts_moon", "pts_timing"))
    assert abs(b["x_rarity"] - 1.1) <= 1e-12
    assert abs(b["x_priority"] * 1.1 * points - b["score"]) <= 1e-9 * b["score"]
    assert sheets.reasons(b)[1].startswith("gap x1.10 (1 + the share of the orbit in the run of empty phase bins")


def test_campaign_event_count_stops_requests_once_reached(demo):
    targets, site, plan = demo
    cat = pd.read_csv(SAMPLE_TARGETS, comment="#")
    cat["campaign_events"] = np.where(cat["name"] == "Varda-7 b", "rv_min:1", "")
    targets2 = planner.read_catalogue(cat)
    assert (plan.schedule["target"] + plan.schedule["event"]).eq("Varda-7 brv_min").any()
    log = parse_log("target,start,end,purpose,outcome\nVarda-7 b,2026-11-01T20:00:00Z,2026-11-01T20:30:00Z,"
                    "rv_min,done\n", targets2, "log.csv")
    again = planner.make_plan(targets2, site, FIRST, 3, log=log)
    assert not ((again.schedule["target"] == "Varda-7 b") & (again.schedule["event"] == "rv_min")).any()


def test_bad_campaign_columns_are_one_line_errors(tmp_path, capsys):
    cat = pd.read_csv(SAMPLE_TARGETS, comment="#")
    cat["phase_bins"] = ["1.5"] + [""] * (len(cat) - 1)
    cat["week_rule"] = [""] + ["sometimes"] + [""] * (len(cat) - 2)
    path = tmp_path / "cat.csv"
    cat.to_csv(path, index=False)
    code = cli.main(["plan", str(path), "--site", str(SITE), "--out", str(tmp_path / "p")])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and not (tmp_path / "p").exists()
    assert err == ["periplan: error: cat.csv, row 2, column phase_bins: 1.5 is not a whole number of phase bins >= 2",
                   "periplan: error: cat.csv, row 3, column week_rule: 'sometimes' is not a week rule; expected "
                   "every, best or first"]


# --- phase-coverage visits take the time the events leave -----------------------------------------
# A constructed case of the invented sky of the scheduler tests (tests/test_schedule.py): a
# priority-5 RV target with one empty phase bin, whose share of the orbit falls in the second
# half of one night only, and a priority-1 eclipse series in that half. Values are never
# expected results here; the rule is: the events are chosen as they would be without phase
# coverage, and a phase visit goes only where it fits beside them.

from test_schedule import J0, altitude, availability_rows  # noqa: E402

PHASE_CATALOGUE = """\
name,ra,dec,period_d,e,omega_deg,tp,priority,observe,phase_bins
Wide RV,10,20,5.0,0.0,90,{tp},5,rv,{bins}
Short EB,40,20,3.0,0.0,90,2461000.5,1,photometry,
"""
PHASE_P_D, N_BINS, EMPTY_BIN = 5.0, 10, 4
#: the empty bin opens at 0.40 d after the first noon and closes half a day later (P / 10)
BIN_START = J0 + 0.40
PHASE_TP = BIN_START - EMPTY_BIN * PHASE_P_D / N_BINS - 400 * PHASE_P_D


def _phase_case(event_end, bins):
    from planner.inputs.catalogue import parse_catalogue
    from planner.scheduling import schedule
    from test_schedule import nights_table, visible_row

    with pytest.warns(UserWarning, match="no event to predict"):  # events come as visible rows here
        targets = parse_catalogue(PHASE_CATALOGUE.format(tp=f"{PHASE_TP:.6f}", bins=bins))
    # one exposure in the middle of every other bin, an orbit earlier (BJD_TDB)
    times = [PHASE_TP + 399 * PHASE_P_D + (j + 0.5) * PHASE_P_D / N_BINS for j in range(N_BINS) if j != EMPTY_BIN]
    log = parse_log("target,start,purpose,outcome\n" + "".join(f"Wide RV,{t:.6f},visit,done\n" for t in times),
                    targets, "log.csv")
    eclipse = pd.DataFrame([visible_row("Short EB", 1, 0, 0.38, event_end, event="primary_conjunction")])
    avail = pd.concat([availability_rows(0, "Wide RV"), availability_rows(1, "Short EB")], ignore_index=True)
    opts = schedule.ScheduleOptions(overhead_min=10.0)
    plan, _, _ = schedule.plan_week_report(eclipse, avail, targets, nights_table(), altitude, options=opts, log=log)
    return plan, opts


@pytest.mark.parametrize("event_end", [0.74, 0.55])
def test_a_phase_visit_never_displaces_an_event_and_fills_the_gap_it_leaves(event_end):
    plan, opts = _phase_case(event_end, N_BINS)
    without, _ = _phase_case(event_end, "")  # the same week, no phase coverage asked for
    events = plan[plan["target"] == "Short EB"]
    assert len(events) == 1
    assert events[["start_jd_utc", "end_jd_utc"]].to_numpy() == pytest.approx(
        without.loc[without["target"] == "Short EB", ["start_jd_utc", "end_jd_utc"]].to_numpy(), abs=TIME_TOL_D)
    visits = plan[plan["label"].astype(str).str.startswith("phase bin")]
    # where a visit can go: inside the empty bin, the target's observable time of the night
    # (0.27-0.73 d after noon) and after the series with the overhead between them
    visit_d, overhead_d = 0.5 / 24.0, opts.overhead_min / 1440.0
    free_from = max(BIN_START, J0 + event_end + overhead_d)
    free_to = min(BIN_START + PHASE_P_D / N_BINS, J0 + 0.73)
    if free_to - free_from < visit_d:  # no room beside the series: the bin waits
        assert visits.empty
    else:
        assert list(visits["label"]) == [f"phase bin {EMPTY_BIN + 1} of {N_BINS}"]
        assert visits["start_jd_utc"].iloc[0] >= free_from - TIME_TOL_D
        assert visits["end_jd_utc"].iloc[0] <= free_to + TIME_TOL_D


def test_free_starts_keep_the_overhead_from_every_busy_block():
    from planner.scheduling.choose import free_starts

    # a 1-unit visit in [0, 10 + 1], overhead 0.5, blocks at [3, 4] and [6, 6.5]: a start x is
    # free when x + 1 + 0.5 <= 3 (x <= 1.5), or 4 + 0.5 <= x and x + 1.5 <= 6 (x = 4.5 only),
    # or x >= 6.5 + 0.5 (the solver's rule: end + overhead <= next start)
    runs = free_starts(0.0, 10.0, 1.0, np.array([6.0, 3.0]), np.array([6.5, 4.0]), 0.5)
    assert np.ravel(runs) == pytest.approx([0.0, 1.5, 4.5, 4.5, 7.0, 10.0])  # (lo, hi) pairs
    assert free_starts(0.0, 10.0, 1.0, np.array([-5.0]), np.array([20.0]), 0.5) == []
