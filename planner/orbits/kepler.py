"""Kepler's equation and the three anomalies, vectorised over numpy arrays.

All angles are radians and all functions keep the broadcast shape of their inputs. Conventions
(see DEVELOPERS.md): mean anomaly M = n (t - Tp), eccentric anomaly E, true anomaly nu measured
from periastron in the direction of motion; bound orbits only, 0 <= e < 1.
"""

from __future__ import annotations

import numpy as np

from ..errors import ConvergenceError, PeriplanError

TWO_PI = 2.0 * np.pi

#: Residual |E - e sin E - M| (radians) at which an element counts as solved.
RESIDUAL_TOL_RAD = 1e-12
#: Internal stopping threshold, a quarter of the promise above, so that adding back whole turns
#: of 2 pi (a rounding of a few 1e-15 rad) cannot push a solved element past RESIDUAL_TOL_RAD.
_STOP_TOL_RAD = RESIDUAL_TOL_RAD / 4
#: Upper bound on iterations; the third-order update below needs at most 6 for e <= 0.999999 from
#: the starting value used (measured in bench/bench_kepler.py), so reaching this is a bug.
MAX_ITERATIONS = 50


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
        ``abs(E - e sin E - M) <= RESIDUAL_TOL_RAD`` for every element.

    Notes
    -----
    Starting value E0 = M + 0.85 e sign(sin M) (Danby 1987, *Celestial Mechanics* 40, 303), then
    the third-order Householder (Danby-Burkardt) correction of Danby, *Fundamentals of Celestial
    Mechanics*, 2nd ed. (1988), sec. 6.6, applied only to the elements not yet converged: a
    bounded loop that raises :class:`ConvergenceError` if any element is still unsolved after
    ``MAX_ITERATIONS``. M is reduced to [-pi, pi) first, where the starting value is good for all
    e < 1, and the turns are added back at the end.

    Worked value (Meeus, *Astronomical Algorithms*, 2nd ed. 1998, Example 30.b):
    e = 0.1, M = 5 deg gives E = 5.554589254 deg.
    """
    m = np.asarray(mean_anomaly_rad, dtype=float)
    e = np.asarray(e, dtype=float)
    m, e = np.broadcast_arrays(m, e)
    _check_eccentricity(e)
    shape = m.shape
    m = m.ravel()
    e = e.ravel()
    turns = np.floor((m + np.pi) / TWO_PI)
    mr = m - turns * TWO_PI  # in [-pi, pi)

    ecc_anom = mr + 0.85 * e * np.sign(np.sin(mr))
    residual = ecc_anom - e * np.sin(ecc_anom) - mr
    todo = np.flatnonzero(np.abs(residual) > _STOP_TOL_RAD)
    for _ in range(MAX_ITERATIONS):
        if todo.size == 0:
            break
        big_e, ee, f = ecc_anom[todo], e[todo], residual[todo]
        es = ee * np.sin(big_e)
        ec = ee * np.cos(big_e)
        f1 = 1.0 - ec
        d1 = -f / f1
        d2 = -f / (f1 + 0.5 * d1 * es)
        d3 = -f / (f1 + 0.5 * d2 * es + d2 * d2 * ec / 6.0)
        big_e = big_e + d3
        ecc_anom[todo] = big_e
        f = big_e - ee * np.sin(big_e) - mr[todo]
        residual[todo] = f
        todo = todo[np.abs(f) > _STOP_TOL_RAD]
    if todo.size:
        mask = np.zeros(m.size, bool)
        mask[todo] = True
        raise ConvergenceError(
            f"Kepler's equation did not converge for {todo.size} element(s), e.g. "
            f"M={mr[todo[0]]!r} rad, e={e[todo[0]]!r}",
            mask.reshape(shape),
        )
    return (ecc_anom + turns * TWO_PI).reshape(shape)


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
