"""Night scheduler: exact choice of fixed blocks, overhead, flexible gap filling, week repeat rules.

References: the optimality of the fixed-block choice is checked against brute force over every
subset of small random cases (the definition of the optimum; the method is weighted interval
scheduling, Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1). The tables are small and
hand-made: they exercise the scheduler's logic, their values are not expected results.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from planner.outputs import tables
from planner.scheduling import schedule
from planner.inputs.catalogue import parse_catalogue
from planner.errors import PeriplanError
from planner.scheduling.score import ScoreWeights

#: Score sums of at most 10 floats of order 100 agree to ~1e-13 relative; 1e-9 points is far
#: above that rounding and far below any real difference between two plans.
SCORE_TOL_PTS = 1e-9
#: Block edges are sums of a few Julian dates (2.46e6 d, spacing 4.7e-10 d = 40 us);
#: one millisecond of slack covers that rounding.
TIME_TOL_D = 1e-3 / 86400.0

J0 = 2461382.0  # 2026-12-07 12:00 UTC (JD); noon before the first night
NIGHT_LABELS = ("2026-12-07", "2026-12-08", "2026-12-09")

# observe = photometry: the events below are photometric series whose contacts are not known
# (no duration or geometry), so each stretch must hold the event moment (tests/test_requests.py
# covers the other request kinds)
CATALOGUE = """\
name,ra,dec,period_d,e,omega_deg,tp,priority,visit_h,visit_gap_h,observe
Alpha,10,20,111.4,0.5,30,2461000.5,5,,,photometry
Beta,40,20,3.0,0.0,90,2461000.5,2,,,photometry
Gamma,60,30,38.9,0.2,200,2461000.5,2,1.0,20,photometry
Delta,80,10,9.0,0.3,100,2461000.5,1,0.5,,photometry
"""


@pytest.fixture(scope="module")
def targets():
    return parse_catalogue(CATALOGUE)


def nights_table(labels=NIGHT_LABELS, dark=True):
    k = np.arange(len(labels), dtype=float)
    nan = np.full(len(labels), np.nan)
    return pd.DataFrame({
        "night": list(labels), "sunset_jd_utc": J0 + k + 0.20,
        "dark_start_jd_utc": J0 + k + 0.26 if dark else nan, "dark_end_jd_utc": J0 + k + 0.74 if dark else nan,
        "sunrise_jd_utc": J0 + k + 0.80, "moon_illumination": np.full(len(labels), 0.4),
        "darkness_sun_alt_deg": np.full(len(labels), -18.0),
    })


def visible_row(target, ti, night_k, start, end, event="periastron", fraction=1.0, sigma_d=0.002, sep=70.0):
    """One visible-event row; start/end in days after the noon starting night ``night_k``."""
    s, e = J0 + night_k + start, J0 + night_k + end
    return {"target": target, "event": event, "label": event, "cycle": 0, "bjd_tdb": 0.5 * (s + e),
            "sigma_d": sigma_d, "duration_d": np.nan, "eclipses": pd.NA, "target_index": ti,
            "night": NIGHT_LABELS[night_k], "alt_deg": 50.0, "window_start_jd_utc": s, "window_end_jd_utc": e,
            "observable_fraction": fraction, "observable_start_jd_utc": s, "observable_end_jd_utc": e,
            "moon_sep_deg": sep, "moon_illumination": 0.4, "jd_utc": 0.5 * (s + e)}


def availability_rows(ti, name, nights=(0, 1, 2), start=0.27, end=0.73):
    return pd.DataFrame([{"target_index": ti, "target": name, "night": NIGHT_LABELS[k],
                          "start_jd_utc": J0 + k + start, "end_jd_utc": J0 + k + end, "max_alt_deg": 70.0}
                         for k in nights])


def altitude(ti, jd):
    """A smooth invented altitude curve per target (deg): peak 75 deg near local midnight."""
    frac = np.mod(jd - J0, 1.0)
    return 75.0 - 180.0 * np.abs(frac - 0.5 - 0.03 * np.asarray(ti))


def brute_force_best(start, end, weight, gap):
    """Largest total weight over all subsets whose members are pairwise compatible."""
    n = len(start)
    best = 0.0
    for r in range(1, n + 1):
        for combo in itertools.combinations(range(n), r):
            order = sorted(combo, key=lambda i: start[i])
            if all(end[a] + gap <= start[b] for a, b in zip(order, order[1:])):
                best = max(best, sum(weight[i] for i in combo))
    return best


def feasible(start, end, chosen, gap):
    order = sorted(chosen, key=lambda i: start[i])
    return all(end[a] + gap <= start[b] for a, b in zip(order, order[1:]))


def _random_week(rng, targets, n_per_night=6):
    rows = []
    names = list(targets["name"])
    for k in range(len(NIGHT_LABELS)):
        for _ in range(n_per_night):
            ti = int(rng.integers(0, 2))  # the fixed-event targets Alpha and Beta
            s = rng.uniform(0.26, 0.65)
            rows.append(visible_row(names[ti], ti, k, s, s + rng.uniform(0.02, 0.12),
                                    event=str(rng.choice(["periastron", "primary_conjunction", "secondary_conjunction"])),
                                    fraction=float(rng.uniform(0.3, 1.0)), sep=float(rng.uniform(5, 120))))
    return pd.DataFrame(rows)


def test_each_night_is_optimal_for_the_score(targets):
    # Reference: brute force over the fixed candidates of each night (repeat rule "every", so the
    # nights are independent and each must reach the brute-force optimum).
    rng = np.random.default_rng(7)
    options = schedule.ScheduleOptions(overhead_min=15.0)
    for _ in range(5):
        visible = _random_week(rng, targets)
        cands = schedule.fixed_candidates(visible, targets, altitude, options)
        plan = schedule.plan_week(visible, None, targets, nights_table(), altitude, options=options)
        for label in NIGHT_LABELS:
            c = cands[cands["night"] == label]
            best = brute_force_best(c["start_jd_utc"].to_numpy(), c["end_jd_utc"].to_numpy(),
                                    c["score"].to_numpy(), 15.0 / 1440.0)
            got = plan.loc[plan["night"] == label, "score"].sum()
            assert abs(got - best) <= SCORE_TOL_PTS


def test_overhead_is_respected_between_all_blocks(targets):
    rng = np.random.default_rng(11)
    visible = _random_week(rng, targets, n_per_night=8)
    availability = pd.concat([availability_rows(2, "Gamma"), availability_rows(3, "Delta")], ignore_index=True)
    for overhead in (0.0, 10.0, 30.0):
        options = schedule.ScheduleOptions(overhead_min=overhead)
        plan = schedule.plan_week(visible, availability, targets, nights_table(), altitude, options=options)
        assert (plan["kind"] == "flexible").any() and (plan["kind"] == "fixed").any()
        for _, night in plan.groupby("night"):
            s = night["start_jd_utc"].to_numpy()
            e = night["end_jd_utc"].to_numpy()
            assert np.all(np.diff(s) > 0)
            gaps = s[1:] - e[:-1]
            assert np.all(gaps >= overhead / 1440.0 - TIME_TOL_D)


def test_same_input_same_plan_whatever_the_row_order(targets):
    rng = np.random.default_rng(3)
    visible = _random_week(rng, targets)
    availability = pd.concat([availability_rows(2, "Gamma"), availability_rows(3, "Delta")], ignore_index=True)
    first = schedule.plan_week(visible, availability, targets, nights_table(), altitude)
    again = schedule.plan_week(visible, availability, targets, nights_table(), altitude)
    shuffled = schedule.plan_week(visible.sample(frac=1.0, random_state=5), availability.iloc[::-1],
                                  targets, nights_table(), altitude)
    pd.testing.assert_frame_equal(first, again)
    pd.testing.assert_frame_equal(first, shuffled)


def test_identical_blocks_tie_break_is_stable(targets):
    # Two equal-score candidates on the same stretch: the same one wins in any row order.
    rows = [visible_row("Beta", 1, 0, 0.3, 0.4, event="primary_conjunction"), visible_row("Beta", 1, 0, 0.3, 0.4, event="secondary_conjunction")]
    a = schedule.plan_week(pd.DataFrame(rows), None, targets, nights_table(), altitude)
    b = schedule.plan_week(pd.DataFrame(rows[::-1]), None, targets, nights_table(), altitude)
    assert len(a) == 1 and list(a["event"]) == list(b["event"])


def _three_nights_of_one_event(targets, seps=(100.0, 10.0, 60.0)):
    # Alpha's periastron window on three nights; the Moon separation makes night 0 the best.
    return pd.DataFrame([visible_row("Alpha", 0, k, 0.35, 0.45, sep=seps[k]) for k in range(3)])


def test_repeat_rules(targets):
    visible = _three_nights_of_one_event(targets, seps=(10.0, 100.0, 60.0))
    run = lambda rule: schedule.plan_week(visible, None, targets, nights_table(), altitude,  # noqa: E731
                                          options=schedule.ScheduleOptions(repeats=rule))
    every, first, best = run("every"), run("first"), run("best")
    assert list(every["night"]) == list(NIGHT_LABELS)
    assert list(first["night"]) == [NIGHT_LABELS[0]]
    cands = schedule.fixed_candidates(visible, targets, altitude)
    assert list(best["night"]) == [cands.loc[cands["score"].idxmax(), "night"]] == [NIGHT_LABELS[1]]


def _alpha_three_nights_with_beta_clash(clash_night):
    """Alpha's periastron on three nights; a better Beta block clashes with it on ``clash_night``."""
    rows = [visible_row("Alpha", 0, k, 0.35, 0.45, sep=(10.0, 100.0, 60.0)[k]) for k in range(3)]
    rows.append(visible_row("Beta", 1, clash_night, 0.30, 0.50, event="primary_conjunction"))
    visible = pd.DataFrame(rows)
    # Alpha's instance on the clash night is poorly covered and next to a full Moon, so Beta wins
    visible.loc[clash_night, ["observable_fraction", "moon_sep_deg", "moon_illumination"]] = [0.01, 0.0, 1.0]
    return visible


#: Priorities ignored (x_priority = 1), so that conditions can outweigh Alpha's higher priority.
FLAT_PRIORITY = ScoreWeights(priority_power=0.0)


def test_repeat_rule_first_keeps_the_first_scheduled_instance(targets):
    visible = _alpha_three_nights_with_beta_clash(0)
    cands = schedule.fixed_candidates(visible, targets, altitude, schedule.ScheduleOptions(weights=FLAT_PRIORITY))
    n0 = cands[cands["night"] == NIGHT_LABELS[0]].set_index("target")["score"]
    assert n0["Beta"] > n0["Alpha"]  # precondition of this case
    plan = schedule.plan_week(visible, None, targets, nights_table(), altitude,
                              options=schedule.ScheduleOptions(repeats="first", weights=FLAT_PRIORITY))
    assert list(plan.loc[plan["target"] == "Alpha", "night"]) == [NIGHT_LABELS[1]]
    assert list(plan.loc[plan["night"] == NIGHT_LABELS[0], "target"]) == ["Beta"]


def test_repeat_rule_best_keeps_the_best_scheduled_instance(targets):
    # Alpha's night-1 instance loses its night to Beta; of the instances that are scheduled
    # (nights 0 and 2) the better one (night 2, Moon 60 deg away, not 10) is kept.
    visible = _alpha_three_nights_with_beta_clash(1)
    every = schedule.plan_week(visible, None, targets, nights_table(), altitude,
                               options=schedule.ScheduleOptions(weights=FLAT_PRIORITY))
    assert list(every.loc[every["target"] == "Alpha", "night"]) == [NIGHT_LABELS[0], NIGHT_LABELS[2]]
    plan = schedule.plan_week(visible, None, targets, nights_table(), altitude,
                              options=schedule.ScheduleOptions(repeats="best", weights=FLAT_PRIORITY))
    assert list(plan.loc[plan["target"] == "Alpha", "night"]) == [NIGHT_LABELS[2]]
    assert list(plan.loc[plan["night"] == NIGHT_LABELS[1], "target"]) == ["Beta"]


def test_repeat_rule_best_schedules_each_event_at_most_once(targets):
    rng = np.random.default_rng(19)
    for _ in range(5):
        visible = _random_week(rng, targets, n_per_night=5)
        best = schedule.plan_week(visible, None, targets, nights_table(), altitude,
                                  options=schedule.ScheduleOptions(repeats="best"))
        every = schedule.plan_week(visible, None, targets, nights_table(), altitude)
        assert not best.duplicated(["target", "event"]).any()
        assert every.duplicated(["target", "event"]).any()  # so the rule had work to do
        # each night of "best" is still optimal for the candidates it kept: no night scores more
        # under "best" than under "every", which is optimal per night without the rule
        for label in NIGHT_LABELS:
            b = best.loc[best["night"] == label, "score"].sum()
            e = every.loc[every["night"] == label, "score"].sum()
            assert b <= e + SCORE_TOL_PTS


def test_flexible_visits_respect_gap_one_per_night_and_fixed_blocks(targets):
    visible = pd.DataFrame([visible_row("Alpha", 0, 0, 0.30, 0.50), visible_row("Beta", 1, 1, 0.28, 0.40)])
    availability = pd.concat([availability_rows(2, "Gamma"), availability_rows(3, "Delta"),
                              availability_rows(1, "Beta")], ignore_index=True)
    plan = schedule.plan_week(visible, availability, targets, nights_table(), altitude,
                              options=schedule.ScheduleOptions(overhead_min=10.0))
    flex = plan[plan["kind"] == "flexible"]
    # Beta has no visit_h: never flexible
    assert set(flex["target"]) == {"Gamma", "Delta"}
    # one visit per target per night
    assert not flex.duplicated(["night", "target"]).any()
    # Gamma: visit_gap_h = 20 h between the starts of consecutive visits
    g = flex[flex["target"] == "Gamma"]["start_jd_utc"].to_numpy()
    assert np.all(np.diff(g) >= 20.0 / 24.0 - TIME_TOL_D)
    # length = visit_h
    for name, hours in (("Gamma", 1.0), ("Delta", 0.5)):
        d = flex[flex["target"] == name]
        assert np.all(abs((d["end_jd_utc"] - d["start_jd_utc"]) * 24.0 - hours) <= TIME_TOL_D * 24)
    # inside the availability
    assert np.all(flex["start_jd_utc"] >= J0 + 0.27 - TIME_TOL_D)
    assert flex["notes"].str.contains("flexible visit").all()
    assert flex["event_jd_utc"].isna().all()


def test_flexible_visit_not_added_for_a_target_with_a_fixed_block_that_night(targets):
    visible = pd.DataFrame([visible_row("Gamma", 2, 0, 0.30, 0.40, event="primary_conjunction")])
    plan = schedule.plan_week(visible, availability_rows(2, "Gamma", nights=(0,)), targets,
                              nights_table(), altitude)
    assert list(plan["kind"]) == ["fixed"]


def test_flexible_without_altitude_function_centres_on_availability(targets):
    plan = schedule.plan_week(visible_frame_empty(), availability_rows(3, "Delta", nights=(0,), start=0.3, end=0.5),
                              targets, nights_table())
    mid = 0.5 * (plan["start_jd_utc"] + plan["end_jd_utc"]).iloc[0]
    assert abs(mid - (J0 + 0.4)) <= TIME_TOL_D


def visible_frame_empty():
    return pd.DataFrame({c: [] for c in schedule.VISIBLE_COLUMNS + ("alt_deg",)})


def test_nothing_visible_gives_an_empty_plan_with_the_columns(targets):
    plan = schedule.plan_week(visible_frame_empty(), None, targets, nights_table(dark=False))
    assert plan.empty and tuple(plan.columns) == schedule.SCHEDULE_COLUMNS
    assert tables.display_frame(plan, "Europe/Madrid").empty


def test_notes_partial_meridian_twilight_and_sun(targets):
    rows = [visible_row("Alpha", 0, 0, 0.45, 0.55, fraction=0.6),   # partial, crosses the peak at 0.5
            visible_row("Beta", 1, 1, 0.24, 0.30, event="primary_conjunction"),  # starts in twilight
            visible_row("Alpha", 0, 2, 0.15, 0.25, event="secondary_conjunction")]  # starts before sunset
    plan = schedule.plan_week(pd.DataFrame(rows), None, targets, nights_table(), altitude)
    notes = dict(zip(plan["night"], plan["notes"]))
    assert "partial: 60% of the event window" in notes[NIGHT_LABELS[0]]
    assert "crosses the meridian" in notes[NIGHT_LABELS[0]]
    assert "evening twilight" in notes[NIGHT_LABELS[1]]
    assert "SUN ABOVE THE HORIZON" in notes[NIGHT_LABELS[2]]
    no_dark = schedule.plan_week(pd.DataFrame(rows[:1]), None, targets, nights_table(dark=False), altitude)
    assert "no astronomical darkness" in no_dark["notes"].iloc[0]


def test_note_times_are_local_with_utc_beside_them():
    # A movable RV visit and a meridian crossing, 2026-12-08 05:18 and 05:55 UTC: Europe/Madrid
    # is UTC+1 in December (IANA tz database, through Python's zoneinfo, the reference here);
    # without a zone the notes stay in UTC
    import datetime as dt
    from zoneinfo import ZoneInfo

    from planner.timescales.clock import datetime_to_jd_utc

    utc = [dt.datetime(2026, 12, 8, 5, m, tzinfo=dt.timezone.utc) for m in (18, 55)]
    local = [t.astimezone(ZoneInfo("Europe/Madrid")).strftime("%H:%M") for t in utc]
    lo, hi = (datetime_to_jd_utc(t) for t in utc)
    block = pd.Series({"kind": "fixed", "request": "rv_visit", "earliest_start_jd_utc": lo, "latest_start_jd_utc": hi,
                       "start_jd_utc": lo - 0.05, "end_jd_utc": 2 * hi - lo + 0.05})
    alt = np.interp(np.linspace(0, 1, 5), [0, 0.5, 1], [40.0, 60.0, 40.0])  # peaks mid-block: the meridian
    options = schedule.ScheduleOptions()
    mid = 0.5 * (block["start_jd_utc"] + block["end_jd_utc"])
    notes = schedule._notes(block, alt, None, options, "Europe/Madrid", culmination_jd_utc=mid)
    assert f"may start any time from {local[0]} to {local[1]} local (05:18-05:55 UTC)" in notes
    assert local == ["06:18", "06:55"]
    assert "crosses the meridian near " in notes and " local (" in notes.split("meridian near ")[1]
    assert "may start any time from 05:18 to 05:55 UTC" in schedule._notes(block, alt, None, options)


def test_event_time_is_the_visible_tables_utc_time_carried_not_recomputed(targets):
    # The sky stage converts BJD_TDB to UTC once (its ``jd_utc`` column); the scheduler carries it.
    # BJD_TDB here is set 10 min away from jd_utc: a block whose event time followed BJD_TDB
    # instead would be off by that much.
    row = visible_row("Alpha", 0, 0, 0.3, 0.5)
    row["bjd_tdb"] = row["jd_utc"] + 10.0 / 1440.0
    plan = schedule.plan_week(pd.DataFrame([row]), None, targets, nights_table())
    assert plan["event_jd_utc"].iloc[0] == row["jd_utc"]


def test_bad_tables_and_options_are_refused_with_the_column(targets):
    with pytest.raises(PeriplanError, match="observable_start_jd_utc"):
        schedule.plan_week(visible_frame_empty().drop(columns="observable_start_jd_utc"), None, targets,
                           nights_table())
    with pytest.raises(PeriplanError, match="dark_start_jd_utc"):
        schedule.plan_week(visible_frame_empty(), None, targets, nights_table().drop(columns="dark_start_jd_utc"))
    with pytest.raises(PeriplanError, match="week rule 'twice'"):
        schedule.ScheduleOptions(repeats="twice")
    with pytest.raises(PeriplanError, match="overhead_min"):
        schedule.ScheduleOptions(overhead_min=-1.0)


def test_display_frame_times_match_astropy(targets):
    from astropy.time import Time

    plan = schedule.plan_week(pd.DataFrame([visible_row("Alpha", 0, 0, 0.3, 0.5)]), None, targets, nights_table())
    shown = tables.display_frame(plan, "Europe/Madrid")
    for col in ("night", "start_utc", "end_utc", "start_local", "end_local", "target", "event", "event_utc",
                "score", "request", "covers", "alt_low_deg", "alt_event_deg", "alt_t1_deg", "airmass",
                "moon_sep_deg", "notes"):
        assert col in shown.columns
    assert "alt_start_deg" not in shown.columns
    expect = Time(plan["start_jd_utc"].iloc[0], format="jd", scale="utc").isot[:19] + "Z"
    assert shown["start_utc"].iloc[0] == expect
    # Madrid is UTC+1 in December (IANA tz database, zone Europe/Madrid, CET)
    assert shown["start_local"].iloc[0].endswith("+01:00")
    assert shown["start_local"].iloc[0][11:13] == f"{(int(expect[11:13]) + 1) % 24:02d}"


def test_series_without_contacts_needs_the_event_moment(targets):
    # No duration or geometry: the parts of the event are unknown, so a stretch that ends 1 h
    # before the event (only baseline) is worth nothing; one that holds the event is kept.
    row = visible_row("Alpha", 0, 0, 0.30, 0.40)
    row["bjd_tdb"] = row["jd_utc"] = J0 + 0.45
    assert schedule.plan_week(pd.DataFrame([row]), None, targets, nights_table(), altitude).empty
    row["bjd_tdb"] = row["jd_utc"] = J0 + 0.39
    kept = schedule.plan_week(pd.DataFrame([row]), None, targets, nights_table(), altitude)
    assert len(kept) == 1 and kept["covers"].iloc[0] == "mid" and kept["request"].iloc[0] == "series"


def test_block_belongs_to_the_night_that_holds_it(targets):
    # A wide window labelled with night 1 (its event's night) whose observable stretch lies in
    # night 0: the block goes to night 0 and competes there, so nights never overlap.
    wide = visible_row("Alpha", 0, 0, 0.30, 0.45)
    wide["night"] = NIGHT_LABELS[1]
    other = visible_row("Beta", 1, 0, 0.40, 0.50, event="primary_conjunction")
    plan = schedule.plan_week(pd.DataFrame([wide, other]), None, targets, nights_table(), altitude)
    assert set(plan["night"]) == {NIGHT_LABELS[0]}
    assert len(plan) == 1  # the two overlap, only one fits
    assert list(schedule.night_index([J0 + 0.3, J0 + 1.3, J0 + 2.9, J0 + 5.0], nights_table())) == [0, 1, 2, -1]


def test_flexible_gap_goes_to_the_higher_score_and_uses_the_moon_function(targets):
    # One 1.2-h stretch: Gamma (priority 2, 1 h) and Delta (priority 1, 0.5 h) cannot both fit
    # with the 10-min overhead (1.67 h); greedy by score places Gamma.
    availability = pd.concat([availability_rows(2, "Gamma", nights=(0,), start=0.30, end=0.35),
                              availability_rows(3, "Delta", nights=(0,), start=0.30, end=0.35)], ignore_index=True)
    plan = schedule.plan_week(visible_frame_empty(), availability, targets, nights_table(), altitude)
    assert list(plan["target"]) == ["Gamma"]
    # a Moon 6 deg away at 40 per cent illumination: moon term 1 - 0.4 (1 - 6/60) = 0.64
    near_moon = schedule.plan_week(visible_frame_empty(), availability, targets, nights_table(), altitude,
                                   moon_sep_deg=lambda ti, jd: np.full(np.shape(jd), 6.0))
    assert abs(near_moon["moon_sep_deg"].iloc[0] - 6.0) <= SCORE_TOL_PTS  # passed through unchanged
    assert abs(near_moon["pts_moon"].iloc[0] - 10.0 * (1 - 0.4 * (1 - 6.0 / 60.0))) <= SCORE_TOL_PTS
