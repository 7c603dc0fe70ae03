"""The week's repeat rule: which instances of a repeated target/event are kept across nights.

Two rules hold whatever the repeat rule: a request is served at most once (at most one
candidate of each request ``group`` is chosen: a window that spans nights, or a merged
candidate and its parts), and each night's choice is the best total score of what is left.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .intervals import best_intervals


def choose_fixed(cands: pd.DataFrame, nights_order, overhead_d, repeats) -> np.ndarray:
    """Boolean mask of the candidates chosen under the repeat rule, one per request group."""
    n = len(cands)
    chosen = np.zeros(n, dtype=bool)
    if n == 0:
        return chosen
    slot = cands["slot"].astype(str) if "slot" in cands else pd.Series(np.zeros(n, int), index=cands.index).astype(str)
    key = (cands["target_index"].astype(str) + "|" + cands["event"].astype(str) + "|" + slot).to_numpy()
    group = cands["group"].to_numpy() if "group" in cands else np.arange(n)
    night = cands["night"].to_numpy(object)
    start, end = cands["start_jd_utc"].to_numpy(float), cands["end_jd_utc"].to_numpy(float)
    score = cands["score"].to_numpy(float)
    banned = np.zeros(n, dtype=bool)
    rank = {lab: i for i, lab in enumerate(nights_order)}
    movable = cands["request"].isin(("rv_visit", "rv_sequence")).to_numpy() if "request" in cands else np.zeros(n, bool)
    alternative = (cands["_alternative"].to_numpy(bool) if "_alternative" in cands else np.zeros(n, bool))

    def fit_visits(taken, rows):
        """``taken`` (indices) plus, best value first, the first start of each visit group that fits."""
        taken = list(taken)
        used = set(group[taken].tolist())
        for r in sorted(rows, key=lambda r: (-score[r], start[r], r)):
            if group[r] in used:
                continue
            if all(end[r] + overhead_d <= start[t] or end[t] + overhead_d <= start[r] for t in taken):
                taken.append(r)
                used.add(group[r])
        return np.asarray(taken, dtype=int)

    def solve(label):
        rows = np.flatnonzero((night == label) & ~banned)
        chosen[night == label] = False
        if rows.size == 0:
            return
        first = rows[~alternative[rows]]
        pick_a = first[best_intervals(start[first], end[first], score[first], overhead_d)] if first.size else first
        fixed = rows[~movable[rows]]
        pick_b = fixed[best_intervals(start[fixed], end[fixed], score[fixed], overhead_d)] if fixed.size else fixed
        pick_b = fit_visits(pick_b, rows[movable[rows]])
        if len(set(group[pick_a].tolist())) < pick_a.size:  # a group twice: keep its best only
            pick_a = fit_visits([r for r in pick_a if not movable[r]], pick_a[movable[pick_a]])
        chosen[pick_b if score[pick_b].sum() > score[pick_a].sum() + 1e-9 else pick_a] = True

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
        return chosen
    for label in nights_order:
        solve(label)
    keep_one_per(group)
    if repeats == "best":
        keep_one_per(key)
    return chosen
