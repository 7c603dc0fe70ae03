"""The unscheduled table's row matching (planner.scheduling.losses._keys).

Reference: Python's own tuple equality, the definition of "the same row": two rows get the same
key exactly when their tuples of cells compare equal (None equal to None).
"""

from __future__ import annotations

import numpy as np

from planner.scheduling.losses import _keys


def test_row_keys_are_equal_exactly_when_the_rows_are():
    rng = np.random.default_rng(1)

    def table(n):  # target index, event name (or missing), minute of the event (about 3.5e9)
        return (rng.integers(0, 5, n), np.array(rng.choice(["a", "b", "c", None], n), dtype=object),
                rng.integers(3_500_000_000, 3_500_000_004, n))

    for _ in range(100):
        tables = [table(int(n)) for n in rng.integers(0, 40, 2)]
        keys = np.concatenate(_keys(*tables))
        rows = [r for t in tables for r in zip(*t)]
        assert len(keys) == len(rows)
        same_key = keys[:, None] == keys[None, :]
        same_row = np.array([[a == b for b in rows] for a in rows], dtype=bool).reshape(same_key.shape)
        assert np.array_equal(same_key, same_row)


def test_row_keys_of_wide_columns_do_not_overflow():
    # three integer columns of 10^6 distinct values each: their mixed-radix number would need
    # 60 bits times three; the keys are renumbered before they could overflow int64
    n = 10**6
    wide = (np.arange(n) * 7, np.arange(n)[::-1] * 13, np.arange(n) * 3 + 2**40)
    (keys,) = _keys(wide)
    assert keys.dtype == np.int64 and len(np.unique(keys)) == n
    twice, again = _keys(wide, tuple(c[::-2] for c in wide))
    assert np.array_equal(again, twice[::-2])
