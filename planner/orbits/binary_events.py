"""Event times of targets with apsidal motion or two epochs, and the agreement of the two epochs.

:func:`planner.orbits.events.predict_events` hands these rows here; every other row keeps the
closed form T_ref + P (n + d_k). Here, for each target and event:

* the epoch used is the one nearest in phase to the event (``tc``, ``tp`` or ``tsec``; the row's
  first epoch on a tie). omega is the catalogue's omega at the first epoch; at the second it is
  omega + omega_dot (T2 - T1);
* times follow :func:`planner.orbits.apsidal.event_times`: periastrons every anomalistic period
  from the epoch's periastron, the event at its phase for omega at the event itself;
* the 1-sigma uncertainty is sigma_T(epoch)^2 + sigma_P^2 x^2 + P_a^2 var(d) + (dt/d omega_dot
  sigma_omega_dot)^2, x the orbits since the epoch. var(d) is the seeded Monte Carlo spread of the
  phase offset (draws in the catalogue's own shape parameters, see element_draws), conditioned on
  the other epoch: with two epochs the spread left once the measured interval between them is
  known, var(d) - cov(d, D)^2 / (var(D) + noise), D the interval's phase and noise its measurement
  variance (both epochs' sigma and the period's over the cycles between them), the Gaussian
  conditioning of the draws. The omega_dot term is a central difference of the whole computation.
"""

from __future__ import annotations

import numpy as np

from . import apsidal, element_draws, geometry

EPOCH_EVENT = {"tp": 0, "tc": 2, "tsec": 3}


def extended_mask(targets):
    """(n,) True for orbit rows with apsidal motion or a second epoch."""
    orbit = (targets["ephemeris"] == "orbit").to_numpy()
    return orbit & ((targets["omega_dot_deg_d"].to_numpy(float) != 0) | (targets["epoch2_kind"].to_numpy(str) != ""))


class _Rows:
    """The elements of the rows ``idx`` of the target table, engine units (radians, days)."""

    def __init__(self, targets, idx):
        def col(name, kind=float):
            return targets[name].to_numpy(kind)[idx]

        self.idx = idx
        self.names = targets["name"].to_numpy(object)[idx]
        self.p, self.p_err = col("period_d"), col("period_err_d")
        self.kind = col("period_kind", str)
        self.e, self.e_err = col("e"), col("e_err")
        self.w0, self.w_err = np.radians(col("omega_deg")), np.radians(col("omega_err_deg"))
        self.wdot, self.wdot_err = np.radians(col("omega_dot_deg_d")), np.radians(col("omega_dot_err_deg_d"))
        self.ta, self.sa = col("epoch_bjd_tdb"), col("epoch_err_d")
        self.ka = np.array([EPOCH_EVENT[k] for k in col("epoch_kind", str)])
        kind2 = col("epoch2_kind", str)
        self.two = kind2 != ""
        self.kb = np.array([EPOCH_EVENT.get(k, self_k) for k, self_k in zip(kind2, self.ka)])
        self.tb = np.where(self.two, col("epoch2_bjd_tdb"), self.ta)
        self.sb = np.where(self.two, col("epoch2_err_d"), self.sa)
        self.shape = (col("shape_kind", str),) + tuple(col(c) for c in ("shape_x", "shape_y", "shape_x_err",
                                                                         "shape_y_err"))

    def frames(self, wdot):
        """(P_a, Tp_A, Tp_B, omega_B) for the apsidal rate ``wdot`` (rad/day, per row)."""
        pa = apsidal.anomalistic_period_d(self.p, wdot, self.kind)
        tpa = apsidal.periastron_before(self.ta, self.ka, pa, self.e, self.w0)
        wb = self.w0 + wdot * (self.tb - self.ta)
        tpb = apsidal.periastron_before(self.tb, self.kb, pa, self.e, wb)
        return pa, tpa, tpb, wb


def _moments(rows: _Rows, n_samples, seed):
    """(var_A, var_B, var_D): phase-offset spreads (m, 6) from each epoch, conditioned on the other
    where there are two, and the spread of the interval's phase D (m,)."""
    m = len(rows.idx)
    z = element_draws.standard_normals(rows.names, seed, n_samples)
    es, ws = element_draws.shape_draws(z, rows.e, rows.e_err, rows.w0, rows.w_err, rows.shape)
    ph = geometry.event_phases(es, ws)  # (m, S, 6)
    nom = geometry.event_phases(rows.e, rows.w0)  # (m, 6)
    ar = np.arange(m)

    def dev(k):
        d = ph - ph[ar, :, k][..., None] - (nom - nom[ar, k][:, None])[:, None, :]
        return d - np.rint(d)

    dev_a, dev_b = dev(rows.ka), dev(rows.kb)
    d_int = dev_a[ar, :, rows.kb]  # phase of epoch B seen from epoch A, about nominal: (m, S)
    var_a, var_b = np.mean(dev_a**2, axis=1), np.mean(dev_b**2, axis=1)
    var_d = np.mean(d_int**2, axis=1)
    pa = apsidal.anomalistic_period_d(rows.p, rows.wdot, rows.kind)
    cycles = (rows.tb - rows.ta) / pa
    noise = (rows.sa**2 + rows.sb**2 + (rows.p_err * cycles) ** 2) / pa**2
    denom = np.where(rows.two, var_d + noise, 1.0)
    for var, d in ((var_a, dev_a), (var_b, dev_b)):
        cov = np.mean(d * d_int[:, :, None], axis=1)
        var -= np.where(rows.two[:, None], cov**2 / denom[:, None], 0.0)
        np.maximum(var, 0.0, out=var)
    return var_a, var_b, var_d


def _nearest_is_b(rows: _Rows):
    """(m, 6) True where epoch B is nearer in phase than epoch A to the event."""
    nom = geometry.event_phases(rows.e, rows.w0)
    ar = np.arange(len(rows.idx))

    def dist(k):
        d = np.abs(nom - nom[ar, k][:, None]) % 1.0
        return np.minimum(d, 1.0 - d)

    return rows.two[:, None] & (dist(rows.kb) < dist(rows.ka))


def _times(rows, frames, r, k, n, use_b):
    """Event times (days) of events k in anomalistic cycle n after the chosen epoch's periastron."""
    pa, tpa, tpb, wb = frames
    tp = np.where(use_b, tpb[r], tpa[r])
    w_ref = np.where(use_b, wb[r], rows.w0[r])
    t_ref = np.where(use_b, rows.tb[r], rows.ta[r])
    return apsidal.event_times(k, n, tp, pa[r], rows.e[r], w_ref, t_ref, rows.wdot[r])


def _wdot_sigma(rows, r, k, n, use_b):
    """1-sigma timing error (days) from the apsidal-rate error, central difference."""
    h = rows.wdot_err
    if not np.any(h > 0):
        return np.zeros(r.size)
    hi = _times(rows, rows.frames(rows.wdot + h), r, k, n, use_b)
    lo = _times(rows, rows.frames(rows.wdot - h), r, k, n, use_b)
    return 0.5 * np.abs(hi - lo)


def extended_events(targets, idx, want, start_bjd_tdb, end_bjd_tdb, pad_d, n_samples, seed):
    """(target_index, event_index, cycle, bjd_tdb, sigma_d) of the rows ``idx`` in the padded span.

    ``want`` is the (n, 7) event mask of predict_events, ``pad_d`` (n,) widens the span each side
    (for the light-time shift the caller adds afterwards). Times before the light time.
    """
    rows = _Rows(targets, idx)
    frames = rows.frames(rows.wdot)
    pa, tpa, tpb, _ = frames
    var_a, var_b, _ = _moments(rows, n_samples, seed)
    use_b_k = _nearest_is_b(rows)
    r, k = np.nonzero(want[idx, :6])
    use_b = use_b_k[r, k]
    tp = np.where(use_b, tpb[r], tpa[r])
    t_ref = np.where(use_b, rows.tb[r], rows.ta[r])
    pad = pad_d[idx][r]
    e = rows.e[r]
    reach = np.maximum(abs(start_bjd_tdb - t_ref), abs(end_bjd_tdb - t_ref))
    drift = np.abs(rows.wdot[r]) * reach * (1 + e) ** 1.5 / np.sqrt(1 - e) / (2 * np.pi)
    lo = np.floor((start_bjd_tdb - pad - tp) / pa[r] - drift) - 2
    hi = np.ceil((end_bjd_tdb + pad - tp) / pa[r] + drift) + 1
    count = (hi - lo + 1).astype(np.int64)
    rep = np.repeat(np.arange(r.size), count)
    n = lo[rep] + (np.arange(rep.size) - np.repeat(np.cumsum(count) - count, count))
    r, k, use_b = r[rep], k[rep], use_b[rep]
    t = _times(rows, frames, r, k, n, use_b)
    keep = (t >= start_bjd_tdb - pad_d[idx][r]) & (t < end_bjd_tdb + pad_d[idx][r])
    r, k, n, use_b, t = r[keep], k[keep], n[keep], use_b[keep], t[keep]

    nom = geometry.event_phases(rows.e, rows.w0)
    ka = rows.ka[r]
    n_a = n + np.where(use_b, np.rint((tpb[r] - tpa[r]) / pa[r]), 0.0)
    cycle = n_a - (nom[r, k] < nom[r, ka])
    t_ref = np.where(use_b, rows.tb[r], rows.ta[r])
    sigma_t = np.where(use_b, rows.sb[r], rows.sa[r])
    var_d = np.where(use_b, var_b[r, k], var_a[r, k])
    x = (t - t_ref) / pa[r]
    sigma = np.sqrt(sigma_t**2 + (rows.p_err[r] * x) ** 2 + pa[r] ** 2 * var_d
                    + _wdot_sigma(rows, r, k, n, use_b) ** 2)
    return idx[r], k, cycle.astype(np.int64), t, sigma


def epoch_offset(targets, n_samples=2000, seed=20261202):
    """((n,) T2 - T2 predicted from T1, (n,) its combined 1-sigma), days; NaN for rows with one epoch.

    The prediction carries epoch 1 to the nearest occurrence of epoch 2's event with the elements
    (apsidal motion included); the combined variance is sigma_1^2 + sigma_2^2 + (sigma_P n)^2 +
    P_a^2 var(D) + the omega_dot term, var(D) the unconditioned Monte Carlo spread of the phase
    between the two events. The offset is a difference of BJD_TDB instants, so it holds in the
    catalogue's own time system too (to far below a second).
    """
    offset, sigma = np.full(len(targets), np.nan), np.full(len(targets), np.nan)
    idx = np.flatnonzero((targets["epoch2_kind"].to_numpy(str) != "") & (targets["ephemeris"] == "orbit").to_numpy())
    if idx.size == 0:
        return offset, sigma
    rows = _Rows(targets, idx)
    frames = rows.frames(rows.wdot)
    pa, tpa = frames[0], frames[1]
    _, _, var_d = _moments(rows, n_samples, seed)
    r = np.arange(idx.size)
    nom = geometry.event_phases(rows.e, rows.w0)
    n0 = np.rint((rows.tb - tpa) / pa - nom[r, rows.kb])
    no_b = np.zeros(idx.size, bool)
    cands = np.stack([_times(rows, frames, r, rows.kb, n0 + j, no_b) for j in (-1, 0, 1)])
    best = np.argmin(np.abs(cands - rows.tb), axis=0)
    pred = cands[best, r]
    n_best = n0 + best - 1
    var = (rows.sa**2 + rows.sb**2 + (rows.p_err * (rows.tb - rows.ta) / pa) ** 2 + pa**2 * var_d
           + _wdot_sigma(rows, r, rows.kb, n_best, no_b) ** 2)
    offset[idx], sigma[idx] = rows.tb - pred, np.sqrt(var)
    return offset, sigma


def epoch_tension_sigma(targets, n_samples=2000, seed=20261202):
    """(n,) |T2 - T2 predicted from T1| over its combined 1-sigma (:func:`epoch_offset`), NaN for
    rows with one epoch."""
    offset, sigma = epoch_offset(targets, n_samples, seed)
    return np.abs(offset) / sigma
