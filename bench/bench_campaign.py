"""A simulated campaign: re-planning every day from the log against one plan made on the first day.

Run: ``python bench/bench_campaign.py [--nights 60] [--lost 0.3] [--seed 1]``. The demo scenario
(invented targets at an invented site), with ``phase_bins = 10`` given to its RV targets, is
observed for ``--nights`` nights from 2026-12-07 under seeded weather: each night is lost with
probability ``--lost``, the same nights for both strategies.

- static: one plan of all the nights, made on the first day; each clear night's blocks are done.
- re-planned: each day a plan of the coming 7 nights is made from the log of the nights before
  (done events drop out, partial ones keep what is left, empty phase bins are asked for, monitor
  gaps count from the last visit); its first night is observed.

Prints, for both, the phase coverage reached by each RV target and the night it became full,
the distinct events observed per priority class (an event instance counts once, whatever the
number of blocks or visits that served it), and the run time. Goal: the re-planned campaign
fills the phase bins of every target in fewer nights, and observes at least as many distinct
events as the static one in every priority class.

No plan of phase visits can fill a target's bins before every bin has held a visit's length of
observable time on a clear night (a phase visit lies wholly inside its bin): the bench prints
that earliest night, from the target's observable intervals and the weather (phases on UTC
dates, as the planner takes them). A target whose bins never all do (a period longer than the
campaign, a bin that falls in daylight or by the Moon) is left out of the coverage goal. For a
target the re-planned campaign fills later than that night, and no sooner than the static
one, it prints each last bin's earlier clear chances and what was observed on those nights
instead. The last line says whether the goal holds as stated (strictly fewer nights for every
target that can be full, at least as many events in every class) and names the targets filled
on the same night by both.
"""

from __future__ import annotations

import argparse
import datetime as dt
import pathlib
import sys
import time

import numpy as np
import pandas as pd

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import planner  # noqa: E402
from planner.inputs.observation_log import parse_log  # noqa: E402
from planner.orbits import coverage  # noqa: E402
from planner.outputs.log_template import log_template_frame  # noqa: E402
from planner.scheduling.coverage import reference_epoch  # noqa: E402
from planner.scheduling.log_requests import PHASE_VISIT_H  # noqa: E402
from planner.sky.windows import observable_intervals  # noqa: E402

FIRST = dt.date(2026, 12, 7)
BINS = 10


def scenario():
    cat = pd.read_csv(HERE.parent / "sample_targets" / "targets.csv", comment="#")
    rv = cat["k_ms"].notna() & cat["e"].notna()
    cat["phase_bins"] = np.where(rv, BINS, np.nan)
    return planner.read_catalogue(cat), planner.read_site(HERE.parent / "sample_targets" / "site.toml")


def log_rows(blocks: pd.DataFrame, outcome: str) -> pd.DataFrame:
    rows = log_template_frame(blocks)
    rows["outcome"] = outcome
    # the parts the block covers (of its first event, for a block serving two)
    rows["covers"] = [str(c).split(" | ")[0].split(": ")[-1] for c in blocks["covers"].fillna("")]
    # the event instance each block serves: the UTC minute of its moment (as the planner keys it)
    rows["x_event_minute"] = np.round(blocks["event_jd_utc"].to_numpy(float) * 1440.0)
    return rows


def parsed(rows, targets):
    text = rows.to_csv(index=False) if len(rows) else "target,start,end,purpose,cycle,outcome,covers,notes\n"
    return parse_log(text, targets, "simulated-log.csv")


def filled_bins(done_log, targets, ti, before_night):
    """Boolean (BINS,): the bins of target ``ti`` filled by the done rows of the nights before ``before_night``."""
    p = float(targets["period_d"].iloc[ti])
    phase0 = reference_epoch(targets)[ti]
    mine = done_log[(done_log["target_index"] == ti) & (done_log["night_index"] < before_night)]
    return coverage.covered_bins((mine["start_bjd_tdb"] - phase0) / p, (mine["end_bjd_tdb"] - phase0) / p,
                                 mine["single"].to_numpy(bool), BINS)


def phase_progress(done_log, targets, nights_done):
    """Per RV target: bins filled at the end, and the first night (1-based) all were filled."""
    out = {}
    for ti in np.flatnonzero(targets["phase_bins"].to_numpy(int) > 0):
        full_at = next((k for k in range(1, nights_done + 1) if filled_bins(done_log, targets, ti, k).all()), None)
        out[targets["name"].iloc[ti]] = (int(filled_bins(done_log, targets, ti, nights_done).sum()), full_at)
    return out


def bin_chances(targets, site, weather, n_nights):
    """Per phase-bin target: (BINS,) lists of the clear nights (0-based) whose observable time
    holds a visit of the target's length (``visit_h``, else the planner's phase-visit length)
    inside the bin; phases on UTC dates, as the planner takes them."""
    nights = planner.night_table(site, FIRST, n_nights)
    label = {str(n): k for k, n in enumerate(nights["night"])}
    iv = observable_intervals(targets, site, nights)
    phase0 = reference_epoch(targets)
    out = {}
    for ti in np.flatnonzero(targets["phase_bins"].to_numpy(int) > 0):
        p = float(targets["period_d"].iloc[ti])
        visit_h = float(targets["visit_h"].iloc[ti]) if "visit_h" in targets else np.nan
        length_d = (visit_h if np.isfinite(visit_h) else PHASE_VISIT_H) / 24.0
        mine = iv[iv["target_index"] == ti]
        chances = [[] for _ in range(BINS)]
        nights_of = (label[str(n)] for n in mine["night"])
        for night, a, b in sorted(zip(nights_of, mine["start_jd_utc"], mine["end_jd_utc"])):
            if weather[night]:
                continue
            k = np.arange(np.floor((a - phase0[ti]) / p * BINS), np.floor((b - phase0[ti]) / p * BINS) + 1)
            lo = np.maximum(a, phase0[ti] + k * p / BINS)
            hi = np.minimum(b, phase0[ti] + (k + 1) * p / BINS)
            for j in (k[hi - lo >= length_d] % BINS).astype(int):
                if night not in chances[j]:
                    chances[j].append(night)
        out[targets["name"].iloc[ti]] = chances
    return out


def earliest_full(chances):
    """The first night (1-based, as :func:`phase_progress` counts) by which every bin has had a chance, or None."""
    if not all(chances):
        return None
    return max(min(c) for c in chances) + 1


def events_by_priority(done_log, targets):
    """Distinct event instances observed (the visits of one RV sequence are one event), by priority."""
    ev = done_log[~done_log["purpose"].isin(["visit", "free"])]
    distinct = ev[["target_index", "purpose", "x_event_minute"]].drop_duplicates()
    pri = targets["priority"].to_numpy(float)[distinct["target_index"].to_numpy(int)]
    return pd.Series(pri).value_counts().sort_index(ascending=False).to_dict()


def run(strategy, targets, site, weather, n_nights):
    rows = []
    t0 = time.perf_counter()
    if strategy == "static":
        plan = planner.make_plan(targets, site, FIRST, n_nights)
    for k in range(n_nights):
        night = FIRST + dt.timedelta(days=k)
        if strategy == "replanned":
            plan = planner.make_plan(targets, site, night, 7, log=parsed(pd.concat(rows) if rows else pd.DataFrame(),
                                                                        targets))
        tonight = plan.schedule[plan.schedule["night"] == night.isoformat()]
        if len(tonight):
            r = log_rows(tonight, "lost" if weather[k] else "done")
            r["x_night_index"] = k
            rows.append(r)
    seconds = time.perf_counter() - t0
    allrows = pd.concat(rows, ignore_index=True) if rows else pd.DataFrame()
    log = parsed(allrows, targets)
    log["night_index"] = allrows["x_night_index"].to_numpy() if len(allrows) else []
    log["x_event_minute"] = allrows["x_event_minute"].to_numpy(float) if len(allrows) else []
    done = log[log["outcome"] == "done"]
    return phase_progress(done, targets, n_nights), events_by_priority(done, targets), seconds, done


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--nights", type=int, default=60)
    parser.add_argument("--lost", type=float, default=0.3, help="fraction of nights lost to weather")
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    targets, site = scenario()
    weather = np.random.default_rng(args.seed).uniform(size=args.nights) < args.lost
    print(f"{args.nights} nights from {FIRST}, {int(weather.sum())} lost to weather (seed {args.seed})")
    results = {s: run(s, targets, site, weather, args.nights) for s in ("static", "replanned")}
    chances = bin_chances(targets, site, weather, args.nights)
    never = args.nights + 1
    sooner, same, late, left_out = [], [], [], []
    for name in results["static"][0]:
        for s in results:
            filled, full_at = results[s][0][name]
            when = f"full on night {full_at}" if full_at else "never full"
            print(f"  {name:12s} {s:10s} phase bins {filled}/{BINS}, {when}")
        floor = earliest_full(chances[name])
        if floor is None:
            print(f"  {name:12s} cannot be full in {args.nights} nights: bin(s) "
                  + ", ".join(str(j + 1) for j, c in enumerate(chances[name]) if not c)
                  + " never hold a visit on a clear night")
            left_out.append(name)
            continue
        static_at, replanned_at = (results[s][0][name][1] or never for s in ("static", "replanned"))
        print(f"  {name:12s} earliest night the sky and weather allow: {floor}")
        if replanned_at < static_at:
            sooner.append(name)
            continue
        (same if replanned_at == static_at else late).append(name)
        if replanned_at > floor:
            why_later(name, chances[name], results["replanned"][3], targets, min(replanned_at, never) - 1)
    for s, (_, by_pri, seconds, _) in results.items():
        print(f"  events observed by priority, {s:10s} " + ", ".join(f"p{p:g}: {n}" for p, n in by_pri.items())
              + f"   ({seconds:.0f} s)")
    classes = sorted(set(results["static"][1]) | set(results["replanned"][1]), reverse=True)
    short = [f"p{p:g}" for p in classes if results["replanned"][1].get(p, 0) < results["static"][1].get(p, 0)]
    holds = not short and not late and not same
    words = [f"full in fewer nights re-planned: {', '.join(sooner) or 'none'}"]
    if same:
        words.append(f"full on the same night in both: {', '.join(same)}")
    if late:
        words.append(f"full later re-planned: {', '.join(late)}")
    if left_out:
        words.append(f"cannot be full in {args.nights} nights: {', '.join(left_out)}")
    words.append("re-planned >= static events in " + ("every priority class" if not short
                                                      else f"every priority class but {', '.join(short)}"))
    print(f"goal {'holds' if holds else 'does not hold'}: " + "; ".join(words))


def why_later(name, chances, done, targets, last_night):
    """Print, for each bin still empty before ``last_night`` (0-based), its earlier clear chances
    and what the re-planned campaign observed on each of those nights instead."""
    ti = int(np.flatnonzero(targets["name"] == name)[0])
    empty = ~filled_bins(done, targets, ti, last_night)
    for j in np.flatnonzero(empty):
        before = [k for k in chances[j] if k < last_night]
        words = []
        for k in before:
            rows = done[done["night_index"] == k]
            what = ", ".join(f"{t} {pu} p{targets['priority'].iloc[i]:g}" for t, pu, i in
                             zip(rows["target"], rows["purpose"], rows["target_index"].to_numpy(int)))
            words.append(f"night {k + 1}: {what or 'nothing'}")
        print(f"  {name:12s} bin {j + 1} had room before night {last_night + 1} on " +
              ("; ".join(words) if words else "no clear night"))


if __name__ == "__main__":
    main()
