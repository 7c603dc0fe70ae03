"""Survey scale: wall time and peak memory of ``events`` (one table, streamed) and ``plan``.

Run: ``python bench/bench_survey.py [--sizes 10000,30000] [--days 7] [--baseline-src DIR]``.
Each run is a process of its own (imports included) on a random catalogue of invented targets
(bench_events.random_catalogue, seed 1) at the invented benchmark site of bench_plan.py; peak
memory is the largest resident set of the process and its children (ru_maxrss). Runs:

* ``events (one table)``: ``events CAT --site SITE --days D --format csv`` (output discarded);
* ``events (streamed)``: the same with ``--format parquet --out DIR`` (5,000 targets a chunk);
* ``events (dask local:N)``: the streamed run on a local Dask cluster (``--dask-workers N``);
* ``plan``: ``plan CAT --site SITE --nights D --out DIR`` (charts and sheets included).

With ``--baseline-src DIR`` (a checkout of an earlier version, e.g. the main branch) the one-table
events run and the plan run are repeated with that code, alternating with this one, and the
ratios (baseline time / this time) of the best of ``--repeat`` runs are printed; the peak memory
shown is the largest of the runs. Memory growth with size is the point of the several
sizes: the streamed run's peak should stay flat, the others grow.
"""

from __future__ import annotations

import argparse
import os
import pathlib
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
REPO = HERE.parent

RUNNER = ("import resource, sys\n"
          "from planner.cli import main\n"
          "code = main(sys.argv[1:])\n"
          "peak = max(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "
          "resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n"
          "print(f'PEAK_KIB {peak}', file=sys.stderr)\n"
          "sys.exit(code)\n")


def measured(src, argv, workdir, stdout=subprocess.DEVNULL):
    """(wall seconds, peak MiB) of ``periplan argv`` run from the source tree ``src``.

    The process runs in ``workdir`` (not in a source tree: ``python -c`` puts its working folder
    first on the import path, which would shadow ``src``).
    """
    env = dict(os.environ, PYTHONPATH=str(src))
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", RUNNER, *argv], env=env, stdout=stdout, cwd=workdir,
                          stderr=subprocess.PIPE, text=True)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        sys.exit(f"failed ({src}): periplan {' '.join(argv)}\n{proc.stderr[-2000:]}")
    peak = [ln for ln in proc.stderr.splitlines() if ln.startswith("PEAK_KIB")][-1]
    return wall, int(peak.split()[1]) / 1024.0


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="10000,30000", help="catalogue sizes, comma-separated")
    parser.add_argument("--days", type=int, default=7, help="days of events, nights of the plan (default 7)")
    parser.add_argument("--start", default="2026-12-07")
    parser.add_argument("--baseline-src", default=None, help="source tree of an earlier version to compare")
    parser.add_argument("--skip-plan", action="store_true", help="events runs only")
    parser.add_argument("--dask-workers", type=int, default=0,
                        help="also time the streamed run on a local Dask cluster of this many workers")
    parser.add_argument("--repeat", type=int, default=2,
                        help="runs of each (in turn, this and baseline alternating); the best counts")
    args = parser.parse_args(argv)
    sys.path.insert(0, str(HERE))
    from bench_events import random_catalogue
    from bench_plan import SITE

    sources = {"this": REPO}
    if args.baseline_src:
        sources["baseline"] = pathlib.Path(args.baseline_src).resolve()
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        site = os.path.join(tmp, "site.toml")
        with open(site, "w") as fh:
            fh.write(SITE)
        for n in (int(s) for s in args.sizes.split(",")):
            cat = os.path.join(tmp, f"targets-{n}.csv")
            with open(cat, "w") as fh:
                fh.write(random_catalogue(n, seed=1))
            events = ["events", cat, "--site", site, "--start", args.start, "--days", str(args.days)]
            plan = ["plan", cat, "--site", site, "--start", args.start, "--nights", str(args.days),
                    "--out", os.path.join(tmp, "plan"), "--force"]
            runs = {"events (one table)": events + ["--format", "csv"],
                    "events (streamed)": events + ["--format", "parquet", "--out", os.path.join(tmp, "stream"),
                                                   "--force"]}
            if args.dask_workers:
                runs[f"events (dask local:{args.dask_workers})"] = runs["events (streamed)"] + [
                    "--dask", f"local:{args.dask_workers}"]
            if not args.skip_plan:
                runs["plan"] = plan
            for name, cmd in runs.items():
                best = {}
                for _ in range(args.repeat):
                    for label, src in sources.items():
                        if name.startswith("events (") and name != "events (one table)" and label == "baseline":
                            continue  # the earlier version has no streamed form
                        wall, peak = measured(src, cmd, tmp)
                        old = best.get(label, (np.inf, 0.0))
                        best[label] = (min(old[0], wall), max(old[1], peak))
                for label, (wall, peak) in best.items():
                    rows.append((n, name, label, wall, peak))
                    print(f"{n:7d} {name:24s} {label:9s} {wall:8.2f} s {peak:8.0f} MiB", flush=True)
    if args.baseline_src:
        print("ratios (baseline time / this time):")
        for n, name, label, wall, _ in rows:
            if label == "baseline":
                this = [r for r in rows if r[0] == n and r[1] == name and r[2] == "this"][0]
                print(f"{n:7d} {name:24s} {wall / this[3]:6.2f}x")


if __name__ == "__main__":
    main()
