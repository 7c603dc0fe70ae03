"""The week's plan: request table -> the best non-overlapping blocks of the week, explained.

:func:`plan_week` is the scheduler. It takes the visible-event table, the observable intervals
and the night table (all times Julian dates in UTC, plain floats), builds the request table
(:mod:`planner.scheduling.requests`, or takes the caller's) and returns the schedule table
(:data:`SCHEDULE_COLUMNS`, one row per block, sorted by night and start time);
:func:`plan_week_report` also returns the solver's report.

Method:

1. Candidates: every request candidate (each observable stretch of a series window worth a
   block, each RV visit or sequence slot with its allowed starts, each merged candidate) is
   scored by :func:`planner.scheduling.score.score_components`; it belongs to the night that
   holds its middle (a wide window can reach into the night before or after the event's).
   Monitor visits (targets with ``visit_h``) are candidates at starts spread over each night's
   observable stretch (:mod:`planner.scheduling.monitor`).
2. One exact choice for the whole week (:mod:`planner.scheduling.choose`): a 0/1 programme
   solved by HiGHS, with no overlap (overhead included), each request once, the week rule of
   each target's event, one monitor or RV visit of a target a night and the monitor gap across
   nights; its total value is the largest possible, or within the reported gap of the solver's
   bound when the time limit stops it (tests/test_schedule.py compares with exhaustive search).
3. Notes per block in words (partial coverage, movable visit, meridian, twilight, Sun).

Deterministic when the solver proves its plan optimal (the report says so): the same input then
gives the same plan (the solver is run single-threaded on a model built in a fixed order). A
choice stopped by its time limit is the best plan found by then, and how far the search got
depends on the machine's speed, so a large catalogue's plan may differ from run to run; its
value stays within the reported gap of the bound.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..sky.night import darkness_of
from ..timescales.clock import local_and_utc
from .blocks import (AVAILABILITY_COLUMNS, FLEXIBLE, MIN_PER_DAY, NIGHT_COLUMNS, SCHEDULE_COLUMNS, VISIBLE_COLUMNS,
                     ScheduleOptions, night_index, require_columns)
from .candidates import candidates_from_requests, fixed_candidates, with_altitudes
from .choose import choose_blocks
from .log_requests import apply_log, phase_candidates
from .monitor import monitor_candidates
from .options import airmass_points_at
from .requests import RequestSettings, build_requests, monitor_requests
from .series_parts import BASELINE_PART

logger = logging.getLogger(__name__)

__all__ = ["AVAILABILITY_COLUMNS", "NIGHT_COLUMNS", "SCHEDULE_COLUMNS", "VISIBLE_COLUMNS", "ScheduleOptions",
           "fixed_candidates", "plan_week", "plan_week_report"]


def _culmination_jd_utc(altitude_deg, target_index: int, start: float, end: float, alt: np.ndarray) -> float:
    """UTC Julian date (to the minute) of the target's highest point inside a block, NaN when it
    is at either end; ``alt``: the altitudes at the block's evenly spaced samples. The highest
    sample marks it; the minute grid between its neighbours places it (a fixed star culminates
    at its meridian transit)."""
    if altitude_deg is None or alt.size < 3 or not np.isfinite(alt).all():
        return np.nan
    k = int(np.argmax(alt))
    if not (0 < k < alt.size - 1 and alt[k] > alt[0] and alt[k] > alt[-1]):
        return np.nan
    step = (end - start) / (alt.size - 1)
    times = start + step * (k - 1) + np.arange(0.0, 2 * step, 1.0 / MIN_PER_DAY)
    fine = np.asarray(altitude_deg(np.full(times.size, target_index), times), float)
    return float(times[int(np.argmax(fine))])


def _notes(block: pd.Series, alt: np.ndarray, night_row, options: ScheduleOptions, tz=None,
           culmination_jd_utc=np.nan) -> str:
    """Plain-language notes on one block: coverage, movable visit, meridian (at
    ``culmination_jd_utc``, :func:`_culmination_jd_utc`), twilight, Sun.
    Clock times are local in the IANA zone ``tz`` with UTC beside them, or UTC without one."""
    notes = []
    if block["kind"] == FLEXIBLE:
        notes.append("flexible visit: any time inside the block")
    elif block["request"] in ("rv_visit", "rv_sequence"):
        lo, hi = block["earliest_start_jd_utc"], block["latest_start_jd_utc"]
        if np.isfinite(lo) and np.isfinite(hi) and hi - lo > 1.0 / MIN_PER_DAY:
            notes.append(f"the visit may start any time from {local_and_utc(lo, hi, tz=tz)}")
    else:
        f = block["observable_fraction"]
        if np.isfinite(f) and f < 0.995:
            notes.append(f"partial: {100 * f:.0f}% of the event window is observable")
        ev = block["event_jd_utc"]
        if np.isfinite(ev) and not (block["start_jd_utc"] <= ev <= block["end_jd_utc"]):
            notes.append("the event time itself lies outside the block")
        p0, p1 = block.get("pause_start_jd_utc", np.nan), block.get("pause_end_jd_utc", np.nan)
        if np.isfinite(p0) and np.isfinite(p1):
            notes.append(f"pause from {local_and_utc(p0, p1, tz=tz)}: the target is not observable then "
                         "(the site's limits); resume after it")
        cut = block.get("baseline_min", np.nan)
        if np.isfinite(cut):
            notes.append(f"baselines cut to {cut:.0f} min (of {cut / BASELINE_PART:.0f} wanted)")
    if np.isfinite(culmination_jd_utc):
        notes.append(f"crosses the meridian near {local_and_utc(culmination_jd_utc, tz=tz)}: a mount flip may be "
                     "needed")
    if night_row is not None:
        margin = options.twilight_margin_min / MIN_PER_DAY
        d0, d1 = night_row["dark_start_jd_utc"], night_row["dark_end_jd_utc"]
        sunset, sunrise = night_row["sunset_jd_utc"], night_row["sunrise_jd_utc"]
        s, e = block["start_jd_utc"], block["end_jd_utc"]
        if (np.isfinite(sunset) and s < sunset) or (np.isfinite(sunrise) and e > sunrise):
            notes.append("SUN ABOVE THE HORIZON during the block: do not observe while the Sun is up")
        if not (np.isfinite(d0) and np.isfinite(d1)):
            notes.append(f"no {darkness_of(night_row)[0]} this night")
        else:
            if s < d0 + margin:
                notes.append("starts in or close to evening twilight")
            if e > d1 - margin:
                notes.append("ends in or close to morning twilight")
    return "; ".join(notes)


def plan_week(visible: pd.DataFrame, availability: pd.DataFrame | None, targets: pd.DataFrame,
              nights: pd.DataFrame, altitude_deg=None, moon_sep_deg=None,
              options: ScheduleOptions = ScheduleOptions(), requests: pd.DataFrame | None = None,
              intervals: pd.DataFrame | None = None) -> pd.DataFrame:
    """Schedule table (columns :data:`SCHEDULE_COLUMNS`) for the nights of ``nights``.

    Parameters
    ----------
    visible : visible-event table (:data:`VISIBLE_COLUMNS`)
    availability : observable intervals of the targets with ``visit_h`` (:data:`AVAILABILITY_COLUMNS`)
        or None: where their monitor visits may go
    targets : catalogue table (:func:`planner.read_catalogue`), indexed 0..n-1 in the order
        ``target_index`` refers to
    nights : night table (:data:`NIGHT_COLUMNS`), one row per night; its order is the week's order
    altitude_deg, moon_sep_deg : optional functions ``f(target_index, jd_utc) -> deg`` (arrays of
        one shape in, that shape out) giving the target's altitude and its Moon separation
    options : :class:`ScheduleOptions`
    requests : the request table (:func:`planner.scheduling.requests.build_requests`); when not
        given it is built from ``visible`` and ``intervals`` with the default baseline
    intervals : observable intervals (:func:`planner.sky.windows.observable_intervals`) from
        which every stretch of a window is taken; without them, the visible table's longest one

    Returns
    -------
    DataFrame sorted by night (in ``nights`` order) and start. ``kind`` is ``fixed`` or
    ``flexible`` (a monitor visit, ``event`` = ``visit``, event columns NaN); ``request`` the
    request kind; ``covers``/``not_covered`` the parts of a series. ``notes`` is a
    ``"; "``-joined list of plain-language notes. An empty table (right columns) when nothing fits.
    """
    return plan_week_report(visible, availability, targets, nights, altitude_deg, moon_sep_deg, options,
                            requests, intervals)[0]


def plan_week_report(visible, availability, targets, nights, altitude_deg=None, moon_sep_deg=None,
                     options: ScheduleOptions = ScheduleOptions(), requests=None, intervals=None, log=None,
                     tz=None):
    """(schedule, candidates, report): :func:`plan_week`'s table, every candidate block it
    chose from (requests and monitor visits, each with its ``night``) and the solver's
    :class:`~planner.scheduling.solver.SolveReport` (optimal, or the gap to the bound).
    ``tz``: the site's IANA zone, for the clock times of the blocks' notes (local, UTC beside).

    ``log``, an observation log (:func:`planner.inputs.observation_log.read_log`), changes the
    requests as :mod:`planner.scheduling.log_requests` says (done events drop out, monitor gaps
    count from the last visit, empty phase bins become RV visits)."""
    week = week_candidates(visible, availability, targets, nights, altitude_deg, moon_sep_deg, options, requests,
                           intervals, log)
    order = list(nights["night"].astype(str))
    points = airmass_points_at({"telescope": altitude_deg}, options.weights) if altitude_deg is not None else None
    blocks, visits, report = choose_blocks(week.cands, week.monitors, targets, order, options.overhead_min / MIN_PER_DAY,
                                           options.repeats, options.time_limit_s_per_night * max(len(order), 1),
                                           points)
    schedule = assemble(blocks, visits, week, nights, altitude_deg, options, tz)
    logger.info("scheduled %d blocks (%d request candidates, %d monitor candidates) over %d nights: %s",
                len(schedule), len(week.cands), len(week.monitors), len(order), report.describe())
    return schedule, week.everything(), report


@dataclass
class WeekCandidates:
    """The candidate blocks of one site's nights: request candidates, monitor visits (with
    ``gap_d``) and the altitudes through each monitor visit."""

    cands: pd.DataFrame
    monitors: pd.DataFrame
    alt_monitors: np.ndarray

    def everything(self) -> pd.DataFrame:
        if not len(self.monitors):
            return self.cands
        return pd.concat([self.cands, self.monitors.drop(columns="gap_d")], ignore_index=True)


def week_candidates(visible, availability, targets, nights, altitude_deg=None, moon_sep_deg=None,
                    options: ScheduleOptions = ScheduleOptions(), requests=None, intervals=None,
                    log=None) -> WeekCandidates:
    """Every candidate block of the nights, after the observation log (see :func:`plan_week_report`)."""
    require_columns(nights, NIGHT_COLUMNS, "night")
    require_columns(visible, VISIBLE_COLUMNS, "visible-event")
    if availability is not None:
        require_columns(availability, AVAILABILITY_COLUMNS, "flexible availability")
    if requests is None:
        requests = build_requests(visible, targets, intervals, altitude_deg,
                                  RequestSettings(min_block_min=options.min_block_min), options.weights,
                                  moon_sep_deg=moon_sep_deg, nights=nights)
    order = list(nights["night"].astype(str))
    cands = candidates_from_requests(requests)
    # a long window (large timing uncertainty) can have its observable stretch on a night other
    # than the event's: a block belongs to the night that holds its middle, so nights never overlap
    held = night_index(0.5 * (cands["start_jd_utc"] + cands["end_jd_utc"]).to_numpy(float), nights)
    cands["night"] = np.where(held >= 0, np.asarray(order + [""], dtype=object)[held], "")
    cands = cands[cands["night"].isin(order).to_numpy()].reset_index(drop=True)
    monitors, alt_mon = monitor_candidates(monitor_requests(availability, targets), targets, nights, options,
                                           altitude_deg, moon_sep_deg)
    phase, _ = phase_candidates(log, targets, availability if availability is not None else intervals, nights,
                                options, altitude_deg, moon_sep_deg)
    if len(phase):
        cands = pd.concat([cands, phase[phase["night"].isin(order)]], ignore_index=True)
    cands, monitors = apply_log(cands, monitors, log, targets, visible)
    alt_mon = alt_mon[monitors.index.to_numpy()] if len(monitors) else alt_mon[:0]
    return WeekCandidates(cands, monitors.reset_index(drop=True), alt_mon)


def assemble(blocks, visits, week: WeekCandidates, nights, altitude_deg, options, tz=None) -> pd.DataFrame:
    """The schedule table of the chosen blocks and monitor visits of one site: altitudes, notes
    (clock times local in the site's zone ``tz``, UTC beside them), order."""
    order = list(nights["night"].astype(str))
    chosen, alt_fixed = with_altitudes(blocks, altitude_deg)
    alts = list(alt_fixed) + list(week.alt_monitors[visits.index.to_numpy()])
    chosen = pd.concat([chosen, visits[list(SCHEDULE_COLUMNS)]], ignore_index=True) if len(visits) else chosen
    chosen["logged_parts"] = [p if isinstance(p, str) else "" for p in chosen["logged_parts"]]
    night_rows = {str(r["night"]): r for _, r in nights.iterrows()}
    chosen["notes"] = [
        _notes(b, np.asarray(a, float), night_rows.get(str(b["night"])), options, tz,
               _culmination_jd_utc(altitude_deg, int(b["target_index"]), b["start_jd_utc"], b["end_jd_utc"],
                                   np.asarray(a, float)))
        for (_, b), a in zip(chosen.iterrows(), alts)
    ] if len(chosen) else []
    rank = {lab: i for i, lab in enumerate(order)}
    chosen = chosen.assign(_n=chosen["night"].map(rank))
    chosen = chosen.sort_values(["_n", "start_jd_utc", "target_index"], kind="stable").drop(columns="_n")
    chosen = chosen.reset_index(drop=True)
    chosen["target_index"] = chosen["target_index"].astype(np.int64)
    return chosen[list(SCHEDULE_COLUMNS)]
