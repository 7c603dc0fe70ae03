"""What an observation log has covered of each target, and which coming nights reach what is left.

:func:`coverage_table` answers the daily questions of a campaign, per target: the fraction of the
orbit's phase bins holding data, the RV range sampled against K, the largest uncovered phase gap,
the events observed (with their outcome and the parts of the series covered) and the last visit.
:func:`nights_into_gap` adds the coming nights at a site whose observable time falls inside that
gap. Phases are mean-anomaly phases (:mod:`planner.orbits.coverage`); times are BJD_TDB for the
phases and UTC Julian dates for the nights.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits import coverage
from ..orbits.events import predict_events

#: Phase bins of a coverage count when the log does not say otherwise.
DEFAULT_BINS = 10
COVERAGE_COLUMNS = (
    "target", "observations", "bins_covered", "phase_coverage", "gap_start_phase", "gap_end_phase",
    "gap_width", "rv_sampled_min_ms", "rv_sampled_max_ms", "rv_range_fraction", "events_observed",
    "last_visit_jd_utc",
)


def reference_epoch(targets: pd.DataFrame) -> np.ndarray:
    """Phase zero (BJD_TDB) of each target: Tp of an orbit, T0 of a linear ephemeris."""
    return np.where(targets["ephemeris"].to_numpy() == "orbit", targets["tp_bjd_tdb"].to_numpy(float),
                    targets["epoch_bjd_tdb"].to_numpy(float))


#: Parts of a series, in time order, with the baseline either side (hours) used to call a
#: stretch before T1 or after T4 "baseline" [common practice: about an hour].
SERIES_PARTS = ("pre", "T1", "mid", "T4", "post")
BASELINE_H = 1.0


def parts_covered(start_bjd, end_bjd, event_bjd, duration_d, baseline_d=BASELINE_H / 24.0) -> str:
    """The parts of a series (:data:`SERIES_PARTS`, ``;``-joined) inside [start, end] (BJD_TDB).

    Contacts from the event's duration: T1 = t - D/2, T4 = t + D/2; ``pre``/``post`` when the
    stretch reaches into the baseline before T1 / after T4; ``mid`` when it holds the event time.
    Without a duration only ``mid`` can be said.
    """
    out = []
    if np.isfinite(duration_d):
        t1, t4 = event_bjd - duration_d / 2, event_bjd + duration_d / 2
        marks = {"pre": start_bjd < t1 and end_bjd > t1 - baseline_d, "T1": start_bjd <= t1 <= end_bjd,
                 "mid": start_bjd <= event_bjd <= end_bjd, "T4": start_bjd <= t4 <= end_bjd,
                 "post": end_bjd > t4 and start_bjd < t4 + baseline_d}
        out = [k for k in SERIES_PARTS if marks[k]]
    elif start_bjd <= event_bjd <= end_bjd:
        out = ["mid"]
    return ";".join(out)


def _events_of(log_rows, targets, ti):
    """'periastron 12 done; primary_conjunction 40 partial (pre;T1)' for the event rows of one target.

    A row without a cycle gets the cycle of the event nearest the observation's middle; a series
    without ``covers`` gets the parts its times hold (:func:`parts_covered`).
    """
    ev = log_rows[~log_rows["purpose"].isin(["visit", "free"])]
    if ev.empty:
        return ""
    one = targets.iloc[[ti]].reset_index(drop=True)
    p = float(one["period_d"][0])
    words = []
    for row in ev.itertuples():
        mid = 0.5 * (row.start_bjd_tdb + row.end_bjd_tdb)
        near = predict_events(one, mid - 1.5 * p, mid + 1.5 * p, kinds=[row.purpose])
        covers, cycle = row.covers, row.cycle
        if len(near):
            if np.isfinite(cycle):
                pick = near[near["cycle"] == cycle]
            else:
                pick = near.iloc[[int(np.argmin(np.abs(near["bjd_tdb"].to_numpy() - mid)))]]
            if len(pick):
                cycle = float(pick["cycle"].iloc[0])
                if not covers and not row.single:
                    covers = parts_covered(row.start_bjd_tdb, row.end_bjd_tdb, float(pick["bjd_tdb"].iloc[0]),
                                           float(pick["duration_d"].iloc[0]))
        cyc = f" {int(cycle)}" if np.isfinite(cycle) else ""
        words.append(f"{row.purpose}{cyc} {row.outcome}" + (f" ({covers})" if covers else ""))
    return "; ".join(words)


def coverage_table(log: pd.DataFrame, targets: pd.DataFrame, n_bins: int = DEFAULT_BINS) -> pd.DataFrame:
    """One row per catalogue target (:data:`COVERAGE_COLUMNS`) from a log of :func:`planner.inputs.observation_log.read_log`.

    Only observations whose outcome is ``done`` or ``partial`` count. ``rv_*`` columns are NaN for
    targets without ``k_ms``; ``gap_*`` give the largest run of empty bins (phases, the end may
    exceed 1 when it wraps through phase 0); ``last_visit_jd_utc`` is the latest end (UTC JD).
    """
    if n_bins < 1:
        from ..errors import PeriplanError

        raise PeriplanError(f"the number of phase bins must be at least 1; got {n_bins}")
    used = log[log["outcome"].isin(["done", "partial"])]
    phase0 = reference_epoch(targets)
    rows = []
    for ti, t in targets.reset_index(drop=True).iterrows():
        mine = used[used["target_index"] == ti]
        p = float(t["period_d"])
        s = (mine["start_bjd_tdb"].to_numpy(float) - phase0[ti]) / p
        e = (mine["end_bjd_tdb"].to_numpy(float) - phase0[ti]) / p
        bins = coverage.covered_bins(s, e, mine["single"].to_numpy(bool), n_bins)
        g0, g1, width = coverage.largest_gap(bins)
        vmin = vmax = frac = np.nan
        if np.isfinite(t.get("k_ms", np.nan)) and t["ephemeris"] == "orbit":
            times = np.concatenate([mine["start_bjd_tdb"].to_numpy(float),
                                    mine["end_bjd_tdb"].to_numpy(float)[~mine["single"].to_numpy(bool)]])
            vmin, vmax, frac = coverage.rv_sampled(times, t["tp_bjd_tdb"], p, t["e"], np.radians(t["omega_deg"]),
                                                   t["k_ms"])
        rows.append({
            "target": t["name"], "observations": len(mine), "bins_covered": f"{int(bins.sum())}/{n_bins}",
            "phase_coverage": bins.mean(), "gap_start_phase": g0, "gap_end_phase": g1, "gap_width": width,
            "rv_sampled_min_ms": vmin, "rv_sampled_max_ms": vmax, "rv_range_fraction": frac,
            "events_observed": _events_of(mine, targets, ti),
            "last_visit_jd_utc": float(mine["end_jd_utc"].max()) if len(mine) else np.nan,
        })
    return pd.DataFrame(rows, columns=list(COVERAGE_COLUMNS))


def nights_into_gap(table: pd.DataFrame, targets: pd.DataFrame, intervals: pd.DataFrame, bjd_minus_utc_d=None):
    """Per row of ``table``, the nights (labels joined by ``;``) whose observable time reaches the gap.

    ``intervals`` are the observable intervals of the targets (:func:`planner.sky.windows.observable_intervals`,
    UTC Julian dates); ``bjd_minus_utc_d`` (days, per target) turns them into BJD_TDB for the
    phases (light time and TDB - UTC: at most 8.4 min + 70 s, negligible against a phase bin of a
    day-long orbit, so 0 may be passed for a quick answer).
    """
    phase0 = reference_epoch(targets)
    shift = np.zeros(len(targets)) if bjd_minus_utc_d is None else np.asarray(bjd_minus_utc_d, float)
    names = list(targets["name"])
    out = []
    for row in table.itertuples():
        ti = names.index(row.target)
        if not row.gap_width > 0:
            out.append("")
            continue
        iv = intervals[intervals["target_index"] == ti]
        p = float(targets["period_d"].iloc[ti])
        hits = []
        for night, a, b in zip(iv["night"], iv["start_jd_utc"], iv["end_jd_utc"]):
            pa = (a + shift[ti] - phase0[ti]) / p
            pb = (b + shift[ti] - phase0[ti]) / p
            # phases of the interval, unwrapped; the gap [g0, g1) may wrap through 1
            for k in (np.floor(pa) - 1, np.floor(pa), np.floor(pa) + 1):
                if pa < k + row.gap_end_phase and pb > k + row.gap_start_phase:
                    hits.append(str(night))
                    break
        out.append(";".join(dict.fromkeys(hits)))
    return out
