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

from .. import numerics
from ..errors import TimeScaleError

#: Time systems a catalogue may state; upper-case names, as written in the ``time_system`` column.
TIME_SYSTEMS = ("BJD_TDB", "HJD_UTC", "JD_UTC")

_LTT_GRID_D = 0.5  # spacing of the Earth-position grid; interpolation error < 1e-4 s (see below)


def unit_vectors(ra_deg, dec_deg):
    """Unit vectors (ICRS, shape (..., 3)) towards right ascensions and declinations in degrees."""
    return numerics.unit_vectors(np.radians(np.asarray(ra_deg, float)), np.radians(np.asarray(dec_deg, float)))


def _earth_positions_au(jd_tdb):
    """The Earth's ICRS positions (au, shape (n, 3)) from the barycentre and from the Sun.

    ERFA's epv00 (Bretagnon & Francou VSOP2000 fit), the same series astropy's built-in
    ephemeris uses for the Earth and the Sun; one call gives both origins.
    """
    import erfa

    jd = np.asarray(jd_tdb, dtype=float)
    heliocentric, barycentric = erfa.epv00(2400000.5, jd - 2400000.5)
    return {"barycentre": barycentric["p"], "sun": heliocentric["p"]}


class _EarthTrack:
    """The Earth's barycentric and heliocentric positions on a half-day grid, interpolated.

    Built once for a span of TDB Julian dates; :meth:`delay_d` gives the Roemer delay for unit
    vectors towards targets. Cubic (Catmull-Rom) interpolation of each coordinate: error below
    1e-4 s of delay (its second derivative is at most ~2 pi^2 x 500 s / yr^2).
    """

    def __init__(self, jd_lo, jd_hi):
        import astropy.units as u
        from astropy.constants import c

        n = int(np.ceil((jd_hi - jd_lo) / _LTT_GRID_D)) + 1
        self.grid0 = jd_lo - _LTT_GRID_D
        self.pos = _earth_positions_au(self.grid0 + _LTT_GRID_D * np.arange(n + 3))
        self.au_light_d = (u.au / c).to("day").value

    @classmethod
    def covering(cls, jd_tdb, margin_d=0.0):
        """The track over the finite times of ``jd_tdb`` (at least one); others give NaN delays."""
        jd = np.asarray(jd_tdb, dtype=float)
        jd = jd[np.isfinite(jd)]
        return cls(jd.min() - margin_d, jd.max() + margin_d)

    def delay_d(self, jd_tdb, unit, reference="barycentre"):
        pos = self.pos[reference]
        x = np.asarray((jd_tdb - self.grid0) / _LTT_GRID_D, dtype=float)
        i, f = numerics.grid_cell(np.where(np.isfinite(x), x, np.nan), len(pos))
        # project the grid positions on each direction first: four dot products, then 1-D cubic
        p0, p1, p2, p3 = (np.einsum("...k,...k->...", pos[i + j], unit) for j in (-1, 0, 1, 2))
        return numerics.catmull_rom(p0, p1, p2, p3, f) * self.au_light_d


def light_travel_time_d(jd_tdb, ra_deg, dec_deg, reference: str = "barycentre"):
    """Roemer delay (days) to add to a geocentric time to refer it to the barycentre or the Sun.

    ``jd_tdb``, ``ra_deg`` and ``dec_deg`` broadcast together; ``reference`` is ``"barycentre"``
    (for BJD) or ``"sun"`` (for HJD). The Earth's position comes from a half-day grid spanning the
    times (see :class:`_EarthTrack`), so a million events cost a few grid points.
    """
    jd, ra, dec = np.broadcast_arrays(
        np.asarray(jd_tdb, float), np.asarray(ra_deg, float), np.asarray(dec_deg, float)
    )
    if not np.isfinite(jd).any():  # no time to build a track for: NaN, as for any NaN time
        return np.full(jd.shape, np.nan)
    return _EarthTrack.covering(jd).delay_d(jd, unit_vectors(ra, dec), reference)


#: Grid step (days) of the TDB - UTC offset used for bulk conversions; linear interpolation of the
#: periodic TDB - TT term (1.7 ms annual amplitude) on it errs by < 1e-7 s.
_OFFSET_GRID_D = 0.5
#: Below this many times, astropy converts each one directly.
_DIRECT_MAX = 1000


def _convert_jd(jd, from_scale: str, to_scale: str):
    """Julian dates converted between astropy time scales (UTC uses astropy's quasi-JD).

    Large arrays: astropy converts a half-day grid and the offset is interpolated in between;
    times in a grid cell that holds a leap second (offset jump > 0.5 s) are converted by astropy
    one by one, so the result equals astropy's to < 1e-7 s everywhere. NaN and inf stay as they
    are; dates ERFA cannot convert are a :class:`TimeScaleError`.
    """
    import erfa

    try:
        return _convert_finite_jd(jd, from_scale, to_scale)
    except erfa.ErfaError as exc:
        finite = np.asarray(jd, dtype=float)[np.isfinite(jd)]
        raise TimeScaleError(f"Julian dates {finite.min():.1f}..{finite.max():.1f} cannot be converted from "
                             f"{from_scale.upper()} to {to_scale.upper()} ({exc}); expected full Julian dates "
                             "within a few thousand years of now, e.g. 2461381.5") from None


def _convert_finite_jd(jd, from_scale, to_scale):
    from astropy.time import Time

    jd = np.asarray(jd, dtype=float)
    finite = np.isfinite(jd)
    if jd.size < _DIRECT_MAX or not finite.any():
        out = jd.copy()  # NaN and inf stay as they are, as on the grid path below
        if finite.any():
            t = getattr(Time(jd[finite], format="jd", scale=from_scale), to_scale)
            out[finite] = t.jd1 + t.jd2
        return out[()] if out.ndim == 0 else out
    lo, hi = np.min(jd[finite]), np.max(jd[finite])
    grid = lo + _OFFSET_GRID_D * np.arange(int(np.ceil((hi - lo) / _OFFSET_GRID_D)) + 2)
    g = getattr(Time(grid, format="jd", scale=from_scale), to_scale)
    offset = (g.jd1 - grid) + g.jd2
    out = jd + np.interp(jd, grid, offset)
    cell = np.clip(((np.where(finite, jd, lo) - lo) / _OFFSET_GRID_D).astype(np.int64), 0, len(grid) - 2)
    exact = np.abs(np.diff(offset))[cell] > 0.5 / 86400
    if exact.any():
        t = getattr(Time(jd[exact], format="jd", scale=from_scale), to_scale)
        out[exact] = t.jd1 + t.jd2
    return out


def utc_to_tdb_jd(jd_utc):
    """TDB Julian dates of UTC Julian dates (astropy's scales; see :func:`_convert_jd`), same shape."""
    return _convert_jd(jd_utc, "utc", "tdb")


def _tdb_jd_to_utc_jd(jd_tdb):
    return _convert_jd(jd_tdb, "tdb", "utc")


def _tdb_jd_to_utc_time(jd_tdb):
    from astropy.time import Time

    jd_utc = _tdb_jd_to_utc_jd(jd_tdb)
    if not np.all(np.isfinite(jd_utc)):
        bad = int(np.size(jd_utc) - np.count_nonzero(np.isfinite(jd_utc)))
        raise TimeScaleError(f"{bad} of {np.size(jd_utc)} times are not finite numbers (NaN or inf) and "
                             "cannot be shown as UTC times; drop them first (e.g. where numpy.isfinite is False)")
    return Time(jd_utc, format="jd", scale="utc")


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
    jd, ra, dec = np.broadcast_arrays(np.asarray(jd, float), np.asarray(ra_deg, float), np.asarray(dec_deg, float))
    system = str(time_system).upper()
    if system == "BJD_TDB":
        return jd.copy()
    if system not in TIME_SYSTEMS:
        raise TimeScaleError(f"unknown time system {time_system!r}; expected one of {', '.join(TIME_SYSTEMS)}")
    if not np.isfinite(jd).any():  # nothing to convert: NaN, as for any NaN epoch
        return np.full(jd.shape, np.nan)
    unit = unit_vectors(ra, dec)
    track = _EarthTrack.covering(jd, margin_d=0.02)  # the light time moves epochs by < 0.006 d
    if system == "JD_UTC":
        jd_tdb = utc_to_tdb_jd(jd)
    else:  # HJD_UTC
        geo_utc = jd.copy()
        for _ in range(2):
            geo_utc = jd - track.delay_d(utc_to_tdb_jd(geo_utc), unit, "sun")
        jd_tdb = utc_to_tdb_jd(geo_utc)
    return jd_tdb + track.delay_d(jd_tdb, unit)


def bjd_tdb_to_geocentric_tdb(bjd_tdb, ra_deg, dec_deg):
    """Geocentric TDB Julian date at which light from the barycentric event reaches the Earth."""
    bjd, ra, dec = np.broadcast_arrays(np.asarray(bjd_tdb, float), np.asarray(ra_deg, float),
                                       np.asarray(dec_deg, float))
    if not np.isfinite(bjd).any():  # NaN, as for any NaN time
        return np.full(bjd.shape, np.nan)
    unit = unit_vectors(ra, dec)
    track = _EarthTrack.covering(bjd, margin_d=0.01)
    geo = bjd.copy()
    for _ in range(2):  # the delay changes by < 1e-4 s/s: two steps converge to < 1e-8 s
        geo = bjd - track.delay_d(geo, unit)
    return geo


def bjd_tdb_to_utc(bjd_tdb, ra_deg, dec_deg):
    """astropy ``Time`` (scale UTC) at which an event of the given BJD_TDB is seen from the Earth."""
    return _tdb_jd_to_utc_time(bjd_tdb_to_geocentric_tdb(bjd_tdb, ra_deg, dec_deg))


#: Margin (days) added either side when a UTC span is turned into BJD_TDB bounds: more than the
#: largest light-travel time (8.4 min) plus TDB - UTC (70 s), so no event seen inside the span
#: is missed; events are then filtered on their UTC time.
BJD_MARGIN_D = 0.02


def bjd_bounds(start_utc, end_utc):
    """BJD_TDB (start, end) that contain every event seen from the Earth in the UTC span (astropy Times)."""
    return start_utc.tdb.jd - BJD_MARGIN_D, end_utc.tdb.jd + BJD_MARGIN_D
