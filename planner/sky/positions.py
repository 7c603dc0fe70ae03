"""Altitude, azimuth, hour angle and airmass of N targets at T times, vectorised.

The expensive part of an astropy AltAz transform (precession-nutation, light deflection, annual
aberration) changes by well under an arcsecond in a day, so it is done once per day-long block of
times with ERFA (``erfa.atci13``: ICRS -> CIRS, geocentric). Each time then only needs the Earth
rotation angle and spherical trigonometry:

    H = ERA + longitude - alpha_CIRS   (= local apparent sidereal time - apparent RA)
    sin h = sin phi sin delta + cos phi cos delta cos H
    A = atan2(-cos delta sin H, cos phi sin delta - sin phi cos delta cos H)

Conventions: altitudes are *airless* (geometric, no refraction; astropy AltAz with pressure=0);
azimuth from north through east, 0..360 deg; hour angle in hours, -12..12, positive west of the
meridian; latitude geodetic (WGS84).

The Sun and the Moon come from astropy's ``get_body`` (``builtin`` ephemeris) on a 6-hour grid
of geocentric CIRS positions, interpolated cubically and made topocentric by subtracting the
observer's position (:class:`SkyTracks`); the Moon's illuminated fraction comes from the geocentric Sun-Moon
elongation (the formula of astroplan's ``moon_illumination``).

Notes
-----
Accuracy against astropy's full AltAz transform (pressure=0): about 1 arcsecond (polar motion and
diurnal aberration, up to 0.3 arcsec each, are left out; the once-a-day apparent place adds
< 0.3 arcsec); tests/test_visibility.py checks 1,000 targets x 7 nights to 1 arcsec. The
interpolated geocentric Moon moves 0.5 deg/h on a path curved on the scale of its 27-day orbit
and 15-day variation, so the cubic adds little: measured against astropy's topocentric AltAz of
``get_body`` over a week at 37.6 N, the Moon's altitude differs by at most 0.64 / 0.70 / 1.20
arcsec with 1 / 3 / 6-hour grids (0.44 arcsec for the Sun). The topocentric shift (up to 1 deg)
is computed exactly at each time.
Speed: bench/bench_visibility.py.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .. import numerics
from ..errors import SkyTrackError
from ..timescales.epochs import utc_to_tdb_jd

#: Step (days) of the Sun and Moon grids of :class:`SkyTracks`: 6 hours (cubic interpolation of
#: geocentric positions; the Moon's altitude stays within 1.2 arcsec of astropy's, see the notes).
BODY_STEP_D = 6.0 / 24.0
#: Length (days) of the blocks of times that share one apparent place.
PLACE_BLOCK_D = 1.0
_J2000_JD = 2451545.0


def airmass_young1994(alt_deg):
    """Airmass of the true (airless) altitude ``alt_deg`` by Young's formula; same shape.

    Young, A. T. 1994, Applied Optics 33, 1108, "Air mass and refraction", in terms of the true
    zenith angle z:

        X = (1.002432 cos^2 z + 0.148386 cos z + 0.0096467)
            / (cos^3 z + 0.149864 cos^2 z + 0.0102963 cos z + 0.000303978)

    X = 1 at the zenith, about 2.0 at 30 deg, 31.7 at the true horizon. Altitudes below -1 deg
    give ``inf`` (the formula is for objects above the horizon).
    """
    alt = np.asarray(alt_deg, dtype=float)
    c = np.sin(np.radians(alt))  # cos z
    num = (1.002432 * c + 0.148386) * c + 0.0096467
    den = ((c + 0.149864) * c + 0.0102963) * c + 0.000303978
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.asarray(num / den)
    x[alt < -1.0] = np.inf
    return x


def altitude_for_airmass_deg(airmass: float) -> float:
    """True altitude (deg) at which :func:`airmass_young1994` equals ``airmass`` (>= 1)."""
    lo, hi = -1.0, 90.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if airmass_young1994(mid) > airmass:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def refraction_saemundsson_deg(alt_deg, pressure_hpa: float = 1010.0, temperature_c: float = 10.0):
    """Atmospheric refraction (deg) to add to a true altitude, for display only; same shape.

    Saemundsson, T. 1986, Sky and Telescope 72, 70 (as given in Meeus, Astronomical Algorithms,
    2nd ed., 1998, eq. 16.4): R = 1.02' / tan(h + 10.3 / (h + 5.11)), h in degrees, for 1010 hPa
    and 10 C, scaled by (P / 1010) (283 / (273 + T)). Good to about 4 arcsec above 15 deg, a few
    arcmin at the horizon. The planner never uses it for a decision: limits are on airless
    altitude.
    """
    h = np.asarray(alt_deg, dtype=float)
    h = np.maximum(h, -1.9)  # the formula diverges at h = -5.1 deg - 10.3/..; clamp for display
    r_arcmin = 1.02 / np.tan(np.radians(h + 10.3 / (h + 5.11)))
    return r_arcmin / 60.0 * (pressure_hpa / 1010.0) * (283.0 / (273.0 + temperature_c))


def earth_rotation_angle_rad(jd_utc):
    """Earth rotation angle (rad, 0..2 pi) at UTC Julian dates; UT1 from astropy's IERS tables.

    NaN where the time is not finite.
    """
    import erfa
    from astropy.time import Time

    from ..timescales import earth_orientation

    earth_orientation.configure()
    jd = np.asarray(jd_utc, dtype=float)
    finite = np.isfinite(jd)
    if finite.all():
        # astropy's UT1 - TAI (smooth: no leap seconds) and TAI - UTC at 0h UTC of each day the
        # times fall on and of the next; UT1 - TAI interpolated linearly between them, as astropy
        # interpolates the IERS table's daily UT1 - UTC. A survey's millions of times fall on a
        # few days. A day that ends with a leap second is 86,401 s long: its times go through
        # erfa.utctai, which stretches it.
        day = np.floor(jd - 0.5) + 0.5
        nodes = np.unique(day)
        nodes = np.union1d(nodes, nodes + 1.0)
        if nodes.size >= jd.size:
            with earth_orientation.quiet_iers_warnings():
                ut1 = Time(jd, format="jd", scale="utc").ut1
            return erfa.era00(ut1.jd1, ut1.jd2)
        with earth_orientation.quiet_iers_warnings():
            at = Time(nodes, format="jd", scale="utc")
            ut1, tai = at.ut1, at.tai
        ut1_minus_tai = (ut1.jd1 - tai.jd1) + (ut1.jd2 - tai.jd2)
        tai_minus_utc = (tai.jd1 - at.jd1) + (tai.jd2 - at.jd2)
        k = np.searchsorted(nodes, day)
        since_0h = jd - day
        tai2 = since_0h + tai_minus_utc[k]
        leap = np.abs(tai_minus_utc[k + 1] - tai_minus_utc[k]) > 0.5 / 86400.0  # a second more by the next 0h
        if leap.any():
            tai1, tai2[leap] = erfa.utctai(day[leap], since_0h[leap])
            tai2[leap] += tai1 - day[leap]
        return erfa.era00(day, tai2 + np.interp(jd, nodes, ut1_minus_tai))
    era = np.full(jd.shape, np.nan)
    if finite.any():
        era[finite] = earth_rotation_angle_rad(jd[finite])
    return era


def cirs_place(ra_deg, dec_deg, jd_tdb: float):
    """Geocentric CIRS right ascension and declination (rad), shape of ``ra_deg``, at one TDB date.

    ICRS -> CIRS as ``erfa.atci13`` does it (``apci13`` once, then ``atciq`` per star; IAU 2006/2000A precession-nutation, light deflection by
    the Sun, annual aberration); no proper motion or parallax (catalogue positions are taken at
    the epoch of observation).
    """
    import erfa

    ra = np.radians(np.asarray(ra_deg, dtype=float))
    dec = np.radians(np.asarray(dec_deg, dtype=float))
    astrom, _eo = erfa.apci13(float(jd_tdb), 0.0)  # date-dependent parameters, once
    zeros = np.zeros(ra.shape)
    ri, di = erfa.atciq(ra, dec, zeros, zeros, zeros, zeros, astrom)
    return ri, di


def horizontal(ra_cirs_rad, dec_cirs_rad, era_rad, latitude_deg: float, longitude_deg: float):
    """(hour angle h, airless altitude deg, azimuth deg) by spherical trigonometry; broadcast shapes.

    Hour angle H = ERA + longitude - alpha_CIRS wrapped to -12..12 h (positive west); azimuth
    from north through east in 0..360 deg.
    """
    phi = np.radians(latitude_deg)
    ha = _hour_angle_rad(ra_cirs_rad, era_rad, longitude_deg)
    dec = np.asarray(dec_cirs_rad)
    sin_d, cos_d = np.sin(dec), np.cos(dec)
    cos_h = np.cos(ha)
    alt = _altitude_deg(np.sin(phi) * sin_d + np.cos(phi) * cos_d * cos_h)
    az = np.degrees(np.arctan2(-cos_d * np.sin(ha), np.cos(phi) * sin_d - np.sin(phi) * cos_d * cos_h))
    return np.degrees(ha) / 15.0, alt, np.mod(az, 360.0)


def _hour_angle_rad(ra_cirs_rad, era_rad, longitude_deg: float):
    """Hour angle (rad, -pi..pi, positive west): ERA + longitude - alpha_CIRS, wrapped."""
    ha = np.asarray(era_rad) + np.radians(longitude_deg) - np.asarray(ra_cirs_rad)
    return np.mod(ha + np.pi, 2 * np.pi) - np.pi


def _altitude_deg(sin_alt):
    """Altitude (deg) of its sine, clipped to -1..1 against rounding."""
    return np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))


def _blocks(jd_utc):
    """Block number of each time and block midpoints (UTC JD).

    Blocks of PLACE_BLOCK_D on a fixed grid of Julian dates (not from the earliest time given), so
    a target's apparent place at a time does not depend on which other times share the call: a
    catalogue cut into chunks gets the same altitudes as the whole.
    """
    jd = np.asarray(jd_utc, dtype=float)
    block = np.floor(jd / PLACE_BLOCK_D).astype(np.int64)
    ids = np.unique(block)
    return block, ids, (ids + 0.5) * PLACE_BLOCK_D


@dataclasses.dataclass(frozen=True)
class Horizontal:
    """Positions of N targets at T times; every array has shape (N, T).

    ``alt_deg`` airless altitude, ``az_deg`` azimuth (north through east), ``ha_h`` hour angle
    (hours, -12..12, positive west), ``airmass`` (Young 1994, inf below the horizon).
    """

    alt_deg: np.ndarray
    az_deg: np.ndarray
    ha_h: np.ndarray

    @property
    def airmass(self) -> np.ndarray:
        """Airmass (Young 1994) of ``alt_deg``, computed when asked for."""
        return airmass_young1994(self.alt_deg)


def altaz_grid(ra_deg, dec_deg, jd_utc, latitude_deg: float, longitude_deg: float) -> Horizontal:
    """Positions (:class:`Horizontal`, shape (N, T)) of N targets at T UTC Julian dates.

    ``ra_deg``/``dec_deg`` ICRS, shape (N,); ``jd_utc`` shape (T,). The apparent place of every
    target is computed once per day-long block of times, at the block's middle. NaN in the
    columns of times that are not finite.
    """
    ra = np.atleast_1d(np.asarray(ra_deg, dtype=float))
    dec = np.atleast_1d(np.asarray(dec_deg, dtype=float))
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    shape = (ra.size, jd.size)
    finite = np.isfinite(jd)
    if not finite.all():
        alt, az, ha = (np.full(shape, np.nan) for _ in range(3))
        if finite.any():
            part = altaz_grid(ra, dec, jd[finite], latitude_deg, longitude_deg)
            alt[:, finite], az[:, finite], ha[:, finite] = part.alt_deg, part.az_deg, part.ha_h
        return Horizontal(alt, az, ha)
    alt, az, ha = (np.empty(shape) for _ in range(3))
    if jd.size == 0 or ra.size == 0:
        return Horizontal(alt, az, ha)
    era = earth_rotation_angle_rad(jd)
    block, ids, mids_utc = _blocks(jd)
    mids_tdb = utc_to_tdb_jd(mids_utc)
    for b, mid_tdb in zip(ids, mids_tdb):
        cols = block == b
        ri, di = cirs_place(ra, dec, mid_tdb)
        ha[:, cols], alt[:, cols], az[:, cols] = horizontal(ri[:, None], di[:, None], era[None, cols],
                                                            latitude_deg, longitude_deg)
    return Horizontal(alt, az, ha)


def cirs_places_at(ra_deg, dec_deg, jd_utc):
    """CIRS (ra, dec) in rad of targets at times, elementwise (1-D arrays of one length).

    One apparent place per day-long block of times; NaN where the time is NaN.
    """
    ra = np.asarray(ra_deg, float).ravel()
    dec = np.asarray(dec_deg, float).ravel()
    jd = np.asarray(jd_utc, float).ravel()
    ri = np.full(jd.shape, np.nan)
    di = np.full(jd.shape, np.nan)
    ok = np.isfinite(jd)
    if ok.any():
        ri[ok], di[ok] = _places_in_blocks(ra[ok], dec[ok], _blocks(jd[ok])[0])
    return ri, di


def _places_in_blocks(ra_deg, dec_deg, block):
    """CIRS (ra, dec) in rad of each ICRS position (1-D, degrees) at the middle of its day-long
    block (``block``, int numbers of :func:`_blocks`)."""
    ri, di = np.empty(block.shape), np.empty(block.shape)
    ids = np.unique(block)
    for b, mid_tdb in zip(ids, utc_to_tdb_jd((ids + 0.5) * PLACE_BLOCK_D)):
        sel = np.flatnonzero(block == b)
        ri[sel], di[sel] = cirs_place(ra_deg[sel], dec_deg[sel], mid_tdb)
    return ri, di


def altaz_at(ra_deg, dec_deg, jd_utc, latitude_deg: float, longitude_deg: float) -> Horizontal:
    """Positions (:class:`Horizontal`) of targets at times, elementwise; inputs broadcast together.

    For the scheduler's altitude at block start/middle/end: one target and one time per element.
    NaN where the time is NaN.
    """
    return altaz_and_places_at(ra_deg, dec_deg, jd_utc, latitude_deg, longitude_deg)[0]


def altaz_and_places_at(ra_deg, dec_deg, jd_utc, latitude_deg: float, longitude_deg: float):
    """(:func:`altaz_at`, the CIRS (ra, dec) in rad it was computed from, flat): for callers that
    also want the targets' distance from the Moon or Sun, whose apparent places are the same.

    Coordinates that broadcast over several times (shape (N, 1) against (N, T)) go through
    :func:`altaz_of`: their apparent places are computed once per day-long block, not per time.
    """
    ra, dec = np.broadcast_arrays(np.asarray(ra_deg, float), np.asarray(dec_deg, float))
    shape = np.broadcast_shapes(ra.shape, np.shape(jd_utc))
    if ra.size < int(np.prod(shape)):
        index = np.arange(ra.size).reshape(ra.shape)
        return altaz_of(ra.ravel(), dec.ravel(), index, jd_utc, latitude_deg, longitude_deg, with_places=True)
    ra, dec, jd = np.broadcast_arrays(ra, dec, np.asarray(jd_utc, float))
    ri, di = cirs_places_at(ra, dec, jd)
    return _horizontal_at(ri, di, jd, latitude_deg, longitude_deg), (ri, di)


def altaz_of(ra_deg, dec_deg, index, jd_utc, latitude_deg: float, longitude_deg: float, with_places: bool = False):
    """Positions (:class:`Horizontal`) of the targets ``index`` (int positions into the 1-D ICRS
    ``ra_deg``, ``dec_deg``) at UTC Julian dates ``jd_utc``, elementwise (``index`` and ``jd_utc``
    broadcast); with ``with_places``, also the flat CIRS (ra, dec) in rad, as
    :func:`altaz_and_places_at` gives them.

    The same values as :func:`altaz_at` of the targets' coordinates, to the bit: each target's
    apparent place is computed once per day-long block of times it appears in, so the (N, 9)
    altitudes of a survey's N blocks cost about N apparent places, not 9 N.
    """
    idx, jd = np.broadcast_arrays(np.asarray(index, np.int64), np.asarray(jd_utc, float))
    t = jd.ravel()
    ri, di = np.full(t.shape, np.nan), np.full(t.shape, np.nan)
    ok, pair_ra, pair_dec, inverse = _pair_places(ra_deg, dec_deg, idx.ravel(), t)
    if ok.size:
        ri[ok], di[ok] = pair_ra[inverse], pair_dec[inverse]
    pos = _horizontal_at(ri, di, jd, latitude_deg, longitude_deg)
    return (pos, (ri, di)) if with_places else pos


def altitude_of(ra_deg, dec_deg, index, jd_utc, latitude_deg: float, longitude_deg: float) -> np.ndarray:
    """Airless altitude (deg) of the targets ``index`` at UTC Julian dates ``jd_utc``, as
    :func:`altaz_of` gives it (the same values, to the bit), shape of ``index`` and ``jd_utc``
    broadcast; NaN where the time is not finite.

    For callers that want the altitude alone (the scheduler's block samples): neither azimuth nor
    hour angle is kept, and the declination's sine and cosine, times those of the latitude, are
    taken once per target and day-long block instead of once per time.
    """
    idx, jd = np.broadcast_arrays(np.asarray(index, np.int64), np.asarray(jd_utc, float))
    t = jd.ravel()
    alt = np.full(t.shape, np.nan)
    ok, pair_ra, pair_dec, inverse = _pair_places(ra_deg, dec_deg, idx.ravel(), t)
    if ok.size:
        phi = np.radians(latitude_deg)
        # the products of horizontal(): sin(phi) sin(delta) + (cos(phi) cos(delta)) cos(H)
        sin_part = (np.sin(phi) * np.sin(pair_dec))[inverse]
        cos_part = (np.cos(phi) * np.cos(pair_dec))[inverse]
        ha = _hour_angle_rad(pair_ra[inverse], earth_rotation_angle_rad(t[ok]), longitude_deg)
        alt[ok] = _altitude_deg(sin_part + cos_part * np.cos(ha))
    return alt.reshape(jd.shape)


def _pair_places(ra_deg, dec_deg, i, t):
    """(ok, pair_ra, pair_dec, inverse) for the flat target positions ``i`` and UTC times ``t``:
    ``ok`` the positions of the finite times, and the CIRS places (rad) of each distinct pair of
    target and day-long block among them, ``inverse`` the pair of each ``ok`` element."""
    ok = np.flatnonzero(np.isfinite(t))
    if not ok.size:
        return ok, np.zeros(0), np.zeros(0), np.zeros(0, np.int64)
    block = np.floor(t[ok] / PLACE_BLOCK_D).astype(np.int64)
    first = int(block.min())
    n_blocks = int(block.max()) - first + 1
    pair, inverse = numerics.dense_codes(i[ok] * n_blocks + (block - first))
    target = pair // n_blocks
    pair_ra, pair_dec = _places_in_blocks(np.asarray(ra_deg, float)[target], np.asarray(dec_deg, float)[target],
                                          pair % n_blocks + first)
    return ok, pair_ra, pair_dec, inverse


def _horizontal_at(ri, di, jd, latitude_deg, longitude_deg) -> Horizontal:
    """:class:`Horizontal` (shape of ``jd``) of the flat CIRS places ``ri``, ``di`` at the times ``jd``."""
    flat = jd.ravel()
    era = np.full(flat.shape, np.nan)
    ok = np.isfinite(flat)
    if ok.any():
        era[ok] = earth_rotation_angle_rad(flat[ok])
    ha, alt, az = horizontal(ri, di, era, latitude_deg, longitude_deg)
    return Horizontal(alt.reshape(jd.shape), az.reshape(jd.shape), ha.reshape(jd.shape))


def _ra_dec_from_vectors(v):
    return np.arctan2(v[..., 1], v[..., 0]), np.arcsin(np.clip(v[..., 2], -1.0, 1.0))


def separation_deg(u, v):
    """Angle (deg) between unit vectors u and v (..., 3), broadcast; stable near 0 and 180 deg."""
    cross = np.linalg.norm(np.cross(u, v), axis=-1)
    dot = np.einsum("...k,...k->...", u, v)
    return np.degrees(np.arctan2(cross, dot))


@dataclasses.dataclass(frozen=True)
class SkyTracks:
    """Sun and Moon seen from a site over a UTC span, on a grid, interpolated on demand.

    ``jd_utc`` (G,) uniform grid of step ``step_d``; ``sun_km``/``moon_km`` (G, 3) geocentric
    CIRS positions (km); ``site_itrs_km`` (3,) the observer's geocentric position;
    ``illumination`` (G,) the Moon's illuminated fraction 0..1 (geocentric elongation);
    ``ut1_minus_tai_d`` (G,) for :meth:`era_rad`.
    Positions are interpolated cubically (Catmull-Rom) and made topocentric by subtracting the
    observer's position rotated by the Earth rotation angle (polar motion neglected: < 15 m).
    Build with :func:`sky_tracks`.
    """

    latitude_deg: float
    longitude_deg: float
    jd_utc: np.ndarray
    step_d: float
    sun_km: np.ndarray
    moon_km: np.ndarray
    site_itrs_km: np.ndarray
    illumination: np.ndarray
    ut1_minus_tai_d: np.ndarray

    def era_rad(self, jd_utc):
        """Earth rotation angle (rad) at UTC Julian dates inside the span, any shape.

        UT1 - TAI (smooth: no leap seconds) is interpolated linearly on the grid from astropy's
        IERS values, TAI from UTC by ``erfa.utctai``; same values as
        :func:`earth_rotation_angle_rad` to well under a millisecond of UT1.
        """
        import erfa

        jd = np.asarray(jd_utc, dtype=float)
        day = np.floor(jd - 0.5) + 0.5
        tai1, tai2 = erfa.utctai(day, jd - day)
        return erfa.era00(tai1, tai2 + np.interp(jd, self.jd_utc, self.ut1_minus_tai_d))

    def _interp(self, table, jd_utc):
        jd = np.asarray(jd_utc, dtype=float)
        if jd.size and np.any(np.isfinite(jd)):
            lo, hi = np.nanmin(jd), np.nanmax(jd)
            if lo < self.jd_utc[1] - 1e-9 or hi > self.jd_utc[-2] + 1e-9:
                raise SkyTrackError(f"times JD {lo:.4f}..{hi:.4f} (UTC) lie outside the Sun and Moon tracks, "
                                    f"which cover JD {self.jd_utc[1]:.4f}..{self.jd_utc[-2]:.4f}; build the tracks "
                                    "with sky_tracks(..., start_jd_utc, end_jd_utc) for a span that holds these times")
        i, f = numerics.grid_cell((jd - self.jd_utc[0]) / self.step_d, self.jd_utc.size)
        return numerics.catmull_rom(table[i - 1], table[i], table[i + 1], table[i + 2], f[..., None])

    def _topocentric(self, table, jd_utc, era_rad):
        era = self.era_rad(jd_utc) if era_rad is None else np.asarray(era_rad)
        x, y, z = self.site_itrs_km
        c, s = np.cos(era), np.sin(era)
        site = np.stack([x * c - y * s, x * s + y * c, np.broadcast_to(z, c.shape)], axis=-1)
        v = self._interp(table, jd_utc) - site
        return v / np.linalg.norm(v, axis=-1, keepdims=True)

    def sun_vector(self, jd_utc, era_rad=None):
        """Topocentric CIRS unit vector (..., 3) of the Sun at the given UTC Julian dates."""
        return self._topocentric(self.sun_km, jd_utc, era_rad)

    def moon_vector(self, jd_utc, era_rad=None):
        """Topocentric CIRS unit vector (..., 3) of the Moon at the given UTC Julian dates."""
        return self._topocentric(self.moon_km, jd_utc, era_rad)

    def _altaz(self, table, jd_utc, era_rad):
        era = self.era_rad(jd_utc) if era_rad is None else np.asarray(era_rad)
        return self.vector_altaz_deg(self._topocentric(table, jd_utc, era), era)

    def vector_altaz_deg(self, vector, era_rad):
        """(airless altitude, azimuth), degrees, of topocentric CIRS unit vectors (..., 3) at
        the Earth rotation angles ``era_rad`` (rad): ``sun_altaz_deg`` of a ``sun_vector`` the
        caller already has (the same values)."""
        ra, dec = _ra_dec_from_vectors(vector)
        return horizontal(ra, dec, np.asarray(era_rad), self.latitude_deg, self.longitude_deg)[1:]

    def sun_altaz_deg(self, jd_utc, era_rad=None):
        """(airless altitude, azimuth) of the Sun's centre, degrees, at UTC Julian dates."""
        return self._altaz(self.sun_km, jd_utc, era_rad)

    def moon_altaz_deg(self, jd_utc, era_rad=None):
        """(airless topocentric altitude, azimuth) of the Moon's centre, degrees."""
        return self._altaz(self.moon_km, jd_utc, era_rad)

    def moon_illumination(self, jd_utc):
        """Illuminated fraction of the Moon (0 new .. 1 full) at UTC Julian dates."""
        return np.interp(np.asarray(jd_utc, dtype=float), self.jd_utc, self.illumination)


def sky_tracks(latitude_deg: float, longitude_deg: float, elevation_m: float,
               start_jd_utc: float, end_jd_utc: float, step_d: float = BODY_STEP_D) -> SkyTracks:
    """:class:`SkyTracks` of the Sun and Moon for a site, covering [start, end] (UTC JD).

    Geocentric GCRS positions from ``get_body`` are turned into CIRS with the GCRS -> CIRS
    matrix (``erfa.c2i06a``) of each day of the span: the matrix drifts by < 0.1 arcsec a day
    (precession 0.14 arcsec/day, the 13.7-day nutation term 0.1 arcsec/day).
    """
    import astropy.units as u
    import erfa
    from astropy.coordinates import EarthLocation, get_body
    from astropy.time import Time

    from ..timescales import earth_orientation

    if not (np.isfinite(start_jd_utc) and np.isfinite(end_jd_utc) and end_jd_utc >= start_jd_utc):
        raise SkyTrackError(f"Sun and Moon tracks need a span of finite UTC Julian dates with its end not before "
                            f"its start; got {start_jd_utc!r} .. {end_jd_utc!r}")
    if not (np.isfinite(step_d) and step_d > 0):
        raise SkyTrackError(f"the step of the Sun and Moon tracks must be a positive number of days; got {step_d!r}")
    earth_orientation.configure()
    n = int(np.ceil((end_jd_utc - start_jd_utc) / step_d)) + 5
    grid = start_jd_utc - 2 * step_d + step_d * np.arange(n)
    loc = EarthLocation.from_geodetic(longitude_deg * u.deg, latitude_deg * u.deg, elevation_m * u.m)
    with earth_orientation.quiet_iers_warnings():
        t = Time(grid, format="jd", scale="utc")
        gcrs = [get_body(body, t, ephemeris="builtin").cartesian.xyz.to_value(u.km).T for body in ("sun", "moon")]
        day = np.floor(grid - grid[0]).astype(int)
        mid = Time(grid[0] + np.unique(day) + 0.5, format="jd", scale="utc").tt
        c2i = erfa.c2i06a(mid.jd1, mid.jd2)[day]  # (G, 3, 3)
        ut1 = t.ut1
    tai1, tai2 = erfa.utctai(t.jd1, t.jd2)
    ut1_minus_tai_d = (ut1.jd1 - tai1) + (ut1.jd2 - tai2)
    sun, moon = (np.einsum("gij,gj->gi", c2i, x) for x in gcrs)
    # illuminated fraction from the geocentric elongation (the formula of astroplan.moon_illumination)
    r_sun = np.linalg.norm(sun, axis=-1)
    r_moon = np.linalg.norm(moon, axis=-1)
    elong = np.radians(separation_deg(sun / r_sun[:, None], moon / r_moon[:, None]))
    phase_angle = np.arctan2(r_sun * np.sin(elong), r_moon - r_sun * np.cos(elong))
    illumination = (1.0 + np.cos(phase_angle)) / 2.0
    site_km = np.array([q.to_value(u.km) for q in loc.geocentric])
    return SkyTracks(float(latitude_deg), float(longitude_deg), grid, float(step_d), sun, moon, site_km,
                     illumination, ut1_minus_tai_d)
