"""The orbital-phase engine: event times and their uncertainties, against published systems."""

import numpy as np
import pandas as pd
import pytest

from planner.inputs import catalogue
from planner.orbits import geometry
from planner.orbits.events import predict_events

DAY_MIN = 1440.0


def load(text):
    return catalogue.parse_catalogue(text, source="test.csv")


def test_halley_node_passages_meeus_example_39a():
    # Meeus, *Astronomical Algorithms*, 2nd ed. (1998), Example 39.a, p. 276 (comet Halley):
    # T = 1986 Feb 9.45891 TD, a = 17.9400782 au, e = 0.96727426, omega = 111.84644 deg.
    # Published: ascending node 1985 Nov 9.16 TD, descending node 1986 Mar 10.37 TD.
    # The ascending node (nu = -omega) is the engine's rv_max, the descending node rv_min.
    # Period from a and one solar mass through Kepler's third law (astropy's G M_sun).
    from astropy.time import Time

    tp_jd = Time("1986-02-09", scale="tt").jd + 0.45891
    t = load("name,ra,dec,a_au,mass1_msun,e,omega_deg,tp,events\n"
             f"Halley,0,0,17.9400782,1,0.96727426,111.84644,{tp_jd},rv_max;rv_min\n")
    ev = predict_events(t, tp_jd - 200, tp_jd + 200)
    published = {"rv_max": Time("1985-11-09", scale="tt").jd + 0.16,
                 "rv_min": Time("1986-03-10", scale="tt").jd + 0.37}
    half_unit_of_last_digit_d = 0.005
    for name, jd in published.items():
        got = ev.loc[ev.event == name, "bjd_tdb"].to_numpy()
        assert len(got) == 1
        assert abs(got[0] - jd) <= half_unit_of_last_digit_d


GJ436 = ("name,ra,dec,period_d,e,e_err,omega_deg,omega_err_deg,tc,tc_err_d,time_system\n"
         # P, e: Maness et al. 2007, PASP 119, 90 (RV paper): P = 2.6439 d, e = 0.16 +- 0.02;
         # omega = 339 +- 10 deg, the RV fit used by Deming et al. (from memory);
         # transit: Deming et al. 2007, ApJ 667, L199: HJD 2454280.78149 +- 0.00016.
         "GJ 436 b,11:42:11.09,+26:42:23.7,2.6439,0.16,0.02,339,10,2454280.78149,0.00016,HJD_UTC\n")


def test_gj436_secondary_eclipse_predicted_from_rv_elements():
    # Deming et al. 2007 measured the secondary eclipse at phase 0.587 +- 0.005 after the transit.
    # Prediction from the RV elements must agree within the combined 1-sigma uncertainty, and the
    # engine's own sigma must be the larger one (the RV elements are the weaker constraint).
    t = load(GJ436)
    tc = t.epoch_bjd_tdb[0]
    ev = predict_events(t, tc - 0.01, tc + 2.7, kinds=["secondary_conjunction"])
    phase = (ev.bjd_tdb[0] - tc) / t.period_d[0]
    sigma = ev.sigma_d[0] / t.period_d[0]
    measured, measured_sigma = 0.587, 0.005
    assert abs(phase - measured) <= np.hypot(sigma, measured_sigma)
    assert sigma > measured_sigma


HATP2 = ("name,ra,dec,period_d,period_err_d,e,e_err,omega_deg,omega_err_deg,tc,tc_err_d\n"
         # Pal et al. 2010, MNRAS 401, 2665 (abstract).
         "HAT-P-2 b,16:20:36.36,+41:02:53.1,5.6334729,0.0000061,0.5171,0.0033,185.22,0.95,2454387.49375,0.00074\n")


def test_hatp2_secondary_eclipse_timing_uncertainty():
    # Pal et al. 2010: "These orbital elements allow us to predict the timings of secondary eclipses
    # with a reasonable accuracy of ~15 min." Read "~15" as 10-20 min.
    t = load(HATP2)
    tc = t.epoch_bjd_tdb[0]
    ev = predict_events(t, tc, tc + 5.6, kinds=["secondary_conjunction", "primary_conjunction"])
    sec = ev[ev.event == "secondary_conjunction"].iloc[0]
    assert 10.0 <= sec.sigma_d * DAY_MIN <= 20.0
    # the transit at the epoch itself carries only the epoch's error
    pri = ev[ev.event == "primary_conjunction"].iloc[0]
    assert abs(pri.sigma_d - 0.00074) <= 1e-12


def test_linear_ephemeris_sigma_grows_with_cycles():
    # Linear propagation of T0 and P: sigma_n^2 = sigma_T^2 + n^2 sigma_P^2 (no source needed:
    # variance of a sum of independent Gaussians).
    t = load("name,ra,dec,period_d,period_err_d,tc,tc_err_d,label\n"
             "Pulsator,10,20,0.5,0.00001,2460000.0,0.0002,maximum\n")
    ev = predict_events(t, 2460000.0, 2460000.0 + 500)
    assert (ev.event == "periodic").all() and (ev.label == "maximum").all()
    n = ev.cycle.to_numpy()
    assert np.array_equal(n, np.arange(1000))
    expected = np.sqrt(0.0002**2 + (n * 0.00001) ** 2)
    assert np.max(np.abs(ev.sigma_d - expected)) <= 1e-15
    assert np.all(np.diff(ev.sigma_d) > 0)


def brute_force_sigma(row, event, cycle, n=200_000, seed=3):
    """1-sigma of one event time by a direct Monte Carlo over P, epoch, e and omega."""
    rng = np.random.default_rng(seed)
    p = row.period_d + row.period_err_d * rng.standard_normal(n)
    t0 = row.epoch_bjd_tdb + row.epoch_err_d * rng.standard_normal(n)
    e = np.minimum(np.abs(row.e + row.e_err * rng.standard_normal(n)), 1 - 1e-6)
    w = np.radians(row.omega_deg + row.omega_err_deg * rng.standard_normal(n))
    ph = geometry.event_phases(e, w)
    k = geometry.ORBIT_EVENTS.index(event)
    ref = ph[:, 2] if row.epoch_kind == "tc" else 0.0
    d = np.mod(ph[:, k] - ref, 1.0)
    d_nom = np.mod(geometry.event_phases(row.e, np.radians(row.omega_deg))[k]
                   - (geometry.event_phases(row.e, np.radians(row.omega_deg))[2] if row.epoch_kind == "tc" else 0), 1)
    d = d_nom + np.mod(d - d_nom + 0.5, 1.0) - 0.5
    times = t0 + p * (cycle + d)
    nominal = row.epoch_bjd_tdb + row.period_d * (cycle + d_nom)
    return np.sqrt(np.mean((times - nominal) ** 2))


@pytest.mark.parametrize("event", ["periastron", "secondary_conjunction", "rv_max"])
def test_semi_analytic_sigma_equals_full_monte_carlo(event):
    t = load(HATP2)
    tc = t.epoch_bjd_tdb[0]
    ev = predict_events(t, tc + 200 * 5.6334729, tc + 201 * 5.6334729, kinds=[event], n_samples=20_000)
    got = ev.iloc[0]
    ref = brute_force_sigma(t.iloc[0], event, got.cycle)
    # Monte Carlo error of a standard deviation from N draws is about 1/sqrt(2N): 0.5 % at 20,000.
    assert abs(got.sigma_d - ref) <= 0.03 * ref


def test_periastron_spacing_is_the_period_and_event_order_per_orbit():
    t = load(HATP2)
    tc = t.epoch_bjd_tdb[0]
    ev = predict_events(t, tc, tc + 100, kinds=geometry.ORBIT_EVENTS)  # all six: no k_ms or geometry here
    peri = ev[ev.event == "periastron"].bjd_tdb.to_numpy()
    assert np.max(np.abs(np.diff(peri) - 5.6334729)) <= 1e-8
    # the six events of one orbit come in order of true anomaly after periastron
    nu = np.degrees(geometry.event_true_anomalies(np.radians(185.22)))
    expected_order = [geometry.ORBIT_EVENTS[i] for i in np.argsort(nu)]
    after = ev[ev.bjd_tdb >= peri[0]].head(6)
    assert list(after.event) == expected_order


def test_array_path_equals_single_target_runs():
    # Style habit 6: all targets at once give what one-at-a-time runs give.
    from conftest import SAMPLE_TARGETS

    t = catalogue.read_catalogue(SAMPLE_TARGETS)
    start = t.epoch_bjd_tdb.max()
    together = predict_events(t, start, start + 60)
    singles = pd.concat([predict_events(t.iloc[[i]].reset_index(drop=True), start, start + 60)
                         for i in range(len(t))])
    cols = ["target", "event", "cycle", "bjd_tdb", "sigma_d"]
    a = together[cols].sort_values(["target", "bjd_tdb"]).reset_index(drop=True)
    b = singles[cols].sort_values(["target", "bjd_tdb"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(a, b)


def test_a_targets_own_reach_gives_its_events_of_the_wider_span():
    # reach_d widens each row's span on its own: the rows of one call equal single-target runs
    # over [start - reach_i, end + reach_i), and a row with reach 0 keeps the span's events.
    from conftest import SAMPLE_TARGETS

    t = catalogue.read_catalogue(SAMPLE_TARGETS)
    start = t.epoch_bjd_tdb.max()
    reach = np.linspace(0.0, 12.0, len(t))
    together = predict_events(t, start, start + 20, reach_d=reach)
    singles = pd.concat([predict_events(t.iloc[[i]].reset_index(drop=True), start - reach[i],
                                        start + 20 + reach[i]) for i in range(len(t))])
    cols = ["target", "event", "cycle", "bjd_tdb", "sigma_d"]
    a = together[cols].sort_values(["target", "bjd_tdb"]).reset_index(drop=True)
    b = singles[cols].sort_values(["target", "bjd_tdb"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(a, b)
    assert together["bjd_tdb"].min() < start  # the widened rows reach before the span


def test_duration_and_eclipse_flag_from_geometry():
    # Grazing-free transit vs a secondary conjunction that misses the star: an eccentric orbit
    # with omega = 90 deg is closest at transit, farthest at occultation (Winn 2010, eqs. 7-8).
    t = load("name,ra,dec,period_d,e,omega_deg,tc,a_rstar,b,rp_rstar\n"
             "Geo,10,10,10.0,0.5,90,2460000.0,20.0,0.5,0.1\n")
    ev = predict_events(t, 2460000.0 - 0.1, 2460010.0 - 0.1, kinds=["primary_conjunction", "secondary_conjunction"])
    pri = ev[ev.event == "primary_conjunction"].iloc[0]
    sec = ev[ev.event == "secondary_conjunction"].iloc[0]
    assert bool(pri.eclipses) and not bool(sec.eclipses)
    # b_occ = b_tra (1 + e sin w) / (1 - e sin w) = 1.5 > 1 + k
    expected = geometry.eclipse_duration(10.0, 20.0, geometry.inclination_from_impact(0.5, 20.0, 0.5, np.pi / 2), 0.1, 0.5, np.pi / 2)
    assert abs(pri.duration_d - expected) <= 1e-12
    assert np.isnan(sec.duration_d)


def test_reference_epoch_given_as_tp_or_tc_gives_same_events():
    t_c = load(HATP2)
    tp = geometry.tp_from_tc(t_c.epoch_bjd_tdb[0], 5.6334729, 0.5171, np.radians(185.22))
    t_p = load("name,ra,dec,period_d,e,omega_deg,tp\n"
               f"HAT-P-2 b,16:20:36.36,+41:02:53.1,5.6334729,0.5171,185.22,{float(tp)!r}\n")
    a = predict_events(t_c, 2455000, 2455030)
    b = predict_events(t_p, 2455000, 2455030)
    assert list(a.event) == list(b.event)
    assert np.max(np.abs(a.bjd_tdb.to_numpy() - b.bjd_tdb.to_numpy())) <= 1e-8
