"""Time systems: catalogue epochs to BJD_TDB, and BJD_TDB back to UTC and local clock time.

The engine works in BJD_TDB (Julian days, TDB scale, referred to the solar-system barycentre).
Light travel time is the Roemer delay for a geocentric observer, (r_earth . n) / c, with the
Earth's barycentric position from astropy's built-in ephemeris (ERFA epv00); this is the same
quantity astropy's ``Time.light_travel_time`` returns for a geocentric location. The observer's
offset from the geocentre changes BJD by at most R_earth / c = 21 ms, ignored here.
Scale conversions (UTC <-> TT <-> TDB) are astropy's.

Notes
-----
Accuracy: a few milliseconds against astropy with a site location (see tests/test_timescales.py),
far below the timing uncertainty of any published ephemeris.
"""

from __future__ import annotations

import numpy as np

#: Time systems a catalogue may state; upper-case names, as written in the ``time_system`` column.
TIME_SYSTEMS = ("BJD_TDB", "HJD_UTC", "JD_UTC")

_SECONDS_PER_DAY = 86400.0
_LTT_GRID_D = 0.5  # spacing of the Earth-position grid; interpolation error < 1e-4 s (see below)


def unit_vectors(ra_deg, dec_deg):
    """Unit vectors (ICRS, shape (..., 3)) towards the given right ascensions and declinations."""
    ra = np.radians(np.asarray(ra_deg, dtype=float))
    dec = np.radians(np.asarray(dec_deg, dtype=float))
    return np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=-1)


def _body_positions_au(jd_tdb, body: str):
    """Barycentric (or heliocentric: body='sun' relative) ICRS positions in au, shape (n, 3)."""
    from astropy.coordinates import get_body_barycentric
    from astropy.time import Time

    t = Time(np.asarray(jd_tdb, dtype=float), format="jd", scale="tdb")
    earth = get_body_barycentric("earth", t, ephemeris="builtin").xyz.to_value("au").T
    if body == "barycentre":
        return earth
    sun = get_body_barycentric("sun", t, ephemeris="builtin").xyz.to_value("au").T
    return earth - sun


def light_travel_time_d(jd_tdb, ra_deg, dec_deg, reference: str = "barycentre"):
    """Roemer delay (days) to add to a geocentric time to refer it to the barycentre or the Sun.

    ``jd_tdb``, ``ra_deg`` and ``dec_deg`` broadcast together; ``reference`` is ``"barycentre"``
    (for BJD) or ``"sun"`` (for HJD). The Earth's position is evaluated on a grid of half-day
    steps spanning the times and interpolated cubically (error below 1e-4 s: the delay's second
    derivative is at most ~2 pi^2 x 500 s / yr^2), so a million events cost a few grid points.
    """
    import astropy.units as u
    from astropy.constants import c

    jd, ra, dec = np.broadcast_arrays(
        np.asarray(jd_tdb, float), np.asarray(ra_deg, float), np.asarray(dec_deg, float)
    )
    if jd.size == 0:
        return np.zeros(jd.shape)
    lo, hi = np.nanmin(jd), np.nanmax(jd)
    n = int(np.ceil((hi - lo) / _LTT_GRID_D)) + 1
    grid = lo + _LTT_GRID_D * (np.arange(-1, n + 2))
    pos = _body_positions_au(grid, reference)
    au_light_d = (u.au / c).to("day").value
    # cubic (Catmull-Rom) interpolation of each coordinate on the uniform grid
    x = (jd - grid[0]) / _LTT_GRID_D
    i = np.clip(np.floor(x).astype(int), 1, len(grid) - 3)
    f = x - i
    p0, p1, p2, p3 = pos[i - 1], pos[i], pos[i + 1], pos[i + 2]
    ff = f[..., None]
    r = p1 + 0.5 * ff * (p2 - p0 + ff * (2 * p0 - 5 * p1 + 4 * p2 - p3 + ff * (3 * (p1 - p2) + p3 - p0)))
    return np.einsum("...k,...k->...", r, unit_vectors(ra, dec)) * au_light_d


def _utc_jd_to_tdb_jd(jd_utc):
    from astropy.time import Time

    t = Time(np.asarray(jd_utc, dtype=float), format="jd", scale="utc").tdb
    return t.jd1 + t.jd2


def _tdb_jd_to_utc_time(jd_tdb):
    from astropy.time import Time

    return Time(np.asarray(jd_tdb, dtype=float), format="jd", scale="tdb").utc


def to_bjd_tdb(jd, time_system, ra_deg, dec_deg):
    """BJD_TDB (days) of epochs given as full Julian dates in ``time_system``.

    ``time_system`` is one of :data:`TIME_SYSTEMS`: ``BJD_TDB`` (returned unchanged),
    ``HJD_UTC`` (heliocentric, UTC-based, the usual meaning of "HJD" in the literature before
    about 2010) or ``JD_UTC`` (geocentric, UTC). ``jd`` and the coordinates broadcast; the
    conversion is made in each target's direction. HJD -> BJD removes the heliocentric delay at
    the geocentric time (found by two fixed-point steps; the delay changes by < 1e-4 s/s) and adds
    the barycentric one; the difference of the two is at most about 4 s, the UTC -> TDB step about
    69 s in 2026.
    """
    jd = np.asarray(jd, dtype=float)
    system = str(time_system).upper()
    if system == "BJD_TDB":
        return jd.copy()
    if system == "JD_UTC":
        jd_tdb = _utc_jd_to_tdb_jd(jd)
        return jd_tdb + light_travel_time_d(jd_tdb, ra_deg, dec_deg)
    if system == "HJD_UTC":
        geo_utc = jd.copy()
        for _ in range(2):
            geo_utc = jd - light_travel_time_d(_utc_jd_to_tdb_jd(geo_utc), ra_deg, dec_deg, "sun")
        jd_tdb = _utc_jd_to_tdb_jd(geo_utc)
        return jd_tdb + light_travel_time_d(jd_tdb, ra_deg, dec_deg)
    raise ValueError(f"unknown time system {time_system!r}; expected one of {', '.join(TIME_SYSTEMS)}")


def bjd_tdb_to_geocentric_tdb(bjd_tdb, ra_deg, dec_deg):
    """Geocentric TDB Julian date at which light from the barycentric event reaches the Earth."""
    bjd = np.asarray(bjd_tdb, dtype=float)
    geo = bjd.copy()
    for _ in range(2):
        geo = bjd - light_travel_time_d(geo, ra_deg, dec_deg)
    return geo


def bjd_tdb_to_utc(bjd_tdb, ra_deg, dec_deg):
    """astropy ``Time`` (scale UTC) at which an event of the given BJD_TDB is seen from the Earth."""
    return _tdb_jd_to_utc_time(bjd_tdb_to_geocentric_tdb(bjd_tdb, ra_deg, dec_deg))


def utc_to_iso_z(t_utc) -> np.ndarray:
    """ISO 8601 strings ``YYYY-MM-DDTHH:MM:SSZ`` (rounded to the second) for astropy UTC times."""
    import pandas as pd

    ts = pd.to_datetime(np.atleast_1d(t_utc.unix), unit="s", utc=True).round("s")
    return np.asarray(ts.strftime("%Y-%m-%dT%H:%M:%SZ"))


def utc_to_local_iso(t_utc, tz: str) -> np.ndarray:
    """Local clock times ``YYYY-MM-DDTHH:MM:SS+HH:MM`` in the IANA zone ``tz`` (zoneinfo rules)."""
    import pandas as pd

    ts = pd.to_datetime(np.atleast_1d(t_utc.unix), unit="s", utc=True).round("s").tz_convert(tz)
    return np.asarray([x.isoformat() for x in ts])
