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
    1e-4 s of delay (its second derivative is at most ~2 pi^2 x 500 s / yr^2). A grid node's
    positions are computed the first time a time needs it (ERFA epv00 costs about 50 us a node),
    so a few epochs spread over decades cost their own cells, not the span's 18,000 nodes.
    """

    def __init__(self, jd_lo, jd_hi, step_d=_LTT_GRID_D):
        import astropy.units as u
        from astropy.constants import c

        n = int(np.ceil((jd_hi - jd_lo) / step_d)) + 4
        self.step_d = step_d
        self.grid0 = jd_lo - step_d
        self.done = np.zeros(n, bool)
        # the Sun seen from the barycentre: the barycentric minus the heliocentric position
        self.pos = {k: np.full((n, 3), np.nan) for k in ("barycentre", "sun", "sun_offset")}
        self.au_light_d = (u.au / c).to("day").value

    @classmethod
    def covering(cls, jd_tdb, margin_d=0.0, step_d=_LTT_GRID_D):
        """The track over the finite times of ``jd_tdb`` (at least one); others give NaN delays."""
        jd = np.asarray(jd_tdb, dtype=float)
        jd = jd[np.isfinite(jd)]
        return cls(jd.min() - margin_d, jd.max() + margin_d, step_d)

    def _positions(self, i):
        """The grid's positions, computed first at the nodes of cells ``i`` that lack them."""
        if self.done.all():
            return self.pos
        if i.size * 4 >= len(self.done):  # as many times as nodes: every node at once
            need = np.flatnonzero(~self.done)
        else:
            need = np.unique(i[:, None] + np.arange(-1, 3))
            need = need[~self.done[need]]
        if need.size:
            got = _earth_positions_au(self.grid0 + self.step_d * need)
            for k in ("barycentre", "sun"):
                self.pos[k][need] = got[k]
            self.pos["sun_offset"][need] = got["barycentre"] - got["sun"]
            self.done[need] = True
        return self.pos

    def delay_d(self, jd_tdb, unit, reference="barycentre"):
        """Delay (days) towards ``unit`` at TDB times: ``barycentre``, ``sun``, or ``sun_offset``
        (barycentric minus heliocentric delay)."""
        x = np.asarray((jd_tdb - self.grid0) / self.step_d, dtype=float)
        i, f = numerics.grid_cell(np.where(np.isfinite(x), x, np.nan), len(self.done))
        pos = self._positions(np.ravel(i))[reference]
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
#: periodic TDB - TT term (1.7 ms annual amplitude) on it errs by < 2.5e-7 s (A (2 pi h / P)^2 / 8).
_OFFSET_GRID_D = 2.0
#: Below this many times, astropy converts each one directly.
_DIRECT_MAX = 1000


def _convert_jd(jd, from_scale: str, to_scale: str):
    """Julian dates converted between astropy time scales (UTC uses astropy's quasi-JD).

    Large arrays: astropy converts a two-day grid and the offset is interpolated in between;
    times in a grid cell next to a leap second are converted by astropy one by one
    (:class:`_ScaleOffsets`), so the result equals astropy's to < 5e-7 s everywhere. NaN and inf
    stay as they are; dates ERFA cannot convert are a :class:`TimeScaleError`.
    """
    import erfa

    try:
        return _convert_finite_jd(jd, from_scale, to_scale)
    except erfa.ErfaError as exc:
        finite = np.asarray(jd, dtype=float)[np.isfinite(jd)]
        raise TimeScaleError(f"Julian dates {finite.min():.1f}..{finite.max():.1f} cannot be converted from "
                             f"{from_scale.upper()} to {to_scale.upper()} ({exc}); expected full Julian dates "
                             "within a few thousand years of now, e.g. 2461381.5") from None


#: A grid node whose offset's second difference exceeds this (days) marks a leap second nearby:
#: astropy's UTC Julian date stretches the leap second's day to 86401 s, so the offset bends at
#: that day's ends (by a good part of the second). The smooth TDB - TT terms give at most 2e-6 s
#: (1.7 ms annual term on the two-day grid: A (2 pi h / P)^2).
_BEND_D = 5e-6 / 86400


class _ScaleOffsets:
    """The offset between two astropy time scales on a two-day grid over a span of Julian dates.

    :meth:`convert` gives astropy's conversion to < 5e-7 s: the offset interpolated linearly, and
    times in a grid cell next to a leap second (where the offset jumps or bends, :data:`_BEND_D`)
    converted by astropy one by one. The nodes sit on whole Julian dates (noon UTC), so a leap
    second's day (midnight to midnight) bends the offset inside a cell: the bend shows in the
    second difference at a node at one of that cell's ends, which marks the cell
    (tests/test_timescales.py starts spans mid-day on both sides of the 2016 and 1998 leap
    seconds). Built once, it serves several conversions of times in the span.
    """

    def __init__(self, lo, hi, from_scale, to_scale):
        from astropy.time import Time

        start = np.floor(lo / _OFFSET_GRID_D) * _OFFSET_GRID_D - _OFFSET_GRID_D
        self.grid = start + _OFFSET_GRID_D * np.arange(int(np.ceil((hi - start) / _OFFSET_GRID_D)) + 2)
        g = getattr(Time(self.grid, format="jd", scale=from_scale), to_scale)
        self.offset_grid = (g.jd1 - self.grid) + g.jd2
        bend = np.zeros(len(self.grid), bool)
        bend[1:-1] = np.abs(np.diff(self.offset_grid, 2)) > _BEND_D
        self.jump = (np.abs(np.diff(self.offset_grid)) > 0.5 / 86400) | bend[:-1] | bend[1:]
        self.scales = (from_scale, to_scale)

    def in_leap_cell(self, jd):
        """True for the finite times in a grid cell next to a leap second."""
        finite = np.isfinite(jd)
        cell = np.clip(((np.where(finite, jd, self.grid[0]) - self.grid[0]) / _OFFSET_GRID_D).astype(np.int64), 0,
                       len(self.grid) - 2)
        return self.jump[cell] & finite

    def offset_d(self, jd):
        """The interpolated offset (days; NaN for NaN times), exact outside the leap-second cells.

        Linear interpolation on the uniform grid (what numpy.interp gives, without its search).
        """
        x = (np.asarray(jd, dtype=float) - self.grid[0]) / _OFFSET_GRID_D
        i = np.clip(np.floor(np.nan_to_num(x)).astype(np.int64), 0, len(self.grid) - 2)
        o0 = self.offset_grid[i]
        return o0 + (x - i) * (self.offset_grid[i + 1] - o0)

    def convert(self, jd):
        from astropy.time import Time

        out = jd + self.offset_d(jd)
        exact = self.in_leap_cell(jd)
        if exact.any():
            t = getattr(Time(jd[exact], format="jd", scale=self.scales[0]), self.scales[1])
            out[exact] = t.jd1 + t.jd2
        return out


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
    return _ScaleOffsets(np.min(jd[finite]), np.max(jd[finite]), from_scale, to_scale).convert(jd)


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
    if system == "HJD_UTC" and np.count_nonzero(np.isfinite(jd)) >= _DIRECT_MAX:
        return _hjd_utc_to_bjd_tdb_bulk(jd, unit)
    return _to_bjd_tdb_direct(jd, system, unit)


def _to_bjd_tdb_direct(jd, system, unit):
    """BJD_TDB of JD_UTC or HJD_UTC epochs through the geocentric instant's TDB (see to_bjd_tdb)."""
    track = _EarthTrack.covering(jd, margin_d=0.02)  # the light time moves epochs by < 0.006 d
    if system == "JD_UTC":
        jd_tdb = utc_to_tdb_jd(jd)
    else:  # HJD_UTC
        geo_utc = jd.copy()
        for _ in range(2):
            geo_utc = jd - track.delay_d(utc_to_tdb_jd(geo_utc), unit, "sun")
        jd_tdb = utc_to_tdb_jd(geo_utc)
    return jd_tdb + track.delay_d(jd_tdb, unit)


#: Grid step (days) of the Earth's positions for many HJD_UTC epochs: the heliocentric delay on
#: it is good to 0.03 s (enough to place the geocentric instant: BJD moves by < 1e-9 s), the
#: barycentric minus the heliocentric delay (the Sun's barycentric wobble) to 5e-7 s (measured
#: against ERFA epv00 at 20,000 random times over 25 years).
_HJD_GRID_D = 8.0


def _hjd_utc_to_bjd_tdb_bulk(hjd_utc, unit):
    """BJD_TDB of many HJD_UTC epochs: HJD + (TDB - UTC) + (barycentric - heliocentric delay).

    The same quantity as the direct path of :func:`to_bjd_tdb` (BJD = TDB + barycentric delay at
    the geocentric instant g, HJD = UTC + heliocentric delay at g), written as a sum of small
    terms: the heliocentric delay is needed only to find g (one fixed-point step), the TDB - UTC offset at g is smooth
    (1.7 ms periodic term), and the Sun's barycentric offset changes slowly, so one coarse grid of
    the Earth's positions and one grid of TDB - UTC serve every epoch. Epochs whose geocentric
    instant falls in a grid cell with a leap second go the direct way. Agrees with the direct
    path to < 1e-6 s (its own interpolation error).
    """
    import erfa

    finite = np.isfinite(hjd_utc)
    lo, hi = np.min(hjd_utc[finite]) - 0.02, np.max(hjd_utc[finite]) + 0.02  # the light time: < 0.006 d
    try:
        scale = _ScaleOffsets(lo, hi, "utc", "tdb")
    except erfa.ErfaError as exc:
        raise TimeScaleError(f"Julian dates {lo + 0.02:.1f}..{hi - 0.02:.1f} cannot be converted from UTC to TDB "
                             f"({exc}); expected full Julian dates within a few thousand years of now, "
                             "e.g. 2461381.5") from None
    coarse = _EarthTrack(lo, hi, _HJD_GRID_D)
    # One step places g to 0.05 s (the heliocentric delay, at most 500 s, changes by < 1e-4 s/s);
    # the terms taken at g change by < 5e-8 s/s (the Sun's barycentric speed over c), so BJD
    # moves by < 3e-9 s.
    geo_utc = hjd_utc - coarse.delay_d(hjd_utc + scale.offset_d(hjd_utc), unit, "sun")
    tdb_minus_utc = scale.offset_d(geo_utc)
    bjd = hjd_utc + (tdb_minus_utc + coarse.delay_d(geo_utc + tdb_minus_utc, unit, "sun_offset"))
    leap = scale.in_leap_cell(geo_utc)
    if leap.any():
        bjd[leap] = _to_bjd_tdb_direct(hjd_utc[leap], "HJD_UTC", unit[leap])
    return bjd


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
