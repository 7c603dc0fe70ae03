"""Score terms: the formulas as documented in planner.score, their limits and invariants.

The score is a policy of ours, so there is no published value to compare with. The checks are:
each term against its formula evaluated independently here (plain ``math``), the limits an
observer relies on (a new Moon costs nothing, a band of timing uncertainty as wide as the window
scores 0, ...), monotonicity, NaN handling, and that the array path equals the one-at-a-time path.
The airmass is compared with astropy's plane-parallel ``AltAz.secz`` (reference library).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner.scheduling import score
from planner.errors import PeriplanError

#: The terms are a handful of float operations on numbers of order 1; 1e-12 is far above their
#: rounding and far below any meaningful difference in points.
TERM_TOL = 1e-12


@pytest.mark.parametrize("period_d", [111.4367, 38.9021, 10.31752, 3.1415830, 0.1371953, 1000.0])
def test_rarity_formula(period_d):
    expect = 1.0 / (1.0 + math.log2(1.0 + 7.0 / period_d))
    assert abs(float(score.rarity_term(period_d)) - expect) <= TERM_TOL


def test_rarity_orders_rare_events_first_and_is_bounded():
    periods = np.array([0.1, 1.0, 3.0, 10.0, 111.0, 1000.0, 1e6])
    r = score.rarity_term(periods)
    assert np.all(np.diff(r) > 0)
    assert np.all((r > 0) & (r <= 1))
    # the example: a periastron every 111 d outweighs one more transit of a 3-d planet
    assert score.rarity_term(111.0) > 2 * score.rarity_term(3.0)
    assert float(score.rarity_term(np.nan)) == 0.0


def test_coverage_term_clips_and_counts_nan_as_whole():
    got = score.coverage_term([-0.1, 0.0, 0.37, 1.0, 1.2, np.nan])
    assert list(got) == [0.0, 0.0, 0.37, 1.0, 1.0, 1.0]


def test_airmass_term_linear_between_zenith_and_zero_point():
    x0 = 3.0
    xs = np.array([1.0, 1.5, 2.0, 2.999, 3.0, 4.0, np.inf, np.nan])
    got = score.airmass_term(xs, x0)
    expect = [1.0, 0.75, 0.5, (x0 - 2.999) / (x0 - 1.0), 0.0, 0.0, 0.0, 0.0]
    assert all(abs(g - e) <= TERM_TOL for g, e in zip(got, expect))
    # samples through a block: their mean is used
    samples = np.array([[1.0, 2.0, 3.0], [1.2, 1.2, 1.2]])
    assert abs(score.airmass_term(samples, x0)[0] - score.airmass_term(2.0, x0)) <= TERM_TOL
    assert abs(score.airmass_term(samples, x0)[1] - 0.9) <= TERM_TOL


def test_moon_term_limits_and_formula():
    clear = 60.0
    assert float(score.moon_term(0.0, 0.0, clear)) == 1.0  # new Moon costs nothing, anywhere
    assert float(score.moon_term(0.0, 1.0, clear)) == 0.0  # full Moon on the target costs it all
    assert float(score.moon_term(60.0, 1.0, clear)) == 1.0
    assert float(score.moon_term(150.0, 1.0, clear)) == 1.0
    assert abs(float(score.moon_term(15.0, 0.8, clear)) - (1.0 - 0.8 * (1.0 - 15.0 / 60.0))) <= TERM_TOL
    assert float(score.moon_term(np.nan, 0.8)) == 1.0
    seps = np.linspace(0.0, 90.0, 19)
    assert np.all(np.diff(score.moon_term(seps, 0.7)) >= 0)
    assert np.all(np.diff(score.moon_term(20.0, np.linspace(0, 1, 11))) <= 0)


def test_timing_term_limits_and_formula():
    w = 4.0 / 24.0
    # sigma exactly 0 means the catalogue gave no uncertainty (issue 9, item 8): the stated
    # neutral value, not the full quality of a perfectly known time
    assert float(score.timing_term(0.0, w, 3.0)) == score.NEUTRAL_TIMING_QUALITY == 0.5
    assert abs(float(score.timing_term(1e-9, w, 3.0)) - 1.0) <= 1e-6  # a tiny given sigma: full
    # +-3 sigma band exactly as wide as the window: 0
    assert abs(float(score.timing_term(w / 6.0, w, 3.0))) <= TERM_TOL
    sigma = 5.0 / 1440.0
    assert abs(float(score.timing_term(sigma, w, 3.0)) - (1.0 - 6.0 * sigma / w)) <= TERM_TOL
    assert float(score.timing_term(np.nan, np.nan)) == 1.0  # flexible visit: no event time
    assert float(score.timing_term(0.01, 0.0)) == 0.0
    assert np.all(np.diff(score.timing_term(np.linspace(1e-6, 0.05, 11), w)) <= 0)


def test_score_is_importance_times_conditions_and_weights_scale_their_column():
    args = dict(priority=[5.0, 1.0], period_d=[111.4, 3.0], observable_fraction=[1.0, 0.5], airmass=[1.2, 1.8],
                moon_sep_deg=[90.0, 20.0], moon_illumination=[0.5, 0.9], sigma_d=[5 / 1440, 1 / 1440],
                window_d=[4 / 24, 2 / 24])
    base = score.score_components(**args)
    assert tuple(base.columns) == score.SCORE_COLUMNS
    total = base.x_priority * base.x_rarity * base[list(score.POINT_COLUMNS)].sum(axis=1)
    assert np.all(abs(base["score"] - total) <= TERM_TOL * 1000)
    doubled = score.score_components(**args, weights=score.ScoreWeights(moon=20.0))
    assert np.all(abs(doubled["pts_moon"] - 2 * base["pts_moon"]) <= TERM_TOL * 100)
    assert np.all(abs(doubled["x_rarity"] - base["x_rarity"]) <= TERM_TOL)
    flat = score.score_components(**args, weights=score.ScoreWeights(priority_power=0.0))
    assert list(flat.x_priority) == [1.0, 1.0]
    # the worked value of the docstring of score_components
    one = score.score_components(5, 111.4, 1.0, 1.2, 90.0, 0.5, 5 / 1440, 4 / 24)
    conditions = 20 + 10 * 0.9 + 10 + 10 * (1 - 6 * (5 / 1440) / (4 / 24))
    expect = 5 * (1 + 3 / (1 + math.log2(1 + 7 / 111.4))) * conditions
    assert abs(float(one["score"].iloc[0]) - expect) <= TERM_TOL * 1000
    assert abs(expect - 897.1) <= 0.05  # the rounded figure quoted in the docstring


def test_one_rare_long_block_outweighs_two_routine_ones():
    # The design goal: a periastron every 111 d at priority 5 beats two maxima of a 3.3-h
    # pulsator at priority 1 in the same night, even in worse conditions.
    rare = score.score_components(5, 111.4, 0.6, 1.8, 40.0, 0.5, 0.1, 0.75)
    routine = score.score_components(1, 0.137, 1.0, 1.0, 150.0, 0.0, 0.0005, 0.17)
    assert float(rare.score.iloc[0]) > 2 * float(routine.score.iloc[0])


def test_array_path_equals_one_at_a_time():
    rng = np.random.default_rng(40)
    n = 40
    cols = dict(priority=rng.uniform(0.5, 5, n), period_d=rng.uniform(0.1, 500, n),
                observable_fraction=rng.uniform(0, 1, n), airmass=rng.uniform(1, 4, n),
                moon_sep_deg=rng.uniform(0, 180, n), moon_illumination=rng.uniform(0, 1, n),
                sigma_d=rng.uniform(0, 0.05, n), window_d=rng.uniform(0.05, 0.4, n))
    cols["period_d"][::7] = np.nan
    cols["sigma_d"][::5] = np.nan
    together = score.score_components(**cols)
    for i in range(n):
        single = score.score_components(**{k: v[i] for k, v in cols.items()})
        assert np.all(abs(together.iloc[i].to_numpy() - single.iloc[0].to_numpy()) <= TERM_TOL * 100)


def test_airmass_close_to_plane_parallel_secz_of_astropy():
    # Reference: astropy AltAz.secz (plane-parallel). Young (1994) differs from sec z by the
    # curvature of the atmosphere: 0.06 per cent at 60 deg altitude, 0.42 per cent at 30 deg
    # (values of the two published formulas; that the gap stays below half a per cent above 30 deg
    # is the known behaviour, stated from memory). Hence a 0.5 per cent tolerance.
    import astropy.units as u
    from astropy.coordinates import AltAz

    alt = np.array([30.0, 40.0, 50.0, 60.0, 75.0, 89.9])
    secz = AltAz(alt=alt * u.deg, az=np.zeros(alt.size) * u.deg).secz.value
    rel_tol = 0.005
    got = score.airmass_from_alt(alt)
    assert np.all(abs(got / secz - 1.0) <= rel_tol)
    # away from the zenith the curvature lowers the airmass below sec z (at the zenith Young's fit
    # gives 1 + 3e-7, a rounding of its coefficients, so that point is left out here)
    assert np.all(got[:-1] < secz[:-1])
    assert np.isinf(score.airmass_from_alt(-5.0))


def test_weights_are_validated():
    with pytest.raises(PeriplanError, match="rarity"):
        score.ScoreWeights(rarity=-1.0)
    with pytest.raises(PeriplanError, match="airmass_zero"):
        score.ScoreWeights(airmass_zero=1.0)
    with pytest.raises(PeriplanError, match="moon_clear_deg"):
        score.ScoreWeights(moon_clear_deg=0.0)


def test_rv_visits_are_scored_with_the_moon_at_their_block():
    # An RV visit may lie hours or days from its event (an RV window, a periastron swing): its
    # Moon term takes the Moon-target separation at the block's middle and the illuminated
    # fraction of the block's night. Reference: astropy's get_body("moon") at the block's middle,
    # separation in the Moon's topocentric GCRS frame (as astroplan's MoonSeparationConstraint);
    # the input is the bundled demo week, whose RV windows reach into other nights.
    import datetime as dt

    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord, get_body
    from astropy.time import Time

    import planner
    from conftest import REPO, SAMPLE_TARGETS
    from planner.scheduling.blocks import night_index

    targets = planner.read_catalogue(SAMPLE_TARGETS)
    site = planner.read_site(REPO / "sample_targets" / "site.toml")
    plan = planner.make_plan(targets, site, dt.date(2026, 12, 7), 3)
    # a merged visit (two requests in one block) is scored as the sum of its requests' own blocks
    req = plan.requests[plan.requests["request"].isin(["rv_visit", "rv_sequence"]) & (plan.requests["merged_with"] < 0)]
    mid = 0.5 * (req["start_jd_utc"].to_numpy(float) + req["end_jd_utc"].to_numpy(float))
    block_night = plan.nights["night"].astype(str).to_numpy()[night_index(mid, plan.nights)]
    assert (block_night != req["night"].astype(str).to_numpy()).any()  # some lie on another night than their event
    ti = req["target_index"].to_numpy(int)
    loc = EarthLocation.from_geodetic(site.longitude_deg * u.deg, site.latitude_deg * u.deg, site.elevation_m * u.m)
    moon = get_body("moon", Time(mid, format="jd", scale="utc"), location=loc)
    star = SkyCoord(targets["ra_deg"].to_numpy(float)[ti] * u.deg, targets["dec_deg"].to_numpy(float)[ti] * u.deg)
    ref = moon.separation(star.transform_to(moon.frame)).deg
    # 1.5 arcsec: the Sun/Moon tracks' agreement with astropy (tests/test_visibility.py)
    assert np.max(np.abs(req["moon_sep_deg"].to_numpy(float) - ref)) < 1.5 / 3600.0
    lit = dict(zip(plan.nights["night"].astype(str), plan.nights["moon_illumination"].to_numpy(float)))
    assert np.array_equal(req["moon_illumination"].to_numpy(float), [lit[n] for n in block_night])
