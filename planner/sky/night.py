"""Night table: Sun, twilight and Moon for each local night at a site.

:func:`night_table` returns one row per night. A night is labelled by the **local calendar date
of its evening** (zoneinfo rules of the site's IANA zone, so daylight-saving changes and sites
near the date line get the right dates) and runs from the mean solar noon of that date to the
next one, exactly one day: the Sun is near its highest at both ends, so every evening and
morning of the night falls inside, also at high latitudes.

Columns (all times UTC Julian dates; NaN when the event does not happen in the night):

=========================  =========================================================================
``night``                  label, ``YYYY-MM-DD`` (local date of the evening)
``noon_jd_utc``,           mean solar noon starting and ending the night's window
``next_noon_jd_utc``
``sunset_jd_utc``          Sun's centre falling through -0.8333 deg (upper limb with standard
                           refraction, the almanac definition)
``dark_start_jd_utc``      Sun's centre falling through the site's darkness altitude
``dark_end_jd_utc``        ... rising through it again
``sunrise_jd_utc``         Sun's centre rising through -0.8333 deg
``dark_kind``              ``"dark"`` (a dark interval bounded by twilight), ``"all night"`` (the
                           Sun stays below the darkness altitude the whole window: polar night;
                           then dark start/end are the window's ends) or ``"no dark time"``
                           (it never gets that low: summer at high latitude; dark start/end NaN)
``dark_h``                 hours of darkness
``moon_illumination``      illuminated fraction (0..1) at the middle of the dark time (of the
                           window when there is none)
``moon_rise_jd_utc``,      first moonrise / moonset in the window (Moon's centre through -0.8333
``moon_set_jd_utc``        deg, topocentric, airless)
``moon_up_dark_h``         hours of the dark time with the Moon up
``darkness_sun_alt_deg``   the darkness altitude used
=========================  =========================================================================

Sun altitudes are airless (geometric) and topocentric; the -0.8333 deg of sunrise and sunset
stands for 34' of standard refraction plus 16' of semi-diameter, the definition of almanacs
(USNO, Almanac for Computers 1990: zenith 90 deg 50'). Accuracy: a few seconds of time against
astropy/astroplan with the same definitions (tests/test_night.py checks 1 minute).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from ..timescales.clock import calendar_date, datetime_to_jd_utc, zone
from . import positions
from .crossings import find_crossings, positive_intervals

#: Sun-centre altitude (deg) of sunrise and sunset: -(34' refraction + 16' semi-diameter).
SUNRISE_ALT_DEG = -0.8333
#: Moon-centre altitude (deg, topocentric) taken as moonrise/moonset: the same -50'
#: (34' refraction + about 16' semi-diameter); the Moon's semi-diameter varies 14.7'-16.7'.
MOONRISE_ALT_DEG = -0.8333
#: Grid step of the crossing search, days (10 min): Sun and Moon cross each level at most twice
#: a day, so no crossing is missed; bisection refines each to 0.05 s.
NIGHT_STEP_D = 10.0 / 1440.0


NIGHT_COLUMNS = (
    "night", "noon_jd_utc", "next_noon_jd_utc", "sunset_jd_utc", "dark_start_jd_utc",
    "dark_end_jd_utc", "sunrise_jd_utc", "dark_kind", "dark_h", "moon_illumination",
    "moon_rise_jd_utc", "moon_set_jd_utc", "moon_up_dark_h", "darkness_sun_alt_deg",
)


def solar_noons_jd_utc(first_night, n_nights: int, timezone: str, longitude_deg: float):
    """(labels, noon_jd_utc) of ``n_nights`` nights from ``first_night`` (a date or YYYY-MM-DD).

    Each night starts at the mean solar noon (UT 12 h - longitude / 15 h) nearest to 12:00 local
    clock time on its label date, so the label is the local date of the evening.
    """
    tz = zone(timezone)
    day0 = calendar_date(first_night)
    labels, noons = [], []
    for k in range(int(n_nights)):
        day = day0 + dt.timedelta(days=k)
        local_noon = datetime_to_jd_utc(dt.datetime(day.year, day.month, day.day, 12, tzinfo=tz))
        offset_d = longitude_deg / 360.0
        noons.append(np.round(local_noon + offset_d) - offset_d)
        labels.append(day.isoformat())
    return labels, np.asarray(noons, dtype=float)


def tracks_for_nights(site, first_night, n_nights: int, margin_d: float = 0.0):
    """:class:`~planner.visibility.SkyTracks` of the Sun and Moon covering the nights' windows.

    ``margin_d`` extends them by that many days either side (for events just outside the nights).
    """
    _, noons = solar_noons_jd_utc(first_night, n_nights, site.timezone, site.longitude_deg)
    return positions.sky_tracks(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                 float(noons.min()) - margin_d, float(noons.max()) + 1.0 + margin_d)


def _level_crossings(alt_func, grid, level_deg):
    """Crossings of ``alt_func`` through ``level_deg`` on the per-night grid (n, T); and the values."""
    values = alt_func(grid.ravel()).reshape(grid.shape) - level_deg

    def func(jd, rows):
        return alt_func(jd) - level_deg

    rows, jd, rising = find_crossings(func, grid, values)
    return rows, jd, rising, values


def _first(rows, jd, mask, n, after=None):
    """First crossing time per row among those where ``mask``; later than ``after`` (n,) if given."""
    out = np.full(n, np.nan)
    sel = mask.copy()
    if after is not None:
        sel &= jd > np.nan_to_num(after[rows], nan=-np.inf)
    r, t = rows[sel], jd[sel]
    order = np.lexsort((t, r))
    r, t = r[order], t[order]
    keep = np.ones(r.size, bool)
    keep[1:] = r[1:] != r[:-1]
    out[r[keep]] = t[keep]
    return out


def night_table(site, first_night, n_nights: int, tracks=None) -> pd.DataFrame:
    """Night table (columns :data:`NIGHT_COLUMNS`, see module docstring) of ``n_nights`` nights.

    ``first_night`` is the label (local evening date) of the first night, a ``datetime.date``
    or ``YYYY-MM-DD``; ``site`` a :class:`planner.site.Site`; ``tracks`` optional
    :class:`~planner.visibility.SkyTracks` covering the nights (built when absent).
    """
    labels, noons = solar_noons_jd_utc(first_night, n_nights, site.timezone, site.longitude_deg)
    n = len(labels)
    if n == 0:
        return pd.DataFrame({c: [] for c in NIGHT_COLUMNS})
    if tracks is None:
        tracks = positions.sky_tracks(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                       float(noons.min()), float(noons.max()) + 1.0)
    steps = int(round(1.0 / NIGHT_STEP_D))
    grid = noons[:, None] + np.linspace(0.0, 1.0, steps + 1)[None, :]
    ends = noons + 1.0

    def sun_alt(jd):
        return tracks.sun_altaz_deg(jd)[0]

    def moon_alt(jd):
        return tracks.moon_altaz_deg(jd)[0]

    # sunset and sunrise
    rows, jd, rising, _ = _level_crossings(sun_alt, grid, SUNRISE_ALT_DEG)
    sunset = _first(rows, jd, ~rising, n)
    sunrise = _first(rows, jd, rising, n, after=sunset)

    # darkness
    thr = site.darkness_sun_alt_deg
    rows, jd, rising, vals = _level_crossings(sun_alt, grid, thr)
    dark_at_start = vals[:, 0] <= 0
    dark_at_end = vals[:, -1] <= 0
    # the dark interval: the first stretch below the threshold (at most one per window, since the
    # window runs from noon to noon)
    r, t0, t1 = positive_intervals(rows, jd, ~rising, dark_at_start, dark_at_end, noons, ends)
    dark_start = np.full(n, np.nan)
    dark_end = np.full(n, np.nan)
    first = np.ones(r.size, bool)
    first[1:] = r[1:] != r[:-1]
    dark_start[r[first]] = t0[first]
    dark_end[r[first]] = t1[first]
    all_night = dark_at_start & dark_at_end & ~np.isin(np.arange(n), rows)
    kind = np.where(np.isfinite(dark_start), "dark", "no dark time").astype(object)
    kind[all_night] = "all night"
    dark_h = np.nan_to_num((dark_end - dark_start) * 24.0, nan=0.0)

    # the Moon
    mid = np.where(np.isfinite(dark_start), 0.5 * (dark_start + dark_end), noons + 0.5)
    illum = tracks.moon_illumination(mid)
    rows, jd, rising, vals = _level_crossings(moon_alt, grid, MOONRISE_ALT_DEG)
    moon_rise = _first(rows, jd, rising, n)
    moon_set = _first(rows, jd, ~rising, n)
    r, u0, u1 = positive_intervals(rows, jd, rising, vals[:, 0] > 0, vals[:, -1] > 0, noons, ends)
    ds, de = dark_start[r], dark_end[r]
    overlap = np.clip(np.minimum(u1, de) - np.maximum(u0, ds), 0.0, None)
    overlap = np.nan_to_num(overlap, nan=0.0)
    moon_up_dark_h = np.bincount(r, weights=overlap, minlength=n) * 24.0

    return pd.DataFrame({
        "night": labels,
        "noon_jd_utc": noons,
        "next_noon_jd_utc": ends,
        "sunset_jd_utc": sunset,
        "dark_start_jd_utc": dark_start,
        "dark_end_jd_utc": dark_end,
        "sunrise_jd_utc": sunrise,
        "dark_kind": kind,
        "dark_h": dark_h,
        "moon_illumination": illum,
        "moon_rise_jd_utc": moon_rise,
        "moon_set_jd_utc": moon_set,
        "moon_up_dark_h": moon_up_dark_h,
        "darkness_sun_alt_deg": np.full(n, float(thr)),
    })


def night_of(jd_utc, nights: pd.DataFrame):
    """Row index (int array, -1 when outside every window) of the night containing each UTC time."""
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    starts = nights["noon_jd_utc"].to_numpy(float)
    ends = nights["next_noon_jd_utc"].to_numpy(float)
    if starts.size == 0:
        return np.full(jd.shape, -1)
    i = np.searchsorted(starts, jd, side="right") - 1
    ok = (i >= 0) & (jd < ends[np.clip(i, 0, None)]) & np.isfinite(jd)
    return np.where(ok, i, -1)


def darkness_name(sun_alt_deg) -> str:
    """Words for the darkness a site asked for, from its Sun-centre altitude (degrees).

    -6, -12 and -18 deg (the ends of civil, nautical and astronomical twilight,
    :data:`planner.inputs.site.DARKNESS_SUN_ALT_DEG`) give ``"civil darkness"``,
    ``"nautical darkness"`` and ``"astronomical darkness"``; any other altitude gives
    ``"darkness (Sun below -15 deg)"``; NaN or a missing value (a night table made without the
    site's setting) gives plain ``"darkness"``. Labels on sheets, charts and notes use it, so a
    nautical site never reads "astronomical".
    """
    from ..inputs.site import DARKNESS_SUN_ALT_DEG

    try:
        alt = float(sun_alt_deg)
    except (TypeError, ValueError):
        return "darkness"
    if not np.isfinite(alt):
        return "darkness"
    for name, value in DARKNESS_SUN_ALT_DEG.items():
        if abs(alt - value) < 1e-9:
            return f"{name} darkness"
    return f"darkness (Sun below {alt:g} deg)"


def darkness_of(night) -> tuple[str, float]:
    """(words, Sun altitude in deg) of the darkness of one night-table row (NaN when unknown)."""
    try:
        alt = float(night.get("darkness_sun_alt_deg", np.nan))
    except (TypeError, ValueError):
        alt = np.nan
    return darkness_name(alt), alt


def nights_around(site, start_utc, end_utc, pad_days: int):
    """(tracks, night table) of the local nights from ``pad_days`` before the UTC span (astropy
    Times) to ``pad_days`` after it: every night an event window of the span can reach."""
    tzinfo = zone(site.timezone)
    first = start_utc.to_datetime(timezone=dt.timezone.utc).astimezone(tzinfo).date() - dt.timedelta(days=pad_days)
    last = end_utc.to_datetime(timezone=dt.timezone.utc).astimezone(tzinfo).date() + dt.timedelta(days=pad_days)
    n_nights = (last - first).days + 1
    tracks = tracks_for_nights(site, first, n_nights)
    return tracks, night_table(site, first, n_nights, tracks=tracks)
