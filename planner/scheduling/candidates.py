"""Candidate blocks from the request table: one schedule row per request candidate.

Fixed candidates (series stretches) are their stretch; movable ones (RV visits and sequence
slots) are proposed at the start the request stage chose (lowest airmass inside the allowed
range) and keep their allowed range in ``earliest_start_jd_utc`` / ``latest_start_jd_utc``.
Once blocks are chosen, :func:`with_altitudes` samples the altitude through each for the
airmass and the notes; the block's lowest altitude, the altitude at the event moment (when the
block holds it) and at each contact it covers are the schedule's altitude columns.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import (CONTACT_NAMES, FIXED, SCHEDULE_COLUMNS, VISIBLE_COLUMNS, ScheduleOptions,
                     altitudes, column_values, require_columns, sample_times)
from .requests import RequestSettings, build_requests


def point_altitudes(altitude_deg, target_index, jd_utc, start, end):
    """Altitude (deg) of each block's target at ``jd_utc`` where the block holds it, else NaN."""
    t = np.asarray(jd_utc, float)
    inside = np.isfinite(t) & (t >= start - 1e-9) & (t <= end + 1e-9)
    out = np.full(t.shape, np.nan)
    if altitude_deg is not None and inside.any():
        out[inside] = np.asarray(altitude_deg(np.asarray(target_index, int)[inside], t[inside]), float)
    return out


def candidates_from_requests(requests: pd.DataFrame) -> pd.DataFrame:
    """Candidates (columns :data:`SCHEDULE_COLUMNS`) of the request table, altitudes not yet filled."""
    r = requests.reset_index(drop=True)
    out = pd.DataFrame({c: (column_values(r[c]) if c in r else np.full(len(r), np.nan)) for c in SCHEDULE_COLUMNS})
    out["kind"] = np.full(len(r), FIXED, dtype=object)
    out["notes"] = ""
    return out


def with_altitudes(blocks: pd.DataFrame, altitude_deg=None):
    """(blocks with the altitude and airmass columns filled, (n, ALT_SAMPLES) altitudes through each).

    Done for the chosen blocks only: the lowest altitude through the block, the altitude at the
    event moment and at each contact the block holds, and the mean airmass through it.
    """
    b = blocks.reset_index(drop=True).copy()
    idx = b["target_index"].to_numpy(int)
    start, end = b["start_jd_utc"].to_numpy(float), b["end_jd_utc"].to_numpy(float)
    alt = altitudes(altitude_deg, idx, sample_times(start, end))
    b["alt_low_deg"] = np.min(alt, axis=1) if len(b) else np.zeros(0)
    b["alt_event_deg"] = point_altitudes(altitude_deg, idx, b["event_jd_utc"].to_numpy(float), start, end)
    for c in CONTACT_NAMES:
        b[f"alt_{c}_deg"] = point_altitudes(altitude_deg, idx, b[f"{c}_jd_utc"].to_numpy(float), start, end)
    from .blocks import mean_airmass
    from .score import airmass_from_alt

    b["airmass"] = mean_airmass(airmass_from_alt(alt))
    return b, alt


def fixed_candidates(visible: pd.DataFrame, targets: pd.DataFrame, altitude_deg=None,
                     options: ScheduleOptions = ScheduleOptions(), intervals=None) -> pd.DataFrame:
    """Scored candidate blocks (:data:`SCHEDULE_COLUMNS`) of the visible events' requests.

    ``visible`` is the visible-event table (:data:`VISIBLE_COLUMNS`), ``targets`` the catalogue
    table; ``intervals`` the observable intervals (every stretch of a window is a candidate;
    without them the visible table's one stretch). See :mod:`planner.scheduling.requests`.
    """
    require_columns(visible, VISIBLE_COLUMNS, "visible-event")
    req = build_requests(visible, targets, intervals, altitude_deg,
                         RequestSettings(min_block_min=options.min_block_min), options.weights)
    return with_altitudes(candidates_from_requests(req), altitude_deg)[0]
