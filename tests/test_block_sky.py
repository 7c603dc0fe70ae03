"""Azimuth, hour angle, lowest altitude and meridian transit of scheduled blocks.

References: astropy's AltAz frame (ERFA, IAU 2006/2000A, no refraction with pressure 0) for the
azimuth and altitude, astropy's ``Time.sidereal_time('apparent')`` for the hour angle, and
astroplan's ``Observer.target_meridian_transit_time`` for the transit time.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.inputs.site import parse_site
from planner.sky.block_sky import block_sky, meridian_transit_jd_utc

SITE = parse_site('name = "Test site (invented)"\nlatitude_deg = 37.62\nlongitude_deg = -3.12\n'
                  'elevation_m = 1650\ntimezone = "Europe/Madrid"\n')
# Two real stars, ICRS places (from memory, rounded; any place serves, the references take the same
# numbers): Aldebaran and Betelgeuse.
TARGETS = pd.DataFrame({"name": ["alpha Tau", "alpha Ori"], "ra_deg": [68.98, 88.79], "dec_deg": [16.51, 7.41]})
START = np.array([2461382.30, 2461382.50])   # 2026-12-07 19:12 and 2026-12-08 00:00 UTC
END = START + np.array([0.10, 0.125])

#: The engine's apparent place is taken once a day and its altitudes are airless; astropy's
#: AltAz agrees to well under an arcsecond (tests/test_visibility.py): 1 arcsec here.
ANGLE_TOL_DEG = 1.0 / 3600.0
#: Hour angle to 0.1 s of time (1.5 arcsec of rotation).
HA_TOL_H = 0.1 / 3600.0
#: astroplan finds the transit by a grid search with linear interpolation: a few seconds.
TRANSIT_TOL_S = 10.0


def astropy_altaz(ra_deg, dec_deg, jd_utc):
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    t = Time(jd_utc, format="jd", scale="utc")
    frame = AltAz(obstime=t, location=SITE.earth_location(), pressure=0 * u.hPa)
    return SkyCoord(ra_deg * u.deg, dec_deg * u.deg).transform_to(frame)


def test_azimuth_and_altitude_at_start_agree_with_astropy():
    got = block_sky(TARGETS, SITE, [0, 1], START, END)
    for i in range(2):
        ref = astropy_altaz(TARGETS.ra_deg[i], TARGETS.dec_deg[i], START[i])
        assert abs(got.az_start_deg[i] - ref.az.deg) < ANGLE_TOL_DEG / np.cos(np.radians(ref.alt.deg))


def test_hour_angle_agrees_with_astropy_apparent_sidereal_time():
    import astropy.units as u
    from astropy.coordinates import SkyCoord, TETE
    from astropy.time import Time

    got = block_sky(TARGETS, SITE, [0, 1], START, END)
    for i in range(2):
        t = Time(START[i], format="jd", scale="utc")
        lst = t.sidereal_time("apparent", longitude=SITE.longitude_deg * u.deg).hour
        ra_app = SkyCoord(TARGETS.ra_deg[i] * u.deg, TARGETS.dec_deg[i] * u.deg).transform_to(
            TETE(obstime=t)).ra.hour
        ha = (lst - ra_app + 12.0) % 24.0 - 12.0
        # CIRS (engine) and true-equinox (astropy) hour angles are the same angle; the apparent
        # sidereal time contains the equation of the origins that the CIRS right ascension removes
        assert abs(got.ha_start_h[i] - ha) < HA_TOL_H


def test_lowest_altitude_is_the_lowest_of_a_fine_astropy_track():
    got = block_sky(TARGETS, SITE, [0, 1], START, END)
    for i in range(2):
        t = np.linspace(START[i], END[i], 721)  # every 12-15 s
        ref = astropy_altaz(TARGETS.ra_deg[i], TARGETS.dec_deg[i], t).alt.deg.min()
        assert abs(got.lowest_alt_deg[i] - ref) < 2 * ANGLE_TOL_DEG + 1e-3  # + the 2-min sampling of a smooth curve


def test_meridian_transit_agrees_with_astroplan():
    import astropy.units as u
    from astroplan import FixedTarget, Observer
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    obs = Observer(location=SITE.earth_location())
    got = block_sky(TARGETS, SITE, [0, 1], START, END)
    for i in range(2):
        mid = Time(0.5 * (START[i] + END[i]), format="jd", scale="utc")
        target = FixedTarget(SkyCoord(TARGETS.ra_deg[i] * u.deg, TARGETS.dec_deg[i] * u.deg))
        ref = obs.target_meridian_transit_time(mid, target, which="nearest", n_grid_points=1440)
        assert abs(got.meridian_jd_utc[i] - ref.jd) * 86400.0 < TRANSIT_TOL_S


def test_transit_from_hour_angle_one_sidereal_hour():
    # An hour angle of +1 h means the transit was 1 sidereal hour = 1/1.0027378 solar hours ago
    # (IERS Conventions 2010, eq. 5.15, the Earth rotation angle's rate).
    assert meridian_transit_jd_utc(1.0, 0.5) == pytest.approx(0.5 - 1.0 / 1.00273781191135448 / 24.0, abs=1e-12)


def test_no_blocks_give_an_empty_table():
    got = block_sky(TARGETS, SITE, [], [], [])
    assert len(got) == 0 and list(got.columns) == ["az_start_deg", "ha_start_h", "lowest_alt_deg", "meridian_jd_utc"]


def test_mount_flip_notes_give_the_meridian_transit_to_the_minute():
    # The note "crosses the meridian near 00:40 local (23:40 UTC)" on a block that holds the
    # target's culmination: against astroplan's meridian transit (reference above), within the
    # minute the note is printed to plus the minute grid of the search.
    import datetime as dt
    import re

    from astropy.coordinates import SkyCoord
    from astropy.time import Time
    from astroplan import FixedTarget, Observer
    import astropy.units as u

    import planner
    from conftest import REPO, SAMPLE_TARGETS

    site = planner.read_site(REPO / "sample_targets" / "site.toml")
    targets = planner.read_catalogue(SAMPLE_TARGETS)
    plan = planner.make_plan(targets, site, dt.date(2026, 12, 7), 7)
    observer = Observer(location=site.earth_location())
    checked = 0
    for _, b in plan.schedule.iterrows():
        m = re.search(r"crosses the meridian near \d\d:\d\d local \((\d\d):(\d\d) UTC\)", str(b["notes"]))
        if not m:
            continue
        row = targets.iloc[int(b["target_index"])]
        ref = observer.target_meridian_transit_time(
            Time(b["start_jd_utc"], format="jd"), FixedTarget(SkyCoord(row["ra_deg"] * u.deg, row["dec_deg"] * u.deg)),
            which="next").datetime
        shown = int(m.group(1)) * 60 + int(m.group(2))
        diff = (shown - (ref.hour * 60 + ref.minute + ref.second / 60.0) + 720) % 1440 - 720
        assert abs(diff) <= 2.0, (b["target"], b["night"], m.group(0), ref)
        checked += 1
    assert checked >= 3
