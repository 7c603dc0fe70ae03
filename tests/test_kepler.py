"""Kepler's equation and the anomalies against published worked examples and radvel."""

import numpy as np
import pytest
import radvel.kepler as radvel_kepler
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.orbits import kepler
from planner.errors import ConvergenceError, PeriplanError

#: Published E values are printed to 6-12 decimals of a degree; half a unit of the last printed
#: digit is the honest tolerance for each.
HALF_UNIT_6DP_DEG = 0.5e-6
HALF_UNIT_9DP_DEG = 0.5e-9

# Meeus, *Astronomical Algorithms*, 2nd ed. (1998), ch. 30 "Equation of Kepler".
MEEUS_CH30 = [
    # (e, M, published E, tolerance, where)
    (0.100, np.radians(5.0), 5.554589254, HALF_UNIT_9DP_DEG, "Example 30.b, p. 199"),
    (0.990, np.radians(2.0), 32.361007, HALF_UNIT_6DP_DEG, "ch. 30, hard case for the first method"),
    (0.990, 0.2, np.degrees(1.066997365282), 0.5e-12 * 180 / np.pi, "p. 205, Sinnott's method data"),
]

# Meeus (1991), Astronomical Algorithms 1st ed., table of sample solutions (reproduced with Colwell
# 1993, *Solving Kepler's Equation Over Three Centuries*): E in degrees to 6 decimals.
MEEUS_TABLE = [
    (0.100, 5, 5.554589), (0.200, 5, 6.246908), (0.300, 5, 7.134960), (0.400, 5, 8.313903),
    (0.500, 5, 9.950063), (0.600, 5, 12.356653), (0.700, 5, 16.167990), (0.800, 5, 22.656579),
    (0.900, 5, 33.344447), (0.990, 5, 45.361023), (0.990, 1, 24.725822), (0.990, 33, 89.722155),
]


@pytest.mark.parametrize("e, m_rad, e_pub_deg, tol_deg, where", MEEUS_CH30)
def test_meeus_chapter_30_examples(e, m_rad, e_pub_deg, tol_deg, where):
    got = np.degrees(kepler.solve_kepler(m_rad, e))
    assert abs(got - e_pub_deg) <= tol_deg, where


@pytest.mark.parametrize("e, m_deg, e_pub_deg", MEEUS_TABLE)
def test_meeus_sample_table(e, m_deg, e_pub_deg):
    got = np.degrees(kepler.solve_kepler(np.radians(m_deg), e))
    assert abs(got - e_pub_deg) <= HALF_UNIT_6DP_DEG


def test_meeus_table_row_with_three_decimals():
    # Same table: e = 0.75, M = 70 deg -> E = 110.302 deg (printed to 3 decimals).
    got = np.degrees(kepler.solve_kepler(np.radians(70.0), 0.75))
    assert abs(got - 110.302) <= 0.5e-3


def test_vallado_example_2_1():
    # Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed. (2013), Example 2-1:
    # M = 235.4 deg, e = 0.4 -> E = 220.512074767522 deg.
    got = np.degrees(kepler.solve_kepler(np.radians(235.4), 0.4))
    assert abs(got - 220.512074767522) <= 1e-9


def test_curtis_example_3_2_true_anomaly():
    # Curtis, *Orbital Mechanics for Engineering Students*, 3rd ed., Example 3.2: e = 0.37255,
    # M = 3.6029 rad -> E = 3.4794 rad (5 figures), true anomaly 193.2 deg (4 figures).
    ecc = kepler.solve_kepler(3.6029, 0.37255)
    assert abs(ecc - 3.4794) <= 0.5e-4
    nu = np.degrees(kepler.true_from_eccentric(ecc, 0.37255)) % 360
    assert abs(nu - 193.2) <= 0.05


def test_vectorised_shape_and_array_equals_scalar_path():
    m = np.linspace(-7.0, 13.0, 40).reshape(5, 8)
    e = np.linspace(0.0, 0.999, 40).reshape(5, 8)
    whole = kepler.solve_kepler(m, e)
    assert whole.shape == (5, 8)
    one_by_one = np.array([kepler.solve_kepler(mi, ei) for mi, ei in zip(m.ravel(), e.ravel())])
    assert np.array_equal(whole.ravel(), one_by_one)


@pytest.mark.parametrize("e", [0.999, 0.999999])
def test_residual_near_zero_and_two_pi_for_high_e(e):
    # The promise: |E - e sin E - M| <= 1e-12 rad everywhere, e = 0.999 with M near 0 and 2 pi.
    near = np.concatenate([np.geomspace(1e-15, 1e-2, 400), 2 * np.pi - np.geomspace(1e-15, 1e-2, 400),
                           -np.geomspace(1e-15, 1e-2, 100)])
    ecc = kepler.solve_kepler(near, e)
    assert np.max(np.abs(ecc - e * np.sin(ecc) - near)) <= kepler.RESIDUAL_TOL_RAD


@settings(max_examples=300, deadline=None)
@given(m=st.floats(-60.0, 60.0), e=st.floats(0.0, 0.999999))
def test_residual_property(m, e):
    ecc = kepler.solve_kepler(m, e)
    assert abs(ecc - e * np.sin(ecc) - m) <= kepler.RESIDUAL_TOL_RAD


@settings(max_examples=300, deadline=None)
@given(ecc=st.floats(-3.14159, 3.14159), e=st.floats(0.0, 0.9999))
def test_round_trip_eccentric_mean_eccentric(ecc, e):
    # Identity: pick E, form M = E - e sin E, solve back. Near e -> 1 and E -> 0 the problem is
    # ill-conditioned (dE/dM = 1/(1 - e cos E)); compare in M, the solver's promise, and in E
    # scaled by that derivative.
    m = kepler.mean_from_eccentric(ecc, e)
    back = kepler.solve_kepler(m, e)
    assert abs(back - ecc) * (1 - e * np.cos(ecc)) <= 4 * kepler.RESIDUAL_TOL_RAD


@settings(max_examples=300, deadline=None)
@given(nu=st.floats(-3.1, 3.1), e=st.floats(0.0, 0.99))
def test_round_trip_true_mean_true(nu, e):
    m = kepler.mean_from_true(nu, e)
    back = kepler.true_from_mean(m, e)
    assert abs(back - nu) <= 1e-8


def test_identities_e_zero_and_apsides():
    m = np.linspace(-np.pi, np.pi, 13)
    assert np.allclose(kepler.solve_kepler(m, 0.0), m, atol=1e-15, rtol=0)
    for e in (0.3, 0.9, 0.999):
        assert abs(kepler.solve_kepler(0.0, e)) <= 1e-15
        assert abs(kepler.solve_kepler(np.pi - 1e-16, e) - np.pi) <= 1e-12


def test_against_radvel_solver():
    # radvel (Fulton et al. 2018, PASP 130, 044504) radvel.kepler.kepler: same equation, its own
    # iteration; both must agree to the convergence level.
    rng = np.random.default_rng(1)
    m = rng.uniform(0, 2 * np.pi, 5000)
    e = rng.uniform(0, 0.99, 5000)
    ours = kepler.solve_kepler(m, e)
    theirs = radvel_kepler.kepler(m.copy(), e.copy())
    assert np.max(np.abs(ours - theirs)) <= 1e-10


def test_refuses_unbound_orbit():
    with pytest.raises(PeriplanError, match="0 <= e < 1"):
        kepler.solve_kepler([0.1, 0.2], [0.5, 1.0])
    with pytest.raises(PeriplanError):
        kepler.solve_kepler(0.1, -0.01)


def test_nonconvergence_is_loud(monkeypatch):
    monkeypatch.setattr(kepler, "MAX_ITERATIONS", 0)
    with pytest.raises(ConvergenceError) as info:
        kepler.solve_kepler([0.5, 1.0], [0.9, 0.9])
    assert info.value.mask.tolist() == [True, True]


def test_period_from_kepler_third_law():
    # One astronomical unit around one solar mass is one sidereal year: 365.25636 d (IAU value of
    # the sidereal year; Earth's own mass, 3e-6 Msun, shortens it by 1.5e-6 relative).
    import astropy.units as u

    p = kepler.period_from_kepler_third_law(1 * u.au, 1 * u.M_sun).to_value(u.day)
    assert abs(p - 365.25636) <= 0.01
