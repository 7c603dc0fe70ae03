"""Kepler solves per second: periplan's solver against radvel's, measured in the same run.

Run: ``python bench/bench_kepler.py [--n 1000000] [--repeat 5]``. Prints solves per second of
each solver, the ratio, and each solver's worst residual |E - e sin E - M| over the same inputs
(uniform M in [0, 2 pi), e uniform in [0, 0.99] and, separately, e = 0.999 with M near 0).
radvel (Fulton et al. 2018) is the reference: its numpy solver ``radvel.kepler.kepler`` and, when
built, its compiled ``radvel._kepler.kepler_array`` (which takes a single e, so it runs only on the
constant-e case).
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def best_time(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1_000_000, help="elements per solve (default 1e6)")
    parser.add_argument("--repeat", type=int, default=5, help="repeats; the best time counts (default 5)")
    args = parser.parse_args(argv)

    from planner import solve_kepler
    import radvel.kepler as rk

    try:
        from radvel import _kepler
    except ImportError:  # radvel built without its C extension
        _kepler = None

    rng = np.random.default_rng(0)
    cases = {
        "uniform e<=0.99": (rng.uniform(0, 2 * np.pi, args.n), rng.uniform(0, 0.99, args.n)),
        "e=0.9 constant": (rng.uniform(0, 2 * np.pi, args.n), np.full(args.n, 0.9)),
        "e=0.999, M near 0": (np.geomspace(1e-9, 0.1, args.n), np.full(args.n, 0.999)),
    }
    # radvel's compiled solver stops the whole process ("kepler step not converging after 30
    # steps") on the e = 0.999, M near 0 case (seen with radvel 1.6.7), so it runs on the others.
    compiled_cases = {"e=0.9 constant"}
    print(f"{'case':20s} {'solver':24s} {'solves/s':>12s} {'ratio':>7s} {'worst residual (rad)':>21s}")
    for label, (m, e) in cases.items():
        solvers = {"periplan": lambda: solve_kepler(m, e), "radvel.kepler (numpy)": lambda: rk.kepler(m.copy(), e.copy())}
        if _kepler is not None and label in compiled_cases:  # it takes one e per call
            solvers["radvel._kepler (C)"] = lambda: _kepler.kepler_array(m.copy(), float(e[0]))
        ours_t = None
        for name, fn in solvers.items():
            t, ecc = best_time(fn, args.repeat)
            ours_t = t if ours_t is None else ours_t
            worst = np.max(np.abs(ecc - e * np.sin(ecc) - m))
            print(f"{label:20s} {name:24s} {args.n / t:12.3e} {t / ours_t:7.2f} {worst:21.2e}")
    print("ratio = solver time / periplan time (above 1: periplan is faster)")


if __name__ == "__main__":
    main()
