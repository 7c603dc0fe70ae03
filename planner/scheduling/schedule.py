"""The week's plan: candidate blocks -> scores -> non-overlapping blocks per night, one telescope.

:func:`plan_week` is the scheduler. It takes the visible-event table, the flexible availability
and the night table (all times Julian dates in UTC, plain floats) and returns the schedule table
(:data:`SCHEDULE_COLUMNS`, one row per block, sorted by night and start time).

Method, per night:

1. Fixed-time candidates: every visible event window becomes one block covering the observable
   stretch of its window (``observable_start_jd_utc`` .. ``observable_end_jd_utc``), scored by
   :func:`planner.score.score_components`. By default a block must contain the predicted event
   moment (``ScheduleOptions.event_inside_only``), and it belongs to the night that holds its
   middle (a wide window can reach into the night before or after the event's).
2. Exact choice of fixed blocks: weighted interval scheduling (:func:`best_intervals`), the
   O(n log n) dynamic programme over blocks sorted by end time with a binary search for the last
   compatible block (Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1). Two blocks are
   compatible when the later one starts at least the setup/slew overhead after the earlier one
   ends. The chosen set has the largest possible total score; tests/test_schedule.py checks this
   against brute force over all subsets.
3. Flexible visits (targets with ``visit_h``) fill the gaps greedily: repeatedly place, among all
   flexible targets that still fit, the visit with the highest score (placement at the lowest mean
   airmass inside its free stretch), with the overhead either side, at most one visit per target
   per night, starts at least ``visit_gap_h`` after the target's previous visit, and no visit for
   a target that already has a fixed block that night. Greedy, so not optimal; stated as such.

Across the week the repeat rule (:data:`REPEAT_RULES`) says what to do with several instances of
the same target/event: ``"every"`` keeps them all (nights are independent); ``"first"`` keeps the
earliest night's and drops the others before later nights are scheduled; ``"best"`` keeps the
best-scored scheduled instance and re-plans the nights that lose one, until each target/event is
scheduled at most once (each night stays optimal for what is left; the week as a whole is a
heuristic, and in a rare case re-planning can leave a target/event with no instance).

Deterministic: ties are broken by a fixed order (end, start, target index, event name, night), so
the same input gives the same plan.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from ..sky.night import darkness_of
from ..timescales.clock import hhmm_utc
from .blocks import (AVAILABILITY_COLUMNS, FLEXIBLE, MIN_PER_DAY, NIGHT_COLUMNS, SCHEDULE_COLUMNS, VISIBLE_COLUMNS,
                     ScheduleOptions, night_index, require_columns)
from .candidates import fixed_candidates, fixed_candidates_with_altitudes
from .flexible import fill_flexible
from .intervals import best_intervals
from .week import choose_fixed

log = logging.getLogger(__name__)

__all__ = ["AVAILABILITY_COLUMNS", "NIGHT_COLUMNS", "SCHEDULE_COLUMNS", "VISIBLE_COLUMNS", "ScheduleOptions",
           "best_intervals", "fixed_candidates", "plan_week"]


def _notes(block: pd.Series, alt: np.ndarray, night_row, options: ScheduleOptions) -> str:
    """Plain-language notes on one block: coverage, meridian, twilight, Sun."""
    notes = []
    if block["kind"] == FLEXIBLE:
        notes.append("flexible visit: any time inside the block")
    else:
        f = block["observable_fraction"]
        if np.isfinite(f) and f < 0.995:
            notes.append(f"partial: {100 * f:.0f}% of the event window is observable")
        ev = block["event_jd_utc"]
        if np.isfinite(ev) and not (block["start_jd_utc"] <= ev <= block["end_jd_utc"]):
            notes.append("the event time itself lies outside the block")
    finite = np.isfinite(alt)
    if finite.all() and alt.size >= 3:
        k = int(np.argmax(alt))
        if 0 < k < alt.size - 1 and alt[k] > alt[0] and alt[k] > alt[-1]:
            t_k = block["start_jd_utc"] + (block["end_jd_utc"] - block["start_jd_utc"]) * k / (alt.size - 1)
            notes.append(f"crosses the meridian near {hhmm_utc(t_k)} UTC (mount flip?)")
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
              options: ScheduleOptions = ScheduleOptions()) -> pd.DataFrame:
    """Schedule table (columns :data:`SCHEDULE_COLUMNS`) for the nights of ``nights``.

    Parameters
    ----------
    visible : visible-event table (:data:`VISIBLE_COLUMNS`; ``alt_deg`` used when no altitude
        function is given)
    availability : flexible availability (:data:`AVAILABILITY_COLUMNS`) or None
    targets : catalogue table (:func:`planner.catalogue.read_catalogue`), indexed 0..n-1 in the
        order ``target_index`` refers to
    nights : night table (:data:`NIGHT_COLUMNS`), one row per night; its order is the week's order
    altitude_deg, moon_sep_deg : optional functions ``f(target_index, jd_utc) -> deg`` (arrays of
        one shape in, that shape out) giving the target's altitude and its Moon separation
    options : :class:`ScheduleOptions`

    Returns
    -------
    DataFrame sorted by night (in ``nights`` order) and start. ``kind`` is ``fixed`` or
    ``flexible``; for flexible visits ``event`` is ``visit`` and the event columns are NaN.
    ``notes`` is a ``"; "``-joined list of plain-language notes (partial coverage, event outside
    the block, meridian crossing, twilight, Sun). An empty table (right columns) when nothing fits.
    """
    require_columns(nights, NIGHT_COLUMNS, "night")
    if availability is not None:
        require_columns(availability, AVAILABILITY_COLUMNS, "flexible availability")
    order = list(nights["night"].astype(str))
    cands, alt_fixed = fixed_candidates_with_altitudes(visible, targets, altitude_deg, options)
    # a long window (large timing uncertainty) can have its observable stretch on a night other
    # than the event's: a block belongs to the night that holds its middle, so nights never overlap
    held = night_index(0.5 * (cands["start_jd_utc"] + cands["end_jd_utc"]).to_numpy(float), nights)
    cands["night"] = np.where(held >= 0, np.asarray(order + [""], dtype=object)[held], "")
    in_week = cands["night"].isin(order).to_numpy()
    cands, alt_fixed = cands[in_week].reset_index(drop=True), alt_fixed[in_week]
    mask = choose_fixed(cands, order, options.overhead_min / MIN_PER_DAY, options.repeats)
    chosen = cands[mask].reset_index(drop=True)
    alts = list(alt_fixed[mask])
    flex = fill_flexible(availability, targets, nights, chosen, altitude_deg, moon_sep_deg, options)
    alts += [r.pop("_alt") for r in flex]
    if flex:
        chosen = pd.concat([chosen, pd.DataFrame(flex)[list(SCHEDULE_COLUMNS)]], ignore_index=True)
    night_rows = {str(r["night"]): r for _, r in nights.iterrows()}
    chosen["notes"] = [
        _notes(b, np.asarray(a, float), night_rows.get(str(b["night"])), options)
        for (_, b), a in zip(chosen.iterrows(), alts)
    ] if len(chosen) else []
    rank = {lab: i for i, lab in enumerate(order)}
    chosen = chosen.assign(_n=chosen["night"].map(rank))
    chosen = chosen.sort_values(["_n", "start_jd_utc", "target_index"], kind="stable").drop(columns="_n")
    chosen = chosen.reset_index(drop=True)
    chosen["target_index"] = chosen["target_index"].astype(np.int64)
    log.info("scheduled %d blocks (%d fixed of %d candidates, %d flexible) over %d nights",
             len(chosen), int(mask.sum()), len(cands), len(flex), len(order))
    return chosen[list(SCHEDULE_COLUMNS)]
