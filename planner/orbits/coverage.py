"""Phase coverage of an orbit by observations: which mean-anomaly bins hold data, and the gaps.

Phases are mean-anomaly phases, phi = frac((t - Tp) / P) in [0, 1), with t and Tp in BJD_TDB
(for a linear ephemeris, phi counts from its epoch T0). An exposure covers its phase; a series
from t0 to t1 covers every phase between (all of them when it lasts a period or more). Bins are
N equal slices of phase, bin k holding [k/N, (k+1)/N).
"""

from __future__ import annotations

import numpy as np

from . import geometry


def mean_phase(t_bjd_tdb, tp_bjd_tdb, period_d):
    """Mean-anomaly phase in [0, 1) of BJD_TDB times for a periastron epoch and period; broadcast."""
    return np.mod((np.asarray(t_bjd_tdb, float) - tp_bjd_tdb) / period_d, 1.0)


def covered_bins(start_phase, end_phase, single, n_bins: int) -> np.ndarray:
    """Boolean (n_bins,): the bins holding at least one exposure or part of a series.

    ``start_phase``, ``end_phase`` (phases of each observation's start and end, unwrapped so that
    ``end_phase - start_phase`` is the series' length in orbits) and ``single`` (True for an
    exposure) are 1-D arrays of one length.
    """
    s = np.asarray(start_phase, float)
    e = np.asarray(end_phase, float)
    out = np.zeros(int(n_bins), bool)
    point = np.asarray(single, bool) | ~(e > s)
    out[np.floor(np.mod(s[point], 1.0) * n_bins).astype(int) % n_bins] = True
    for a, b in zip(s[~point], e[~point]):
        if b - a >= 1.0:
            out[:] = True
            break
        k0 = int(np.floor(np.mod(a, 1.0) * n_bins))
        k1 = int(np.floor((np.mod(a, 1.0) + (b - a)) * n_bins - 1e-12))
        out[np.arange(k0, k1 + 1) % n_bins] = True
    return out


def largest_gap(covered: np.ndarray):
    """(start_phase, end_phase, width) of the longest run of empty bins, going round the orbit.

    ``end_phase`` may exceed 1 when the gap wraps through phase 0; (0, 1, 1) when nothing is
    covered, (nan, nan, 0) when every bin is.
    """
    n = covered.size
    if not covered.any():
        return 0.0, 1.0, 1.0
    if covered.all():
        return np.nan, np.nan, 0.0
    first = int(np.argmax(covered))
    rolled = np.roll(covered, -first)  # starts on a covered bin, so no run wraps
    best_len, best_start, run = 0, 0, 0
    for k in range(n):
        run = 0 if rolled[k] else run + 1
        if run > best_len:
            best_len, best_start = run, k - run + 1
    start = (best_start + first) % n
    return start / n, (start + best_len) / n, best_len / n


def rv_sampled(t_bjd_tdb, tp_bjd_tdb, period_d, e, omega_rad, k_ms):
    """(lowest, highest) RV (m/s, gamma left out) at the observed times, and the fraction of the
    curve's full range 2K they span (0..1). NaNs when there are no times."""
    t = np.asarray(t_bjd_tdb, float)
    if t.size == 0:
        return np.nan, np.nan, np.nan
    v = geometry.radial_velocity(t, tp_bjd_tdb, period_d, e, omega_rad, k_ms)
    return float(v.min()), float(v.max()), float((v.max() - v.min()) / (2.0 * k_ms)) if k_ms > 0 else 0.0
