"""Kepler's equation and the three anomalies, vectorised over numpy arrays.

All angles are radians and all functions keep the broadcast shape of their inputs. Conventions
(see DEVELOPERS.md): mean anomaly M = n (t - Tp), eccentric anomaly E, true anomaly nu measured
from periastron in the direction of motion; bound orbits only, 0 <= e < 1.
"""

from __future__ import annotations

import numpy as np

from ..errors import ConvergenceError, PeriplanError

TWO_PI = 2.0 * np.pi

#: Residual |E - e sin E - M| (radians) promised for every element, whatever the size of M.
RESIDUAL_TOL_RAD = 1e-12
#: Residual promised for |M| <= 2 pi, where the turns of 2 pi add no rounding of their own
#: (beyond it the rounding of M itself, a few ulp(M), sets the floor: 1e-14 rad at |M| ~ 10).
REDUCED_RESIDUAL_TOL_RAD = 1e-14
#: Internal stopping threshold on [-pi, pi]: about three times the rounding of evaluating the
#: residual itself near E = pi (a few ulp(pi), 1.3e-15 rad), and a margin below the promise above
#: for the rounding of adding the turns back.
_STOP_TOL_RAD = 4e-15
#: Upper bound on iterations of the fallback loop; the elements that reach it start from
#: Markley's value and need one or two passes, so reaching this is a bug.
MAX_ITERATIONS = 50
#: Elements solved per pass of the main path: a few arrays of this length stay in the core's
#: cache (bench/bench_kepler.py measures the effect; 8192 float64 is 64 KiB an array).
CHUNK = 8192
#: Largest Markley correction for which the sine and cosine of the result are taken by angle
#: addition with Taylor series of the correction (truncation below 1e-17 rad); larger
#: corrections go to the fallback loop, which calls sin and cos.
_TAYLOR_MAX_RAD = 2e-3


def _check_eccentricity(e: np.ndarray) -> None:
    bad = ~((e >= 0.0) & (e < 1.0))
    if np.any(bad):
        raise PeriplanError(
            f"eccentricity must satisfy 0 <= e < 1 (bound orbit); got {e[bad].ravel()[:5]}"
        )


def wrap_angle(angle_rad):
    """Angle reduced to [0, 2 pi), same shape as the input."""
    angle_rad = np.asarray(angle_rad, dtype=float)
    out = angle_rad - TWO_PI * np.floor(angle_rad / TWO_PI)
    return np.where(out >= TWO_PI, 0.0, out)  # x just below a multiple of 2 pi can round up


def solve_kepler(mean_anomaly_rad, e):
    """Eccentric anomaly E (radians) solving Kepler's equation M = E - e sin E.

    Parameters
    ----------
    mean_anomaly_rad : array_like
        Mean anomaly M in radians, any value (it is reduced modulo 2 pi internally and the
        returned E carries the same whole number of turns as M).
    e : array_like
        Eccentricity, 0 <= e < 1, broadcastable against ``mean_anomaly_rad``.

    Returns
    -------
    numpy.ndarray
        E in radians, of the broadcast shape of the inputs, with
        ``abs(E - e sin E - M) <= RESIDUAL_TOL_RAD`` for every element and
        ``<= REDUCED_RESIDUAL_TOL_RAD`` where ``abs(M) <= 2 pi``.

    Notes
    -----
    M is reduced to [-pi, pi) and solved for |M| (E is odd in M). The starting value is the
    non-iterative cubic of Markley (1995, *Celestial Mechanics and Dynamical Astronomy* 63, 101,
    eqs. 20-24 as recalled: from memory, checked by the residual of every element), followed by
    his fifth-order correction, which leaves a residual near the rounding level for all e < 1.
    The residual of the result is then evaluated with the sine of E by angle addition (Taylor
    series of the small correction, so no second call of sin), and every element above
    ``_STOP_TOL_RAD`` (or with a correction too large for the series) goes to a bounded
    fallback loop: the third-order Danby-Burkardt correction (Danby, *Fundamentals of Celestial
    Mechanics*, 2nd ed. 1988, sec. 6.6) on the unconverged elements only, which raises
    :class:`ConvergenceError` if any element is still unsolved after ``MAX_ITERATIONS``. The main
    path runs on slices of :data:`CHUNK` elements so that its temporaries stay in cache.

    Worked value (Meeus, *Astronomical Algorithms*, 2nd ed. 1998, Example 30.b):
    e = 0.1, M = 5 deg gives E = 5.554589254 deg.
    """
    m = np.asarray(mean_anomaly_rad, dtype=float)
    e = np.asarray(e, dtype=float)
    m, e = np.broadcast_arrays(m, e)
    _check_eccentricity(e)
    shape = m.shape
    m = np.ascontiguousarray(m).ravel()
    e = np.ascontiguousarray(e).ravel()
    out = np.empty_like(m)
    unsolved = []
    for start in range(0, m.size, CHUNK):
        part = slice(start, start + CHUNK)
        turns = np.floor((m[part] + np.pi) * (1.0 / TWO_PI))
        mr = m[part] - turns * TWO_PI  # in [-pi, pi)
        ecc_anom, residual = _markley(mr, e[part])
        todo = np.flatnonzero(~(np.abs(residual) <= _STOP_TOL_RAD))
        if todo.size:
            ecc_anom[todo] = _refine(mr[todo], e[part][todo])
            bad = np.isnan(ecc_anom[todo])
            unsolved.append(start + todo[bad])
        out[part] = ecc_anom + turns * TWO_PI
    if unsolved and sum(u.size for u in unsolved):
        idx = np.concatenate(unsolved)
        mask = np.zeros(m.size, bool)
        mask[idx] = True
        raise ConvergenceError(
            f"Kepler's equation did not converge for {idx.size} element(s), e.g. "
            f"M={m[idx[0]]!r} rad, e={e[idx[0]]!r}",
            mask.reshape(shape),
        )
    return out.reshape(shape)


_F32 = np.float32
_ALPHA0 = _F32(3.0 * np.pi**2 / (np.pi**2 - 6.0))
_ALPHA1 = _F32(1.6 * np.pi / (np.pi**2 - 6.0))


def _markley_start(m, e):
    """Markley's cubic starting value E1 for M = ``m`` in [0, pi], in float32.

    Its own error (up to 5e-4 rad of residual) is far above float32's rounding (6e-8 relative),
    so single precision costs nothing in accuracy and halves the memory traffic.
    """
    f1 = _F32(1.0)
    m = m.astype(_F32)
    e = e.astype(_F32)
    one_e = f1 - e
    alpha = _ALPHA0 + _ALPHA1 * (_F32(np.pi) - m) / (f1 + e)
    d = _F32(3.0) * one_e + alpha * e
    ad = alpha * d
    m2 = m * m
    q = _F32(2.0) * ad * one_e - m2
    r = (_F32(3.0) * ad * (d - one_e) + m2) * m  # 3 alpha d (d - 1 + e) M + M^3
    w = np.cbrt(np.abs(r) + np.sqrt(q * q * q + r * r))
    w *= w
    return ((_F32(2.0) * r * w / (w * w + w * q + q * q) + m) / d).astype(float)


def _markley(mr, e):
    """(E, residual) for M in [-pi, pi): Markley's starter and fifth-order correction.

    The residual is NaN where the correction is too large for the angle-addition check.
    """
    m = np.abs(mr)
    e1 = _markley_start(m, e)
    sin1 = np.sin(e1)
    cos1 = np.cos(e1)
    f2 = e * sin1  # e sin E1
    f3 = e * cos1  # e cos E1
    f0 = e1 - f2 - m
    f1 = 1.0 - f3
    d3 = -f0 / (f1 - 0.5 * f0 * f2 / f1)
    d4 = -f0 / (f1 + (0.5 * f2 + f3 * d3 / 6.0) * d3)
    d5 = -f0 / (f1 + (0.5 * f2 + (f3 / 6.0 - f2 * d4 / 24.0) * d4) * d4)
    big_e = e1 + d5
    # sin(E1 + d5) by angle addition, Taylor series of sin d5 and cos d5 (|d5| <= _TAYLOR_MAX_RAD)
    dd = d5 * d5
    sin_d = d5 - d5 * dd * (1.0 / 6.0 - dd / 120.0)
    cos_d = 1.0 - dd * (0.5 - dd / 24.0)
    res = big_e - e * (sin1 * cos_d + cos1 * sin_d) - m
    res[np.abs(d5) > _TAYLOR_MAX_RAD] = np.nan
    return np.copysign(big_e, mr), res


def _refine(mr, e):
    """Fallback for the few elements the main path leaves: E for M = ``mr`` in [-pi, pi).

    Starts again from Danby's E0 = M + 0.85 e sgn(sin M), which converges for every e < 1, and
    applies the Danby-Burkardt correction to the elements not yet converged. Elements still
    unsolved after ``MAX_ITERATIONS`` passes come back as NaN (the caller raises).
    """
    big_e = mr + 0.85 * e * np.sign(np.sin(mr))
    todo = np.arange(mr.size)
    residual = big_e - e * np.sin(big_e) - mr
    for _ in range(MAX_ITERATIONS):
        keep = np.abs(residual) > _STOP_TOL_RAD
        todo, residual = todo[keep], residual[keep]
        if todo.size == 0:
            return big_e
        x, ee, f = big_e[todo], e[todo], residual
        es = ee * np.sin(x)
        ec = ee * np.cos(x)
        f1 = 1.0 - ec
        d1 = -f / f1
        d2 = -f / (f1 + 0.5 * d1 * es)
        d3 = -f / (f1 + 0.5 * d2 * es + d2 * d2 * ec / 6.0)
        x = x + d3
        big_e[todo] = x
        residual = x - ee * np.sin(x) - mr[todo]
    big_e[todo[np.abs(residual) > _STOP_TOL_RAD]] = np.nan
    return big_e


def true_from_eccentric(ecc_anom_rad, e):
    """True anomaly nu (radians, same turn as E) from the eccentric anomaly.

    Half-angle form nu = 2 atan2(sqrt(1 + e) sin(E/2), sqrt(1 - e) cos(E/2)), stable as e -> 1.
    Returns an array of the broadcast shape; for E in (-pi, pi] nu lies in (-pi, pi].
    """
    ecc_anom_rad = np.asarray(ecc_anom_rad, dtype=float)
    e = np.asarray(e, dtype=float)
    half = 0.5 * ecc_anom_rad
    turns = np.round(ecc_anom_rad / TWO_PI)
    half = half - turns * np.pi
    nu = 2.0 * np.arctan2(np.sqrt(1.0 + e) * np.sin(half), np.sqrt(1.0 - e) * np.cos(half))
    return nu + turns * TWO_PI


def eccentric_from_true(true_anom_rad, e):
    """Eccentric anomaly E (radians, same turn as nu) from the true anomaly.

    Inverse half-angle form E = 2 atan2(sqrt(1 - e) sin(nu/2), sqrt(1 + e) cos(nu/2)).
    """
    true_anom_rad = np.asarray(true_anom_rad, dtype=float)
    e = np.asarray(e, dtype=float)
    turns = np.round(true_anom_rad / TWO_PI)
    half = 0.5 * true_anom_rad - turns * np.pi
    ecc = 2.0 * np.arctan2(np.sqrt(1.0 - e) * np.sin(half), np.sqrt(1.0 + e) * np.cos(half))
    return ecc + turns * TWO_PI


def mean_from_eccentric(ecc_anom_rad, e):
    """Mean anomaly M = E - e sin E (radians), broadcast shape of the inputs."""
    ecc_anom_rad = np.asarray(ecc_anom_rad, dtype=float)
    return ecc_anom_rad - np.asarray(e, dtype=float) * np.sin(ecc_anom_rad)


def true_from_mean(mean_anomaly_rad, e):
    """True anomaly (radians) at mean anomaly M: solve Kepler's equation, then the half-angle form."""
    return true_from_eccentric(solve_kepler(mean_anomaly_rad, e), e)


def mean_from_true(true_anom_rad, e):
    """Mean anomaly (radians, same turn as nu) at true anomaly nu, through E."""
    return mean_from_eccentric(eccentric_from_true(true_anom_rad, e), e)


def period_from_kepler_third_law(semi_major_axis, total_mass):
    """Orbital period P = 2 pi sqrt(a^3 / (G (M1 + M2))) as an astropy Quantity in days.

    ``semi_major_axis`` and ``total_mass`` are astropy Quantities (any length and mass units);
    the gravitational constant is astropy's CODATA value. Worked value: a = 1 au around 1 solar
    mass (plus an Earth mass) gives one sidereal year, 365.256 d.
    """
    import astropy.units as u
    from astropy.constants import G

    mean_motion = np.sqrt(G * total_mass / semi_major_axis**3)  # rad / time
    return (TWO_PI / mean_motion).to(u.day)


def mean_motion_rad_per_day(period_d):
    """Mean motion n = 2 pi / P in radians per day, for ``period_d`` in days."""
    return TWO_PI / np.asarray(period_d, dtype=float)
