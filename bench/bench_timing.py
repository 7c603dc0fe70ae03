"""Timing uncertainty of eccentric targets: the linearised variance (with its switch) against the
500-draw Monte Carlo for every target, measured in the same run.

Run: ``python bench/bench_timing.py [--n 10000] [--repeat 3]``. Synthetic catalogue (invented
elements, seeded): e uniform in [0.05, 0.9], e errors 1 to 10 per cent of e, omega errors 0.5 to
10 deg, half the epochs Tc, half Tp. Prints the seconds of ``offset_variance`` with
``method="auto"`` and ``"monte_carlo"``, their ratio, and the share of targets the switch sent
back to the Monte Carlo. Each method runs in turn within a repeat; the best time counts.
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=10_000, help="eccentric targets (default 10,000)")
    parser.add_argument("--repeat", type=int, default=3, help="repeats; the best time counts (default 3)")
    args = parser.parse_args(argv)

    from planner.orbits import events, timing

    rng = np.random.default_rng(0)
    n = args.n
    e = rng.uniform(0.05, 0.9, n)
    e_err = e * rng.uniform(0.01, 0.1, n)
    w = rng.uniform(0, 2 * np.pi, n)
    w_err = np.radians(rng.uniform(0.5, 10, n))
    kind = np.where(rng.random(n) < 0.5, "tc", "tp")
    names = np.array([f"Synthetic {i}" for i in range(n)], object)
    best = {"auto": np.inf, "monte_carlo": np.inf}
    for _ in range(args.repeat):
        for method in best:
            t0 = time.perf_counter()
            events.offset_variance(e, e_err, w, w_err, kind, names, method=method)
            best[method] = min(best[method], time.perf_counter() - t0)
    _, needs_mc = timing.delta_offset_variance(e, e_err, w, w_err, kind)
    print(f"{n} eccentric targets, 6 events each")
    print(f"linearised with switch (auto): {best['auto']:.3f} s; "
          f"{100 * needs_mc.mean():.1f} % of targets sent back to the Monte Carlo")
    print(f"Monte Carlo for every target:   {best['monte_carlo']:.3f} s")
    print(f"ratio monte_carlo / auto: {best['monte_carlo'] / best['auto']:.1f}x")


if __name__ == "__main__":
    main()
