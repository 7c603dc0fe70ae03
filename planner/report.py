"""Tables for people: engine tables -> columns with UTC, local time and minutes."""

from __future__ import annotations

import numpy as np
import pandas as pd

from . import timescales


def events_frame(events: pd.DataFrame, targets: pd.DataFrame, start_utc, end_utc, tz: str | None) -> pd.DataFrame:
    """Events seen from the Earth between ``start_utc`` and ``end_utc``, for display and export.

    Columns ``target, event, label, cycle, bjd_tdb, utc`` (ISO 8601, ``Z``), ``local`` (only when
    ``tz`` is given), ``sigma_min`` (1-sigma, minutes) and ``duration_h``.
    """
    if events.empty:
        cols = ["target", "event", "label", "cycle", "bjd_tdb", "utc"] + (["local"] if tz else []) + ["sigma_min", "duration_h"]
        return pd.DataFrame(columns=cols)
    idx = events["target_index"].to_numpy()
    ra = targets["ra_deg"].to_numpy(float)[idx]
    dec = targets["dec_deg"].to_numpy(float)[idx]
    t_utc = timescales.bjd_tdb_to_utc(events["bjd_tdb"].to_numpy(float), ra, dec)
    inside = ((t_utc >= start_utc) & (t_utc < end_utc))
    events = events[inside].reset_index(drop=True)
    t_utc = t_utc[inside]
    out = pd.DataFrame({
        "target": events["target"], "event": events["event"], "label": events["label"],
        "cycle": events["cycle"], "bjd_tdb": events["bjd_tdb"],
        "utc": timescales.utc_to_iso_z(t_utc) if len(events) else np.array([], dtype=object),
    })
    if tz:
        out["local"] = timescales.utc_to_local_iso(t_utc, tz) if len(events) else []
    out["sigma_min"] = events["sigma_d"].to_numpy(float) * 1440.0
    out["duration_h"] = events["duration_d"].to_numpy(float) * 24.0
    return out
