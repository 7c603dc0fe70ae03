"""A movable RV visit that the solver moves is scored at the start it is moved to.

The solver may start an RV visit anywhere in its allowed range to make room for other blocks. Each
such start must be worth the score of its own block, and the schedule must show that score, so
that the sheet's "mean airmass 1.47 (9.8)" cannot pair one start's airmass with another start's
points.

References: astropy's AltAz frame (ERFA, airless: pressure 0, as the engine's altitudes) at the
nine times through each block; the airmass of Young (1994, Applied Optics 33, 1108, eq. 3, in
the true zenith angle); the airmass points of the project's score, 10 x (3 - X) / (3 - 1) clipped
to 0..10 (the documented default weights: 10 points, zero at airmass 3).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

import planner
from conftest import REPO, SAMPLE_TARGETS

SITE = REPO / "sample_targets" / "site.toml"
#: The engine's altitudes agree with astropy's AltAz to about 1 arcsec (tests/test_visibility.py);
#: near airmass 1.5 that moves the points by < 1e-4.
POINTS_TOL = 1e-3


def young_airmass(alt_deg):
    c = np.sin(np.radians(alt_deg))  # cos of the true zenith angle
    return (1.002432 * c**2 + 0.148386 * c + 0.0096467) / (c**3 + 0.149864 * c**2 + 0.0102963 * c + 0.000303978)


@pytest.fixture(scope="module")
def week():
    targets = planner.read_catalogue(SAMPLE_TARGETS)
    site = planner.read_site(SITE)
    return targets, site, planner.make_plan(targets, site, dt.date(2026, 12, 7), 7)


def test_moved_rv_visits_carry_the_airmass_points_of_their_own_block(week):
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    targets, site, plan = week
    s, cands = plan.schedule, plan.candidates
    single = s[s["request"].isin(["rv_visit", "rv_sequence"]) & ~s["serves"].astype(str).str.contains(";")]
    moved = 0
    for _, b in single.iterrows():
        same = cands[(cands["target"] == b["target"]) & (cands["event"] == b["event"])
                     & (cands["request"] == b["request"]) & (cands["slot"] == b["slot"])]
        moved += not np.any(np.abs(same["start_jd_utc"].to_numpy(float) - b["start_jd_utc"]) < 1e-6)
        t = Time(np.linspace(b["start_jd_utc"], b["end_jd_utc"], 9), format="jd", scale="utc")
        row = targets.iloc[int(b["target_index"])]
        alt = SkyCoord(row["ra_deg"] * u.deg, row["dec_deg"] * u.deg).transform_to(
            AltAz(obstime=t, location=site.earth_location(), pressure=0 * u.hPa)).alt.deg
        points = 10.0 * np.clip((3.0 - young_airmass(alt).mean()) / 2.0, 0.0, 1.0)
        assert b["pts_airmass"] == pytest.approx(points, abs=POINTS_TOL), (b["target"], b["event"], b["night"])
        parts = b["pts_coverage"] + b["pts_airmass"] + b["pts_moon"] + b["pts_timing"]
        assert b["score"] == pytest.approx(b["x_priority"] * b["x_rarity"] * parts, rel=1e-9)
    # the demo week moves some of them (its nights are full), so the check above is not idle
    assert moved >= 3
