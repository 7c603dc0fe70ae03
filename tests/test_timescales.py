"""Time-system conversions against astropy (ERFA) and the astropy documentation's example."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

from planner.timescales import clock, epochs

SECOND_D = 1 / 86400
#: A site's offset from the geocentre changes the light time by at most R_earth / c = 21.3 ms.
GEOCENTRE_VS_SITE_D = 0.0215 * SECOND_D
#: Our light time interpolates the Earth's position on a half-day grid; bound from the docstring.
INTERPOLATION_D = 1e-4 * SECOND_D

GEOCENTRE = EarthLocation.from_geocentric(0, 0, 0, unit=u.m)
GREENWICH = EarthLocation.from_geodetic(-0.0014 * u.deg, 51.4778 * u.deg, 46 * u.m)
# astropy documentation, "Barycentric and Heliocentric Light Travel Time Corrections" (astropy.time):
# IP Peg at 23:23:08.55 +18:24:59.3, observatory Greenwich, MJD 56325.95833333 and 56325.978254 UTC
# -> barycentric [-0.0037715, -0.00377286] d, heliocentric [-0.00376576, -0.00376712] d.
IP_PEG = SkyCoord("23:23:08.55", "+18:24:59.3", unit=(u.hourangle, u.deg), frame="icrs")
IP_PEG_MJD = [56325.95833333, 56325.978254]
DOC_BARY_D = [-0.0037715, -0.00377286]
DOC_HELIO_D = [-0.00376576, -0.00376712]
DOC_HALF_UNIT_D = 0.5e-8  # the docs print 8 decimals


def test_light_travel_time_matches_astropy_documentation():
    t = Time(IP_PEG_MJD, format="mjd", scale="utc")
    bary = epochs.light_travel_time_d(t.tdb.jd, IP_PEG.ra.deg, IP_PEG.dec.deg)
    helio = epochs.light_travel_time_d(t.tdb.jd, IP_PEG.ra.deg, IP_PEG.dec.deg, "sun")
    tol = DOC_HALF_UNIT_D + GEOCENTRE_VS_SITE_D + 1e-7  # the first doc value has 7 decimals
    assert np.max(np.abs(bary - DOC_BARY_D)) <= tol
    assert np.max(np.abs(helio - DOC_HELIO_D)) <= tol


def test_light_travel_time_equals_astropy_geocentric_over_a_year():
    rng = np.random.default_rng(5)
    ra, dec = rng.uniform(0, 360, 300), np.degrees(np.arcsin(rng.uniform(-1, 1, 300)))
    t = Time(2461000 + np.sort(rng.uniform(0, 400, 300)), format="jd", scale="tdb", location=GEOCENTRE)
    ours = epochs.light_travel_time_d(t.jd, ra, dec)
    ref = t.light_travel_time(SkyCoord(ra * u.deg, dec * u.deg)).to_value(u.day)
    assert np.max(np.abs(ours - ref)) <= INTERPOLATION_D


@pytest.mark.parametrize("system", ["JD_UTC", "HJD_UTC"])
def test_to_bjd_tdb_against_astropy(system):
    # Build the reference with astropy at a real site: BJD_TDB = t.tdb + barycentric light time;
    # HJD_UTC = t.utc + heliocentric light time. Our geocentric conversion must agree within the
    # geocentre/site light-time difference.
    rng = np.random.default_rng(11)
    ra, dec = rng.uniform(0, 360, 50), rng.uniform(-80, 80, 50)
    coords = SkyCoord(ra * u.deg, dec * u.deg)
    t = Time(2460500 + rng.uniform(0, 600, 50), format="jd", scale="utc", location=GREENWICH)
    bjd_ref = (t.tdb + t.light_travel_time(coords)).jd
    given = t.jd if system == "JD_UTC" else (t.utc + t.light_travel_time(coords, "heliocentric")).jd
    ours = epochs.to_bjd_tdb(given, system, ra, dec)
    assert np.max(np.abs(ours - bjd_ref)) <= GEOCENTRE_VS_SITE_D + INTERPOLATION_D + 2e-10


def test_bjd_to_utc_round_trip_and_size_of_corrections():
    # TT - UTC = 69.184 s since 2017 (IERS Bulletin C: TAI - UTC = 37 s; TT = TAI + 32.184 s),
    # TDB - TT within +-1.7 ms; the light time stays within +-8.4 min (1 au / c = 499 s).
    ra, dec = 80.0, 23.0
    utc = Time(["2026-12-07T00:00:00", "2027-06-01T12:00:00"], scale="utc")
    bjd = epochs.to_bjd_tdb(utc.jd, "JD_UTC", ra, dec)
    back = epochs.bjd_tdb_to_utc(bjd, ra, dec)
    assert np.max(np.abs((back - utc).to_value(u.s))) <= 1e-4
    ltt = epochs.light_travel_time_d(utc.tdb.jd, ra, dec)
    assert np.all(np.abs(ltt) * 86400 <= 500.0)
    assert np.all(np.abs((bjd - utc.jd) * 86400 - ltt * 86400 - 69.184) <= 0.0017)


def test_bjd_tdb_is_unchanged_and_unknown_system_refused():
    assert epochs.to_bjd_tdb(2460000.5, "BJD_TDB", 10, 10) == 2460000.5
    with pytest.raises(ValueError, match="unknown time system"):
        epochs.to_bjd_tdb(2460000.5, "HJD_TT", 10, 10)


def test_iso_and_local_strings_use_zoneinfo():
    # 2026-03-29 01:00 UTC is when Europe/Madrid goes from CET (+01) to CEST (+02) (EU rule: last
    # Sunday of March, 01:00 UTC; tz database).
    t = Time(["2026-03-29T00:59:59", "2026-03-29T01:00:00"], scale="utc")
    assert list(clock.utc_to_iso_z(t)) == ["2026-03-29T00:59:59Z", "2026-03-29T01:00:00Z"]
    assert list(clock.utc_to_local_iso(t, "Europe/Madrid")) == [
        "2026-03-29T01:59:59+01:00", "2026-03-29T03:00:00+02:00"]


def test_bulk_conversion_equals_astropy_across_the_2016_leap_second():
    # IERS Bulletin C 52 (2016): a leap second 2016-12-31 23:59:60 UTC, TAI - UTC 36 s -> 37 s.
    # The bulk path (interpolated offsets) must equal astropy's direct conversion, including the
    # times inside the leap-second day and the leap second itself.
    utc = Time("2016-12-31T23:59:59", scale="utc") + np.linspace(-2, 2, 5001) * u.day
    leap = Time(["2016-12-31T23:59:60.2", "2016-12-31T23:59:58.8", "2017-01-01T00:00:01.2"], scale="utc")
    utc = Time(np.concatenate([utc.jd1, leap.jd1]), np.concatenate([utc.jd2, leap.jd2]), format="jd", scale="utc")
    # a single float64 Julian date near 2.46e6 resolves 2**-31 d = 40 us: allow two of those
    two_ulp_s = 2 * 2.0**-31 * 86400
    bulk = epochs.utc_to_tdb_jd(utc.jd1 + utc.jd2)
    direct = utc.tdb
    assert np.max(np.abs(bulk - (direct.jd1 + direct.jd2))) * 86400 <= two_ulp_s
    back = epochs._tdb_jd_to_utc_jd(direct.jd1 + direct.jd2)
    assert np.max(np.abs(back - (utc.jd1 + utc.jd2))) * 86400 <= two_ulp_s
    # display strings follow the Unix-time convention: a moment inside the leap second shows as
    # the start of the next second; the seconds either side are unaffected
    iso = clock.utc_to_iso_z(Time(back[-3:], format="jd", scale="utc"))
    assert list(iso) == ["2017-01-01T00:00:00Z", "2016-12-31T23:59:59Z", "2017-01-01T00:00:01Z"]


@pytest.mark.parametrize("start", ["2016-12-30T07:13:00", "2016-12-29T17:00:00", "1998-12-30T01:00:00"])
def test_bulk_conversion_equals_astropy_when_the_span_starts_mid_day(start):
    # IERS Bulletin C: leap seconds at the ends of 2016-12-31 and 1998-12-31. astropy's UTC Julian
    # date stretches a leap second's day to 86401 s, so the offset bends at that day's ends; a
    # grid that does not start on a day boundary must not interpolate across the bend (it did:
    # 0.12 s off before the grid nodes were put on whole and half Julian dates).
    rng = np.random.default_rng(0)
    utc = Time(start, scale="utc") + np.sort(rng.uniform(0, 4, 5000)) * u.day
    two_ulp_s = 2 * 2.0**-31 * 86400
    direct = utc.tdb
    assert np.max(np.abs(epochs.utc_to_tdb_jd(utc.jd1 + utc.jd2) - (direct.jd1 + direct.jd2))) * 86400 <= two_ulp_s
    back = epochs._tdb_jd_to_utc_jd(direct.jd1 + direct.jd2)
    assert np.max(np.abs(back - (utc.jd1 + utc.jd2))) * 86400 <= two_ulp_s


@pytest.mark.parametrize("start, days", [("2026-01-10T05:00:00", 500), ("2016-12-29T05:00:00", 4),
                                         ("1990-01-01T00:00:00", 9000)])
def test_many_hjd_epochs_equal_the_direct_conversion_and_astropy(start, days):
    # The bulk path (1,000 epochs or more) sums small terms (TDB - UTC, the Sun's barycentric
    # offset); the direct path (below 1,000) converts the geocentric instant. They must agree to
    # float64's resolution, also across the 2016 leap second and over 25 years of leap seconds.
    rng = np.random.default_rng(2)
    n = 3000
    ra, dec = rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    hjd = Time(start, scale="utc").jd + rng.uniform(0, days, n)
    bulk = epochs.to_bjd_tdb(hjd, "HJD_UTC", ra, dec)
    direct = np.concatenate([epochs.to_bjd_tdb(hjd[k:k + 900], "HJD_UTC", ra[k:k + 900], dec[k:k + 900])
                             for k in range(0, n, 900)])
    two_ulp_s = 2 * 2.0**-31 * 86400
    assert np.max(np.abs(bulk - direct)) * 86400 <= two_ulp_s
    # astropy at the geocentre (outside a leap second's day, where HJD_UTC needs no stretched day)
    t = Time(hjd[:300], format="jd", scale="utc", location=GEOCENTRE)
    coords = SkyCoord(ra[:300] * u.deg, dec[:300] * u.deg)
    geo = t - t.light_travel_time(coords, "heliocentric")
    for _ in range(2):
        geo = t - Time(geo, location=GEOCENTRE).light_travel_time(coords, "heliocentric")
    geo = Time(geo, location=GEOCENTRE)
    ref = (geo.tdb + geo.light_travel_time(coords)).jd
    day = np.floor(hjd[:300] - 0.5) + 0.5  # the UTC day of each epoch, and the days either side
    length_s = [(Time(day + k + 1, format="jd", scale="utc") - Time(day + k, format="jd", scale="utc")).sec
                for k in (-1, 0, 1)]
    leap_day = np.any(np.array(length_s) > 86400.5, axis=0)
    assert np.max(np.abs(bulk[:300] - ref)[~leap_day]) <= INTERPOLATION_D + 2e-10


def test_bundled_iers_table_equals_astropys_reading():
    # astro_offline reads the bundled finals2000A file with numpy; astropy's own reader
    # (IERS_A.open, the IERS Rapid Service format) must give the same table.
    from astropy.utils import iers

    from planner.timescales import earth_orientation

    ours = earth_orientation.bundled_iers_a()
    ref = iers.IERS_A.open()
    assert len(ours) == len(ref)
    for col in ("MJD", "UT1_UTC", "PM_x", "PM_y", "dX_2000A", "dY_2000A"):
        a, b = np.asarray(ours[col].value), np.asarray(ref[col].value)
        assert np.array_equal(np.isnan(a), np.isnan(b))
        assert np.nanmax(np.abs(a - b)) == 0.0
    for col in ("UT1Flag", "PolPMFlag"):
        assert np.array_equal(np.asarray(ours[col]).astype(str), np.asarray(ref[col]).astype(str))
    assert ours.meta["predictive_index"] == ref.meta["predictive_index"]
    # and astropy uses it: UT1 - UTC at a date inside the table
    t = Time("2026-12-07T00:00:00", scale="utc")
    assert abs(t.get_delta_ut1_utc() - ours.ut1_utc(t)) == 0


#: Budget for Earth orientation against astropy's default table: a tenth of the 1-arcsec
#: position promise (README). UT1 - UTC turns the Earth by 15.04 arcsec per second of time.
EOP_BUDGET_ARCSEC = 0.1
UT1_BUDGET_S = EOP_BUDGET_ARCSEC / 15.041
POLAR_MOTION_BUDGET_ARCSEC = EOP_BUDGET_ARCSEC


def test_bundled_table_against_what_astropy_uses_by_default():
    # astropy's default Earth-orientation table offline is IERS_Auto: the bundled finals2000A
    # file with its Bulletin B columns replaced by the bundled IERS-B (EOP C04) series. Ours
    # keeps the file's own B columns. Reference: IERS_Auto.open() with downloads off.
    from astropy.utils import iers

    from planner.timescales import earth_orientation

    earth_orientation.configure()  # downloads off (as in every run)
    ours = earth_orientation.bundled_iers_a()
    default = iers.IERS_Auto.open()
    last_b_mjd = iers.IERS_B.open()["MJD"][-1].to_value(u.d)
    mjd = ours["MJD"].to_value(u.d)
    assert np.array_equal(mjd, default["MJD"].to_value(u.d))
    after_b = mjd > last_b_mjd
    assert after_b.sum() > 300  # the recent weeks and a year of predictions
    for col, unit, budget in (("UT1_UTC", u.s, UT1_BUDGET_S), ("PM_x", u.arcsec, POLAR_MOTION_BUDGET_ARCSEC),
                              ("PM_y", u.arcsec, POLAR_MOTION_BUDGET_ARCSEC)):
        a, b = ours[col].to_value(unit), default[col].to_value(unit)
        # where the planner works (after the IERS-B series ends): the same Bulletin A values
        assert np.array_equal(a[after_b], b[after_b]), col
        # before it, the two B series differ (measured: 4.9 ms of UT1 in 1980, 0.48 ms after
        # 1995; 45 mas of polar motion in 1976), within the budget over the whole table
        assert np.max(np.abs(a - b)) <= budget, col
    # through astropy's interpolation, at dates the tests and a planner use (2018 to 2027)
    t = Time(np.arange(58119.0, mjd[-1], 0.37), format="mjd", scale="utc")
    d_ut1 = t.get_delta_ut1_utc(iers_table=ours) - t.get_delta_ut1_utc(iers_table=default)
    assert np.max(np.abs(d_ut1.to_value(u.s))) <= UT1_BUDGET_S
    d_pm = [(a - b).to_value(u.arcsec) for a, b in zip(ours.pm_xy(t), default.pm_xy(t))]
    assert np.max(np.abs(d_pm)) <= POLAR_MOTION_BUDGET_ARCSEC


def test_configure_installs_the_bundled_table():
    from astropy.utils import iers
    from astropy_iers_data import IERS_A_FILE

    from planner.timescales import earth_orientation

    earth_orientation.configure()
    table = iers.earth_orientation_table.get()
    assert isinstance(table, iers.IERS_A) and not isinstance(table, iers.IERS_Auto)
    assert table.meta["data_path"] == str(IERS_A_FILE)
    assert "predictive_mjd" in table.meta
    assert len(table) == len(earth_orientation.bundled_iers_a())


def test_a_bundled_table_that_cannot_be_read_is_logged(monkeypatch, caplog):
    import logging

    from astropy.utils import iers

    from planner.timescales import earth_orientation

    before = iers.earth_orientation_table.get()

    def unreadable(path=None):
        raise OSError("finals2000A.all: permission denied")

    monkeypatch.setattr(earth_orientation, "_configured", False)
    monkeypatch.setattr(earth_orientation, "bundled_iers_a", unreadable)
    with caplog.at_level(logging.WARNING, logger=earth_orientation.__name__):
        earth_orientation.configure()
    assert len(caplog.records) == 1
    message = caplog.records[0].getMessage()
    assert "bundled Earth-orientation table" in message and "permission denied" in message
    assert iers.conf.auto_download is False  # still offline
    assert iers.earth_orientation_table.get() is before


@pytest.mark.parametrize("tz", ["America/St_Johns", "Asia/Kolkata", "Pacific/Chatham", "Europe/Madrid", "UTC"])
def test_local_strings_equal_python_zoneinfo(tz):
    # Python's datetime with zoneinfo (the tz database) as the reference, for zones with
    # half-hour and 45-minute offsets, both signs and daylight saving.
    import datetime as dt
    from zoneinfo import ZoneInfo

    rng = np.random.default_rng(12)
    unix = rng.integers(0, 1_790_000_000, 3000)  # 1970 to 2026 (inside the leap-second table), whole seconds
    # built from calendar fields (astropy's "unix" format smears leap seconds over their day)
    t = Time([dt.datetime.fromtimestamp(int(u), tz=dt.timezone.utc).replace(tzinfo=None) for u in unix], scale="utc")
    ours = clock.utc_to_local_iso(t, tz)
    ref = [dt.datetime.fromtimestamp(int(u), tz=ZoneInfo(tz)).isoformat() for u in unix]
    assert list(ours) == ref
    assert list(clock.utc_to_iso_z(t)) == [
        dt.datetime.fromtimestamp(int(u), tz=dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ") for u in unix]


def test_clock_times_of_the_sheets_equal_python_zoneinfo():
    # HH:MM in a zone (Asia/Kolkata, UTC+5:30, from the tz database through zoneinfo) and in UTC,
    # "" for NaN; two moments as a range, local first with UTC beside
    import datetime as dt
    from zoneinfo import ZoneInfo

    moments = [dt.datetime(2026, 12, 7, 18, 44, 59, tzinfo=dt.timezone.utc),
               dt.datetime(2026, 12, 7, 23, 59, 0, tzinfo=dt.timezone.utc)]
    jd = [clock.datetime_to_jd_utc(m) for m in moments]
    local = [m.astimezone(ZoneInfo("Asia/Kolkata")).strftime("%H:%M") for m in moments]
    assert clock.hhmm(jd + [np.nan], "Asia/Kolkata") == local + [""] == ["00:14", "05:29", ""]
    assert clock.hhmm(jd) == ["18:44", "23:59"]
    assert clock.local_and_utc(*jd, tz="Asia/Kolkata") == "00:14 to 05:29 local (18:44-23:59 UTC)"
    assert clock.local_and_utc(jd[0]) == "18:44 UTC"


@pytest.mark.parametrize("call, message", [
    (lambda: clock.zone("Mars/Olympus"), "unknown time zone 'Mars/Olympus'; expected an IANA name"),
    (lambda: clock.zone("Europe/Madird"), "unknown time zone 'Europe/Madird' (is 'Europe/Madrid' meant?); expected"),
    (lambda: clock.calendar_date("2026-13-01"), "'2026-13-01' is not a date; expected YYYY-MM-DD"),
    (lambda: clock.datetime_to_jd_utc(__import__("datetime").datetime(2026, 12, 7, 22)),
     "naive datetime 2026-12-07T22:00:00 has no time zone; give one"),
    (lambda: clock.jd_utc_to_datetime(float("nan")), "nan is not a finite Julian date"),
    (lambda: epochs.to_bjd_tdb(2460000.0, "HJD_TT", 10.0, 20.0),
     "unknown time system 'HJD_TT'; expected one of BJD_TDB, HJD_UTC, JD_UTC"),
    (lambda: epochs.utc_to_tdb_jd(1e12), "cannot be converted from UTC to TDB"),
    (lambda: epochs.bjd_tdb_to_utc(np.array([2461381.5, np.nan]), 10.0, 20.0),
     "1 of 2 times are not finite numbers"),
], ids=["zone", "zone typo", "date", "naive datetime", "nan datetime", "time system", "erfa range", "nan to utc"])
def test_time_scale_errors_name_the_value_and_what_is_accepted(call, message):
    import re

    from planner.errors import PeriplanError, TimeScaleError

    with pytest.raises(TimeScaleError, match=re.escape(message)) as info:
        call()
    assert isinstance(info.value, PeriplanError)


@pytest.mark.parametrize("n", [10, 3000])  # astropy one by one below 1000 times, a grid above
def test_times_that_are_not_finite_stay_nan_on_both_conversion_paths(n):
    # reference: astropy's UTC -> TDB for the finite times
    jd = 2461381.5 + np.linspace(0.0, 30.0, n)
    jd[3] = np.nan
    got = epochs.utc_to_tdb_jd(jd)
    ok = np.isfinite(jd)
    ref = Time(jd[ok], format="jd", scale="utc").tdb
    assert np.isnan(got[3]) and np.all(np.isfinite(got[ok]))
    # a single float64 Julian date near 2.46e6 resolves 2**-31 d = 40 us: allow two of those
    assert np.max(np.abs(got[ok] - (ref.jd1 + ref.jd2))) * 86400 <= 2 * 2.0**-31 * 86400
    # an epoch or time that is NaN alone gives NaN, as it does beside finite ones
    assert np.isnan(epochs.to_bjd_tdb(np.nan, "JD_UTC", 10.0, 20.0))
    assert np.isnan(epochs.light_travel_time_d(np.nan, 10.0, 20.0))
    assert np.isnan(epochs.to_bjd_tdb(np.array([2461381.5, np.nan]), "HJD_UTC", 10.0, 20.0)[1])
