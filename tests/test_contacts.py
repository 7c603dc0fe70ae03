"""Eclipse contacts of eccentric orbits and the phase windows of RV requests, against references.

References:
- contacts: the sky-projected separation d(t) evaluated densely in this test from radvel's Kepler
  solver (Fulton et al. 2018, PASP 130, 044504; radvel.kepler.kepler) and the separation formula
  of Winn 2010 ("Transits and Occultations", in *Exoplanets*, ed. S. Seager, eq. 5), the
  conjunction times from radvel.orbit.timeperi_to_timetrans; where the approximation holds
  (small e, large a/R*), Winn 2010 eqs. 14-16 for T14 and T23;
- the eclipse/no-eclipse decision: the impact parameters of Winn 2010 eq. 7 (transit, with
  1 + e sin omega) and eq. 8 (occultation, 1 - e sin omega), written out in the test;
- RV windows: the RV curve of radvel.kepler.rv_drive evaluated on a dense grid.
Orbit inputs are test cases chosen to span the regimes (they are not expected values).
"""

from __future__ import annotations

import numpy as np
import radvel.kepler
import radvel.orbit

from planner.orbits import contacts

#: Grid step of the dense separation and RV curves: 0.5 s. The crossing found by linear
#: interpolation on it is good to far better than a second; the tolerance allows 2 s.
STEP_D = 0.5 / 86400.0
CONTACT_TOL_D = 2.0 / 86400.0

# (P d, a/R*, i deg, k, e, omega deg): circular, moderate e, high e near-grazing, very high e
CASES = [
    (3.0, 10.0, 88.0, 0.10, 0.0, 90.0),
    (5.6334729, 8.99, 86.72, 0.0723, 0.5171, 185.22),  # HAT-P-2 b-like inputs (from memory)
    (21.2, 22.0, 87.5, 0.08, 0.67, 121.0),
    (111.4367, 96.0, 89.3, 0.102, 0.928, 301.2),
]


def separation_curve(t, tp, p, a_rstar, inc, e, w):
    """Winn 2010 eq. 5 evaluated at times t from radvel's eccentric anomaly."""
    m = 2 * np.pi * (t - tp) / p
    ecc_anom = radvel.kepler.kepler(np.mod(m, 2 * np.pi), np.full(m.shape, e))
    nu = 2 * np.arctan2(np.sqrt(1 + e) * np.sin(ecc_anom / 2), np.sqrt(1 - e) * np.cos(ecc_anom / 2))
    r = a_rstar * (1 - e * np.cos(ecc_anom))
    return r * np.sqrt(1 - np.sin(w + nu) ** 2 * np.sin(inc) ** 2)


def crossings(t, d, level):
    """Times where d - level changes sign, by linear interpolation."""
    f = d - level
    k = np.flatnonzero(np.sign(f[:-1]) != np.sign(f[1:]))
    return t[k] - f[k] * (t[k + 1] - t[k]) / (f[k + 1] - f[k])


def test_contacts_match_a_dense_sky_separation_from_radvel():
    tp = 0.0
    for p, a, inc_deg, k, e, w_deg in CASES:
        inc, w = np.radians(inc_deg), np.radians(w_deg)
        for secondary in (False, True):
            tc = radvel.orbit.timeperi_to_timetrans(tp, p, e, w, secondary=secondary)
            got = contacts.contact_offsets_d(p, a, inc, k, e, w, secondary=secondary)
            span = 0.6 * p / np.pi * np.arcsin(min(1.0, 3.0 / a)) + 0.05
            t = np.arange(tc - span, tc + span, STEP_D)
            d = separation_curve(t, tp, p, a, inc, e, w)
            outer, inner = crossings(t, d, 1 + k), crossings(t, d, 1 - k)
            if outer.size == 0:
                assert np.isnan(got).all(), (p, e, secondary)
                continue
            assert outer.size == 2
            assert abs(got[0] - (outer[0] - tc)) <= CONTACT_TOL_D
            assert abs(got[3] - (outer[1] - tc)) <= CONTACT_TOL_D
            if inner.size == 2:
                assert abs(got[1] - (inner[0] - tc)) <= CONTACT_TOL_D
                assert abs(got[2] - (inner[1] - tc)) <= CONTACT_TOL_D
            else:
                assert np.isnan(got[1]) and np.isnan(got[2])


def test_contacts_agree_with_winn_2010_eqs_14_to_16_where_they_apply():
    # Winn 2010 eqs. 14 (T_tot), 15 (T_full) with the eccentric factor of eq. 16,
    # sqrt(1 - e^2) / (1 + e sin omega). Small e and a/R* = 15: the straight-chord,
    # constant-speed approximation is good to a few parts in a thousand, so 1 per cent.
    p, a, inc, k = 4.0, 15.0, np.radians(88.5), 0.1
    for e, w_deg in ((0.0, 90.0), (0.05, 30.0), (0.1, 250.0)):
        w = np.radians(w_deg)
        b = a * np.cos(inc) * (1 - e**2) / (1 + e * np.sin(w))
        factor = np.sqrt(1 - e**2) / (1 + e * np.sin(w))
        t14 = p / np.pi * np.arcsin(np.sqrt((1 + k) ** 2 - b**2) / (a * np.sin(inc))) * factor
        t23 = p / np.pi * np.arcsin(np.sqrt((1 - k) ** 2 - b**2) / (a * np.sin(inc))) * factor
        got = contacts.contact_offsets_d(p, a, inc, k, e, w)
        assert abs((got[3] - got[0]) / t14 - 1) <= 0.01
        assert abs((got[2] - got[1]) / t23 - 1) <= 0.01


def test_eclipse_decision_follows_the_impact_parameters_of_winn_2010_eq_7_and_8():
    rng = np.random.default_rng(7)
    for _ in range(300):
        a, k = rng.uniform(3, 60), rng.uniform(0.01, 0.3)
        e, w = rng.uniform(0, 0.8), rng.uniform(0, 2 * np.pi)
        inc = np.radians(rng.uniform(75, 90))
        b_tra = a * np.cos(inc) * (1 - e**2) / (1 + e * np.sin(w))
        b_occ = a * np.cos(inc) * (1 - e**2) / (1 - e * np.sin(w))
        for secondary, b in ((False, b_tra), (True, b_occ)):
            if abs(b - (1 + k)) < 1e-6:
                continue
            got = contacts.contact_offsets_d(10.0, a, inc, k, e, w, secondary=secondary)
            assert np.isfinite(got[0]) == (b < 1 + k)
            assert np.isfinite(got[1]) == (b < 1 - k)


def test_rv_window_matches_the_dense_radvel_curve():
    # The window where v >= v_max - f K (and v <= v_min + f K) around each extremum.
    tp, kk = 0.0, 50.0
    for p, e, w_deg, f in ((38.9, 0.171, 214.0, 0.1), (111.4367, 0.928, 301.2, 0.05), (3.0, 0.0, 90.0, 0.2)):
        w = np.radians(w_deg)
        for maximum in (True, False):
            nu_x = -w if maximum else np.pi - w
            big_e = 2 * np.arctan2(np.sqrt(1 - e) * np.sin(nu_x / 2), np.sqrt(1 + e) * np.cos(nu_x / 2))
            t_x = tp + p * np.mod(big_e - e * np.sin(big_e), 2 * np.pi) / (2 * np.pi)
            lo, hi = contacts.rv_window_offsets_d(p, e, w, f, maximum=maximum)
            step = p / 2e6
            t = np.arange(t_x - 0.3 * p, t_x + 0.3 * p, step)
            rv = radvel.kepler.rv_drive(t, np.array([p, tp, e, w, kk]), use_c_kepler_solver=False)
            v_x = kk * ((1 if maximum else -1) + e * np.cos(w))
            inside = (rv >= v_x - f * kk) if maximum else (rv <= v_x + f * kk)
            edges = crossings(t, inside.astype(float), 0.5)
            assert edges.size == 2
            assert abs(edges[0] - (t_x + lo)) <= 2 * step
            assert abs(edges[1] - (t_x + hi)) <= 2 * step


def test_rv_swing_holds_the_fastest_change_of_the_radvel_curve():
    # The swing is where |dv/dt| >= half its largest value; checked against finite differences
    # of radvel's curve: inside the swing the rate is at least ~half the peak, the peak is inside.
    tp, kk = 0.0, 100.0
    for p, e, w_deg in ((111.4367, 0.928, 301.2), (38.9, 0.171, 214.0), (10.0, 0.5, 10.0)):
        w = np.radians(w_deg)
        lo, hi = contacts.rv_swing_offsets_d(p, e, w)
        t = np.linspace(-0.5 * p, 0.5 * p, 400001)
        rv = radvel.kepler.rv_drive(t, np.array([p, tp, e, w, kk]), use_c_kepler_solver=False)
        rate = np.abs(np.gradient(rv, t))
        peak_t = t[np.argmax(rate)]
        assert lo[0] <= peak_t <= hi[0]
        inside = (t >= lo[0]) & (t <= hi[0])
        # grid of 0.5 deg in true anomaly: the edges sit within a few per cent of the level
        assert rate[inside].min() >= 0.45 * rate.max()
