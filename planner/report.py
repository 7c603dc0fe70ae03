"""Tables for people: engine tables -> columns with UTC, local time and minutes."""

from __future__ import annotations

import numpy as np
import pandas as pd

from . import timescales


def seen_in_span(events: pd.DataFrame, targets: pd.DataFrame, start_utc, end_utc):
    """(events, utc): the events seen from the Earth with start <= t < end (astropy UTC Times).

    ``events`` keeps the engine's columns (index reset); ``utc`` is an astropy Time (UTC) per row,
    the moment the event is seen from the geocentre (BJD_TDB minus the light travel time).
    """
    idx = events["target_index"].to_numpy()
    t_utc = timescales.bjd_tdb_to_utc(events["bjd_tdb"].to_numpy(float), targets["ra_deg"].to_numpy(float)[idx],
                                      targets["dec_deg"].to_numpy(float)[idx])
    inside = np.asarray((t_utc >= start_utc) & (t_utc < end_utc))
    return events[inside].reset_index(drop=True), t_utc[inside]


def events_frame(events: pd.DataFrame, t_utc, tz: str | None) -> pd.DataFrame:
    """Events for display and export, from :func:`seen_in_span`'s two results.

    Columns ``target, event, label, cycle, bjd_tdb, utc`` (ISO 8601, ``Z``), ``local`` (only when
    ``tz`` is given), ``sigma_min`` (1-sigma, minutes) and ``duration_h``.
    """
    some = len(events) > 0
    out = pd.DataFrame({
        "target": events["target"], "event": events["event"], "label": events["label"],
        "cycle": events["cycle"], "bjd_tdb": events["bjd_tdb"],
        "utc": timescales.utc_to_iso_z(t_utc) if some else np.array([], dtype=object),
    })
    if tz:
        out["local"] = timescales.utc_to_local_iso(t_utc, tz) if some else np.array([], dtype=object)
    out["sigma_min"] = events["sigma_d"].to_numpy(float) * 1440.0
    out["duration_h"] = events["duration_d"].to_numpy(float) * 24.0
    return out


#: Up to this many targets that never rise get a warning line each; more get one line in all.
MAX_WARNING_LINES = 10


def never_rising_lines(table: pd.DataFrame, site_name: str, listed_in: str | None = None) -> list[str]:
    """Warning lines for targets that can never be observed from the site (none is dropped silently).

    One line per target up to :data:`MAX_WARNING_LINES`, else one line that counts them and
    names the first, and ``listed_in`` (a file holding them all) when given.
    """
    if len(table) <= MAX_WARNING_LINES:
        return [f"{row.target} never rises high enough at {site_name}: {row.reason}" for row in table.itertuples()]
    first = table.iloc[0]
    where = f"; all are listed in {listed_in}" if listed_in else ""
    return [f"{len(table)} targets never rise high enough at {site_name} (e.g. {first['target']}: "
            f"{first['reason']}){where}"]
