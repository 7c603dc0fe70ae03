"""Fast alt/az/hour angle against astropy's full transforms; airmass and refraction formulas."""

import numpy as np
import pytest

from planner import numerics
from planner.sky import positions
from planner.timescales import earth_orientation, epochs

#: Altitude against astropy's full AltAz transform (pressure 0): the README's promise of
#: 1 arcsecond. The fast path leaves out polar motion and diurnal aberration (up to 0.3 arcsec
#: each) and keeps one apparent place a day (< 0.3 arcsec). Measured worst over these tests:
#: altitude 0.65 arcsec, azimuth on the sky 0.77, hour angle on the sky 0.87.
ALT_TOLERANCE_DEG = 1.0 / 3600.0
#: Sun and Moon (geocentric positions on a 6-hour grid, interpolated cubically, made
#: topocentric exactly) against astropy's AltAz of get_body: the 6-hour grid adds up to about
#: 1.2 arcsec for the Moon (positions.py notes). Measured worst: Sun 0.44 arcsec, Moon altitude
#: 0.96, Moon-target separation 1.05; 1.5 arcsec.
BODY_TOLERANCE_DEG = 1.5 / 3600.0
SITES = [(37.62, -3.12, 1650.0), (69.65, 18.96, 10.0), (-30.17, -70.80, 2200.0), (-21.2, -175.2, 0.0)]


def random_targets(n, seed=20261202):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))  # uniform on the sphere
    return ra, dec


def astropy_altaz(ra, dec, jd, lat, lon, elev):
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)
    t = Time(jd, format="jd", scale="utc")
    c = SkyCoord(ra[:, None] * u.deg, dec[:, None] * u.deg)
    return c.transform_to(AltAz(obstime=t[None, :], location=loc, pressure=0 * u.hPa)), loc, t


def test_1000_targets_7_nights_altitude_against_astropy_altaz():
    lat, lon, elev = SITES[0]
    ra, dec = random_targets(1000)
    # three samples in each of 7 nights (evening, midnight, morning at 3.1 W)
    jd = 2461381.5 + np.concatenate([d + np.array([-0.3, 0.0, 0.25]) for d in range(7)])
    fast = positions.altaz_grid(ra, dec, jd, lat, lon)
    ref, _, _ = astropy_altaz(ra, dec, jd, lat, lon, elev)
    assert fast.alt_deg.shape == (1000, 21)
    assert np.max(np.abs(fast.alt_deg - ref.alt.deg)) <= ALT_TOLERANCE_DEG
    # azimuth, measured as an angle on the sky (scaled by cos alt), away from the zenith
    daz = (fast.az_deg - ref.az.deg + 180.0) % 360.0 - 180.0
    assert np.max(np.abs(daz * np.cos(np.radians(ref.alt.deg)))) <= ALT_TOLERANCE_DEG


@pytest.mark.parametrize("lat, lon, elev", SITES[1:])
def test_other_sites_altitude_and_hour_angle_against_astropy(lat, lon, elev):
    import astropy.units as u
    from astropy.coordinates import HADec

    ra, dec = random_targets(200, seed=7)
    jd = 2461560.5 + np.linspace(0.0, 2.0, 9)
    fast = positions.altaz_grid(ra, dec, jd, lat, lon)
    ref, loc, t = astropy_altaz(ra, dec, jd, lat, lon, elev)
    assert np.max(np.abs(fast.alt_deg - ref.alt.deg)) <= ALT_TOLERANCE_DEG
    hadec = ref.transform_to(HADec(obstime=t[None, :], location=loc, pressure=0 * u.hPa))
    dha_deg = ((fast.ha_h - hadec.ha.hour + 12.0) % 24.0 - 12.0) * 15.0
    # hour angle as an angle on the sky: scaled by cos dec
    assert np.max(np.abs(dha_deg * np.cos(np.radians(hadec.dec.deg)))) <= ALT_TOLERANCE_DEG
    assert np.all((fast.ha_h >= -12.0) & (fast.ha_h <= 12.0))


def test_array_path_equals_one_at_a_time():
    ra, dec = random_targets(40, seed=3)
    jd = 2461400.3 + np.linspace(0.0, 0.4, 5)
    grid = positions.altaz_grid(ra, dec, jd, 37.62, -3.12)
    for i in range(40):
        one = positions.altaz_grid(ra[i], dec[i], jd, 37.62, -3.12)
        assert np.all(np.abs(one.alt_deg[0] - grid.alt_deg[i]) < 1e-9)
    pairs = positions.altaz_at(ra[:, None], dec[:, None], jd[None, :], 37.62, -3.12)
    assert np.all(np.abs(pairs.alt_deg - grid.alt_deg) < 1e-9)
    assert np.all(np.abs(pairs.az_deg - grid.az_deg) < 1e-9)


def test_places_once_per_target_and_day_against_astropy_altaz():
    """altaz_of (one apparent place per target and day, the scheduler's block samples) against
    astropy's AltAz, at a site east of 150 E whose nights cross the day blocks' noon-UTC edge;
    and to the bit the elementwise path it stands for."""
    lat, lon, elev = SITES[3][0], 151.2, 40.0
    ra, dec = random_targets(300, seed=11)
    rng = np.random.default_rng(5)
    target = rng.integers(0, 300, 400)  # repeated targets, as blocks of one target on many nights
    start = 2461400.88 + rng.integers(0, 3, 400) + rng.uniform(0.0, 0.3, 400)  # local evening to late night
    jd = start[:, None] + np.linspace(0.0, 0.1, 9)[None, :]
    fast = positions.altaz_of(ra, dec, target[:, None], jd, lat, lon)
    assert np.any(np.floor(jd[:, 0]) != np.floor(jd[:, -1]))  # blocks that span two days
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)
    ref = SkyCoord(ra[target][:, None] * u.deg, dec[target][:, None] * u.deg).transform_to(
        AltAz(obstime=Time(jd, format="jd", scale="utc"), location=loc, pressure=0 * u.hPa))
    assert np.max(np.abs(fast.alt_deg - ref.alt.deg)) <= ALT_TOLERANCE_DEG
    r, d, t = np.broadcast_arrays(ra[target][:, None], dec[target][:, None], jd)
    each = positions.altaz_and_places_at(r, d, t, lat, lon)[0]  # every element its own place
    assert np.array_equal(fast.alt_deg, each.alt_deg) and np.array_equal(fast.ha_h, each.ha_h)


def test_altitude_of_is_altaz_of_to_the_bit():
    """altitude_of (the altitude alone, the scheduler's samples) gives altaz_of's altitudes bit
    for bit, NaN at times that are not finite, in the shape of the broadcast inputs."""
    ra, dec = random_targets(500, seed=3)
    rng = np.random.default_rng(8)
    target = rng.integers(0, 500, 2000)
    jd = (2461400.3 + rng.uniform(0.0, 7.0, 2000))[:, None] + np.linspace(0.0, 0.08, 9)[None, :]
    jd[3, 4], jd[10, :] = np.nan, np.nan
    for lat, lon in ((SITES[0][0], SITES[0][1]), (-29.3, 151.2)):
        want = positions.altaz_of(ra, dec, target[:, None], jd, lat, lon).alt_deg
        got = positions.altitude_of(ra, dec, target[:, None], jd, lat, lon)
        assert got.shape == (2000, 9) and np.isnan(got[3, 4]) and np.isnan(got[10]).all()
        assert np.array_equal(got, want, equal_nan=True)
    assert positions.altitude_of(ra, dec, np.zeros(0, int), np.zeros(0), 10.0, 20.0).shape == (0,)


def test_dense_codes_are_numpys_unique():
    rng = np.random.default_rng(2)
    for keys in (rng.integers(0, 5000, 20000), rng.integers(0, 10**12, 300), np.array([7])):
        got, inverse = numerics.dense_codes(keys)
        want, want_inverse = np.unique(keys, return_inverse=True)
        assert np.array_equal(got, want) and np.array_equal(inverse, want_inverse)


@pytest.mark.parametrize("lat, lon, elev", SITES)
def test_sun_and_moon_tracks_against_astropy_get_body(lat, lon, elev):
    import astropy.units as u
    from astroplan import moon_illumination
    from astropy.coordinates import AltAz, get_body

    jd = 2461385.2 + np.linspace(0.0, 3.0, 61)
    tracks = positions.sky_tracks(lat, lon, elev, jd[0], jd[-1])
    _, loc, t = astropy_altaz(np.zeros(1), np.zeros(1), jd, lat, lon, elev)
    frame = AltAz(obstime=t, location=loc, pressure=0 * u.hPa)
    for body, (alt, az) in (("sun", tracks.sun_altaz_deg(jd)), ("moon", tracks.moon_altaz_deg(jd))):
        ref = get_body(body, t, location=loc).transform_to(frame)
        assert np.max(np.abs(alt - ref.alt.deg)) < BODY_TOLERANCE_DEG, body
        daz = (az - ref.az.deg + 180.0) % 360.0 - 180.0
        assert np.max(np.abs(daz * np.cos(np.radians(ref.alt.deg)))) < BODY_TOLERANCE_DEG, body
    # astroplan.moon_illumination, same formula and ephemeris: 0.001 of the disc
    assert np.max(np.abs(tracks.moon_illumination(jd) - moon_illumination(t))) < 1e-3


def test_moon_separation_against_astropy():
    import astropy.units as u
    from astropy.coordinates import SkyCoord, get_body

    lat, lon, elev = SITES[0]
    ra, dec = random_targets(50, seed=11)
    jd = 2461390.4 + np.linspace(0.0, 0.5, 4)
    tracks = positions.sky_tracks(lat, lon, elev, jd[0], jd[-1])
    _, loc, t = astropy_altaz(ra, dec, jd, lat, lon, elev)
    moon = get_body("moon", t, location=loc)
    for k in range(jd.size):
        ri, di = positions.cirs_place(ra, dec, epochs.utc_to_tdb_jd(jd[k]))
        sep = positions.separation_deg(numerics.unit_vectors(ri, di), tracks.moon_vector(jd[k]))
        # in the Moon's frame (topocentric GCRS), as astroplan's MoonSeparationConstraint does
        targets = SkyCoord(ra * u.deg, dec * u.deg).transform_to(moon[k].frame)
        ref = moon[k].separation(targets).deg
        assert np.max(np.abs(sep - ref)) < BODY_TOLERANCE_DEG


def test_airmass_young_1994_against_hardie_1962():
    # Hardie 1962 (Astronomical Techniques, p. 180), a fit to Bemporad's table good to 0.1 per cent
    # up to X = 6.8, is in terms of the observed (refracted) zenith distance; Young 1994 (Applied
    # Optics 33, 1108) in terms of the true one. Compare with z_obs = z_true - refraction.
    # Tolerance 0.3 per cent: Hardie's stated accuracy plus the refraction formula's.
    z_true = np.array([0.0, 20.0, 40.0, 60.0, 70.0, 75.0, 80.0])
    alt = 90.0 - z_true
    sec = 1.0 / np.cos(np.radians(z_true - positions.refraction_saemundsson_deg(alt)))
    hardie = sec - 0.0018167 * (sec - 1) - 0.002875 * (sec - 1) ** 2 - 0.0008083 * (sec - 1) ** 3
    young = positions.airmass_young1994(alt)
    assert np.max(np.abs(young / hardie - 1.0)) < 3e-3
    # and close to the plane-parallel sec z high in the sky: astropy's AltAz.secz at 60 deg zenith
    # distance is 2.000; a curved atmosphere gives about 0.4 per cent less
    assert abs(positions.airmass_young1994(30.0) - 2.0) < 0.01
    assert positions.airmass_young1994(30.0) < 2.0
    assert np.isinf(positions.airmass_young1994(-5.0))


def test_altitude_for_airmass_inverts_the_formula():
    for x in (1.2, 2.0, 3.0, 5.0):
        alt = positions.altitude_for_airmass_deg(x)
        assert abs(positions.airmass_young1994(alt) - x) < 1e-9


def test_refraction_against_astropy_erfa_model():
    # astropy AltAz with pressure 1010 hPa, 10 C, dry air, 0.55 um (ERFA refco two-term model)
    # against Saemundsson 1986 (Sky & Telescope 72, 70; Meeus eq. 16.4) for the same conditions.
    # The two models differ by up to ~4 per cent at 15 deg (8 arcsec); 0.003 deg is far below
    # what a printed altitude shows. Refraction is for display only.
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(0 * u.deg, 40 * u.deg, 0 * u.m)
    t = Time("2026-12-07T22:00:00", scale="utc")
    alts = np.array([15.0, 20.0, 30.0, 45.0, 60.0, 80.0])
    airless = SkyCoord(alt=alts * u.deg, az=np.full(alts.size, 100.0) * u.deg,
                       frame=AltAz(obstime=t, location=loc, pressure=0 * u.hPa))
    observed = airless.icrs.transform_to(AltAz(obstime=t, location=loc, pressure=1010 * u.hPa,
                                               temperature=10 * u.deg_C, relative_humidity=0,
                                               obswl=0.55 * u.micron))
    ref = observed.alt.deg - alts
    assert np.max(np.abs(positions.refraction_saemundsson_deg(alts) - ref)) < 0.003


def test_nan_times_give_nan_positions_without_warnings():
    pos = positions.altaz_at([10.0, 20.0], [5.0, 6.0], [2461400.3, np.nan], 37.62, -3.12)
    assert np.isfinite(pos.alt_deg[0]) and np.isnan(pos.alt_deg[1]) and np.isnan(pos.airmass[1])


def test_sun_and_moon_track_errors_say_which_span_is_needed():
    import re

    from planner.errors import PeriplanError, SkyTrackError

    tracks = positions.sky_tracks(37.62, -3.12, 1650.0, 2461400.0, 2461401.0)
    with pytest.raises(SkyTrackError, match=re.escape("build the tracks with sky_tracks(")):
        tracks.sun_altaz_deg(2461405.0)
    with pytest.raises(SkyTrackError, match="end not before its start"):
        positions.sky_tracks(37.62, -3.12, 1650.0, 2461401.0, 2461400.0)
    with pytest.raises(SkyTrackError, match="finite UTC Julian dates"):
        positions.sky_tracks(37.62, -3.12, 1650.0, np.nan, 2461400.0)
    with pytest.raises(SkyTrackError, match="positive number of days"):
        positions.sky_tracks(37.62, -3.12, 1650.0, 2461400.0, 2461401.0, step_d=0.0)
    assert issubclass(SkyTrackError, PeriplanError)


def test_positions_at_times_that_are_not_finite_are_nan():
    # the finite columns equal the same times alone (the one-at-a-time path is checked above
    # against astropy); a NaN time gives NaN, not an error
    ra, dec = random_targets(5, seed=4)
    jd = np.array([2461400.3, np.nan, 2461400.5])
    grid = positions.altaz_grid(ra, dec, jd, 37.62, -3.12)
    alone = positions.altaz_grid(ra, dec, jd[[0, 2]], 37.62, -3.12)
    assert np.all(np.isnan(grid.alt_deg[:, 1])) and np.all(np.isnan(grid.ha_h[:, 1]))
    assert np.array_equal(grid.alt_deg[:, [0, 2]], alone.alt_deg)
    assert np.array_equal(grid.az_deg[:, [0, 2]], alone.az_deg)
    era = positions.earth_rotation_angle_rad(jd)
    assert np.isnan(era[1]) and np.array_equal(era[[0, 2]], positions.earth_rotation_angle_rad(jd[[0, 2]]))


def test_altitude_of_a_time_does_not_depend_on_the_other_times_of_the_call():
    # One apparent place per day-long block: the blocks sit on a fixed grid of Julian dates, so
    # adding an earlier time to the call (another target's event, another chunk) changes nothing.
    # Invariant of the engine's own definition, no outside value needed.
    from planner.sky import positions

    jd = np.array([2461384.3, 2461386.9])
    alone = positions.altaz_at(64.0, 21.8, jd, 37.6, -3.1).alt_deg
    with_earlier = positions.altaz_at(np.array([64.0, 64.0, 10.0]), np.array([21.8, 21.8, -5.0]),
                                      np.r_[jd, 2461383.75], 37.6, -3.1).alt_deg[:2]
    assert np.array_equal(alone, with_earlier)


def test_earth_rotation_angle_of_many_times_is_astropys_across_a_leap_second():
    """Millions of times on a few days take UT1 - TAI and TAI - UTC per day, interpolated; the
    angle must stay ERFA's era00 (IAU 2000 ERA) of astropy's UT1 (its IERS table) for each time,
    on the days around the leap second at the end of 2016-12-31 (IERS Bulletin C 52) too."""
    import erfa
    from astropy.time import Time

    rng = np.random.default_rng(7)
    jd = np.concatenate([2457754.5 + rng.uniform(-2.0, 2.0, 20_000),   # 2016-12-29 .. 2017-01-02
                         2461382.0 + rng.uniform(0.0, 7.0, 20_000)])   # a week of December 2026
    with earth_orientation.quiet_iers_warnings():
        ut1 = Time(jd, format="jd", scale="utc").ut1
    expected = erfa.era00(ut1.jd1, ut1.jd2)
    got = positions.earth_rotation_angle_rad(jd)
    assert np.max(np.abs(np.angle(np.exp(1j * (got - expected))))) < 1e-12  # rad: 14 ns of UT1
