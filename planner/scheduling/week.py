"""The week's repeat rule: which instances of a repeated target/event are kept across nights."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .intervals import best_intervals


def choose_fixed(cands: pd.DataFrame, nights_order, overhead_d, repeats) -> np.ndarray:
    """Boolean mask of the candidates chosen under the repeat rule."""
    n = len(cands)
    chosen = np.zeros(n, dtype=bool)
    if n == 0:
        return chosen
    key = (cands["target_index"].astype(str) + "|" + cands["event"].astype(str)).to_numpy()
    night = cands["night"].to_numpy(object)
    start, end = cands["start_jd_utc"].to_numpy(float), cands["end_jd_utc"].to_numpy(float)
    score = cands["score"].to_numpy(float)
    banned = np.zeros(n, dtype=bool)

    def solve(label):
        rows = np.flatnonzero((night == label) & ~banned)
        chosen[night == label] = False
        if rows.size:
            chosen[rows[best_intervals(start[rows], end[rows], score[rows], overhead_d)]] = True

    if repeats == "first":
        for label in nights_order:
            solve(label)
            done = set(key[chosen & (night == label)])
            banned |= np.isin(key, list(done)) & (night != label) & ~chosen
        return chosen
    for label in nights_order:
        solve(label)
    if repeats == "every":
        return chosen
    # "best": keep the best scheduled instance of each key, ban the others, re-plan the nights hit
    rank = {lab: i for i, lab in enumerate(nights_order)}
    for _ in range(n + 1):
        dup_nights = set()
        rows = np.flatnonzero(chosen)
        by_key: dict[str, list[int]] = {}
        for r in rows:
            by_key.setdefault(key[r], []).append(r)
        for k, rs in by_key.items():
            if len(rs) < 2:
                continue
            keep = min(rs, key=lambda r: (-score[r], rank[night[r]], start[r]))
            others = (key == k) & (np.arange(n) != keep)
            dup_nights.update(night[others & chosen])
            banned |= others
        if not dup_nights:
            break
        for label in sorted(dup_nights, key=rank.get):
            solve(label)
    return chosen
