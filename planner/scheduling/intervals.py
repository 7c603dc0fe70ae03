"""Exact choice of non-overlapping blocks of largest total score (weighted interval scheduling)."""

from __future__ import annotations

import numpy as np

from ..errors import PeriplanError


def best_intervals(start, end, weight, gap=0.0) -> np.ndarray:
    """Indices (ascending by end time) of the non-overlapping intervals of largest total weight.

    ``start``, ``end``, ``weight`` have shape (n,); intervals need ``end > start``. Interval j may
    precede i when ``end[j] + gap <= start[i]`` (``gap``: the overhead, same unit as the times).
    Intervals of weight <= 0 are never chosen. Exact: weighted interval scheduling by dynamic
    programming, O(n log n) (Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1). Ties
    between equal totals go to the solution found without the later-ending interval, and the sort
    order is (end, start, index), so the answer is deterministic.
    """
    s = np.asarray(start, dtype=float)
    e = np.asarray(end, dtype=float)
    w = np.asarray(weight, dtype=float)
    n = s.size
    if n == 0:
        return np.zeros(0, dtype=int)
    if np.any(~(e > s)):
        raise PeriplanError("every block must end after it starts")
    order = np.lexsort((np.arange(n), s, e))
    s_o, e_o, w_o = s[order], e[order], w[order]
    # p[k]: number of intervals (in sorted order) that may precede interval k
    p = np.searchsorted(e_o + gap, s_o, side="right")
    best = np.zeros(n + 1)
    take = np.zeros(n, dtype=bool)
    for k in range(n):
        with_k = w_o[k] + best[p[k]]
        if w_o[k] > 0 and with_k > best[k]:
            best[k + 1] = with_k
            take[k] = True
        else:
            best[k + 1] = best[k]
    chosen = []
    k = n
    while k > 0:
        if take[k - 1]:
            chosen.append(k - 1)
            k = p[k - 1]
        else:
            k -= 1
    return np.sort(order[np.asarray(chosen[::-1], dtype=int)]) if chosen else np.zeros(0, dtype=int)
