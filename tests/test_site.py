"""Site files: defaults, the horizon profile, the location, and one clear line per bad key."""

import numpy as np
import pytest

from conftest import REPO
from planner.errors import InputErrors
from planner.inputs.site import parse_site, read_site

SAMPLE_SITE = REPO / "sample_targets" / "site.toml"

MINIMAL = """\
name = "Test site"
latitude_deg = 40.8939
longitude_deg = -83.8917
elevation_m = 250
timezone = "America/New_York"
"""


def test_minimal_site_gets_the_documented_defaults():
    site = parse_site(MINIMAL, "test.toml")
    assert site.min_altitude_deg == 30.0
    # astronomical darkness: Sun's centre 18 deg below the horizon (USNO, Almanac for Computers
    # 1990, zenith 108 deg)
    assert site.darkness_sun_alt_deg == -18.0
    assert site.max_airmass is None and site.horizon_az_deg == ()
    assert site.min_hour_angle_h is None and site.max_declination_deg is None


@pytest.mark.parametrize("darkness, sun_alt_deg", [
    # USNO, Almanac for Computers 1990: civil, nautical, astronomical zeniths 96, 102, 108 deg
    ('"civil"', -6.0), ('"nautical"', -12.0), ('"astronomical"', -18.0), ("-15", -15.0), ("-9.5", -9.5),
])
def test_darkness_names_and_numbers(darkness, sun_alt_deg):
    site = parse_site(MINIMAL + f"darkness = {darkness}\n", "test.toml")
    assert site.darkness_sun_alt_deg == sun_alt_deg


def test_earth_location_matches_the_file():
    # astropy's own geodetic -> geocentric conversion, read back
    site = parse_site(MINIMAL, "test.toml")
    loc = site.earth_location()
    geo = loc.to_geodetic()
    tolerance_deg = 1e-9  # float round trip
    assert abs(geo.lat.deg - 40.8939) < tolerance_deg
    assert abs(geo.lon.deg - -83.8917) < tolerance_deg
    assert abs(geo.height.to_value("m") - 250.0) < 1e-6


def test_longitude_above_180_is_taken_as_east_and_wrapped():
    site = parse_site(MINIMAL.replace("-83.8917", "276.1083"), "test.toml")
    assert abs(site.longitude_deg - -83.8917) < 1e-9


def test_horizon_profile_interpolates_and_wraps_through_north():
    site = parse_site(MINIMAL + "min_altitude_deg = 0\nhorizon = [[350, 10], [10, 20], [90, 40]]\n", "t.toml")
    # linear in azimuth; between 350 and 10 deg the profile goes through north
    limit = site.horizon_limit_deg([0.0, 350.0, 10.0, 50.0, 90.0, 220.0, 360.0])
    # 0 deg: halfway from 10 (at 350) to 20 (at 10) -> 15; 50: halfway 20..40 -> 30;
    # 220: from 40 at 90 to 10 at 350, 130/260 of the way -> 25
    expected = [15.0, 10.0, 20.0, 30.0, 40.0, 25.0, 15.0]
    assert np.all(np.abs(limit - expected) < 1e-9)


def test_horizon_never_lowers_the_minimum_altitude():
    site = parse_site(MINIMAL + "min_altitude_deg = 30\nhorizon = [[0, 10], [180, 45]]\n", "t.toml")
    limit = site.horizon_limit_deg([0.0, 180.0])
    assert abs(limit[0] - 30.0) < 1e-12 and abs(limit[1] - 45.0) < 1e-12


def test_moon_separation_grows_with_illumination():
    site = parse_site(MINIMAL + "moon_min_separation_deg = 15\nmoon_separation_growth_deg = 25\n", "t.toml")
    need = site.moon_min_sep_at_deg([0.0, 0.5, 1.0])
    assert np.all(np.abs(need - [15.0, 27.5, 40.0]) < 1e-12)


def test_sample_site_reads():
    site = read_site(SAMPLE_SITE)
    assert site.name == "Altozano Ridge Observatory" and site.timezone == "Europe/Madrid"
    assert len(site.horizon_az_deg) >= 3


@pytest.mark.parametrize("extra, key, fragment", [
    ("latitude_deg = 91\n", "latitude_deg", "-90 <= latitude_deg <= 90"),
    ('timezone = "Mars/Olympus"\n', "timezone", "unknown time zone 'Mars/Olympus'"),
    ("horizon = [[0, 5], [90]]\n", "horizon", "malformed horizon profile"),
    ("horizon = [[0, 5], [400, 10]]\n", "horizon", "out of range"),
    ("horizon = [[0, 5], [0, 10]]\n", "horizon", "same azimuth twice"),
    ('horizon = "trees"\n', "horizon", "malformed horizon profile"),
    ("min_altitude_deg = -10\n", "min_altitude_deg", "-5 <= min_altitude_deg <= 90"),
    ("min_altitude_deg = 95\n", "min_altitude_deg", "-5 <= min_altitude_deg <= 90"),
    ('darkness = "dusk"\n', "darkness", "expected civil, nautical, astronomical"),
    ("darkness = 5\n", "darkness", "-90..0"),
    ("min_hour_angle_h = 3\nmax_hour_angle_h = -3\n", "min_hour_angle_h", "lower limit must be smaller"),
    ("max_airmass = 0.5\n", "max_airmass", "1 <= max_airmass"),
    ("max_altitude_deg = 95\n", "max_altitude_deg", "min_altitude_deg < max_altitude_deg <= 90"),
    ("min_altitude_deg = 30\nmax_altitude_deg = 25\n", "max_altitude_deg", "not above min_altitude_deg = 30"),
    ("minimum_altitude = 20\n", "minimum_altitude", "unknown key"),
])
def test_bad_values_name_file_and_key(extra, key, fragment):
    text = "\n".join(ln for ln in MINIMAL.splitlines() if not ln.startswith(extra.split(" =")[0] + " ")) + "\n" + extra
    with pytest.raises(InputErrors) as info:
        parse_site(text, "bad.toml")
    errors = info.value.errors
    assert len(errors) == 1
    message = str(errors[0])
    assert message.startswith(f"bad.toml, key {key}: ") and fragment in message
    assert "\n" not in message


def test_missing_keys_are_all_reported():
    text = 'name = "x"\nlatitude_deg = 10\n'
    with pytest.raises(InputErrors) as info:
        parse_site(text, "bad.toml")
    assert [e.column for e in info.value.errors] == ["longitude_deg", "elevation_m", "timezone"]
    assert all("missing required key" in str(e) for e in info.value.errors)


def test_not_toml_is_one_line():
    with pytest.raises(InputErrors) as info:
        parse_site("name = \n", "bad.toml")
    assert str(info.value).startswith("bad.toml: not valid TOML") and "\n" not in str(info.value)


def _site_at(longitude_deg, tz):
    return MINIMAL.replace("-83.8917", repr(longitude_deg)).replace("America/New_York", tz)


def test_longitude_of_the_wrong_sign_for_the_zone_gives_one_warning():
    import warnings

    from planner.errors import PeriplanWarning
    from planner.inputs.site import zone_longitude_gap_h

    # America/New_York keeps Eastern Standard Time, UTC-05:00 (IANA tz database, zone
    # America/New_York). 83.02 deg taken as east gives local mean time UTC+05:32, 10.5 h away;
    # the same longitude as west (-83.02) is 0.5 h away.
    assert abs(zone_longitude_gap_h("America/New_York", 83.02, 2026) - (83.02 / 15 + 5)) < 1e-9
    assert abs(zone_longitude_gap_h("America/New_York", -83.02, 2026) - (83.02 / 15 - 5)) < 1e-9
    with pytest.warns(PeriplanWarning) as caught:
        parse_site(_site_at(83.02, "America/New_York"), "backyard.toml")
    assert len(caught) == 1
    message = str(caught[0].message)
    assert "\n" not in message and "backyard.toml" in message and "longitude_deg" in message
    assert "UTC-05:00" in message and "10.5 h" in message
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        parse_site(_site_at(-83.02, "America/New_York"), "backyard.toml")


@pytest.mark.parametrize("longitude_deg, tz", [
    # Pacific/Kiritimati keeps UTC+14:00 (IANA tz database) at about 157.4 W (from memory): 0.5 h
    # round the clock, not 24.5 h
    (-157.4, "Pacific/Kiritimati"),
    # Asia/Shanghai (UTC+08:00) is used across China, to about 76 E in the west (from memory): 2.9 h
    (76.0, "Asia/Shanghai"),
    # the demo observatory: Europe/Madrid (UTC+01:00) at 3.12 W, 1.2 h
    (-3.12, "Europe/Madrid"),
])
def test_zones_far_from_their_meridian_but_right_give_no_warning(longitude_deg, tz):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        parse_site(_site_at(longitude_deg, tz), "site.toml")


def test_cli_prints_the_zone_warning_as_one_line_and_carries_on(tmp_path, capsys):
    from planner import cli

    site = tmp_path / "backyard.toml"
    site.write_text(_site_at(83.02, "America/New_York"))
    code = cli.main(["nights", "--site", str(site), "--start", "2026-12-07", "--days", "1", "--format", "csv"])
    out, err = capsys.readouterr()
    assert code == 0 and out.startswith("night,")
    warned = [ln for ln in err.splitlines() if "longitude_deg" in ln]
    assert len(warned) == 1 and warned[0].startswith("periplan: warning: ")
