"""What an observation log changes in the week's requests: done events drop out, the rest adapt.

:func:`apply_log` takes the week's candidate blocks (request candidates and monitor visits) and an
observation log (:func:`planner.inputs.observation_log.read_log`) and returns them as they stand
after what was observed:

- a series or visit of an event instance logged ``done`` drops out (each logged visit of an RV
  sequence fills one of its slots, in time order); one logged ``partial`` keeps
  the candidates that add parts not yet covered, each worth its share of new parts (a candidate
  covering ``T4;post`` after ``pre;T1;mid`` were logged keeps its value; one covering
  ``pre;T1`` adds nothing and drops out);
- a monitor target's visits keep ``visit_gap_h`` from its last logged visit;
- a target asking for a number of events per campaign (``campaign_events``) gets no request of
  that event once the log holds that many done;
- a target asking for phase coverage (``phase_bins``) gets RV visits in the bins no logged
  exposure fills (:func:`phase_candidates`), each worth more the larger the empty run it sits in;
  the scheduler gives them the time the week's events and monitor visits leave, never theirs
  (:mod:`planner.scheduling.choose`).
- a wanted orbital phase (``rv_phases``) whose window holds a logged ``visit`` of its target
  (the middle of the visit, ``done`` or ``partial``) is served: its candidates drop out, a
  merged candidate that serves it too included.

An event instance is matched by target, event and cycle when the log gives the cycle, else by
the instance whose predicted time is nearest the middle of the logged observation (within half a
period). Phases are taken on UTC Julian dates: the light time and TDB - UTC (at most 9.5 min)
are small against a phase bin of any orbit worth binning.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits import coverage
from ..orbits.geometry import names_event
from .phase_requests import is_wanted_phase
from .coverage import parts_covered, reference_epoch
from .blocks import SCHEDULE_COLUMNS, instance_keys, altitudes, mean_airmass, moon_at_blocks, sample_times
from .requests import PLACEMENT_SAMPLES
from .score import airmass_from_alt, score_components

#: Length of a phase-coverage visit when the catalogue gives no ``visit_h`` [common practice: one
#: spectrum of tens of minutes].
PHASE_VISIT_H = 0.5
USED = ("done", "partial")
#: Start of the ``group`` label of a phase-coverage visit (``phase|target|bin``): the scheduler
#: gives these the time the other blocks leave (:mod:`planner.scheduling.choose`).
PHASE_GROUP = "phase|"


def _instances(log, visible):
    """Per log row (events only), the visible instance key ``ti|event|minute`` it refers to."""
    keys = {}
    if log.empty or visible.empty:
        return keys
    for row in log[~log["purpose"].isin(["visit", "free"]) & log["outcome"].isin(USED)].itertuples():
        mine = visible[visible["target_index"] == row.target_index]
        mine = mine[[names_event(row.purpose, ev, label) for ev, label in zip(mine["event"], mine["label"])]]
        if mine.empty:
            continue
        if np.isfinite(row.cycle):
            mine = mine[mine["cycle"] == row.cycle]
        else:
            mid = 0.5 * (row.start_jd_utc + row.end_jd_utc)
            near = np.abs(mine["jd_utc"].to_numpy(float) - mid)
            mine = mine.iloc[[int(np.argmin(near))]] if near.min() < 0.5 * mine["period_d"].iloc[0] else mine.iloc[:0]
        for key in instance_keys([row.target_index] * len(mine), mine["event"], mine["jd_utc"]):
            keys.setdefault(key, []).append(row)
    return keys


def new_parts_share(covers: str, logged_parts: str) -> float:
    """Share of a series block's parts (``covers``, ``;``-separated names) that the log does not
    hold yet (``logged_parts``): the factor on its value; 1.0 for a block with no parts."""
    def parts(text):  # NaN (no parts) is an empty set
        return {p for p in text.split(";") if p} if isinstance(text, str) else set()

    mine = parts(covers)
    return len(mine - parts(logged_parts)) / len(mine) if mine else 1.0


def logged_instances(log: pd.DataFrame | None, targets: pd.DataFrame, visible: pd.DataFrame) -> dict:
    """{instance key ``ti|event|minute`` (:func:`planner.scheduling.blocks.instance_keys`): the log
    rows (done or partial) that observed it} for the event instances of ``visible``."""
    if log is None or log.empty:
        return {}
    vis = visible.assign(period_d=targets["period_d"].to_numpy(float)[visible["target_index"].to_numpy(int)])
    return _instances(log, vis)


def apply_log(cands: pd.DataFrame, monitors: pd.DataFrame, log: pd.DataFrame | None, targets: pd.DataFrame,
              visible: pd.DataFrame):
    """(candidates, monitors) left after the observation log; both tables keep their columns."""
    if log is None or log.empty:
        return cands, monitors
    logged = logged_instances(log, targets, visible)
    keys = instance_keys(cands["target_index"], cands["event"], cands["event_jd_utc"])
    keep = np.ones(len(cands), bool)
    score = cands["score"].to_numpy(float).copy()
    logged_parts = np.full(len(cands), "", dtype=object)
    for k, (key, c) in enumerate(zip(keys, cands.itertuples())):
        rows = logged.get(key)
        if not rows:
            continue
        if c.request == "rv_sequence":
            # each logged visit of a passage fills one slot, in time order: the first m drop out
            m = sum(r.outcome in USED for r in rows)
            keep[k] = int(c.slot) > m  # slots count from 1
            logged_parts[k] = ";".join(str(i) for i in range(1, min(m, int(c.n_slots)) + 1))
            continue
        if any(r.outcome == "done" for r in rows):
            keep[k] = False
            continue
        # parts already observed: as logged, or worked out from the logged times and the contacts
        had = set()
        for r in rows:
            parts = r.covers or parts_covered(r.start_jd_utc, r.end_jd_utc, c.event_jd_utc, c.t4_jd_utc - c.t1_jd_utc)
            had |= set(parts.split(";")) - {""}
        mine = [p for p in str(c.covers).split(";") if p]
        logged_parts[k] = ";".join(p for p in mine if p in had)
        share = new_parts_share(c.covers, logged_parts[k])
        if share == 0.0:
            keep[k] = False
        else:
            score[k] *= share
    done = log[log["outcome"] == "done"]
    for ti, wanted in enumerate(targets["campaign_events"] if "campaign_events" in targets else []):
        for event, n in (wanted or {}).items():
            if int(((done["target_index"] == ti) & (done["purpose"] == event)).sum()) >= n:
                keep &= ~((cands["target_index"].to_numpy(int) == ti) & (cands["event"].to_numpy(object) == event))
    keep &= ~_logged_phases(cands, log)
    out = cands.assign(score=score, logged_parts=logged_parts)[keep].reset_index(drop=True)
    if len(monitors):
        last = log[log["outcome"].isin(USED)].groupby("target_index")["start_jd_utc"].max()
        prev = last.reindex(monitors["target_index"].to_numpy(int)).to_numpy(float)
        ok = ~(monitors["start_jd_utc"].to_numpy(float) < prev + monitors["gap_d"].to_numpy(float))
        monitors = monitors[ok]
    return out, monitors


def _logged_phases(cands: pd.DataFrame, log: pd.DataFrame) -> np.ndarray:
    """(n,) True for the candidates that serve a wanted phase already served by a logged visit.

    A wanted phase's request is served when the middle of a logged ``visit`` (done or partial)
    of its target lies inside its window (UTC Julian dates); every candidate of its group that
    serves that phase (the merged ones too) is then out.
    """
    out = np.zeros(len(cands), bool)
    visits = log[(log["purpose"] == "visit") & log["outcome"].isin(USED)]
    main = is_wanted_phase(cands) if len(cands) else out
    if not main.any() or visits.empty:
        return out
    mid = 0.5 * (visits["start_jd_utc"].to_numpy(float) + visits["end_jd_utc"].to_numpy(float))
    v_ti = visits["target_index"].to_numpy(int)
    ti = cands["target_index"].to_numpy(int)
    w0, w1 = cands["window_start_jd_utc"].to_numpy(float), cands["window_end_jd_utc"].to_numpy(float)
    hit = np.zeros(len(cands), bool)
    for k in np.flatnonzero(main):
        m = mid[v_ti == ti[k]]
        hit[k] = bool(np.any((m >= w0[k]) & (m <= w1[k])))
    group = cands["group"].astype(str).to_numpy(object)
    served = set(zip(group[hit], cands["event"].astype(str).to_numpy(object)[hit]))
    for k, (g, serves) in enumerate(zip(group, cands["serves"].astype(str))):
        out[k] = hit[k] or any((g, name) in served for name in serves.split(";"))
    return out


def phase_candidates(log: pd.DataFrame | None, targets: pd.DataFrame, intervals: pd.DataFrame, nights: pd.DataFrame,
                     options, altitude_deg=None, moon_sep_deg=None):
    """(candidates, altitudes): RV visits in the empty phase bins of targets with ``phase_bins``.

    For each such target, night and observable interval, one movable visit of ``visit_h``
    (default :data:`PHASE_VISIT_H`) for each empty bin whose stretch inside the interval can hold
    it: it may start anywhere in that stretch (``earliest_start_jd_utc`` .. ``latest_start_jd_utc``,
    the whole visit inside the bin), proposed where the target is highest. Its value is the visit's
    score (priority, airmass, Moon; no rarity) times 1 + the share of the orbit's bins in the
    empty run it sits in (1 to 2; kept as its ``x_rarity``), so among the phase visits the largest gaps of the most
    important targets are filled first. That value is weighed against other phase visits only:
    the scheduler places phase visits in the time the week's events and monitor visits leave
    (:mod:`planner.scheduling.choose`), so none ever takes the place of an event, of any
    priority. ``group`` is ``phase|target|bin`` (:data:`PHASE_GROUP`): a bin is filled once in a
    plan, on the first night that has room for it.
    """
    empty = pd.DataFrame({c: [] for c in SCHEDULE_COLUMNS}), np.zeros((0, 9))
    if "phase_bins" not in targets or not (targets["phase_bins"] > 0).any() or intervals is None or intervals.empty:
        return empty
    phase0 = reference_epoch(targets)
    used = log[log["outcome"].isin(USED)] if log is not None and len(log) else None
    rows = []
    for ti in np.flatnonzero(targets["phase_bins"].to_numpy(int) > 0):
        t = targets.iloc[ti]
        n_bins, p = int(t["phase_bins"]), float(t["period_d"])
        mine = used[used["target_index"] == ti] if used is not None else None
        if mine is not None and len(mine):
            filled = coverage.covered_bins((mine["start_bjd_tdb"].to_numpy(float) - phase0[ti]) / p,
                                           (mine["end_bjd_tdb"].to_numpy(float) - phase0[ti]) / p,
                                           mine["single"].to_numpy(bool), n_bins)
        else:
            filled = np.zeros(n_bins, bool)
        if filled.all():
            continue
        run = _run_lengths(filled)
        length = (t["visit_h"] if np.isfinite(t.get("visit_h", np.nan)) else PHASE_VISIT_H) / 24.0
        iv = intervals[intervals["target_index"] == ti]
        for night, a, b in zip(iv["night"].astype(str), iv["start_jd_utc"].to_numpy(float),
                               iv["end_jd_utc"].to_numpy(float)):
            first, last = np.floor((a - phase0[ti]) / p * n_bins), np.ceil((b - phase0[ti]) / p * n_bins)
            for k in np.arange(first, last + 1):
                bin_ = int(k) % n_bins
                if filled[bin_]:
                    continue
                s = max(a, phase0[ti] + k * p / n_bins)
                e_bin = min(b, phase0[ti] + (k + 1) * p / n_bins)
                if s + length <= e_bin:
                    rows.append((ti, night, s, e_bin - length, bin_, run[bin_], length))
    if not rows:
        return empty
    ti = np.array([r[0] for r in rows])
    earliest = np.array([r[2] for r in rows])
    latest = np.array([r[3] for r in rows])
    length = np.array([r[6] for r in rows])
    start = _lowest_airmass_start(altitude_deg, ti, earliest, latest, length)
    end = start + length
    alt = altitudes(altitude_deg, ti, sample_times(start, end))
    x = mean_airmass(airmass_from_alt(alt))
    night = np.array([r[1] for r in rows], dtype=object)
    sep, illum = moon_at_blocks(moon_sep_deg, nights, ti, start, end, night)
    nan = np.full(ti.size, np.nan)
    # no rarity factor: a phase bin comes back every orbit, and the events of the orbit (rare
    # ones among them) must keep their precedence over the coverage visits
    sc = score_components(targets["priority"].to_numpy(float)[ti], nan, nan, x, sep, illum, nan, nan, options.weights)
    out = pd.DataFrame({c: np.full(ti.size, np.nan) for c in SCHEDULE_COLUMNS})
    out = out.astype({c: object for c in ("night", "target", "event", "serves", "label", "kind", "request", "group",
                                          "covers", "not_covered", "notes")})
    bins = np.array([r[4] for r in rows])
    out["night"], out["start_jd_utc"], out["end_jd_utc"] = night, start, end
    out["target"], out["target_index"] = targets["name"].to_numpy(object)[ti], ti.astype(np.int64)
    out["event"] = "visit"
    out["serves"] = [f"phase bin {b + 1} of {int(targets['phase_bins'].iloc[i])}" for i, b in zip(ti, bins)]
    out["label"] = out["serves"]
    out["kind"], out["request"], out["request_id"] = "fixed", "rv_visit", -1
    out["group"] = [f"{PHASE_GROUP}{i}|{b}" for i, b in zip(ti, bins)]
    out["slot"], out["n_slots"], out["covers"], out["not_covered"], out["notes"] = 0, 1, "", "", ""
    out["science_fraction"], out["priority"] = 1.0, targets["priority"].to_numpy(float)[ti]
    out["earliest_start_jd_utc"], out["latest_start_jd_utc"] = earliest, latest
    out["alt_low_deg"], out["airmass"], out["moon_sep_deg"], out["moon_illumination"] = alt.min(axis=1), x, sep, illum
    for c in sc.columns:
        out[c] = sc[c].to_numpy()
    # the gap factor takes the place of the rarity factor (1 for a visit), so that the sheet's
    # factors multiply to the score: 1 + the share of the orbit in the empty run of bins
    n_bins = targets["phase_bins"].to_numpy(float)[ti]
    out["x_rarity"] = 1.0 + np.array([r[5] for r in rows], float) / n_bins
    out["score"] = out["score"].to_numpy() * out["x_rarity"].to_numpy()
    return out, alt


def _lowest_airmass_start(altitude_deg, ti, earliest, latest, length):
    """(n,) start of each movable visit in [earliest, latest] where its middle is highest (of
    :data:`PLACEMENT_SAMPLES` evenly spread starts); the middle of the range without altitudes."""
    f = np.linspace(0.0, 1.0, PLACEMENT_SAMPLES)
    starts = earliest[:, None] + (latest - earliest)[:, None] * f
    if altitude_deg is None or ti.size == 0:
        return starts[:, PLACEMENT_SAMPLES // 2]
    idx = np.broadcast_to(ti[:, None], starts.shape)
    alt = np.asarray(altitude_deg(idx, starts + 0.5 * length[:, None]), float)
    pick = np.argmax(np.where(np.isfinite(alt), alt, -np.inf), axis=1)
    return starts[np.arange(ti.size), pick]


def _run_lengths(filled: np.ndarray) -> np.ndarray:
    """Per bin, the number of bins of the empty run (going round the orbit) it belongs to; 0 if filled."""
    n = filled.size
    out = np.zeros(n, int)
    if filled.all():
        return out
    if not filled.any():
        return np.full(n, n)
    start = int(np.argmax(filled))
    k = 0
    while k < n:
        j = (start + k) % n
        if filled[j]:
            k += 1
            continue
        m = 0
        while k + m < n and not filled[(start + k + m) % n]:
            m += 1
        for q in range(m):
            out[(start + k + q) % n] = m
        k += m
    return out
