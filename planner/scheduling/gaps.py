"""Fitting movable visits into the free time of a night: the start nearest the one proposed."""

from __future__ import annotations

import numpy as np


def fit_starts(lo, hi, length, proposed, busy_start, busy_end, overhead):
    """Start of each visit in [lo, hi] nearest ``proposed`` at which [t, t + length] keeps
    ``overhead`` from every busy block; NaN where none exists. Days (UTC JD).

    ``lo``, ``hi``, ``length``, ``proposed`` shape (n,); ``busy_start``, ``busy_end`` (m,). The
    free gaps between the busy blocks (widened by the overhead) each allow the starts
    [max(lo, g0), min(hi, g1 - length)]; the nearest allowed start to ``proposed`` wins.
    """
    bs = np.asarray(busy_start, float)
    be = np.asarray(busy_end, float)
    order = np.argsort(bs)
    g0 = np.concatenate(([-np.inf], be[order] + overhead))[None, :]
    g1 = np.concatenate((bs[order] - overhead, [np.inf]))[None, :]
    p = np.asarray(proposed, float)[:, None]
    a = np.maximum(np.asarray(lo, float)[:, None], g0)
    b = np.minimum(np.asarray(hi, float)[:, None], g1 - np.asarray(length, float)[:, None])
    ok = b >= a
    t = np.clip(p, a, np.maximum(a, b))
    dist = np.where(ok, np.abs(t - p), np.inf)
    k = np.argmin(dist, axis=1)
    best = t[np.arange(t.shape[0]), k]
    return np.where(ok.any(axis=1), best, np.nan)
