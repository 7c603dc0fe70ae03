"""Fixed-time candidate blocks: one scored block per visible event window."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import (ALT_SAMPLES, FIXED, MIN_PER_DAY, SCHEDULE_COLUMNS, VISIBLE_COLUMNS, ScheduleOptions, altitudes,
                     mean_airmass, require_columns, sample_times)
from .score import airmass_from_alt, score_components


def fixed_candidates(visible: pd.DataFrame, targets: pd.DataFrame, altitude_deg=None,
                     options: ScheduleOptions = ScheduleOptions()) -> pd.DataFrame:
    """Scored fixed-time candidate blocks, one per visible event window, columns :data:`SCHEDULE_COLUMNS`.

    ``visible`` is the visible-event table (:data:`VISIBLE_COLUMNS`), ``targets`` the catalogue
    table (for priority, period, coordinates). Each block covers the observable stretch of its
    window; stretches shorter than ``options.min_block_min`` are dropped. ``altitude_deg`` is an
    optional function ``f(target_index, jd_utc) -> alt_deg`` (integer and float arrays of the same
    shape, result that shape); with it the airmass is the mean through the block, without it the
    table's ``alt_deg`` (when present) stands for the whole block. ``event_jd_utc`` is the table's
    ``jd_utc``, the moment the event is seen from the Earth (computed once, by the sky stage).
    With ``options.event_inside_only`` (default) blocks that do not contain that moment are dropped. A block whose airmass is unknown earns no airmass points.
    ``night`` is the table's label; :func:`plan_week` re-assigns each block to the night that holds
    its middle (:func:`night_index`).
    """
    return fixed_candidates_with_altitudes(visible, targets, altitude_deg, options)[0]


def fixed_candidates_with_altitudes(visible, targets, altitude_deg, options):
    """(candidates, (n, ALT_SAMPLES) altitudes through each block)."""
    require_columns(visible, VISIBLE_COLUMNS, "visible-event")
    # a fixed order independent of the input's row order: the tie-break of best_intervals
    v = visible.sort_values(["observable_start_jd_utc", "observable_end_jd_utc", "target_index", "event", "night"],
                            kind="stable").reset_index(drop=True)
    start = v["observable_start_jd_utc"].to_numpy(float)
    end = v["observable_end_jd_utc"].to_numpy(float)
    with np.errstate(invalid="ignore"):
        long_enough = (end - start) * MIN_PER_DAY >= max(options.min_block_min, 1e-6)
        keep = np.isfinite(start) & np.isfinite(end) & long_enough
    v, start, end = v[keep].reset_index(drop=True), start[keep], end[keep]
    event_jd = v["jd_utc"].to_numpy(float)
    if options.event_inside_only:
        inside = (event_jd >= start) & (event_jd <= end)
        v, start, end, event_jd = v[inside].reset_index(drop=True), start[inside], end[inside], event_jd[inside]
    n = len(v)
    idx = v["target_index"].to_numpy(int)
    times = sample_times(start, end)
    alt = altitudes(altitude_deg, idx, times)
    if altitude_deg is None and "alt_deg" in v:
        alt = np.repeat(v["alt_deg"].to_numpy(float)[:, None], ALT_SAMPLES, axis=1)
    airmass = airmass_from_alt(alt)
    window = (v["window_end_jd_utc"] - v["window_start_jd_utc"]).to_numpy(float)
    block_airmass = mean_airmass(airmass)
    priority = targets["priority"].to_numpy(float)[idx]
    period = targets["period_d"].to_numpy(float)[idx]
    scores = score_components(priority, period, v["observable_fraction"].to_numpy(float), block_airmass,
                              v["moon_sep_deg"].to_numpy(float), v["moon_illumination"].to_numpy(float),
                              v["sigma_d"].to_numpy(float), window, options.weights)
    out = pd.DataFrame({
        "night": v["night"].astype(str).to_numpy(object), "start_jd_utc": start, "end_jd_utc": end,
        "target": v["target"].to_numpy(object), "target_index": idx.astype(np.int64),
        "event": v["event"].to_numpy(object), "label": v["label"].to_numpy(object),
        "kind": np.full(n, FIXED, dtype=object), "event_jd_utc": event_jd,
        "event_sigma_d": v["sigma_d"].to_numpy(float),
        "window_start_jd_utc": v["window_start_jd_utc"].to_numpy(float),
        "window_end_jd_utc": v["window_end_jd_utc"].to_numpy(float),
        "observable_fraction": v["observable_fraction"].to_numpy(float),
        "priority": priority, "period_d": period,
        "alt_start_deg": alt[:, 0], "alt_mid_deg": alt[:, ALT_SAMPLES // 2], "alt_end_deg": alt[:, -1],
        "airmass": block_airmass, "moon_sep_deg": v["moon_sep_deg"].to_numpy(float),
        "moon_illumination": v["moon_illumination"].to_numpy(float),
    })
    for c in scores.columns:
        out[c] = scores[c].to_numpy()
    out["notes"] = ""
    return out[list(SCHEDULE_COLUMNS)], alt
