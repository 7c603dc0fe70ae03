"""Observable intervals of targets in each night, and how much of each event's window they cover.

A target is *observable* at a moment when every constraint of the site holds:

- the Sun's centre below the site's darkness altitude (the dark interval of the night table);
- airless altitude above ``max(min_altitude_deg, horizon profile at the target's azimuth,
  altitude of max_airmass)`` and, when the site sets one, below ``max_altitude_deg``;
- hour angle and declination inside the mount's limits, if set;
- Moon separation >= ``moon_min_sep_deg + moon_sep_growth_deg x illumination``;
- Sun separation >= ``sun_min_sep_deg``.

All of them are folded into one continuous *margin* in degrees (the least of altitude minus its
limit, 15 x hour-angle distance to a limit, separation minus the needed separation), positive
when observable. Interval edges are the zero crossings of the margin, found by the planner's one
crossing search (:func:`planner.crossings.find_crossings`): bracketed on a 5-minute grid across
the dark interval by a fast mask with the same limits and no trigonometry on the grid (see
:func:`_fast_mask`), then refined to 0.05 s: in closed form where the edge is the altitude
limit (:mod:`planner.sky.edges`, checked on the margin), by bisection on the margin otherwise; an
interval cut by dusk or dawn starts or ends there. :func:`observable_mask` gives the mask itself.

Accuracy: masks equal astroplan's AltitudeConstraint / AtNightConstraint /
MoonSeparationConstraint on 46,680 test samples, and on 2 million benchmark samples except where
a limit is within 0.01 deg (tests/test_windows.py, bench/bench_visibility.py). Airmass limits use
Young 1994 (astroplan's AirmassConstraint uses plane-parallel sec z: 0.4 per cent more at X = 2).

Tables
------
:func:`observable_intervals` -> one row per maximal observable interval:
``target_index, target, night, start_jd_utc, end_jd_utc, duration_h, max_alt_deg``.

:func:`event_visibility` -> the events table of :func:`planner.events.predict_events` (its
columns kept) plus:

=============================  ===============================================================
``jd_utc``                     UTC Julian date at which the event is seen from the Earth
``night``                      label of the night whose noon-to-noon window holds the event
                               (``<NA>`` outside the night table)
``alt_deg``, ``az_deg``        airless altitude and azimuth at the event time
``airmass``                    Young 1994 airmass at the event time (inf below the horizon)
``sun_alt_deg``                the Sun's airless altitude at the event time
``moon_sep_deg``               Moon-target separation at the event time
``moon_illumination``          the Moon's illuminated fraction at the event time
``window_start_jd_utc``,       requested window: event +- its half-width (duration / 2 + baseline
                               + k sigma; a share of the period for a periodic event, see
                               :mod:`planner.sky.window_size`)
``window_end_jd_utc``
``observable_h``               observable time inside the window, hours
``observable_fraction``        observable_h / window length, 0..1
``observable_start_jd_utc``,   longest observable stretch inside the window (NaN when none);
                               :func:`window_stretches` gives every stretch
``observable_end_jd_utc``
=============================  ===============================================================

Window lengths (baseline, k sigma, the length of an event with no duration, the share of the
period a periodic event gets) are set in :mod:`planner.sky.window_size`; they are common practice,
not a published standard.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import numerics
from ..timescales.epochs import utc_to_tdb_jd
from . import edges, positions
from .crossings import positive_intervals
from .night import night_of
from .window_size import DEFAULT_BASELINE_H, DEFAULT_EVENT_LENGTH_H, DEFAULT_K_SIGMA, window_half_width_d

#: Grid step (days) of the interval search: 5 minutes. An observable stretch shorter than this
#: between two unobservable ones can be missed; the edges of those found are exact to 0.05 s.
WINDOW_STEP_D = 5.0 / 1440.0
_CHUNK_SAMPLES = 2_000_000

INTERVAL_COLUMNS = ("target_index", "target", "night", "start_jd_utc", "end_jd_utc", "duration_h",
                    "max_alt_deg")
VISIBILITY_COLUMNS = (
    "jd_utc", "night", "alt_deg", "az_deg", "airmass", "sun_alt_deg", "moon_sep_deg",
    "moon_illumination", "window_start_jd_utc", "window_end_jd_utc", "observable_h",
    "observable_fraction", "observable_start_jd_utc", "observable_end_jd_utc",
)


def altitude_limit_deg(site, az_deg):
    """Lowest usable airless altitude (deg) towards each azimuth: min altitude, horizon, airmass."""
    limit = site.horizon_limit_deg(az_deg)
    if site.max_airmass is not None:
        limit = np.maximum(limit, positions.altitude_for_airmass_deg(site.max_airmass))
    return limit


def _dec_ok(site, dec_deg):
    ok = np.ones(np.shape(dec_deg), bool)
    if site.min_declination_deg is not None:
        ok &= dec_deg >= site.min_declination_deg
    if site.max_declination_deg is not None:
        ok &= dec_deg <= site.max_declination_deg
    return ok


def _margin_deg(site, ra_c, dec_c, cos_moon, cos_sun, era, illumination, dec_ok):
    """Least constraint margin (deg), broadcast shape; positive where every limit holds.

    ``ra_c``/``dec_c`` CIRS place (rad), ``cos_moon``/``cos_sun`` cosines of the Moon and Sun
    separations, ``era`` Earth rotation angle (rad), ``illumination`` the Moon's, ``dec_ok`` the
    declination limits (darkness is handled by the caller).
    """
    ha, alt, az = positions.horizontal(ra_c, dec_c, era, site.latitude_deg, site.longitude_deg)
    m = alt - altitude_limit_deg(site, az)
    if site.max_altitude_deg is not None:
        m = np.minimum(m, site.max_altitude_deg - alt)
    if site.min_hour_angle_h is not None:
        m = np.minimum(m, (ha - site.min_hour_angle_h) * 15.0)
    if site.max_hour_angle_h is not None:
        m = np.minimum(m, (site.max_hour_angle_h - ha) * 15.0)
    if site.moon_min_sep_deg > 0 or site.moon_sep_growth_deg > 0:
        sep = np.degrees(np.arccos(np.clip(cos_moon, -1.0, 1.0)))
        m = np.minimum(m, sep - site.moon_min_sep_at_deg(illumination))
    if site.sun_min_sep_deg > 0:
        m = np.minimum(m, np.degrees(np.arccos(np.clip(cos_sun, -1.0, 1.0))) - site.sun_min_sep_deg)
    return np.where(dec_ok, m, -90.0)


def _fast_mask(site, ra_c, dec_c, tvec, era, moon_v, sun_v, illumination, dec_ok):
    """Boolean (N, T): every constraint but darkness holds; the same limits as :func:`_margin_deg`.

    ``ra_c``/``dec_c``/``tvec`` (N,), (N,), (N, 3) CIRS places; ``era`` (T,) Earth rotation angle;
    ``moon_v``/``sun_v`` (T, 3) topocentric CIRS unit vectors; ``illumination`` (T,); ``dec_ok``
    (N,). No trigonometry on the (N, T) grid: altitude above h0 is cos H > (sin h0 - sin phi
    sin delta) / (cos phi cos delta), with cos H = cos(theta - alpha) from a (N, 2) x (2, T)
    product, and separations are dot products. Azimuth and hour angle (for a horizon profile
    above the minimum altitude, or hour-angle limits) are computed only where the rest holds.
    """
    lat = np.radians(site.latitude_deg)
    h0 = site.min_altitude_deg
    if site.max_airmass is not None:
        h0 = max(h0, positions.altitude_for_airmass_deg(site.max_airmass))
    with np.errstate(divide="ignore", invalid="ignore"):
        c = (np.sin(np.radians(h0)) - np.sin(lat) * np.sin(dec_c)) / (np.cos(lat) * np.cos(dec_c))
    theta = np.asarray(era) + np.radians(site.longitude_deg)
    up = edges.rows_that_may_clear(c, ra_c, theta)
    up = up[np.asarray(dec_ok)[up]]
    m = np.zeros((ra_c.size, theta.size), bool)
    theta_cs = np.stack([np.cos(theta), np.sin(theta)])  # cos H = cos(theta) cos(ra) + sin(theta) sin(ra)
    m[up] = np.stack([np.cos(ra_c[up]), np.sin(ra_c[up])], axis=1) @ theta_cs > c[up, None]
    if site.max_altitude_deg is not None:  # below the ceiling: cos H under that of the ceiling's altitude
        with np.errstate(divide="ignore", invalid="ignore"):
            top = (np.sin(np.radians(site.max_altitude_deg)) - np.sin(lat) * np.sin(dec_c)) / (np.cos(lat) * np.cos(dec_c))
        high = up[top[up] < 1.0]  # the targets that culminate above the ceiling
        m[high] &= np.stack([np.cos(ra_c[high]), np.sin(ra_c[high])], axis=1) @ theta_cs < top[high, None]
    if site.moon_min_sep_deg > 0 or site.moon_sep_growth_deg > 0:
        need_deg = np.asarray(site.moon_min_sep_at_deg(illumination), float) * np.ones(len(moon_v))
        rows = numerics.rows_near_track(tvec, moon_v, float(need_deg.max()))
        m[rows] &= (tvec[rows] @ moon_v.T) < np.cos(np.radians(need_deg))[None, :]
    if site.sun_min_sep_deg > 0:
        rows = numerics.rows_near_track(tvec, sun_v, site.sun_min_sep_deg)
        m[rows] &= (tvec[rows] @ sun_v.T) < np.cos(np.radians(site.sun_min_sep_deg))
    profile_matters = bool(site.horizon_alt_deg) and max(site.horizon_alt_deg) > h0
    if profile_matters or site.min_hour_angle_h is not None or site.max_hour_angle_h is not None:
        i, t = np.nonzero(m)
        ha, alt, az = positions.horizontal(ra_c[i], dec_c[i], np.asarray(era)[t], site.latitude_deg,
                                            site.longitude_deg)
        ok = alt > altitude_limit_deg(site, az)
        if site.min_hour_angle_h is not None:
            ok &= ha > site.min_hour_angle_h
        if site.max_hour_angle_h is not None:
            ok &= ha < site.max_hour_angle_h
        m[i[~ok], t[~ok]] = False
    return m


def _tracks(site, nights, tracks):
    if tracks is not None:
        return tracks
    return positions.sky_tracks(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                 float(nights["noon_jd_utc"].min()), float(nights["next_noon_jd_utc"].max()))


def observable_mask(ra_deg, dec_deg, site, jd_utc, tracks=None):
    """Boolean mask (N, T): every constraint, darkness included, holds for target n at time t.

    ``ra_deg``/``dec_deg`` ICRS (N,), ``jd_utc`` (T,). ``tracks`` (:class:`SkyTracks`) must
    cover the times; built when absent. Apparent places once per day-long block of times.
    Speed: bench/bench_visibility.py.
    """
    ra = np.atleast_1d(np.asarray(ra_deg, float))
    dec = np.atleast_1d(np.asarray(dec_deg, float))
    jd = np.atleast_1d(np.asarray(jd_utc, float))
    if tracks is None:
        tracks = positions.sky_tracks(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                       float(jd.min()), float(jd.max()))
    era = tracks.era_rad(jd)
    sun_v = tracks.sun_vector(jd, era)
    moon_v = tracks.moon_vector(jd, era)
    sun_alt = positions.horizontal(*positions._ra_dec_from_vectors(sun_v), era, site.latitude_deg,
                                    site.longitude_deg)[1]
    dark = sun_alt < site.darkness_sun_alt_deg
    illum = tracks.moon_illumination(jd)
    out = np.zeros((ra.size, jd.size), bool)
    block, ids, mids = positions._blocks(jd)
    dec_ok = _dec_ok(site, dec)
    for b, mid_tdb in zip(ids, utc_to_tdb_jd(mids)):
        cols = np.flatnonzero((block == b) & dark)
        if cols.size == 0:
            continue
        ri, di = positions.cirs_place(ra, dec, mid_tdb)
        tv = numerics.unit_vectors(ri, di)
        out[:, cols] = _fast_mask(site, ri, di, tv, era[cols], moon_v[cols], sun_v[cols], illum[cols], dec_ok)
    return out


def observable_intervals(targets: pd.DataFrame, site, nights: pd.DataFrame, tracks=None,
                         target_indices=None, step_d: float = WINDOW_STEP_D) -> pd.DataFrame:
    """Maximal observable intervals (columns :data:`INTERVAL_COLUMNS`) of targets in each dark night.

    ``targets``: catalogue table (``name``, ``ra_deg``, ``dec_deg``); ``target_indices`` the
    rows to use (default all); ``nights``: :func:`planner.night.night_table`. Times are UTC
    Julian dates; ``max_alt_deg`` is the highest airless altitude inside the interval (the
    upper culmination when it falls inside). Rows sorted by night, target, start.
    The grid (step ``step_d``) brackets the edges with the fast mask; each edge is then refined
    by bisection on the continuous margin.
    """
    idx = np.arange(len(targets)) if target_indices is None else np.asarray(target_indices, int)
    ra = targets["ra_deg"].to_numpy(float)[idx]
    dec = targets["dec_deg"].to_numpy(float)[idx]
    names = targets["name"].to_numpy(object)
    dark = np.isfinite(nights["dark_start_jd_utc"].to_numpy(float))
    night_rows = np.flatnonzero(dark)
    n_t = idx.size
    if n_t == 0 or night_rows.size == 0:
        return pd.DataFrame({c: [] for c in INTERVAL_COLUMNS})
    tracks = _tracks(site, nights, tracks)
    d0_all = nights["dark_start_jd_utc"].to_numpy(float)[night_rows]
    d1_all = nights["dark_end_jd_utc"].to_numpy(float)[night_rows]
    n_steps = max(2, int(np.ceil(np.max(d1_all - d0_all) / step_d)) + 1)
    dec_ok = _dec_ok(site, dec)
    labels = nights["night"].to_numpy(object)[night_rows]
    # nights in chunks of about 2 million grid samples, to bound memory on long spans
    per_chunk = max(1, _CHUNK_SAMPLES // (n_t * n_steps))
    parts = []
    for c0 in range(0, night_rows.size, per_chunk):
        sl = slice(c0, c0 + per_chunk)
        j, n, start, end, max_alt = _interval_chunk(site, tracks, ra, dec, dec_ok, d0_all[sl], d1_all[sl], n_steps)
        parts.append(pd.DataFrame({
            "target_index": idx[n].astype(np.int64),
            "target": names[idx[n]],
            "night": labels[sl][j],
            "start_jd_utc": start,
            "end_jd_utc": end,
            "duration_h": (end - start) * 24.0,
            "max_alt_deg": max_alt,
        }))
    return pd.concat(parts, ignore_index=True)


def _interval_chunk(site, tracks, ra, dec, dec_ok, d0, d1, n_steps):
    """Intervals of all targets in the nights with dark intervals [d0, d1] (J,): arrays
    (night j, target n, start, end, max altitude), sorted by night, target, start."""
    n_t = ra.size
    grid = d0[:, None] + (d1 - d0)[:, None] * np.linspace(0.0, 1.0, n_steps)[None, :]  # (J, T)
    mid_tdb = utc_to_tdb_jd(0.5 * (d0 + d1))
    places = [positions.cirs_place(ra, dec, m) for m in mid_tdb]
    ra_c = np.stack([p[0] for p in places])  # (J, N)
    dec_c = np.stack([p[1] for p in places])
    tvec = numerics.unit_vectors(ra_c, dec_c)  # (J, N, 3)

    # the sign of the margin on the grid, night by night, from the fast mask: (J, N, T)
    era = tracks.era_rad(grid)
    moon_v = tracks.moon_vector(grid, era)  # (J, T, 3)
    sun_v = tracks.sun_vector(grid, era)
    illum = tracks.moon_illumination(grid)
    above = np.empty((d0.size, n_t, n_steps), bool)
    for j in range(d0.size):
        above[j] = _fast_mask(site, ra_c[j], dec_c[j], tvec[j], era[j], moon_v[j], sun_v[j], illum[j], dec_ok)
    above = above.reshape(-1, n_steps)  # row = j * N + n

    def func(jd, rows):
        j, n = rows // n_t, rows % n_t
        e = tracks.era_rad(jd)
        tv = tvec[j, n]
        cm = np.einsum("ik,ik->i", tv, tracks.moon_vector(jd, e))
        cs = np.einsum("ik,ik->i", tv, tracks.sun_vector(jd, e))
        return _margin_deg(site, ra_c[j, n], dec_c[j, n], cm, cs, e, tracks.moon_illumination(jd), dec_ok[n])

    rows, jd, rising = edges.edge_crossings(site, tracks, func, grid, n_t, above, ra_c.reshape(-1),
                                            dec_c.reshape(-1))
    r, start, end = positive_intervals(rows, jd, rising, above[:, 0], above[:, -1], np.repeat(d0, n_t),
                                       np.repeat(d1, n_t))
    j, n = r // n_t, r % n_t
    max_alt = _max_altitude_deg(ra_c[j, n], dec_c[j, n], tracks.era_rad(start), tracks.era_rad(end),
                                start, end, site)
    return j, n, start, end, max_alt


def _max_altitude_deg(ra_c, dec_c, era0, era1, start_jd, end_jd, site):
    """Highest airless altitude over [start, end]: the upper culmination if inside, else an end.

    Altitude is monotonic in hour angle on each side of the meridian, so these are the only
    candidates.
    """
    lat, lon = site.latitude_deg, site.longitude_deg
    ha0, alt0, _ = positions.horizontal(ra_c, dec_c, era0, lat, lon)
    _, alt1, _ = positions.horizontal(ra_c, dec_c, era1, lat, lon)
    sidereal_h = (end_jd - start_jd) * 24.0 * 1.00273790935
    to_transit_h = np.mod(-ha0, 24.0)
    culm = 90.0 - np.abs(lat - np.degrees(dec_c))
    return np.where(to_transit_h <= sidereal_h, culm, np.maximum(alt0, alt1))


def never_rising(targets: pd.DataFrame, site) -> pd.DataFrame:
    """Targets that can never be observed from the site: one row each, with the reason.

    Columns ``target_index, target, culmination_alt_deg, limit_deg, reason``. A target fails
    when its upper culmination (airless, 90 - |latitude - dec|, from the catalogue declination;
    precession since J2000 moves it by < 0.2 deg) stays below the altitude limit towards the
    meridian, or when its declination is outside the mount's limits.
    """
    dec = targets["dec_deg"].to_numpy(float)
    culm = 90.0 - np.abs(site.latitude_deg - dec)
    az = np.where(dec > site.latitude_deg, 0.0, 180.0)
    limit = altitude_limit_deg(site, az)
    low = culm < limit
    dec_bad = ~_dec_ok(site, dec)
    rows = np.flatnonzero(low | dec_bad)
    reasons = [
        (f"declination {dec[i]:+.2f} deg is outside the mount's limits" if dec_bad[i] else
         f"culminates at {culm[i]:.1f} deg, below the {limit[i]:.1f} deg altitude limit")
        for i in rows
    ]
    return pd.DataFrame({
        "target_index": rows.astype(np.int64),
        "target": targets["name"].to_numpy(object)[rows],
        "culmination_alt_deg": culm[rows],
        "limit_deg": limit[rows],
        "reason": reasons,
    })


def target_positions(targets: pd.DataFrame, site, target_index, jd_utc) -> positions.Horizontal:
    """Airless alt/az, hour angle and airmass of given targets at given UTC times, elementwise.

    ``target_index`` (rows of ``targets``) and ``jd_utc`` broadcast together; the result's
    arrays have their common shape (NaN where the time is NaN). Each target's apparent place is
    computed once per day (:func:`~planner.sky.positions.altaz_of`).
    """
    return positions.altaz_of(targets["ra_deg"].to_numpy(float), targets["dec_deg"].to_numpy(float), target_index,
                              jd_utc, site.latitude_deg, site.longitude_deg)


def target_altitudes(targets: pd.DataFrame, site, target_index, jd_utc) -> np.ndarray:
    """Airless altitude (deg) of given targets at given UTC times: ``target_positions(...).alt_deg``
    (the same values, to the bit) without the azimuth and hour angle
    (:func:`~planner.sky.positions.altitude_of`)."""
    return positions.altitude_of(targets["ra_deg"].to_numpy(float), targets["dec_deg"].to_numpy(float), target_index,
                                 jd_utc, site.latitude_deg, site.longitude_deg)


def event_visibility(events: pd.DataFrame, targets: pd.DataFrame, site, nights: pd.DataFrame,
                     baseline_h: float = DEFAULT_BASELINE_H, k_sigma: float = DEFAULT_K_SIGMA,
                     default_length_h: float = DEFAULT_EVENT_LENGTH_H, tracks=None,
                     intervals: pd.DataFrame | None = None, jd_utc=None) -> pd.DataFrame:
    """The events table with visibility columns added (:data:`VISIBILITY_COLUMNS`, module docstring).

    ``events``: :func:`planner.events.predict_events` output (BJD_TDB); ``targets`` its
    catalogue; ``nights``: :func:`planner.night.night_table` covering the events; ``intervals``
    from :func:`observable_intervals` (computed when absent). The window of each event is
    ``t +- (duration / 2 + baseline_h + k_sigma x sigma)``, with ``default_length_h`` standing
    for a missing duration, except a periodic event without a duration, whose window is a share
    of its period (:func:`planner.sky.window_size.window_half_width_d`). ``jd_utc``, when the caller already has it, is the UTC Julian date
    at which each event is seen (else it is computed from ``bjd_tdb``). Row order and index
    follow ``events``.
    """
    from ..timescales import epochs

    out = events.copy()
    n = len(out)
    if n == 0:
        for c in VISIBILITY_COLUMNS:
            out[c] = pd.Series([], dtype=object if c == "night" else float)
        return out
    tracks = _tracks(site, nights, tracks)
    ti = out["target_index"].to_numpy(int)
    ra = targets["ra_deg"].to_numpy(float)[ti]
    dec = targets["dec_deg"].to_numpy(float)[ti]
    jd = (epochs.bjd_tdb_to_utc(out["bjd_tdb"].to_numpy(float), ra, dec).jd if jd_utc is None
          else np.asarray(jd_utc, dtype=float))
    # the period sizes periodic events' windows (a table of positions alone has none: NaN)
    period_d = targets["period_d"].to_numpy(float)[ti] if "period_d" in targets else np.full(n, np.nan)
    half_d = window_half_width_d(out["event"].to_numpy(object), out["duration_d"].to_numpy(float), period_d,
                                 out["sigma_d"].to_numpy(float), baseline_h, k_sigma, default_length_h)
    w0, w1 = jd - half_d, jd + half_d

    # one apparent place per target and day for its events (the same values as one per event)
    pos, (ri, di) = positions.altaz_of(targets["ra_deg"].to_numpy(float), targets["dec_deg"].to_numpy(float), ti, jd,
                                       site.latitude_deg, site.longitude_deg, with_places=True)
    covered = (jd >= tracks.jd_utc[1]) & (jd <= tracks.jd_utc[-2])
    sun_alt = np.full(n, np.nan)
    moon_sep = np.full(n, np.nan)
    illum = np.full(n, np.nan)
    if covered.any():
        jc = jd[covered]
        era = tracks.era_rad(jc)
        sun_alt[covered] = tracks.sun_altaz_deg(jc, era)[0]
        # Moon separation in CIRS: the target's place at the event, the Moon's topocentric vector
        tv = numerics.unit_vectors(ri[covered], di[covered])
        moon_sep[covered] = positions.separation_deg(tv, tracks.moon_vector(jc, era))
        illum[covered] = tracks.moon_illumination(jc)
    night_idx = night_of(jd, nights)
    labels = nights["night"].to_numpy(object)
    night = pd.array(np.where(night_idx >= 0, labels[night_idx], None), dtype="string")  # -1: in no night

    if intervals is None:
        intervals = observable_intervals(targets, site, nights, tracks, np.unique(ti))
    observable_h, start, end = _cover(ti, w0, w1, intervals)
    out["jd_utc"] = jd
    out["night"] = night
    out["alt_deg"] = pos.alt_deg
    out["az_deg"] = pos.az_deg
    out["airmass"] = pos.airmass
    out["sun_alt_deg"] = sun_alt
    out["moon_sep_deg"] = moon_sep
    out["moon_illumination"] = illum
    out["window_start_jd_utc"] = w0
    out["window_end_jd_utc"] = w1
    out["observable_h"] = observable_h
    out["observable_fraction"] = np.clip(observable_h / ((w1 - w0) * 24.0), 0.0, 1.0)
    out["observable_start_jd_utc"] = start
    out["observable_end_jd_utc"] = end
    return out


def window_stretches(target_index, w0, w1, intervals):
    """Every observable stretch inside each window: (row, start, end) arrays, one per stretch.

    ``target_index``, ``w0``, ``w1`` (n,) describe n windows (UTC Julian dates); ``intervals``
    is :func:`observable_intervals`. ``row`` is the window's position (0..n-1); stretches of
    positive length only, ordered by row, then start.
    """
    target_index = np.asarray(target_index, dtype=int)
    w0, w1 = np.asarray(w0, dtype=float), np.asarray(w1, dtype=float)
    n = target_index.size
    if len(intervals) == 0 or n == 0:
        return np.zeros(0, int), np.zeros(0), np.zeros(0)
    iv_t = intervals["target_index"].to_numpy(int)
    order = np.lexsort((intervals["start_jd_utc"].to_numpy(float), iv_t))
    iv_t = iv_t[order]
    iv0 = intervals["start_jd_utc"].to_numpy(float)[order]
    iv1 = intervals["end_jd_utc"].to_numpy(float)[order]
    # each target's run of intervals (its first row and its count) from a table indexed by target
    # row: O(n), where two searchsorted calls over millions of unsorted windows took a second
    per_target = np.bincount(iv_t, minlength=int(max(iv_t.max(), target_index.max())) + 1)
    counts = per_target[target_index]
    lo = (np.cumsum(per_target) - per_target)[target_index]
    ev = np.repeat(np.arange(n), counts)
    k = np.repeat(lo - (np.cumsum(counts) - counts), counts) + np.arange(counts.sum())
    s = np.maximum(iv0[k], w0[ev])
    e = np.minimum(iv1[k], w1[ev])
    pos = e > s
    return ev[pos], s[pos], e[pos]


def _cover(target_index, w0, w1, intervals):
    """Observable hours inside each window, and the window's longest observable stretch."""
    n = target_index.size
    hours = np.zeros(n)
    best_start = np.full(n, np.nan)
    best_end = np.full(n, np.nan)
    ev_p, s_p, e_p = window_stretches(target_index, w0, w1, intervals)
    if ev_p.size == 0:
        return hours, best_start, best_end
    l_p = e_p - s_p
    hours = np.bincount(ev_p, weights=l_p, minlength=n) * 24.0
    best = np.lexsort((-l_p, ev_p))
    first = np.ones(best.size, bool)
    first[1:] = ev_p[best][1:] != ev_p[best][:-1]
    pick = best[first]
    best_start[ev_p[pick]] = s_p[pick]
    best_end[ev_p[pick]] = e_p[pick]
    return hours, best_start, best_end
