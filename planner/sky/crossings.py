"""Moments a function of time crosses zero: bracket on a grid, refine by bisection.

One routine serves the whole planner (style habit 10): sunset, sunrise and twilight edges (Sun
altitude minus a threshold), moonrise and moonset, and the edges of each target's observable
intervals (the least margin over all constraints, see :mod:`planner.windows`).

The grid must be fine enough that no two crossings fall between neighbouring samples; crossings
closer together than one grid step can be missed in pairs (a dip below zero shorter than the
step). Callers choose steps of 5-20 minutes for Sun, Moon and stars, whose altitudes change
sign at most twice a day.
"""

from __future__ import annotations

import numpy as np

from ..errors import CrossingSearchError

#: Bisection stops when the bracket is shorter than this (days): 0.05 s.
DEFAULT_TOLERANCE_D = 0.05 / 86400.0
_MAX_ITERATIONS = 60


def find_crossings(func, grid_jd, values=None, tolerance_d: float = DEFAULT_TOLERANCE_D):
    """Rows, times and directions of the zero crossings of ``func`` between grid samples.

    Parameters
    ----------
    func : callable
        ``func(jd, rows) -> values``: the function at times ``jd`` (1-D, days) for the series
        ``rows`` (1-D int, same length), elementwise. Positive means "above" (e.g. risen).
    grid_jd : ndarray, shape (T,) or (R, T)
        Increasing sample times, days (any scale; returned times are on the same scale); one
        grid for all series, or one row of times per series.
    values : ndarray, shape (R, T), optional
        ``func`` on the grid for every series, if the caller already has it; a 1-D array of
        shape (T,) is one series (row 0). Computed from ``func`` when absent.
    tolerance_d : float
        Width of the final bracket, days; the crossing is its midpoint.

    Returns
    -------
    rows : ndarray of int, shape (K,)
        Series of each crossing, sorted by row then time.
    jd : ndarray of float, shape (K,)
        Crossing times.
    rising : ndarray of bool, shape (K,)
        True where the function goes from <= 0 to > 0.
    """
    grid = np.asarray(grid_jd, dtype=float)
    if values is None:
        if grid.ndim == 1:
            values = func(grid, np.zeros(grid.size, dtype=int))
        else:
            rows_all = np.broadcast_to(np.arange(grid.shape[0])[:, None], grid.shape)
            values = func(grid.ravel(), rows_all.ravel()).reshape(grid.shape)
    v = np.atleast_2d(np.asarray(values, dtype=float))
    above = v > 0
    change = above[:, 1:] != above[:, :-1]
    rows, cols = np.nonzero(change)
    rising = ~above[rows, cols]
    if grid.ndim == 1:
        lo, hi = grid[cols].copy(), grid[cols + 1].copy()
    else:
        lo, hi = grid[rows, cols].copy(), grid[rows, cols + 1].copy()
    for _ in range(_MAX_ITERATIONS):
        if lo.size == 0 or np.max(hi - lo) <= tolerance_d:
            break
        mid = 0.5 * (lo + hi)
        up = np.asarray(func(mid, rows), dtype=float) > 0
        # for a rising crossing the function is above at hi: move hi down when mid is above
        take_hi = up == rising
        hi = np.where(take_hi, mid, hi)
        lo = np.where(take_hi, lo, mid)
    return rows, 0.5 * (lo + hi), rising


def positive_intervals(rows, jd, rising, above_first, above_last, first_jd, last_jd):
    """Maximal intervals where a function is positive, from its crossings and its end values.

    ``rows``, ``jd``, ``rising``: the crossings, as :func:`find_crossings` returns them.
    ``above_first`` / ``above_last`` (R,) bool: the function is positive at the first / last
    sample of each series; ``first_jd`` / ``last_jd`` (R,) those samples' times, where intervals
    open or close that are cut by the ends of the grid.

    Returns ``(row, start_jd, end_jd)``, each shape (I,), sorted by row then start.
    """
    above_first = np.asarray(above_first, dtype=bool)
    above_last = np.asarray(above_last, dtype=bool)
    first_jd = np.asarray(first_jd, dtype=float)
    last_jd = np.asarray(last_jd, dtype=float)
    r0 = np.flatnonzero(above_first)
    r1 = np.flatnonzero(above_last)
    start_rows = np.concatenate([r0, rows[rising]])
    start_jd = np.concatenate([first_jd[r0], jd[rising]])
    end_rows = np.concatenate([rows[~rising], r1])
    end_jd = np.concatenate([jd[~rising], last_jd[r1]])
    si = np.lexsort((start_jd, start_rows))
    ei = np.lexsort((end_jd, end_rows))
    if si.size != ei.size or np.any(start_rows[si] != end_rows[ei]):
        raise CrossingSearchError(
            f"the crossing search found {si.size} starts and {ei.size} ends that do not alternate; sample the "
            "function on a finer grid (a step shorter than its shortest stretch above or below zero) or check "
            "that the end values given agree with the grid values")
    return start_rows[si], start_jd[si], end_jd[ei]
