"""Contact times of eclipses on an eccentric orbit, and the phase windows of RV requests.

Eclipse contacts come from the sky-projected star-companion separation (Winn 2010, "Transits and
Occultations", in *Exoplanets*, ed. S. Seager, eq. 5), in units of the primary's radius:

    d(nu) = (r / R*) sqrt(1 - sin^2(omega + nu) sin^2 i),  r / R* = (a/R*) (1 - e^2) / (1 + e cos nu)

with omega of the primary and the project's conjunctions at omega + nu = pi/2 (primary) and
3 pi/2 (secondary). First contact T1 is where d falls through 1 + k before the conjunction,
second T2 where it falls through 1 - k, third T3 and fourth T4 the rises after it (k = Rp/R*).
T2 and T3 are NaN for a grazing eclipse (d stays above 1 - k), all four for a conjunction that
does not eclipse. The crossings are found by bisection in true anomaly over the quarter orbit
on each side of the conjunction (60 halvings: far below a millisecond), then turned into times
through the mean anomaly, so the result is exact for the Keplerian orbit (Winn's eqs. 14-16 are
its straight-chord, constant-speed approximation; tests/test_contacts.py compares both with a
separation computed densely in the test).

RV windows: the RV of the primary is v = gamma + K [cos(nu + omega) + e cos omega], so it is
within a fraction f of K of its maximum where cos(nu + omega) >= 1 - f, i.e. for nu + omega in
[-acos(1 - f), +acos(1 - f)] (and about pi for the minimum): closed form, no search.

All functions broadcast over arrays; angles in radians, times in days relative to the event.
"""

from __future__ import annotations

import numpy as np

from . import kepler

#: Bisection halvings of the contact search: (pi/2) / 2^60 rad of true anomaly, far below 1 ms.
_HALVINGS = 60
CONTACTS = ("t1", "t2", "t3", "t4")


def sky_separation_rstar(true_anom_rad, a_rstar, inc_rad, e, omega_rad):
    """Sky-projected separation (units of R*) at true anomalies ``nu`` (Winn 2010, eq. 5); broadcast."""
    r = a_rstar * (1.0 - e**2) / (1.0 + e * np.cos(true_anom_rad))
    s = np.sin(omega_rad + true_anom_rad)
    return r * np.sqrt(np.clip(1.0 - s * s * np.sin(inc_rad) ** 2, 0.0, None))


def _crossing_theta(lo, hi, level, a_rstar, inc_rad, e, omega_rad):
    """theta = omega + nu in [lo, hi] where the separation crosses ``level``; NaN when no sign change."""
    def f(theta):
        return sky_separation_rstar(theta - omega_rad, a_rstar, inc_rad, e, omega_rad) - level

    f_lo, f_hi = f(lo), f(hi)
    ok = np.sign(f_lo) != np.sign(f_hi)
    a, b = np.array(lo, float), np.array(hi, float)
    fa = f_lo
    for _ in range(_HALVINGS):
        m = 0.5 * (a + b)
        fm = f(m)
        left = np.sign(fm) == np.sign(fa)
        a = np.where(left, m, a)
        fa = np.where(left, fm, fa)
        b = np.where(left, b, m)
    return np.where(ok, 0.5 * (a + b), np.nan)


def _time_offset_d(theta, theta_c, period_d, e, omega_rad):
    """Time (days) from true anomaly theta_c - omega to theta - omega, taken in (-P/2, P/2]."""
    m = kepler.mean_from_true(theta - omega_rad, e)
    m_c = kepler.mean_from_true(theta_c - omega_rad, e)
    dm = np.mod(m - m_c + np.pi, kepler.TWO_PI) - np.pi
    return period_d * dm / kepler.TWO_PI


def contact_offsets_d(period_d, a_rstar, inc_rad, radius_ratio, e, omega_rad, secondary=False):
    """Times of T1, T2, T3, T4 relative to the conjunction (days), shape ``broadcast + (4,)``.

    ``secondary`` selects the secondary conjunction (occultation, secondary eclipse). T1, T2 are
    negative, T3, T4 positive; NaN where the contact does not happen (see module docstring).
    Worked value: a/R* = 10, i = 90 deg, k = 0.1, e = 0, P = 3 d gives T4 = -T1 =
    (P / 2 pi) asin(1.1 / 10) = 0.05263 d.
    """
    p, a, inc, k, ecc, w = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in
                                                  (period_d, a_rstar, inc_rad, radius_ratio, e, omega_rad)))
    theta_c = np.full(p.shape, 1.5 * np.pi if secondary else 0.5 * np.pi)
    quarter = 0.5 * np.pi
    out = np.full(p.shape + (4,), np.nan)
    for j, (side, level) in enumerate(((-1, 1.0 + k), (-1, 1.0 - k), (1, 1.0 - k), (1, 1.0 + k))):
        lo = theta_c + side * quarter if side < 0 else theta_c
        hi = theta_c if side < 0 else theta_c + side * quarter
        theta = _crossing_theta(lo, hi, level, a, inc, ecc, w)
        out[..., j] = _time_offset_d(theta, theta_c, p, ecc, w)
    # a contact exists only if the companion is on the star's disc at conjunction
    d_c = sky_separation_rstar(theta_c - w, a, inc, ecc, w)
    out[..., 0][~(d_c < 1.0 + k)] = np.nan
    out[..., 3][~(d_c < 1.0 + k)] = np.nan
    out[..., 1][~(d_c < 1.0 - k)] = np.nan
    out[..., 2][~(d_c < 1.0 - k)] = np.nan
    return out


def rv_window_offsets_d(period_d, e, omega_rad, fraction_k, maximum=True):
    """(start, end) in days relative to the RV extremum where v is within ``fraction_k`` x K of it.

    ``fraction_k`` in (0, 1]: |v - v_extremum| <= f K, i.e. |omega + nu - theta_x| <= acos(1 - f)
    with theta_x = 0 (maximum) or pi (minimum). Broadcast shapes. Worked value: e = 0, f = 0.1
    gives a half-width of acos(0.9) / 2 pi = 0.0718 of the period.
    """
    p, ecc, w, f = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (period_d, e, omega_rad, fraction_k)))
    half = np.arccos(np.clip(1.0 - f, -1.0, 1.0))
    theta_x = np.zeros(p.shape) if maximum else np.full(p.shape, np.pi)
    return (_time_offset_d(theta_x - half, theta_x, p, ecc, w),
            _time_offset_d(theta_x + half, theta_x, p, ecc, w))


#: Part of the largest |dv/dt| that marks the RV swing around periastron (common practice of our
#: own: the hours where the curve changes fastest; no single source).
SWING_LEVEL = 0.5
_SWING_SAMPLES = 721
#: Orbits evaluated at once (bounds the (orbits, samples) grid: 4 MB per array).
_SWING_CHUNK = 700


def rv_swing_offsets_d(period_d, e, omega_rad, level=SWING_LEVEL):
    """(start, end) in days relative to periastron of the RV swing: where |dv/dt| >= level x max.

    |dv/dt| = K |sin(nu + omega)| dnu/dt, dnu/dt = n (1 + e cos nu)^2 / (1 - e^2)^1.5. Evaluated on
    a grid of true anomaly (0.5 deg steps, which crowds the samples in time near periastron,
    where the swing of an eccentric orbit is); the swing is the run of samples above the level
    that holds the largest rate, its ends turned into times through the mean anomaly. Shapes (n,).
    The edges of a swing are soft by nature; no search refines them.
    """
    p = np.atleast_1d(np.asarray(period_d, float))
    ecc = np.atleast_1d(np.asarray(e, float))
    w = np.atleast_1d(np.asarray(omega_rad, float))
    if p.size > _SWING_CHUNK:  # a survey's orbits, a slice at a time
        parts = [rv_swing_offsets_d(p[k:k + _SWING_CHUNK], ecc[k:k + _SWING_CHUNK], w[k:k + _SWING_CHUNK], level)
                 for k in range(0, p.size, _SWING_CHUNK)]
        return np.concatenate([lo for lo, _ in parts]), np.concatenate([hi for _, hi in parts])
    nu = np.linspace(-np.pi, np.pi, _SWING_SAMPLES)[None, :]
    rate = np.abs(np.sin(nu + w[:, None])) * (1.0 + ecc[:, None] * np.cos(nu)) ** 2
    above = rate >= level * rate.max(axis=1, keepdims=True)
    peak = np.argmax(rate, axis=1)
    idx = np.arange(nu.size)[None, :]
    # the run holding the peak: last sample below before it, first below after it
    below_before = np.where(~above & (idx < peak[:, None]), idx, -1).max(axis=1)
    below_after = np.where(~above & (idx > peak[:, None]), idx, nu.size).min(axis=1)
    nu_lo = nu[0, np.clip(below_before + 1, 0, nu.size - 1)]
    nu_hi = nu[0, np.clip(below_after - 1, 0, nu.size - 1)]
    m_lo, m_hi = kepler.mean_from_true(nu_lo, ecc), kepler.mean_from_true(nu_hi, ecc)
    m_lo = np.where(m_lo > np.pi, m_lo - kepler.TWO_PI, m_lo)
    m_hi = np.where(m_hi > np.pi, m_hi - kepler.TWO_PI, m_hi)
    return p * m_lo / kepler.TWO_PI, p * m_hi / kepler.TWO_PI
