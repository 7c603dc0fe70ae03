"""The limit that stops a target: "" exactly where the observable mask holds, the right code elsewhere.

Reference for the mask: planner.sky.windows.observable_mask, itself checked against astroplan's
constraints (tests/test_windows.py); the codes are checked on moments whose answer follows from
the geometry (daytime, a target below the celestial horizon of the site, beside the Moon).
"""

import dataclasses

import numpy as np
import pandas as pd

from planner.inputs.site import Site
from planner.sky import limits, windows
from planner.sky.night import night_table, tracks_for_nights

SITE = Site(name="test ridge", latitude_deg=37.6, longitude_deg=-3.1, elevation_m=1600.0, timezone="Europe/Madrid",
            min_altitude_deg=30.0, moon_min_sep_deg=20.0, sun_min_sep_deg=0.0,
            horizon_alt_deg=(40.0, 40.0), horizon_az_deg=(80.0, 100.0))
FIRST = "2026-12-18"


def setup(site=SITE):
    rng = np.random.default_rng(3)
    n = 60
    targets = pd.DataFrame({"name": [f"T{i}" for i in range(n)], "ra_deg": rng.uniform(0, 360, n),
                            "dec_deg": np.degrees(np.arcsin(rng.uniform(-0.7, 1.0, n)))})
    tracks = tracks_for_nights(site, FIRST, 2)
    nights = night_table(site, FIRST, 2, tracks=tracks)
    jd = nights.noon_jd_utc[0] + np.arange(0.0, 2.0, 7.0 / 1440.0)
    return targets, tracks, jd


def test_no_reason_exactly_where_the_mask_says_observable():
    targets, tracks, jd = setup()
    mask = windows.observable_mask(targets.ra_deg, targets.dec_deg, SITE, jd, tracks)
    codes = limits.limiting_constraint(targets, SITE, np.arange(len(targets))[:, None], jd[None, :], tracks)
    assert codes.shape == mask.shape
    agree = (codes == "") == mask
    # the mask is built from a fast test with the same limits; they may part only on a limit's edge
    assert agree.mean() >= 0.9995
    assert set(np.unique(codes)) <= set(limits.REASONS) | {""}


def test_codes_follow_the_geometry():
    targets, tracks, jd = setup()
    targets.loc[0, ["ra_deg", "dec_deg"]] = [10.0, -70.0]  # never above 30 deg at 37.6 N (max 22.4)
    noon = jd[0]
    assert limits.limiting_constraint(targets, SITE, 0, noon, tracks) == "no_darkness"
    night = jd[(jd > noon + 0.4) & (jd < noon + 0.6)]
    assert set(limits.limiting_constraint(targets, SITE, 0, night, tracks)) == {"altitude"}
    # a target placed on the Moon, at a dark moment when the Moon is up: too close to the Moon
    dark = night[tracks.sun_altaz_deg(night)[0] < -18.0]
    mid = float(dark[np.argmax(tracks.moon_altaz_deg(dark)[0])])
    assert tracks.moon_altaz_deg(np.array([mid]))[0][0] > 10.0  # the test's premise
    moon = tracks.moon_vector(np.array([mid]))[0]
    ra, dec = np.degrees(np.arctan2(moon[1], moon[0])) % 360, np.degrees(np.arcsin(moon[2]))
    targets.loc[1, ["ra_deg", "dec_deg"]] = [ra, dec]
    code = limits.limiting_constraint(targets, dataclasses.replace(SITE, min_altitude_deg=-5.0, horizon_alt_deg=(),
                                                                    horizon_az_deg=()), 1, mid, tracks)
    assert code == "moon"
