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

    def solve(label):
        rows = np.flatnonzero((night == label) & ~banned)
        chosen[night == label] = False
        if rows.size:
            chosen[rows[best_intervals(start[rows], end[rows], score[rows], overhead_d)]] = True

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
