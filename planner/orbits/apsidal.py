"""Apsidal motion: the anomalistic period, continuous event phases and event times as omega turns.

Conventions (DEVELOPERS.md, "Conventions"): omega is the primary's argument of periastron, the
events sit at fixed true anomalies that depend on omega (primary conjunction nu = pi/2 - omega,
and so on), and periastron and apastron are at mean anomaly 0 and pi. With apsidal motion the
line of apsides turns at a constant rate,

    omega(t) = omega_0 + omega_dot (t - T_epoch),

periastron recurs with the anomalistic period P_a and a conjunction (a fixed direction in space)
recurs, on average, with the sidereal period P_s; the two are tied by

    1 / P_s = 1 / P_a + omega_dot / (2 pi)      (omega_dot in rad/day),

i.e. P_s = P_a (1 - omega_dot_per_cycle / 360 deg) (Gimenez & Garcia-Pelayo 1983, Ap&SS 92, 203).
Times are days (BJD_TDB when absolute), angles radians, rates rad/day.
"""

from __future__ import annotations

import numpy as np

from . import kepler
from .geometry import ORBIT_EVENTS

TWO_PI = kepler.TWO_PI
#: Julian year in days, the year of the ``omega_dot_deg_yr`` column.
JULIAN_YEAR_D = 365.25
#: True anomalies of the six events are c_k - s_k omega (see geometry.event_true_anomalies).
_NU_CONST = np.array([0.0, np.pi, np.pi / 2, 3 * np.pi / 2, 0.0, np.pi])
_NU_SIGN = np.array([0.0, 0.0, 1.0, 1.0, 1.0, 1.0])
#: Fixed-point passes for omega at the event time: each pass shrinks the error by about
#: omega_dot P_a (1 + e)^1.5 / (1 - e)^0.5 / 2 pi, below 1e-3 for every known binary (three passes
#: then reach the float64 floor); the loop stops when no time moves by more than 1e-10 d.
_OMEGA_MAX_PASSES = 30
_OMEGA_TOL_D = 1e-10


def anomalistic_period_d(period_d, omega_dot_rad_d, period_kind):
    """Anomalistic period (days) from the catalogue period and its kind (``sidereal``/``anomalistic``).

    Arrays broadcast; P_a = P_s / (1 - omega_dot P_s / 2 pi) for a sidereal period.
    """
    period_d = np.asarray(period_d, float)
    sidereal = np.asarray(period_kind) != "anomalistic"
    pa = period_d / (1.0 - np.asarray(omega_dot_rad_d, float) * period_d / TWO_PI)
    return np.where(sidereal, pa, period_d)


def continuous_phase(k, e, omega_rad):
    """Mean-anomaly phase (orbits after periastron) of event ``k`` (index in ORBIT_EVENTS), unwrapped.

    Unlike :func:`planner.orbits.geometry.event_phases` the result is not reduced to [0, 1): it is
    a continuous, monotonic function of omega (each whole turn of the true anomaly adds a whole
    orbit), so that an event's phase can drift across periastron as omega turns without a jump.
    ``k``, ``e`` and ``omega_rad`` broadcast.
    """
    k = np.asarray(k, dtype=np.int64)
    nu = _NU_CONST[k] - _NU_SIGN[k] * np.asarray(omega_rad, float)
    turns = np.floor((nu + np.pi) / TWO_PI)
    nu_r = nu - TWO_PI * turns  # in [-pi, pi)
    m_r = kepler.mean_from_true(nu_r, e)
    m_r = np.where(m_r >= np.pi, m_r - TWO_PI, m_r)  # mean_from_true may wrap to [0, 2 pi)
    return turns + m_r / TWO_PI


def event_times(k, cycle, tp_ref, pa_d, e, omega_ref_rad, t_omega_ref, omega_dot_rad_d):
    """Time (days) of event ``k`` in anomalistic cycle ``cycle`` after the periastron ``tp_ref``.

    t = Tp_ref + P_a (cycle + phi_k(omega(t))), with omega(t) = omega_ref + omega_dot (t -
    t_omega_ref) solved by fixed-point passes (omega at the event itself, not at periastron).
    ``phi_k`` is :func:`continuous_phase` minus its whole turns at ``omega_ref``, so cycle 0 is the
    first occurrence at or after ``tp_ref`` when omega_dot = 0. All arguments broadcast.
    """
    base = np.floor(continuous_phase(k, e, omega_ref_rad))
    t = tp_ref + pa_d * (cycle + continuous_phase(k, e, omega_ref_rad) - base)
    for _ in range(_OMEGA_MAX_PASSES):
        w = omega_ref_rad + omega_dot_rad_d * (t - t_omega_ref)
        t_new = tp_ref + pa_d * (cycle + continuous_phase(k, e, w) - base)
        done = np.all(np.abs(t_new - t) <= _OMEGA_TOL_D)
        t = t_new
        if done:
            break
    return t


def periastron_before(t_epoch, k_epoch, pa_d, e, omega_rad):
    """Periastron time (days) preceding an epoch of event ``k_epoch`` at ``t_epoch`` (omega at it)."""
    phase = continuous_phase(k_epoch, e, omega_rad)
    return t_epoch - pa_d * (phase - np.floor(phase))


def omega_dot_rad_d(value, unit, period_d):
    """Apsidal rate in rad/day from ``value`` in ``deg_cycle`` (per catalogue period) or ``deg_yr``."""
    value = np.asarray(value, float)
    per_day = np.where(np.asarray(unit) == "deg_yr", value / JULIAN_YEAR_D, value / np.asarray(period_d, float))
    return np.radians(per_day)


EVENT_INDEX = {name: i for i, name in enumerate(ORBIT_EVENTS)}
