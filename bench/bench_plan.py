"""The whole ``periplan plan`` (charts included) against astroplan's observability table.

Run: ``python bench/bench_plan.py [--targets 3000] [--nights 7] [--repeat 3]``. Both sides run as
processes of their own (imports included), alternating, on the same random catalogue and the same
constraints: minimum altitude 30 deg, astronomical darkness, Moon separation 15 deg, at the
invented benchmark site (37.62 N, 3.12 W). The reference process is bench/astroplan_week.py.
Prints each run's wall time, the medians and their ratio (above 1: periplan is faster).

After each periplan run the plan folder's ``schedule-info.json`` is read and its solver figures
printed beside the timing: ``status`` (``optimal`` when HiGHS proved the plan optimal, else why
it stopped), ``seconds`` (the solve, model building included), ``relative_gap`` (plan to the
solver's bound, 0 when proven optimal), the time limit and the model's size, then per night
when a large week is solved night by night (``solved_by_night``: options, seconds, the LP's seconds, status and
the gap to that night's own bound). The last lines compare the
medians with the issue's targets: ratio at least 3, solve inside its time limit, gap at most 1 %;
and a floor: a process that only imports what the plan imports (timed in the same runs), plus
the seconds of the nights' LP relaxations inside the plan's solve (``lp_seconds``), against the
third of astroplan's time that a ratio of 3 allows.
"""

from __future__ import annotations

import argparse
import json
import os
import pathlib
import statistics
import subprocess
import sys
import tempfile
import time

HERE = pathlib.Path(__file__).resolve().parent
SITE = """name = "Benchmark site (invented)"
latitude_deg = 37.62
longitude_deg = -3.12
elevation_m = 1650
timezone = "Europe/Madrid"
min_altitude_deg = 30
darkness = "astronomical"
moon_min_separation_deg = 15
"""


def timed(cmd):
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        sys.exit(f"failed: {' '.join(cmd)}\n{proc.stderr[-2000:]}")
    return wall


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, default=3000)
    parser.add_argument("--nights", type=int, default=7)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--start", default="2026-12-07")
    args = parser.parse_args(argv)
    sys.path.insert(0, str(HERE))
    from bench_events import random_catalogue

    with tempfile.TemporaryDirectory() as tmp:
        cat = os.path.join(tmp, "targets.csv")
        site = os.path.join(tmp, "site.toml")
        with open(cat, "w") as fh:
            fh.write(random_catalogue(args.targets, seed=1))
        with open(site, "w") as fh:
            fh.write(SITE)
        ours = [sys.executable, "-m", "planner", "plan", cat, "--site", site, "--start", args.start,
                "--nights", str(args.nights), "--out", os.path.join(tmp, "plan"), "--force"]
        ref = [sys.executable, str(HERE / "astroplan_week.py"), cat, site, args.start, str(args.nights)]
        imports = [sys.executable, "-c", IMPORTS]
        times = {"periplan plan": [], "astroplan observability_table": [], "imports of plan alone": []}
        solves = []
        for i in range(args.repeat):
            for name, cmd in (("periplan plan", ours), ("astroplan observability_table", ref),
                              ("imports of plan alone", imports)):
                times[name].append(timed(cmd))
                line = f"run {i + 1} {name:32s} {times[name][-1]:7.2f} s"
                if name == "periplan plan":
                    solves.append(solver_info(os.path.join(tmp, "plan")))
                    line += "   " + describe(solves[-1])
                print(line, flush=True)
        med = {k: statistics.median(v) for k, v in times.items()}
        files = len(os.listdir(os.path.join(tmp, "plan")))
    print(f"{args.targets} targets x {args.nights} nights; periplan wrote {files} files")
    for k, v in med.items():
        print(f"median {k:32s} {v:7.2f} s")
    ratio = med["astroplan observability_table"] / med["periplan plan"]
    print(f"ratio astroplan / periplan = {ratio:.2f}")
    solve_s = statistics.median(s["seconds"] for s in solves)
    worst_gap = max(s["relative_gap"] for s in solves)
    inside = all(s["seconds"] <= s["time_limit_s"] for s in solves)
    print(f"solver: status {', '.join(sorted({s['status'] for s in solves}))}; median {solve_s:.2f} s of "
          f"{solves[0]['time_limit_s']:.0f} s allowed; largest gap {100 * worst_gap:.3f}%; "
          f"{solves[0]['options']} options, {solves[0]['constraints']} constraints, {solves[0]['blocks']} blocks")
    print(f"targets: ratio >= 3: {'yes' if ratio >= 3 else 'NO'}; solve inside its limit: {'yes' if inside else 'NO'}; "
          f"gap <= 1 %: {'yes' if worst_gap <= 0.01 else 'NO'}")
    lp_s = statistics.median(sum(r.get("lp_seconds", 0.0) for r in s.get("solved_by_night", [])) for s in solves)
    floor = med["imports of plan alone"] + lp_s
    print(f"floor: the plan's imports {med['imports of plan alone']:.2f} s + the nights' LP relaxations alone "
          f"{lp_s:.2f} s = {floor:.2f} s; ratio 3 allows {med['astroplan observability_table'] / 3:.2f} s")


#: What a plan process imports before it computes anything (its part of the floor above).
IMPORTS = ("import planner.pipeline, planner.outputs.plan_folder, planner.outputs.charts, planner.outputs.week_page, "
           "scipy.optimize, matplotlib.backends.backend_agg, matplotlib.figure, astropy.utils.iers")


def solver_info(plan_dir):
    """The solver figures of one plan folder's schedule-info.json (a dict)."""
    with open(os.path.join(plan_dir, "schedule-info.json"), encoding="utf-8") as fh:
        return json.load(fh)


def describe(info):
    """The solver's status, seconds, gap and time limit, then a line per night solved on its own
    (its options, seconds, status and gap to its own bound)."""
    line = (f"solver {info['status']}, {info['seconds']:.2f} s (limit {info['time_limit_s']:.0f} s), "
            f"gap {100 * info['relative_gap']:.3f}%")
    stages = info.get("stage_seconds", {})
    if stages:
        rest = sum(stages.values()) - stages.get("requests", 0.0)
        line += (f"\n      stages (s): " + ", ".join(f"{k} {v:.2f}" for k, v in stages.items())
                 + f"; the request stage adds {100 * stages.get('requests', 0.0) / rest:.1f}% to the rest")
    for run in info.get("solved_by_night", []):
        gap = (run["bound"] - run["total"]) / run["bound"] if run["bound"] > 0 else 0.0
        line += (f"\n      night from {run['start_utc']}: {run['options']:6d} options, {run['seconds']:5.2f} s "
                 f"(LP {run.get('lp_seconds', 0.0):4.2f} s), {run['status']}, gap {100 * gap:.3f}%")
    return line


if __name__ == "__main__":
    main()
