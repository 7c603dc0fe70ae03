"""Linearised (delta-method) spread of the event phase offsets under the e and omega errors.

The phase offset d_k of event k after the catalogue epoch (see :mod:`planner.orbits.events`) is
a smooth function of e and omega. For small, independent Gaussian errors its mean square
deviation is, to first order,

    var(d_k) = (dd_k/de)^2 sigma_e^2 + (dd_k/domega)^2 sigma_omega^2,

with the partial derivatives in closed form from the mean anomaly at a fixed true anomaly,
M(nu, e) (both in radians, phase = M / 2 pi):

    dM/dnu = (1 - e^2)^(3/2) / (1 + e cos nu)^2
    dM/de  = -sin nu sqrt(1 - e^2) (2 + e cos nu) / (1 + e cos nu)^2

(differentiate tan(E/2) = sqrt((1 - e)/(1 + e)) tan(nu/2) and M = E - e sin E; e.g. Murray &
Dermott, *Solar System Dynamics*, 1999, sec. 2.4 for the relations between the anomalies). Each
event's true anomaly is nu_k = c_k - s_k omega (s_k = 1 for the conjunctions and the RV extrema,
0 for the apsides, whose phases 0 and 1/2 do not move).

Switch test (:func:`needs_monte_carlo`). The linear value is used only where it is trustworthy;
elsewhere the caller keeps its Monte Carlo. With z ~ N(0, 1) and one element,
d(x + sigma z) - d(x) = a z + b z^2 + g z^3 + ..., where a = d' sigma (the linear term),
b = d'' sigma^2 / 2 and g = d''' sigma^3 / 6. The mean square deviation is
a^2 + 3 b^2 + 6 a g + 15 g^2 + ...; b and g are measured by finite differences at +-1 sigma
(b from the second difference, g from the central difference minus the analytic a) and the
mixed term from the four corners. A target goes to the Monte Carlo when, for any event, the
sigma from these terms differs from the linear sigma by more than :data:`SWITCH_REL_TOL`, when
the linear sigma exceeds :data:`SWITCH_MAX_SIGMA_ORBITS` (the offset wraps at half an orbit),
or when e lies within :data:`SWITCH_E_SIGMAS` e-errors of 0 or 1 (the Monte Carlo reflects e at
0 and stops it below 1, which no Taylor series follows).

Between the two sits a Gauss-Hermite quadrature of the same mean square (a 7 x 7 product rule,
49 evaluations instead of the Monte Carlo's 500 draws): used for the targets whose higher-order
terms fail the test but that are neither near e = 0 or 1 nor wider than
:data:`QUADRATURE_MAX_SIGMA_ORBITS`, when the rules of order 5 and 7 agree to
:data:`SWITCH_REL_TOL` on every event. Only the rest go to the Monte Carlo. tests/test_timing.py
checks every value kept (linear or quadrature) against a brute-force Monte Carlo and shows cases
the switch sends back.
"""

from __future__ import annotations

import numpy as np

from .geometry import ORBIT_EVENTS, event_phases, event_true_anomalies

#: Largest relative difference between the linear sigma and the sigma with the second- and
#: third-order terms for which the linear value is kept: 2 %, below the 3 % sampling error of the
#: 500-draw Monte Carlo it replaces (tests/test_timing.py compares the linear values kept with a
#: brute-force draw).
SWITCH_REL_TOL = 0.02
#: Largest linear sigma of a phase offset (orbits) for which the linear value is kept: the
#: deviation is taken modulo one orbit in [-0.5, 0.5), so a spread near that is no longer Gaussian.
SWITCH_MAX_SIGMA_ORBITS = 0.05
#: Largest sigma of a phase offset (orbits) for the Gauss-Hermite value: the outer nodes of the
#: order-7 rule sit at 2.9 sigma, which keeps every node's deviation clear of the half-orbit wrap.
QUADRATURE_MAX_SIGMA_ORBITS = 0.1
#: e must lie more than this many e-errors from 0 and from 1 for the linear value.
SWITCH_E_SIGMAS = 4.0

_TWO_PI = 2.0 * np.pi
#: d nu_k / d omega of the six events (apsides fixed, the others at c_k - omega).
_NU_OMEGA_SIGN = np.array([0.0, 0.0, -1.0, -1.0, -1.0, -1.0])
_PRIMARY = ORBIT_EVENTS.index("primary_conjunction")


def phase_partials(e, omega_rad):
    """(dphi/de, dphi/domega): partial derivatives of the six event phases, each shape (n, 6).

    Phases are in orbits (mean anomaly / 2 pi) after periastron, omega in radians, e dimensionless;
    columns in :data:`~planner.orbits.geometry.ORBIT_EVENTS` order.
    """
    e = np.asarray(e, float)[:, None]
    nu = event_true_anomalies(np.asarray(omega_rad, float))
    cos_nu, sin_nu = np.cos(nu), np.sin(nu)
    one_e2 = 1.0 - e * e
    denom = (1.0 + e * cos_nu) ** 2
    dm_dnu = one_e2 ** 1.5 / denom
    dm_de = -sin_nu * np.sqrt(one_e2) * (2.0 + e * cos_nu) / denom
    dm_de[:, :2] = 0.0  # periastron and apastron sit at M = 0 and pi for every e
    return dm_de / _TWO_PI, dm_dnu * _NU_OMEGA_SIGN / _TWO_PI


def _offset_partials(e, omega_rad, epoch_kind):
    """Partials of the offsets d_k = phi_k - phi_ref: phi_ref is the primary conjunction for 'tc'."""
    de, dw = phase_partials(e, omega_rad)
    is_tc = (np.asarray(epoch_kind) == "tc")[:, None]
    de = de - np.where(is_tc, de[:, [_PRIMARY]], 0.0)
    dw = dw - np.where(is_tc, dw[:, [_PRIMARY]], 0.0)
    return de, dw


def _offsets(e, omega_rad, epoch_kind):
    ph = event_phases(e, omega_rad)
    ref = np.where(np.asarray(epoch_kind) == "tc", ph[:, _PRIMARY], 0.0)
    return ph - ref[:, None]


def _wrapped(x):
    return x - np.rint(x)


def delta_offset_variance(e, e_err, omega_rad, omega_err_rad, epoch_kind):
    """(var, needs_mc): variance (orbits^2) of the six offsets without a Monte Carlo, and the switch.

    All inputs shape (n,): e and its 1-sigma error, omega and its error in radians, epoch_kind
    ('tp' or 'tc'). ``var`` has shape (n, 6) (:data:`ORBIT_EVENTS` order): the linearised value,
    or for targets whose higher-order terms fail the switch test (but are not near e = 0 or 1 and
    not wider than :data:`SWITCH_MAX_SIGMA_ORBITS`) the Gauss-Hermite value of
    :func:`quadrature_offset_variance` when its orders 5 and 7 agree to :data:`SWITCH_REL_TOL`.
    ``needs_mc`` (n,) is True where neither is good enough (``var`` is then the linear value).
    """
    e = np.asarray(e, float)
    e_err = np.asarray(e_err, float)
    w = np.asarray(omega_rad, float)
    w_err = np.asarray(omega_err_rad, float)
    kind = np.asarray(epoch_kind)
    de, dw = _offset_partials(e, w, kind)
    a_e = de * e_err[:, None]
    a_w = dw * w_err[:, None]
    var = a_e * a_e + a_w * a_w
    hard, soft = _switch(e, e_err, w, w_err, kind, a_e, a_w)
    quad = np.flatnonzero(soft & ~hard)
    needs_mc = hard | soft
    if quad.size:
        args = (e[quad], e_err[quad], w[quad], w_err[quad], kind[quad])
        low, high = quadrature_offset_variance(*args, order=5), quadrature_offset_variance(*args, order=7)
        s_low, s_high = np.sqrt(low), np.sqrt(high)
        agree = np.all(np.abs(s_high - s_low) <= SWITCH_REL_TOL * s_high, axis=1)
        var[quad[agree]] = high[agree]
        needs_mc[quad[agree]] = False
    return var, needs_mc


def quadrature_offset_variance(e, e_err, omega_rad, omega_err_rad, epoch_kind, order=7):
    """Mean square deviation (orbits^2, shape (n, 6)) of the offsets by Gauss-Hermite quadrature.

    The expectation over independent Gaussian e and omega errors of the squared deviation from
    the nominal offsets, on an ``order`` x ``order`` product rule (numpy's probabilists'
    Gauss-Hermite nodes), with e reflected at 0 and kept below 1 and each deviation taken modulo
    one orbit, as the Monte Carlo draws do. Exact for deviations polynomial in the two errors up
    to degree 2 ``order`` - 1.
    """
    from numpy.polynomial.hermite_e import hermegauss

    x, wt = hermegauss(order)
    wt = wt / np.sqrt(2.0 * np.pi)
    n = e.size
    xe, xw = np.meshgrid(x, x, indexing="ij")
    weight = np.outer(wt, wt).ravel()  # (order^2,)
    es = np.minimum(np.abs(e[:, None] + e_err[:, None] * xe.ravel()[None, :]), 1.0 - 1e-6)
    ws = omega_rad[:, None] + omega_err_rad[:, None] * xw.ravel()[None, :]
    kinds = np.repeat(np.asarray(epoch_kind), weight.size)
    d = _offsets(es.ravel(), ws.ravel(), kinds).reshape(n, weight.size, -1)
    dev = _wrapped(d - _offsets(e, omega_rad, epoch_kind)[:, None, :])
    return np.einsum("k,nkj->nj", weight, dev * dev)


def needs_monte_carlo(e, e_err, omega_rad, omega_err_rad, epoch_kind, a_e, a_w):
    """(n,) True where the linear variance is not trusted (see the module docstring).

    ``a_e``, ``a_w`` (n, 6) are the linear terms (partial derivative times sigma) of each offset.
    """
    hard, soft = _switch(e, e_err, omega_rad, omega_err_rad, epoch_kind, a_e, a_w)
    return hard | soft


def _switch(e, e_err, omega_rad, omega_err_rad, epoch_kind, a_e, a_w):
    """(hard, soft): near e = 0 or 1 or too wide for any expansion; higher-order terms too large."""
    e_hi = e + e_err
    e_lo = e - e_err
    near_edge = (e - SWITCH_E_SIGMAS * e_err <= 0.0) | (e + SWITCH_E_SIGMAS * e_err >= 1.0)
    # evaluate the offsets at the nine points (e +- sigma_e, omega +- sigma_omega); e kept in the
    # open interval for the targets already sent to the Monte Carlo by near_edge
    e_hi = np.where(near_edge, e, e_hi)
    e_lo = np.where(near_edge, e, e_lo)
    w, w_err = omega_rad, omega_err_rad
    points = [(e, w), (e_hi, w), (e_lo, w), (e, w + w_err), (e, w - w_err),
              (e_hi, w + w_err), (e_hi, w - w_err), (e_lo, w + w_err), (e_lo, w - w_err)]
    n = e.size
    stacked = _offsets(np.concatenate([p[0] for p in points]), np.concatenate([p[1] for p in points]),
                       np.tile(np.asarray(epoch_kind), len(points)))
    d0, e_p, e_m, w_p, w_m, pp, pm, mp, mm = (stacked[i * n:(i + 1) * n] for i in range(len(points)))
    b_e = 0.5 * (_wrapped(e_p - d0) + _wrapped(e_m - d0))
    b_w = 0.5 * (_wrapped(w_p - d0) + _wrapped(w_m - d0))
    g_e = 0.5 * _wrapped(e_p - e_m) - a_e
    g_w = 0.5 * _wrapped(w_p - w_m) - a_w
    c = 0.25 * (_wrapped(pp - d0) - _wrapped(pm - d0) - _wrapped(mp - d0) + _wrapped(mm - d0))
    lin = a_e * a_e + a_w * a_w
    higher = (lin + 3 * (b_e * b_e + b_w * b_w) + 2 * b_e * b_w + c * c
              + 6 * (a_e * g_e + a_w * g_w) + 15 * (g_e * g_e + g_w * g_w))
    sigma_lin = np.sqrt(lin)
    sigma_higher = np.sqrt(np.maximum(higher, 0.0))
    differs = np.abs(sigma_higher - sigma_lin) > SWITCH_REL_TOL * sigma_lin
    wide = np.maximum(sigma_lin, sigma_higher)
    return (near_edge | np.any(wide > QUADRATURE_MAX_SIGMA_ORBITS, axis=1),
            np.any(differs | (wide > SWITCH_MAX_SIGMA_ORBITS), axis=1))
