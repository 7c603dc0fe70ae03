"""Requests of one target that overlap in time become one candidate that serves both.

Two candidates of one target, of different events and one placement, merge when

* both are movable visits (rv_visit, rv_sequence slots) whose allowed start ranges intersect:
  the merged visit may start anywhere in the intersection (length: the longer of the two), or
* both are fixed series stretches that overlap: the merged block is their union, and each event
  keeps at least the parts its own stretch covered.

The merged candidate lists both events in ``serves``, both covers in ``covers`` (``event: parts``
joined by `` | ``), is worth the sum of the two values (both requests are served), and joins the
two requests into one ``group``: a scheduler takes at most one candidate of a group, so a
request is never served twice. The two single candidates stay, as alternatives. Each request
merges with at most one other: of the pairs that could merge, those of highest merged value are
taken first (a greedy matching), so a group is one request or two, and a chain of three
overlapping requests (a periastron block serving an RV maximum whose window also holds a wanted
phase) cannot shut its third request out of the week.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def _groups(ids, pairs):
    """Group id (the smallest member) of each of ``ids`` when the ``pairs`` of ids are joined."""
    parent: dict = {}

    def find(x):
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in pairs:
        ra, rb = find(int(a)), find(int(b))
        if ra != rb:
            parent[max(ra, rb)] = min(ra, rb)
    return np.array([find(int(x)) if x in parent else x for x in ids], dtype=np.int64)


def _matched(ra, rb, value):
    """Mask over candidate pairs (requests ``ra``, ``rb``, merged value ``value``): the pairs
    between requests of a greedy matching, highest value first; each request joins at most one."""
    a, b = np.minimum(ra, rb), np.maximum(ra, rb)
    key = a * (int(b.max()) + 1) + b  # one int64 per pair of requests
    order = np.lexsort((key, -value))  # highest value first
    first = np.unique(key[order], return_index=True)[1]
    best = order[np.sort(first)]  # each request pair once, at its highest value, in that order
    used, chosen = set(), []
    for x, y, k in zip(a[best].tolist(), b[best].tolist(), key[best].tolist()):
        if x not in used and y not in used:
            used.update((x, y))
            chosen.append(k)
    return np.isin(key, chosen)


def _pairs_in_reach(target, lo, hi):
    """(ia, ib), ia < ib, in that order: the pairs of rows of one target whose spans [lo, hi]
    (days) overlap, or come within a microsecond of it; rows with a span not finite pair with none.

    Only such pairs can merge (a fixed pair must overlap, a movable pair's allowed blocks must
    share a moment), so the rest of a target's pairs (a survey week: a dozen candidates of one
    target over seven nights, 144 pairs of which a few overlap) are never made.
    """
    ok = np.flatnonzero(np.isfinite(lo) & np.isfinite(hi))
    if ok.size < 2:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    order = ok[np.lexsort((lo[ok], target[ok]))]
    t, l, h = target[order], lo[order], hi[order]
    # ends of each row's reach among the rows after it: same target, starting before its end
    t_rank = np.searchsorted(np.unique(t), t)
    base, span = l.min(), h.max() - l.min() + 1.0
    key = t_rank * span + (l - base)  # increasing in (target, lo)
    stop = np.searchsorted(key, t_rank * span + (h - base) + 1e-11 * span * (t_rank + 1), side="left")
    count = np.maximum(stop - np.arange(len(t)) - 1, 0)
    first = np.repeat(np.arange(len(t)), count)
    second = first + 1 + (np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count))
    ia, ib = order[first], order[second]
    ia, ib = np.minimum(ia, ib), np.maximum(ia, ib)
    keep = np.lexsort((ib, ia))
    return ia[keep], ib[keep]


def merge_requests(cands: pd.DataFrame) -> pd.DataFrame:
    """The candidate table with merged candidates added and ``group`` set (module docstring)."""
    c = cands.reset_index(drop=True).assign(merged_with=np.int64(-1))
    if len(c) < 2:
        return c
    lo, hi = c["earliest_start_jd_utc"].to_numpy(float), c["latest_start_jd_utc"].to_numpy(float)
    s, e = c["start_jd_utc"].to_numpy(float), c["end_jd_utc"].to_numpy(float)
    length = c["length_d"].to_numpy(float)
    placed_freely = (c["placement"] == "movable").to_numpy()
    reach_lo = np.where(placed_freely, lo, s)
    reach_hi = np.where(placed_freely, hi + length, e)
    ia, ib = _pairs_in_reach(c["target_index"].to_numpy(np.int64), reach_lo, reach_hi)
    if ia.size == 0:
        return c
    ev = c["event"].to_numpy(object)
    place = c["placement"].to_numpy(object)
    same = (ev[ia] != ev[ib]) & (place[ia] == place[ib])
    if "baseline_min" in c:  # a series with cut baselines is an alternative of its own, never merged
        whole = np.isnan(c["baseline_min"].to_numpy(float))
        same &= whole[ia] & whole[ib]
    movable = same & (place[ia] == "movable")
    long_d = np.maximum(length[ia], length[ib])
    m_lo = np.maximum(lo[ia], lo[ib])
    m_hi = np.minimum(hi[ia] + length[ia], hi[ib] + length[ib]) - long_d
    ok_mov = movable & (m_hi >= m_lo)
    ok_fix = same & (place[ia] == "fixed") & (s[ia] < e[ib]) & (s[ib] < e[ia])
    ok = ok_mov | ok_fix
    if not ok.any():
        return c
    ia, ib, ok_mov, m_lo, m_hi, long_d = ia[ok], ib[ok], ok_mov[ok], m_lo[ok], m_hi[ok], long_d[ok]
    score = c["score"].to_numpy(float)
    ok = _matched(c["request_id"].to_numpy(np.int64)[ia], c["request_id"].to_numpy(np.int64)[ib], score[ia] + score[ib])
    ia, ib, ok_mov, m_lo, m_hi, long_d = ia[ok], ib[ok], ok_mov[ok], m_lo[ok], m_hi[ok], long_d[ok]
    merged = c.iloc[ia].reset_index(drop=True)
    other = c.iloc[ib].reset_index(drop=True)
    mid_start = 0.5 * (m_lo + m_hi)
    merged["start_jd_utc"] = np.where(ok_mov, mid_start, np.minimum(s[ia], s[ib]))
    merged["end_jd_utc"] = np.where(ok_mov, mid_start + long_d, np.maximum(e[ia], e[ib]))
    merged["earliest_start_jd_utc"] = np.where(ok_mov, m_lo, merged["start_jd_utc"])
    merged["latest_start_jd_utc"] = np.where(ok_mov, m_hi, merged["start_jd_utc"])
    merged["length_d"] = merged["end_jd_utc"] - merged["start_jd_utc"]
    merged["stretch_start_jd_utc"] = np.minimum(c["stretch_start_jd_utc"].to_numpy(float)[ia],
                                                c["stretch_start_jd_utc"].to_numpy(float)[ib])
    merged["stretch_end_jd_utc"] = np.maximum(c["stretch_end_jd_utc"].to_numpy(float)[ia],
                                              c["stretch_end_jd_utc"].to_numpy(float)[ib])
    merged["serves"] = merged["serves"].astype(str) + ";" + other["serves"].astype(str)
    cov_a, cov_b = merged["covers"].astype(str), other["covers"].astype(str)
    merged["covers"] = np.where(ok_mov, "", merged["event"].astype(str) + ": " + cov_a + " | "
                                + other["event"].astype(str) + ": " + cov_b)
    miss_a, miss_b = merged["not_covered"].astype(str), other["not_covered"].astype(str)
    merged["not_covered"] = np.where(ok_mov, "", merged["event"].astype(str) + ": " + miss_a + " | "
                                     + other["event"].astype(str) + ": " + miss_b)
    merged["score"] = merged["score"].to_numpy(float) + other["score"].to_numpy(float)
    merged["merged_with"] = other["request_id"].to_numpy(np.int64)
    out = pd.concat([c, merged], ignore_index=True)
    out["group"] = _groups(out["request_id"].to_numpy(int),
                           zip(merged["request_id"].to_numpy(int), merged["merged_with"].to_numpy(int)))
    return out
