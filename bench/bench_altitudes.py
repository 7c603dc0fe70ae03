"""Benchmark: the scheduler's altitude samples (9 moments through each of N blocks), altitude alone
against the full alt/az/hour-angle path it stands for.

``positions.altitude_of`` (what ``Plan.altitude_deg`` uses) and ``positions.altaz_of(...).alt_deg``
(the reference) are timed in the same run on the same random blocks, alternating, after a small
warm-up of each; the medians, their ratio (above 1: altitude_of is faster) and whether the two
give the same altitudes to the bit are printed.

Run:  python bench/bench_altitudes.py [--blocks 300000] [--targets 100000] [--repeat 3]

Not a test: timings depend on the machine.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from planner.sky import positions

LATITUDE_DEG, LONGITUDE_DEG = 37.62, -3.12  # the invented benchmark site
FIRST_JD_UTC = 2461382.25  # evening of 2026-12-07 UTC


def blocks(n_blocks, n_targets, seed=1):
    """(ra, dec, target index (n, 1), UTC JD (n, 9)): random blocks of 30-90 min over a week."""
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, n_targets)
    dec = np.degrees(np.arcsin(rng.uniform(-0.6, 1.0, n_targets)))
    start = FIRST_JD_UTC + rng.integers(0, 7, n_blocks) + rng.uniform(0.0, 0.45, n_blocks)
    length = rng.uniform(30.0, 90.0, n_blocks) / 1440.0
    jd = start[:, None] + length[:, None] * np.linspace(0.0, 1.0, 9)[None, :]
    return ra, dec, rng.integers(0, n_targets, (n_blocks, 1)), jd


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--blocks", type=int, default=300_000)
    parser.add_argument("--targets", type=int, default=100_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    ra, dec, index, jd = blocks(args.blocks, args.targets)
    ours = lambda: positions.altitude_of(ra, dec, index, jd, LATITUDE_DEG, LONGITUDE_DEG)  # noqa: E731
    ref = lambda: positions.altaz_of(ra, dec, index, jd, LATITUDE_DEG, LONGITUDE_DEG).alt_deg  # noqa: E731
    positions.altitude_of(ra, dec, index[:100], jd[:100], LATITUDE_DEG, LONGITUDE_DEG)  # warm-up
    positions.altaz_of(ra, dec, index[:100], jd[:100], LATITUDE_DEG, LONGITUDE_DEG)
    times = {"altitude_of": [], "altaz_of": []}
    for _ in range(args.repeat):
        for name, func in (("altitude_of", ours), ("altaz_of", ref)):
            t0 = time.perf_counter()
            func()
            times[name].append(time.perf_counter() - t0)
    a, b = statistics.median(times["altitude_of"]), statistics.median(times["altaz_of"])
    print(f"{args.blocks} blocks x 9 samples, {args.targets} targets")
    print(f"altitude_of  median {a:.3f} s  ({', '.join(f'{t:.3f}' for t in times['altitude_of'])})")
    print(f"altaz_of     median {b:.3f} s  ({', '.join(f'{t:.3f}' for t in times['altaz_of'])})")
    print(f"ratio {b / a:.2f}; same altitudes to the bit: {np.array_equal(ours(), ref(), equal_nan=True)}")


if __name__ == "__main__":
    main()
