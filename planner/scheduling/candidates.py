"""Candidate blocks from the request table: one schedule row per request candidate.

Fixed candidates (series stretches) are their stretch; movable ones (RV visits and sequence
slots) are proposed at the start the request stage chose (lowest airmass inside the allowed
range) and keep their allowed range in ``earliest_start_jd_utc`` / ``latest_start_jd_utc``.
Altitudes are sampled through each block for the airmass and the notes; the block's lowest
altitude, the altitude at the event moment (when the block holds it) and at each contact it
covers are the schedule's altitude columns.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import (ALT_SAMPLES, CONTACT_NAMES, FIXED, SCHEDULE_COLUMNS, VISIBLE_COLUMNS, ScheduleOptions,
                     altitudes, require_columns, sample_times)
from .requests import RequestSettings, build_requests


def point_altitudes(altitude_deg, target_index, jd_utc, start, end):
    """Altitude (deg) of each block's target at ``jd_utc`` where the block holds it, else NaN."""
    t = np.asarray(jd_utc, float)
    inside = np.isfinite(t) & (t >= start - 1e-9) & (t <= end + 1e-9)
    out = np.full(t.shape, np.nan)
    if altitude_deg is not None and inside.any():
        out[inside] = np.asarray(altitude_deg(np.asarray(target_index, int)[inside], t[inside]), float)
    return out


def candidates_from_requests(requests: pd.DataFrame, altitude_deg=None):
    """(candidates with :data:`SCHEDULE_COLUMNS`, (n, ALT_SAMPLES) altitudes through each block)."""
    r = requests.reset_index(drop=True)
    n = len(r)
    idx = r["target_index"].to_numpy(int)
    start, end = r["start_jd_utc"].to_numpy(float), r["end_jd_utc"].to_numpy(float)
    alt = altitudes(altitude_deg, idx, sample_times(start, end))
    out = pd.DataFrame({c: r[c].to_numpy() for c in SCHEDULE_COLUMNS if c in r})
    out["kind"] = np.full(n, FIXED, dtype=object)
    out["alt_low_deg"] = np.min(alt, axis=1) if n else np.zeros(0)
    out["alt_event_deg"] = point_altitudes(altitude_deg, idx, r["event_jd_utc"].to_numpy(float), start, end)
    for c in CONTACT_NAMES:
        out[f"alt_{c}_deg"] = point_altitudes(altitude_deg, idx, r[f"{c}_jd_utc"].to_numpy(float), start, end)
    from .blocks import mean_airmass
    from .score import airmass_from_alt

    out["airmass"] = mean_airmass(airmass_from_alt(alt))
    out["notes"] = ""
    return out[list(SCHEDULE_COLUMNS)], alt


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
    return candidates_from_requests(req, altitude_deg)[0]
