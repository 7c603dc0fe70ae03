"""Night engine against astroplan/astropy and published almanac numbers; polar and calendar cases."""

import datetime as dt
import warnings
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from planner.sky.night import SUNRISE_ALT_DEG, night_table, solar_noons_jd_utc
from planner.inputs.site import Site

#: Night times against astroplan: both search the same geometric -0.8333 / -6 / -12 / -18 deg
#: crossings of astropy's Sun, so they agree to well under a second, the README's promise.
#: astroplan interpolates linearly between its grid points; with 300 points over the day its
#: own error reached 0.93 s at a grazing crossing (60.2 N in June), so the reference runs on
#: ASTROPLAN_GRID_POINTS (1.4 min apart). Measured worst difference over CASES: 0.15 s
#: (Moon rise: 0.06 s); what is left is the bisection (0.05 s) and astroplan's interpolation.
ASTROPLAN_TOLERANCE_S = 1.0
ASTROPLAN_GRID_POINTS = 1000
#: Against the skyfield documentation (DE421 ephemeris, not astropy's built-in VSOP87/ELP):
#: the published times are rounded to the whole second (0.5 s) and the two ephemerides move
#: the Sun's crossings by a few tenths of a second; measured worst difference 0.75 s; 2 s.
SKYFIELD_TOLERANCE_S = 2.0
#: Moon's illuminated fraction against astroplan.moon_illumination (same formula, same
#: ephemeris; only our linear interpolation on the 6-hour grid differs, measured 1.3e-4):
#: 0.001 of the disc.
ILLUMINATION_TOLERANCE = 1e-3

SECONDS_PER_DAY = 86400.0


def site(lat, lon, tz, elev=0.0, **kw):
    return Site(name="test", latitude_deg=lat, longitude_deg=lon, elevation_m=elev, timezone=tz, **kw)


def observer(s):
    from astroplan import Observer

    return Observer(location=s.earth_location(), pressure=0)  # pressure 0: airless geometry


def astroplan_times(s, noon_jd):
    """(sunset, dark start, dark end, sunrise) UTC JDs from astroplan, NaN when masked."""
    import astropy.units as u
    from astropy.time import Time

    obs = observer(s)
    t = Time(noon_jd, format="jd", scale="utc")
    h0 = SUNRISE_ALT_DEG * u.deg
    hd = s.darkness_sun_alt_deg * u.deg
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        found = [obs.sun_set_time(t, which="next", horizon=h0, n_grid_points=ASTROPLAN_GRID_POINTS),
                 obs.sun_set_time(t, which="next", horizon=hd, n_grid_points=ASTROPLAN_GRID_POINTS),
                 obs.sun_rise_time(t, which="next", horizon=hd, n_grid_points=ASTROPLAN_GRID_POINTS),
                 obs.sun_rise_time(t, which="next", horizon=h0, n_grid_points=ASTROPLAN_GRID_POINTS)]
    out = []
    for x in found:
        v = np.ma.filled(np.ma.asarray(x.jd, dtype=float), np.nan)
        out.append(float(v) if np.isfinite(v) and v < noon_jd + 1.0 else np.nan)
    return out


# a spread of latitudes, longitudes and seasons; 60.2 N in June has sunset but no astronomical
# darkness; 37.6 N includes the October daylight-saving change
CASES = [
    (37.62, -3.12, "Europe/Madrid", "2026-10-24"),
    (37.62, -3.12, "Europe/Madrid", "2026-06-20"),
    (40.8939, -83.8917, "America/New_York", "2026-03-07"),
    (-30.17, -70.80, "America/Santiago", "2026-12-10"),
    (-33.9, 18.4, "Africa/Johannesburg", "2026-07-01"),
    (60.2, 24.9, "Europe/Helsinki", "2026-06-21"),
    (64.1, -21.9, "Atlantic/Reykjavik", "2026-03-20"),
    (-21.2, -175.2, "Pacific/Tongatapu", "2026-09-01"),
]


@pytest.mark.parametrize("lat, lon, tz, day", CASES)
def test_night_times_match_astroplan(lat, lon, tz, day):
    s = site(lat, lon, tz)
    row = night_table(s, day, 1).iloc[0]
    ref = astroplan_times(s, row.noon_jd_utc)
    got = [row.sunset_jd_utc, row.dark_start_jd_utc, row.dark_end_jd_utc, row.sunrise_jd_utc]
    for name, g, r in zip(("sunset", "dark start", "dark end", "sunrise"), got, ref):
        assert np.isfinite(g) == np.isfinite(r), (name, g, r)
        if np.isfinite(r):
            assert abs(g - r) * SECONDS_PER_DAY < ASTROPLAN_TOLERANCE_S, name


def test_high_latitude_summer_with_sunset_but_no_dark_time():
    # 60.2 N at the June solstice: the Sun dips about 6.3 deg below the horizon at midnight
    # (90 - 60.2 - 23.44 below the pole), so it sets but never reaches -18 deg.
    row = night_table(site(60.2, 24.9, "Europe/Helsinki"), "2026-06-21", 1).iloc[0]
    assert row.dark_kind == "no dark time" and row.dark_h == 0.0
    assert np.isnan(row.dark_start_jd_utc) and np.isnan(row.dark_end_jd_utc)
    assert np.isfinite(row.sunset_jd_utc) and np.isfinite(row.sunrise_jd_utc)


def test_polar_day_has_no_sunset_and_no_dark_time():
    # 69.65 N at the June solstice: the Sun stays 3 deg above the horizon at midnight.
    # Reference: astropy AltAz of the Sun on a 5-minute grid over the night's window.
    import astropy.units as u
    from astropy.coordinates import AltAz, get_body
    from astropy.time import Time

    s = site(69.65, 18.96, "Europe/Oslo")
    row = night_table(s, "2026-06-21", 1).iloc[0]
    t = Time(row.noon_jd_utc + np.arange(0, 1, 5 / 1440), format="jd", scale="utc")
    sun_alt = get_body("sun", t, location=s.earth_location()).transform_to(
        AltAz(obstime=t, location=s.earth_location(), pressure=0 * u.hPa)).alt.deg
    assert sun_alt.min() > SUNRISE_ALT_DEG
    assert row.dark_kind == "no dark time"
    assert np.isnan(row.sunset_jd_utc) and np.isnan(row.sunrise_jd_utc) and np.isnan(row.dark_start_jd_utc)


def test_polar_night_gives_an_all_night_window():
    # 78.2 N at the December solstice with civil darkness (-6 deg): the Sun's noon altitude is
    # about 90 - 78.2 - 23.44 = -11.6 deg, so the whole window is dark. Reference: astropy AltAz.
    import astropy.units as u
    from astropy.coordinates import AltAz, get_body
    from astropy.time import Time

    s = site(78.2, 15.6, "Arctic/Longyearbyen", darkness_sun_alt_deg=-6.0)
    row = night_table(s, "2026-12-21", 1).iloc[0]
    t = Time(row.noon_jd_utc + np.arange(0, 1, 5 / 1440), format="jd", scale="utc")
    sun_alt = get_body("sun", t, location=s.earth_location()).transform_to(
        AltAz(obstime=t, location=s.earth_location(), pressure=0 * u.hPa)).alt.deg
    assert sun_alt.max() < -6.0
    assert row.dark_kind == "all night"
    assert abs(row.dark_h - 24.0) < 1e-9
    assert row.dark_start_jd_utc == row.noon_jd_utc and row.dark_end_jd_utc == row.next_noon_jd_utc
    assert np.isnan(row.sunset_jd_utc) and np.isnan(row.sunrise_jd_utc)


def jd_of(iso_z):
    from astropy.time import Time

    return Time(iso_z.rstrip("Z"), format="isot", scale="utc").jd


# skyfield documentation, "Almanac" examples (DE421): Bluffton, Ohio, 40.8939 N, 83.8917 W;
# sunrise/sunset with the Sun's centre 0.8333 deg below the horizon (reference-values sec. 6c)
BLUFFTON = dict(lat=40.8939, lon=-83.8917, tz="America/New_York")


def test_bluffton_sunrise_sunset_2018_09_12():
    s = site(**BLUFFTON)
    nights = night_table(s, "2018-09-11", 2)
    # sunrise 2018-09-12T11:13:13Z ends the night of the 11th; sunset 23:49:38Z starts the 12th's
    assert abs(nights.sunrise_jd_utc[0] - jd_of("2018-09-12T11:13:13Z")) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S
    assert abs(nights.sunset_jd_utc[1] - jd_of("2018-09-12T23:49:38Z")) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S


@pytest.mark.parametrize("darkness, morning_z, evening_z", [
    # skyfield documentation, twilight transitions at Bluffton, 2019-11-08 (reference-values 6c)
    (-18.0, "2019-11-08T10:40:20Z", "2019-11-08T23:57:44Z"),
    (-12.0, "2019-11-08T11:12:31Z", "2019-11-08T23:25:34Z"),
    (-6.0, "2019-11-08T11:45:18Z", "2019-11-08T22:52:49Z"),
])
def test_bluffton_twilight_2019_11_08(darkness, morning_z, evening_z):
    s = site(**BLUFFTON, darkness_sun_alt_deg=darkness)
    nights = night_table(s, "2019-11-07", 2)
    assert abs(nights.dark_end_jd_utc[0] - jd_of(morning_z)) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S
    assert abs(nights.dark_start_jd_utc[1] - jd_of(evening_z)) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S
    # sunrise 12:14:15Z and sunset 22:23:52Z of the same day
    assert abs(nights.sunrise_jd_utc[0] - jd_of("2019-11-08T12:14:15Z")) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S
    assert abs(nights.sunset_jd_utc[1] - jd_of("2019-11-08T22:23:52Z")) * SECONDS_PER_DAY < SKYFIELD_TOLERANCE_S


def local_date(jd_utc, tz):
    unix = (jd_utc - 2440587.5) * SECONDS_PER_DAY
    return dt.datetime.fromtimestamp(unix, ZoneInfo(tz)).date()


@pytest.mark.parametrize("lat, lon, tz, first", [
    # the night of 2026-10-24/25 contains the end of summer time in Spain (03:00 CEST -> 02:00 CET)
    (37.62, -3.12, "Europe/Madrid", "2026-10-22"),
    # Tonga keeps UTC+13 at 175.2 W: the local date is a day ahead of the UTC date at sunset
    (-21.2, -175.2, "Pacific/Tongatapu", "2026-09-01"),
    # Kiritimati, UTC+14 at 157.4 W
    (1.87, -157.4, "Pacific/Kiritimati", "2026-09-01"),
    # New Zealand, daylight saving starts 2026-09-27
    (-43.99, 170.46, "Pacific/Auckland", "2026-09-25"),
])
def test_labels_are_the_local_date_of_the_evening(lat, lon, tz, first):
    # reference: the tz database through zoneinfo; each sunset falls on the night's label date
    # and each sunrise on the next local date
    nights = night_table(site(lat, lon, tz), first, 5)
    day0 = dt.date.fromisoformat(first)
    assert list(nights.night) == [(day0 + dt.timedelta(days=k)).isoformat() for k in range(5)]
    for row in nights.itertuples():
        label = dt.date.fromisoformat(row.night)
        assert local_date(row.sunset_jd_utc, tz) == label
        assert local_date(row.sunrise_jd_utc, tz) == label + dt.timedelta(days=1)
        assert local_date(row.dark_start_jd_utc, tz) in (label, label + dt.timedelta(days=1))
    # consecutive windows, one day each
    assert np.all(np.abs(nights.noon_jd_utc.to_numpy()[1:] - nights.next_noon_jd_utc.to_numpy()[:-1]) < 1e-9)


def test_dst_night_is_one_hour_longer_on_the_clock():
    # 2026-10-25 02:00 CET happens twice; the dark interval is ~10 h of physics either way but the
    # local clock shows dark end one hour earlier than the night before (tz database)
    nights = night_table(site(37.62, -3.12, "Europe/Madrid"), "2026-10-23", 2)
    ends = [dt.datetime.fromtimestamp((j - 2440587.5) * SECONDS_PER_DAY, ZoneInfo("Europe/Madrid"))
            for j in nights.dark_end_jd_utc]
    assert ends[0].utcoffset() == dt.timedelta(hours=2) and ends[1].utcoffset() == dt.timedelta(hours=1)
    physical_change_min = (nights.dark_end_jd_utc[1] - nights.dark_end_jd_utc[0] - 1.0) * 1440
    assert abs(physical_change_min) < 3  # dawn moves by about a minute a day in late October


def test_moon_illumination_and_moonrise_match_astroplan():
    import astropy.units as u
    from astroplan import moon_illumination
    from astropy.time import Time

    s = site(37.62, -3.12, "Europe/Madrid", elev=1650)
    nights = night_table(s, "2026-12-01", 10)
    mid = 0.5 * (nights.dark_start_jd_utc + nights.dark_end_jd_utc)
    ref = moon_illumination(Time(mid.to_numpy(), format="jd", scale="utc"))
    assert np.max(np.abs(nights.moon_illumination.to_numpy() - ref)) < ILLUMINATION_TOLERANCE
    obs = observer(s)
    for row in nights.iloc[:4].itertuples():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            rise = obs.moon_rise_time(Time(row.noon_jd_utc, format="jd"), which="next",
                                      horizon=-0.8333 * u.deg, n_grid_points=ASTROPLAN_GRID_POINTS).jd
        if rise < row.next_noon_jd_utc:
            assert abs(row.moon_rise_jd_utc - rise) * SECONDS_PER_DAY < ASTROPLAN_TOLERANCE_S
        else:
            assert np.isnan(row.moon_rise_jd_utc)
    assert np.all((nights.moon_up_dark_h >= 0) & (nights.moon_up_dark_h <= nights.dark_h + 1e-9))


def test_many_nights_at_once_equal_one_at_a_time():
    s = site(-30.17, -70.80, "America/Santiago")
    together = night_table(s, "2027-01-01", 6)
    for k in range(6):
        day = (dt.date(2027, 1, 1) + dt.timedelta(days=k)).isoformat()
        alone = night_table(s, day, 1).iloc[0]
        for col in ("sunset_jd_utc", "dark_start_jd_utc", "dark_end_jd_utc", "sunrise_jd_utc"):
            # same crossing search and bisection tolerance (0.05 s)
            assert abs(together[col][k] - alone[col]) * SECONDS_PER_DAY < 0.1


def test_solar_noon_windows_start_near_local_noon():
    labels, noons = solar_noons_jd_utc("2026-10-24", 3, "Europe/Madrid", -3.12)
    # mean solar noon at 3.12 W is 12:12:29 UT
    frac = (noons + 0.5) % 1.0
    assert np.all(np.abs(frac * 24 - (12 + 3.12 / 15)) < 1e-6)
    assert labels == ["2026-10-24", "2026-10-25", "2026-10-26"]


def test_shared_crossing_search_on_a_known_function():
    # sin(2 pi (t - shift)) crosses zero exactly at t = shift + k / 2, rising at whole k
    from planner.sky.crossings import DEFAULT_TOLERANCE_D, find_crossings, positive_intervals

    shift = np.array([0.0, 0.1])

    def func(t, rows):
        return np.sin(2 * np.pi * (t - shift[rows]))

    grid = np.linspace(0.03, 2.03, 97)
    values = np.stack([func(grid, np.full(grid.size, r)) for r in (0, 1)])
    rows, jd, rising = find_crossings(func, grid, values)
    expected = {0: ([0.5, 1.0, 1.5, 2.0], [False, True, False, True]),
                1: ([0.1, 0.6, 1.1, 1.6], [True, False, True, False])}
    for r, (times, ups) in expected.items():
        assert np.max(np.abs(jd[rows == r] - times)) <= DEFAULT_TOLERANCE_D
        assert list(rising[rows == r]) == ups
    r, start, end = positive_intervals(rows, jd, rising, values[:, 0] > 0, values[:, -1] > 0, grid[[0, 0]],
                                       grid[[-1, -1]])
    assert list(r) == [0, 0, 0, 1, 1]
    want = [(0.03, 0.5), (1.0, 1.5), (2.0, 2.03), (0.1, 0.6), (1.1, 1.6)]
    assert np.max(np.abs(np.c_[start, end] - np.array(want))) <= DEFAULT_TOLERANCE_D


def test_crossings_that_do_not_alternate_are_a_crossing_search_error():
    # a series said to be above zero at both ends with one rising crossing between: two starts
    # and one end; the message says what to change
    from planner.errors import CrossingSearchError, PeriplanError
    from planner.sky.crossings import positive_intervals

    with pytest.raises(CrossingSearchError, match="sample the function on a finer grid") as info:
        positive_intervals(np.array([0]), np.array([0.5]), np.array([True]), np.array([True]),
                           np.array([True]), np.array([0.0]), np.array([1.0]))
    assert isinstance(info.value, PeriplanError)
