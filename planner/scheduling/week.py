"""The week's repeat rule: which instances of a repeated target/event are kept across nights.

Two rules hold whatever the repeat rule: a request is served at most once (at most one
candidate of each request ``group`` is chosen: a window that spans nights, or a merged
candidate and its parts), and each night's choice is the best total score of what is left.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .gaps import fit_starts
from .intervals import best_intervals


def choose_fixed(cands: pd.DataFrame, nights_order, overhead_d, repeats) -> np.ndarray:
    """Boolean mask of the candidates chosen under the repeat rule, one per request group.

    Movable visits (``request`` rv_visit or rv_sequence) may be moved inside their allowed start
    range (``earliest_start_jd_utc`` .. ``latest_start_jd_utc``): their ``start_jd_utc`` and
    ``end_jd_utc`` in ``cands`` are updated in place.
    """
    n = len(cands)
    chosen = np.zeros(n, dtype=bool)
    if n == 0:
        return chosen
    slot = cands["slot"].astype(str) if "slot" in cands else pd.Series(np.zeros(n, int), index=cands.index).astype(str)
    key = (cands["target_index"].astype(str) + "|" + cands["event"].astype(str) + "|" + slot).to_numpy()
    group = cands["group"].to_numpy() if "group" in cands else np.arange(n)
    night = cands["night"].to_numpy(object)
    start0 = cands["start_jd_utc"].to_numpy(float).copy()
    length = cands["end_jd_utc"].to_numpy(float) - start0
    start, end = start0.copy(), start0 + length
    score = cands["score"].to_numpy(float)
    banned = np.zeros(n, dtype=bool)
    rank = {lab: i for i, lab in enumerate(nights_order)}
    movable = cands["request"].isin(("rv_visit", "rv_sequence")).to_numpy() if "request" in cands else np.zeros(n, bool)
    lo = cands["earliest_start_jd_utc"].to_numpy(float) if "earliest_start_jd_utc" in cands else start0
    hi = cands["latest_start_jd_utc"].to_numpy(float) if "latest_start_jd_utc" in cands else start0
    lo, hi = np.where(np.isfinite(lo), lo, start0), np.where(np.isfinite(hi), hi, start0)
    def fit_visits(taken, rows, used=()):
        """``taken`` plus, best value first, each visit group moved to the free start nearest its own.

        Busy time only grows, so a visit that does not fit once never fits later in the pass.
        """
        taken = list(taken)
        used = set(group[taken].tolist()) | set(used)
        cand = np.asarray(sorted((r for r in rows if group[r] not in used), key=lambda r: (-score[r], start0[r], r)),
                          dtype=int)
        while cand.size:
            t = fit_starts(lo[cand], hi[cand], length[cand], start0[cand], start[taken], end[taken], overhead_d)
            ok = np.isfinite(t)
            if not ok.any():
                break
            k = int(np.argmax(ok))
            r = cand[k]
            start[r], end[r] = t[k], t[k] + length[r]
            taken.append(r)
            rest = cand[k + 1:][ok[k + 1:]]
            cand = rest[group[rest] != group[r]]
        return np.asarray(taken, dtype=int)

    def solve(label):
        rows = np.flatnonzero((night == label) & ~banned)
        chosen[night == label] = False
        start[rows], end[rows] = start0[rows], start0[rows] + length[rows]
        if rows.size == 0:
            return
        pick_a = rows[best_intervals(start[rows], end[rows], score[rows], overhead_d)]
        if len(set(group[pick_a].tolist())) < pick_a.size:  # a group twice: keep its best only
            pick_a = fit_visits([r for r in pick_a if not movable[r]], pick_a[movable[pick_a]])
        fixed = rows[~movable[rows]]
        pick_b = fixed[best_intervals(start[fixed], end[fixed], score[fixed], overhead_d)] if fixed.size else fixed
        pick_b = fit_visits(pick_b, rows[movable[rows]])
        if score[pick_b].sum() > score[pick_a].sum() + 1e-9:
            chosen[pick_b] = True
        else:
            start[rows], end[rows] = start0[rows], start0[rows] + length[rows]
            chosen[pick_a] = True

    def keep_one_per(keys):
        """Keep the best chosen candidate of each key, ban the others, re-plan the nights hit."""
        for _ in range(n + 1):
            dup_nights = set()
            by_key: dict = {}
            for r in np.flatnonzero(chosen):
                by_key.setdefault(keys[r], []).append(r)
            for k, rs in by_key.items():
                if len(rs) < 2:
                    continue
                keep = min(rs, key=lambda r: (-score[r], rank[night[r]], start[r]))
                others = (keys == k) & (np.arange(n) != keep)
                dup_nights.update(night[others & chosen])
                banned[others] = True
            if not dup_nights:
                return
            for label in sorted(dup_nights, key=rank.get):
                solve(label)

    if repeats == "first":
        for label in nights_order:
            solve(label)
            here = chosen & (night == label)
            banned |= (np.isin(key, key[here]) | np.isin(group, group[here])) & (night != label) & ~chosen
        keep_one_per(group)
    else:
        for label in nights_order:
            solve(label)
        keep_one_per(group)
        if repeats == "best":
            keep_one_per(key)
    # second chance: visit groups served nowhere, moved into the free time of one of their nights
    served = set(group[chosen].tolist())
    for label in nights_order:
        here = (night == label) & ~banned & movable
        rows = np.flatnonzero(here & ~chosen & ~np.isin(group, list(served)))
        if rows.size:
            taken = np.flatnonzero(chosen & (night == label))
            got = fit_visits(taken, rows, used=served)
            chosen[got] = True
            served |= set(group[got].tolist())
    cands["start_jd_utc"] = np.where(chosen, start, start0)
    cands["end_jd_utc"] = np.where(chosen, end, start0 + length)
    return chosen

