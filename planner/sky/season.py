"""When each target's key events can be observed from a site over the coming months.

For proposals and semester planning: every event the catalogue asks for (its ``events``), in
every night of a span of months, with the fraction of its window (event length, baseline and
timing uncertainty either side, as in :func:`planner.sky.windows.event_visibility`) that is
dark and inside the site's limits. The same engine as a week's plan, over more nights: Sun
and Moon tracks, the night table, observable intervals and event visibility.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from ..orbits.events import predict_events
from ..timescales.epochs import utc_to_tdb_jd
from . import night as night_mod
from . import windows

#: Most months a season may span: the Earth-orientation table and the point of the view.
MAX_MONTHS = 24
#: Events are predicted this many days beyond the nights, so a window reaching in is seen.
EVENT_MARGIN_D = 1.0

SEASON_COLUMNS = ("target_index", "target", "event", "label", "night", "bjd_tdb", "jd_utc", "sigma_d",
                  "duration_d", "alt_deg", "observable_h", "observable_fraction")


def add_months(day: dt.date, months: int) -> dt.date:
    """The same day of the month ``months`` later (the month's last day where it is shorter)."""
    import calendar

    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def season_nights(first_night: dt.date, months: int) -> int:
    """Number of nights from ``first_night`` up to (not including) the same date ``months`` later."""
    return (add_months(first_night, months) - first_night).days


def season_events(targets: pd.DataFrame, site, first_night: dt.date, n_nights: int,
                  baseline_h: float = windows.DEFAULT_BASELINE_H, k_sigma: float = windows.DEFAULT_K_SIGMA,
                  kinds=None) -> pd.DataFrame:
    """Every wanted event falling in the nights, with its visibility (:data:`SEASON_COLUMNS`).

    ``first_night`` is a night label (local date of the evening); times are UTC Julian dates,
    ``bjd_tdb`` the event's barycentric time, ``sigma_d`` its 1-sigma uncertainty (days).
    Rows are sorted by target (catalogue order), event and time.
    """
    tracks = night_mod.tracks_for_nights(site, first_night, n_nights, margin_d=EVENT_MARGIN_D + 0.05)
    nights = night_mod.night_table(site, first_night, n_nights, tracks=tracks)
    lo = nights["noon_jd_utc"].min() - EVENT_MARGIN_D
    hi = nights["next_noon_jd_utc"].max() + EVENT_MARGIN_D
    span = utc_to_tdb_jd(np.array([lo, hi]))
    events = predict_events(targets, float(span[0]), float(span[1]), kinds=kinds)
    if len(events) == 0:
        return pd.DataFrame({c: [] for c in SEASON_COLUMNS})
    intervals = windows.observable_intervals(targets, site, nights, tracks=tracks,
                                             target_indices=np.unique(events["target_index"].to_numpy(int)))
    vis = windows.event_visibility(events, targets, site, nights, baseline_h=baseline_h, k_sigma=k_sigma,
                                   tracks=tracks, intervals=intervals)
    vis = vis[vis["night"].notna()]
    order = np.lexsort((vis["jd_utc"].to_numpy(float), vis["event"].astype(str).to_numpy(),
                        vis["target_index"].to_numpy(int)))
    vis = vis.iloc[order].reset_index(drop=True)
    return pd.DataFrame({
        "target_index": vis["target_index"].to_numpy(int), "target": vis["target"].to_numpy(object),
        "event": vis["event"].astype(str).to_numpy(object), "label": vis["label"].to_numpy(object),
        "night": vis["night"].astype(str).to_numpy(object), "bjd_tdb": vis["bjd_tdb"].to_numpy(float),
        "jd_utc": vis["jd_utc"].to_numpy(float), "sigma_d": vis["sigma_d"].to_numpy(float),
        "duration_d": vis["duration_d"].to_numpy(float), "alt_deg": vis["alt_deg"].to_numpy(float),
        "observable_h": vis["observable_h"].to_numpy(float),
        "observable_fraction": vis["observable_fraction"].to_numpy(float),
    }, columns=list(SEASON_COLUMNS))
