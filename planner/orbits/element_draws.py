"""Seeded Monte Carlo draws of an orbit's shape (e, omega) in the parameters the catalogue gives.

A catalogue gives the shape as e and omega, as e cos omega and e sin omega, or as sqrt(e) cos
omega and sqrt(e) sin omega, each pair with 1-sigma errors and no covariance. The errors of the
last two pairs are far less correlated than those of e and omega (the fits that publish them
sample in them), so the draw is made in the pair the catalogue gives, independent Gaussians in
each, and e and omega follow: e = hypot(x, y) or x^2 + y^2, omega = atan2(y, x). e and omega
draws: e reflected at 0 and kept below 1, omega Gaussian (radians).

Each target draws from its own generator seeded by ``seed`` and the CRC-32 of its name, so its
draws are reproducible and independent of the other targets.
"""

from __future__ import annotations

import zlib

import numpy as np

#: Largest eccentricity a draw may take (a draw at or above 1 is not a bound orbit).
MAX_E_SAMPLE = 1.0 - 1e-6


def standard_normals(names, seed, n_samples):
    """(2, m, S) standard normal draws, one seeded generator per name."""
    return np.stack([np.random.default_rng([seed, zlib.crc32(str(nm).encode())]).standard_normal((2, n_samples))
                     for nm in names], axis=1)


def shape_draws(z, e, e_err, omega_rad, omega_err_rad, shape=None):
    """(e draws, omega draws in radians), shape (m, S), from the normals ``z`` (2, m, S).

    ``e``, ``e_err``, ``omega_rad``, ``omega_err_rad`` have shape (m,). ``shape``, optional, is
    (kind, x, y, x_err, y_err) with ``kind`` ``""``, ``"ecosw"`` or ``"secosw"`` per target: rows
    with a kind draw x and y instead of e and omega.
    """
    es = np.minimum(np.abs(e[:, None] + e_err[:, None] * z[0]), MAX_E_SAMPLE)
    ws = omega_rad[:, None] + omega_err_rad[:, None] * z[1]
    if shape is None:
        return es, ws
    kind, x, y, x_err, y_err = shape
    alt = np.asarray(kind) != ""
    if alt.any():
        xs = x[alt, None] + x_err[alt, None] * z[0, alt]
        ys = y[alt, None] + y_err[alt, None] * z[1, alt]
        r2 = xs * xs + ys * ys
        es[alt] = np.minimum(np.where((np.asarray(kind)[alt] == "secosw")[:, None], r2, np.sqrt(r2)), MAX_E_SAMPLE)
        ws[alt] = np.arctan2(ys, xs)
    return es, ws
