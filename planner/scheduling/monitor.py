"""Monitor visits as candidate blocks: each target's possible nightly visits, scored where they fall.

A monitor request (a target with ``visit_h``, see :func:`planner.scheduling.requests.monitor_requests`)
may put one visit of ``visit_h`` anywhere inside its observable stretch of a night. Its
candidates are up to :data:`MAX_STARTS` starts spread evenly over the stretch (one every
``flex_step_min`` when the stretch is short), each scored by its mean airmass and Moon distance
(:func:`planner.scheduling.score.score_components`; no event, so no coverage or timing terms).
The solver then picks at most one per target and night and keeps ``visit_gap_h`` between the
target's visits, across nights.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import FLEXIBLE, MIN_PER_DAY, SCHEDULE_COLUMNS, altitudes, mean_airmass, moon_at_blocks, sample_times
from .score import airmass_from_alt, score_components

#: Most starts tried for one monitor visit in one observable stretch (odd: the middle is one).
MAX_STARTS = 13


def monitor_candidates(monitors: pd.DataFrame, targets: pd.DataFrame, nights: pd.DataFrame, options,
                       altitude_deg=None, moon_sep_deg=None):
    """(candidates with :data:`SCHEDULE_COLUMNS` plus ``gap_d``, (n, k) altitudes through each).

    ``monitors``: the monitor requests (``target_index, night, start_jd_utc, end_jd_utc,
    length_d``); ``options``: the :class:`~planner.scheduling.blocks.ScheduleOptions`. ``group`` is ``target|night`` (one visit a night), ``gap_d`` the target's
    ``visit_gap_h`` in days.
    """
    step_d = options.flex_step_min / MIN_PER_DAY
    ti_all, night_all, s_all, mid_all, half_all = [], [], [], [], []
    for ti, night, a0, a1, length in zip(monitors["target_index"].to_numpy(int), monitors["night"].astype(str),
                                         monitors["start_jd_utc"].to_numpy(float),
                                         monitors["end_jd_utc"].to_numpy(float), monitors["length_d"].to_numpy(float)):
        last = a1 - length
        if not (np.isfinite(last) and length > 0 and last >= a0):
            continue
        k = int(min(MAX_STARTS, np.floor((last - a0) / step_d) + 1)) | 1
        starts = np.linspace(a0, last, max(k, 1))
        ti_all.append(np.full(starts.size, ti))
        night_all.append(np.full(starts.size, night, dtype=object))
        s_all.append(starts)
        mid_all.append(np.full(starts.size, 0.5 * (a0 + last)))
        half_all.append(np.full(starts.size, 0.5 * (last - a0)))
    if not s_all:
        return pd.DataFrame({c: [] for c in SCHEDULE_COLUMNS + ("gap_d",)}), np.zeros((0, 9))
    ti = np.concatenate(ti_all)
    night = np.concatenate(night_all)
    start = np.concatenate(s_all)
    mid, half = np.concatenate(mid_all), np.concatenate(half_all)
    visit_d = targets["visit_h"].to_numpy(float)[ti] / 24.0
    end = start + visit_d
    alt = altitudes(altitude_deg, ti, sample_times(start, end))
    x = mean_airmass(airmass_from_alt(alt))
    sep, illumination = moon_at_blocks(moon_sep_deg, nights, ti, start, end, night)
    priority = targets["priority"].to_numpy(float)[ti]
    nan = np.full(ti.size, np.nan)
    scores = score_components(priority, nan, nan, x, sep, illumination, nan, nan, options.weights)
    gap_h = targets["visit_gap_h"].to_numpy(float)[ti] if "visit_gap_h" in targets else np.zeros(ti.size)
    out = pd.DataFrame({c: np.full(ti.size, np.nan) for c in SCHEDULE_COLUMNS})
    out = out.astype({c: object for c in ("night", "target", "event", "serves", "label", "kind", "request",
                                          "group", "covers", "not_covered", "notes")})
    out["night"], out["start_jd_utc"], out["end_jd_utc"] = night, start, end
    out["target"] = targets["name"].to_numpy(object)[ti]
    out["target_index"] = ti.astype(np.int64)
    out["event"], out["serves"], out["label"], out["kind"], out["request"] = "visit", "visit", "flexible visit", \
        FLEXIBLE, "monitor"
    out["request_id"] = -1
    out["group"] = [f"monitor|{t}|{n}" for t, n in zip(ti, night)]
    out["slot"], out["n_slots"], out["covers"], out["not_covered"], out["notes"] = 0, 1, "", "", ""
    out["science_fraction"], out["priority"] = 1.0, priority
    out["earliest_start_jd_utc"], out["latest_start_jd_utc"] = start, start
    out["alt_low_deg"] = np.min(alt, axis=1)
    out["airmass"], out["moon_sep_deg"], out["moon_illumination"] = x, sep, illumination
    for c in scores.columns:
        out[c] = scores[c].to_numpy()
    # ties (no altitude function, or a flat sky) go to the middle of the stretch: 0.01 % at its ends
    out["score"] = out["score"].to_numpy() * (1.0 - 1e-4 * np.abs(start - mid) / np.maximum(half, 1e-9))
    out["gap_d"] = np.where(np.isfinite(gap_h), gap_h, 0.0) / 24.0
    return out, alt
