"""The week's plan: candidate blocks -> scores -> non-overlapping blocks per night, one telescope.

:func:`plan_week` is the scheduler. It takes the visible-event table, the flexible availability
and the night table (all times Julian dates in UTC, plain floats) and returns the schedule table
(:data:`SCHEDULE_COLUMNS`, one row per block, sorted by night and start time).

Method, per night:

1. Fixed-time candidates: every visible event window becomes one block covering the observable
   stretch of its window (``observable_start_jd_utc`` .. ``observable_end_jd_utc``), scored by
   :func:`planner.score.score_components`. By default a block must contain the predicted event
   moment (``ScheduleOptions.event_inside_only``), and it belongs to the night that holds its
   middle (a wide window can reach into the night before or after the event's).
2. Exact choice of fixed blocks: weighted interval scheduling (:func:`best_intervals`), the
   O(n log n) dynamic programme over blocks sorted by end time with a binary search for the last
   compatible block (Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1). Two blocks are
   compatible when the later one starts at least the setup/slew overhead after the earlier one
   ends. The chosen set has the largest possible total score; tests/test_schedule.py checks this
   against brute force over all subsets.
3. Flexible visits (targets with ``visit_h``) fill the gaps greedily: repeatedly place, among all
   flexible targets that still fit, the visit with the highest score (placement at the lowest mean
   airmass inside its free stretch), with the overhead either side, at most one visit per target
   per night, starts at least ``visit_gap_h`` after the target's previous visit, and no visit for
   a target that already has a fixed block that night. Greedy, so not optimal; stated as such.

Across the week the repeat rule (:data:`REPEAT_RULES`) says what to do with several instances of
the same target/event: ``"every"`` keeps them all (nights are independent); ``"first"`` keeps the
earliest night's and drops the others before later nights are scheduled; ``"best"`` keeps the
best-scored scheduled instance and re-plans the nights that lose one, until each target/event is
scheduled at most once (each night stays optimal for what is left; the week as a whole is a
heuristic, and in a rare case re-planning can leave a target/event with no instance).

Deterministic: ties are broken by a fixed order (end, start, target index, event name, night), so
the same input gives the same plan.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .errors import PeriplanError
from .score import DEFAULT_WEIGHTS, SCORE_COLUMNS, ScoreWeights, airmass_from_alt, score_components

log = logging.getLogger(__name__)

REPEAT_RULES = ("every", "first", "best")
FIXED, FLEXIBLE = "fixed", "flexible"
_MIN_PER_DAY = 1440.0
#: Samples of altitude through a block (start, interior, end) for airmass and the notes.
ALT_SAMPLES = 9

VISIBLE_COLUMNS = ("target", "event", "label", "bjd_tdb", "sigma_d", "target_index", "night",
                   "window_start_jd_utc", "window_end_jd_utc", "observable_fraction",
                   "observable_start_jd_utc", "observable_end_jd_utc", "moon_sep_deg", "moon_illumination")
AVAILABILITY_COLUMNS = ("target_index", "target", "night", "start_jd_utc", "end_jd_utc", "max_alt_deg")
NIGHT_COLUMNS = ("night", "sunset_jd_utc", "dark_start_jd_utc", "dark_end_jd_utc", "sunrise_jd_utc",
                 "moon_illumination")

SCHEDULE_COLUMNS = (
    "night", "start_jd_utc", "end_jd_utc", "target", "target_index", "event", "label", "kind",
    "event_jd_utc", "event_sigma_d", "window_start_jd_utc", "window_end_jd_utc", "observable_fraction",
    "priority", "period_d", "alt_start_deg", "alt_mid_deg", "alt_end_deg", "airmass", "moon_sep_deg",
    "moon_illumination",
) + SCORE_COLUMNS + ("notes",)


@dataclass(frozen=True)
class ScheduleOptions:
    """Settings of :func:`plan_week`.

    ``overhead_min``: setup/slew time (minutes) required between consecutive blocks.
    ``repeats``: week rule for repeated target/events, one of :data:`REPEAT_RULES`.
    ``min_block_min``: fixed candidates with a shorter observable stretch are dropped.
    ``twilight_margin_min``: a block starting or ending this close to the edges of astronomical
    darkness gets a note. ``flex_step_min``: step of the search for a flexible visit's start.
    ``event_inside_only``: keep only fixed blocks that contain the predicted event moment (a
    block that catches only the baseline or a wing of a long window is dropped); set False to
    schedule partial windows whatever they hold. ``weights``: the score weights.
    """

    overhead_min: float = 10.0
    repeats: str = "every"
    event_inside_only: bool = True
    min_block_min: float = 10.0
    twilight_margin_min: float = 30.0
    flex_step_min: float = 5.0
    weights: ScoreWeights = field(default_factory=lambda: DEFAULT_WEIGHTS)

    def __post_init__(self):
        if self.repeats not in REPEAT_RULES:
            raise PeriplanError(f"repeat rule {self.repeats!r} is unknown; expected one of {', '.join(REPEAT_RULES)}")
        for name in ("overhead_min", "min_block_min", "twilight_margin_min"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise PeriplanError(f"{name} must be a finite number of minutes >= 0; got {v!r}")
        if not (np.isfinite(self.flex_step_min) and self.flex_step_min > 0):
            raise PeriplanError(f"flex_step_min must be a positive number of minutes; got {self.flex_step_min!r}")


def best_intervals(start, end, weight, gap=0.0) -> np.ndarray:
    """Indices (ascending by end time) of the non-overlapping intervals of largest total weight.

    ``start``, ``end``, ``weight`` have shape (n,); intervals need ``end > start``. Interval j may
    precede i when ``end[j] + gap <= start[i]`` (``gap``: the overhead, same unit as the times).
    Intervals of weight <= 0 are never chosen. Exact: weighted interval scheduling by dynamic
    programming, O(n log n) (Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1). Ties
    between equal totals go to the solution found without the later-ending interval, and the sort
    order is (end, start, index), so the answer is deterministic.
    """
    s = np.asarray(start, dtype=float)
    e = np.asarray(end, dtype=float)
    w = np.asarray(weight, dtype=float)
    n = s.size
    if n == 0:
        return np.zeros(0, dtype=int)
    if np.any(~(e > s)):
        raise PeriplanError("every block must end after it starts")
    order = np.lexsort((np.arange(n), s, e))
    s_o, e_o, w_o = s[order], e[order], w[order]
    # p[k]: number of intervals (in sorted order) that may precede interval k
    p = np.searchsorted(e_o + gap, s_o, side="right")
    best = np.zeros(n + 1)
    take = np.zeros(n, dtype=bool)
    for k in range(n):
        with_k = w_o[k] + best[p[k]]
        if w_o[k] > 0 and with_k > best[k]:
            best[k + 1] = with_k
            take[k] = True
        else:
            best[k + 1] = best[k]
    chosen = []
    k = n
    while k > 0:
        if take[k - 1]:
            chosen.append(k - 1)
            k = p[k - 1]
        else:
            k -= 1
    return np.sort(order[np.asarray(chosen[::-1], dtype=int)]) if chosen else np.zeros(0, dtype=int)


def _require(frame: pd.DataFrame, columns, what: str) -> None:
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise PeriplanError(f"{what} table lacks column(s) {', '.join(missing)}; expected {', '.join(columns)}")


def _sample_times(start, end, k=ALT_SAMPLES):
    """(n, k) times evenly spaced from start to end of each block."""
    f = np.linspace(0.0, 1.0, k)
    return np.asarray(start, float)[:, None] + (np.asarray(end, float) - np.asarray(start, float))[:, None] * f


def _altitudes(altitude_deg, target_index, times):
    """(n, k) altitudes from the caller's function, or NaN when none is given."""
    if altitude_deg is None or times.size == 0:
        return np.full(times.shape, np.nan)
    idx = np.broadcast_to(np.asarray(target_index, dtype=int)[:, None], times.shape)
    alt = np.asarray(altitude_deg(idx, times), dtype=float)
    if alt.shape != times.shape:
        raise PeriplanError(f"altitude function returned shape {alt.shape}; expected {times.shape}")
    return alt


def night_index(jd_utc, nights: pd.DataFrame) -> np.ndarray:
    """Row of ``nights`` (int array, -1 when none) whose night holds each UTC Julian date.

    A night runs from ``noon_jd_utc`` to ``next_noon_jd_utc`` when the table has them (the
    night engine's windows); otherwise from 12 h before to 12 h after the middle of sunset and
    sunrise (or of the dark interval, or of the label date's following midnight UTC).
    """
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    if len(nights) == 0:
        return np.full(jd.shape, -1)
    if "noon_jd_utc" in nights and "next_noon_jd_utc" in nights:
        lo = nights["noon_jd_utc"].to_numpy(float)
        hi = nights["next_noon_jd_utc"].to_numpy(float)
    else:
        mid = 0.5 * (nights["sunset_jd_utc"].to_numpy(float) + nights["sunrise_jd_utc"].to_numpy(float))
        dark_mid = 0.5 * (nights["dark_start_jd_utc"].to_numpy(float) + nights["dark_end_jd_utc"].to_numpy(float))
        label_mid = np.array([_label_midnight_jd_utc(x) for x in nights["night"].astype(str)])
        mid = np.where(np.isfinite(mid), mid, np.where(np.isfinite(dark_mid), dark_mid, label_mid))
        lo, hi = mid - 0.5, mid + 0.5
    inside = (jd[:, None] >= lo[None, :]) & (jd[:, None] < hi[None, :])
    return np.where(inside.any(axis=1), np.argmax(inside, axis=1), -1)


def _label_midnight_jd_utc(label: str) -> float:
    """JD (UTC) of 00:00 UTC on the day after the date ``label``; NaN when it is not a date."""
    import datetime as dt

    try:
        return dt.date.fromisoformat(label).toordinal() + 1721425.5
    except ValueError:
        return np.nan


def _event_jd_utc(visible, targets):
    """UTC Julian date at which each event is seen: the table's ``jd_utc`` or computed from BJD_TDB."""
    if visible.empty:
        return np.zeros(0)
    if "jd_utc" in visible:
        return visible["jd_utc"].to_numpy(float)
    from .timescales import bjd_tdb_to_utc

    idx = visible["target_index"].to_numpy(int)
    t = bjd_tdb_to_utc(visible["bjd_tdb"].to_numpy(float), targets["ra_deg"].to_numpy(float)[idx],
                       targets["dec_deg"].to_numpy(float)[idx])
    return np.asarray(t.jd1 + t.jd2, dtype=float)


def fixed_candidates(visible: pd.DataFrame, targets: pd.DataFrame, altitude_deg=None,
                     options: ScheduleOptions = ScheduleOptions()) -> pd.DataFrame:
    """Scored fixed-time candidate blocks, one per visible event window, columns :data:`SCHEDULE_COLUMNS`.

    ``visible`` is the visible-event table (:data:`VISIBLE_COLUMNS`), ``targets`` the catalogue
    table (for priority, period, coordinates). Each block covers the observable stretch of its
    window; stretches shorter than ``options.min_block_min`` are dropped. ``altitude_deg`` is an
    optional function ``f(target_index, jd_utc) -> alt_deg`` (integer and float arrays of the same
    shape, result that shape); with it the airmass is the mean through the block, without it the
    table's ``alt_deg`` (when present) stands for the whole block. ``event_jd_utc`` is the moment
    the event is seen from the Earth (the table's ``jd_utc`` when present, else BJD_TDB minus
    light travel time, TDB -> UTC). With ``options.event_inside_only`` (default) blocks that do not
    contain that moment are dropped. A block whose airmass is unknown earns no airmass points.
    ``night`` is the table's label; :func:`plan_week` re-assigns each block to the night that holds
    its middle (:func:`night_index`).
    """
    return _fixed_candidates(visible, targets, altitude_deg, options)[0]


def _fixed_candidates(visible, targets, altitude_deg, options):
    """(candidates, (n, ALT_SAMPLES) altitudes through each block)."""
    _require(visible, VISIBLE_COLUMNS, "visible-event")
    # a fixed order independent of the input's row order: the tie-break of best_intervals
    v = visible.sort_values(["observable_start_jd_utc", "observable_end_jd_utc", "target_index", "event", "night"],
                            kind="stable").reset_index(drop=True)
    start = v["observable_start_jd_utc"].to_numpy(float)
    end = v["observable_end_jd_utc"].to_numpy(float)
    with np.errstate(invalid="ignore"):
        long_enough = (end - start) * _MIN_PER_DAY >= max(options.min_block_min, 1e-6)
        keep = np.isfinite(start) & np.isfinite(end) & long_enough
    v, start, end = v[keep].reset_index(drop=True), start[keep], end[keep]
    event_jd = _event_jd_utc(v, targets)
    if options.event_inside_only:
        inside = (event_jd >= start) & (event_jd <= end)
        v, start, end, event_jd = v[inside].reset_index(drop=True), start[inside], end[inside], event_jd[inside]
    n = len(v)
    idx = v["target_index"].to_numpy(int)
    times = _sample_times(start, end)
    alt = _altitudes(altitude_deg, idx, times)
    if altitude_deg is None and "alt_deg" in v:
        alt = np.repeat(v["alt_deg"].to_numpy(float)[:, None], ALT_SAMPLES, axis=1)
    airmass = airmass_from_alt(alt)
    window = (v["window_end_jd_utc"] - v["window_start_jd_utc"]).to_numpy(float)
    mean_airmass = _mean_airmass(airmass)
    priority = targets["priority"].to_numpy(float)[idx]
    period = targets["period_d"].to_numpy(float)[idx]
    scores = score_components(priority, period, v["observable_fraction"].to_numpy(float), mean_airmass,
                              v["moon_sep_deg"].to_numpy(float), v["moon_illumination"].to_numpy(float),
                              v["sigma_d"].to_numpy(float), window, options.weights)
    out = pd.DataFrame({
        "night": v["night"].astype(str).to_numpy(object), "start_jd_utc": start, "end_jd_utc": end,
        "target": v["target"].to_numpy(object), "target_index": idx.astype(np.int64),
        "event": v["event"].to_numpy(object), "label": v["label"].to_numpy(object),
        "kind": np.full(n, FIXED, dtype=object), "event_jd_utc": event_jd,
        "event_sigma_d": v["sigma_d"].to_numpy(float),
        "window_start_jd_utc": v["window_start_jd_utc"].to_numpy(float),
        "window_end_jd_utc": v["window_end_jd_utc"].to_numpy(float),
        "observable_fraction": v["observable_fraction"].to_numpy(float),
        "priority": priority, "period_d": period,
        "alt_start_deg": alt[:, 0], "alt_mid_deg": alt[:, ALT_SAMPLES // 2], "alt_end_deg": alt[:, -1],
        "airmass": mean_airmass, "moon_sep_deg": v["moon_sep_deg"].to_numpy(float),
        "moon_illumination": v["moon_illumination"].to_numpy(float),
    })
    for c in scores.columns:
        out[c] = scores[c].to_numpy()
    out["notes"] = ""
    return out[list(SCHEDULE_COLUMNS)], alt


def _mean_airmass(airmass):
    """(n,) mean over the samples of (n, k) airmasses, ignoring NaN; NaN where all are NaN."""
    known = ~np.isnan(airmass)
    count = known.sum(axis=1)
    total = np.where(known, airmass, 0.0).sum(axis=1)
    return np.where(count > 0, total / np.maximum(count, 1), np.nan)


def _choose_fixed(cands: pd.DataFrame, nights_order, overhead_d, repeats) -> np.ndarray:
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


def _free_stretches(lo, hi, busy, overhead_d):
    """Stretches [a, b] inside [lo, hi] at least ``overhead_d`` away from every busy block."""
    out = []
    cur = lo
    for bs, be in sorted(busy):
        if bs - overhead_d > cur:
            out.append((cur, min(hi, bs - overhead_d)))
        cur = max(cur, be + overhead_d)
        if cur >= hi:
            break
    if cur < hi:
        out.append((cur, hi))
    return [(a, b) for a, b in out if b > a]


def _best_placement(ti, stretches, length_d, earliest, busy, overhead_d, step_d, altitude_deg):
    """(start, alt samples, airmass samples) of target ``ti``'s best visit, or None if none fits.

    Candidate starts run on a ``step_d`` grid through every free part of the target's observable
    stretches; the one of lowest mean airmass wins (ties: the earliest). Without an altitude
    function the visit is centred on its stretch as nearly as the free time allows.
    """
    starts = []
    for a0, a1 in stretches:
        for g0, g1 in _free_stretches(a0, a1, busy, overhead_d):
            lo, hi = max(g0, earliest), g1 - length_d
            if hi < lo:
                continue
            if altitude_deg is None:
                starts.append(float(np.clip(0.5 * (a0 + a1) - 0.5 * length_d, lo, hi)))
            else:
                starts.extend(np.append(np.arange(lo, hi, step_d), hi).tolist())
    if not starts:
        return None
    s = np.asarray(starts)
    alt = _altitudes(altitude_deg, np.full(s.size, ti), _sample_times(s, s + length_d))
    x = airmass_from_alt(alt)
    pick = 0
    if altitude_deg is not None:
        mean_x = _mean_airmass(x)
        pick = int(np.argmin(np.where(np.isnan(mean_x), np.inf, mean_x)))
    return float(s[pick]), alt[pick], x[pick]


def _fill_flexible(availability, targets, nights, fixed_chosen, altitude_deg, moon_sep_deg, options):
    """Rows (dicts) of the flexible visits placed greedily in the gaps, night by night.

    Each round places, among all flexible targets that still fit, the visit with the highest
    score (ties: lower target index, then earlier start), until nothing fits.
    """
    if availability is None or availability.empty:
        return []
    n_t = len(targets)
    visit_h = targets["visit_h"].to_numpy(float) if "visit_h" in targets else np.full(n_t, np.nan)
    gap_h = targets["visit_gap_h"].to_numpy(float) if "visit_gap_h" in targets else np.full(n_t, np.nan)
    gap_d = np.where(np.isfinite(gap_h), gap_h / 24.0, 0.0)
    priority = targets["priority"].to_numpy(float)
    names = targets["name"].to_numpy(object)
    overhead_d = options.overhead_min / _MIN_PER_DAY
    step_d = options.flex_step_min / _MIN_PER_DAY
    moon_illum = dict(zip(nights["night"].astype(str), nights["moon_illumination"].to_numpy(float)))
    stretches: dict[str, dict[int, list]] = {}
    av = availability.sort_values(["start_jd_utc", "target_index"], kind="stable")
    for label, ti, a0, a1 in zip(av["night"].astype(str), av["target_index"].astype(int),
                                 av["start_jd_utc"].to_numpy(float), av["end_jd_utc"].to_numpy(float)):
        length_d = visit_h[ti] / 24.0
        if np.isfinite(length_d) and length_d > 0 and a1 - a0 >= length_d:
            stretches.setdefault(label, {}).setdefault(int(ti), []).append((a0, a1))
    last_start: dict[int, float] = {}
    rows = []
    for label in nights["night"].astype(str):
        here_av = stretches.get(label)
        if not here_av:
            continue
        here = fixed_chosen[fixed_chosen["night"] == label]
        busy = list(zip(here["start_jd_utc"], here["end_jd_utc"]))
        todo = sorted(set(here_av) - set(here["target_index"].astype(int)))
        lit = moon_illum.get(label, np.nan)
        while todo:
            found = []
            for ti in todo:
                length_d = visit_h[ti] / 24.0
                earliest = last_start.get(ti, -np.inf) + gap_d[ti]
                got = _best_placement(ti, here_av[ti], length_d, earliest, busy, overhead_d, step_d, altitude_deg)
                if got is not None:
                    found.append((ti, length_d) + got)
            if not found:
                break
            tis = np.array([f[0] for f in found])
            t0 = np.array([f[2] for f in found])
            t1 = t0 + np.array([f[1] for f in found])
            x = np.vstack([f[4] for f in found])
            sep = np.full(tis.size, np.nan)
            if moon_sep_deg is not None:
                sep = np.asarray(moon_sep_deg(tis, 0.5 * (t0 + t1)), dtype=float)
            nan = np.full(tis.size, np.nan)
            sc = score_components(priority[tis], nan, nan, _mean_airmass(x), sep, np.full(tis.size, lit),
                                  nan, nan, options.weights)
            total = sc["score"].to_numpy()
            k = min(range(tis.size), key=lambda j: (-total[j], tis[j], t0[j]))
            ti = int(tis[k])
            todo.remove(ti)
            last_start[ti] = t0[k]
            busy.append((t0[k], t1[k]))
            alt = found[k][3]
            row = {
                "night": label, "start_jd_utc": t0[k], "end_jd_utc": t1[k], "target": names[ti],
                "target_index": ti, "event": "visit", "label": "flexible visit", "kind": FLEXIBLE,
                "event_jd_utc": np.nan, "event_sigma_d": np.nan, "window_start_jd_utc": np.nan,
                "window_end_jd_utc": np.nan, "observable_fraction": np.nan,
                "priority": float(priority[ti]), "period_d": np.nan,
                "alt_start_deg": alt[0], "alt_mid_deg": alt[ALT_SAMPLES // 2], "alt_end_deg": alt[-1],
                "airmass": float(_mean_airmass(x[k:k + 1])[0]), "moon_sep_deg": sep[k],
                "moon_illumination": lit, "notes": "", "_alt": alt,
            }
            row.update({c: float(sc[c].iloc[k]) for c in sc.columns})
            rows.append(row)
    return rows


def _iso_minute(jd_utc: float) -> str:
    from astropy.time import Time

    return Time(jd_utc, format="jd", scale="utc").isot[11:16]


def _notes(block: pd.Series, alt: np.ndarray, night_row, options: ScheduleOptions) -> str:
    """Plain-language notes on one block: coverage, meridian, twilight, Sun."""
    notes = []
    if block["kind"] == FLEXIBLE:
        notes.append("flexible visit: any time inside the block")
    else:
        f = block["observable_fraction"]
        if np.isfinite(f) and f < 0.995:
            notes.append(f"partial: {100 * f:.0f}% of the event window is observable")
        ev = block["event_jd_utc"]
        if np.isfinite(ev) and not (block["start_jd_utc"] <= ev <= block["end_jd_utc"]):
            notes.append("the event time itself lies outside the block")
    finite = np.isfinite(alt)
    if finite.all() and alt.size >= 3:
        k = int(np.argmax(alt))
        if 0 < k < alt.size - 1 and alt[k] > alt[0] and alt[k] > alt[-1]:
            t_k = block["start_jd_utc"] + (block["end_jd_utc"] - block["start_jd_utc"]) * k / (alt.size - 1)
            notes.append(f"crosses the meridian near {_iso_minute(t_k)} UTC (mount flip?)")
    if night_row is not None:
        margin = options.twilight_margin_min / _MIN_PER_DAY
        d0, d1 = night_row["dark_start_jd_utc"], night_row["dark_end_jd_utc"]
        sunset, sunrise = night_row["sunset_jd_utc"], night_row["sunrise_jd_utc"]
        s, e = block["start_jd_utc"], block["end_jd_utc"]
        if (np.isfinite(sunset) and s < sunset) or (np.isfinite(sunrise) and e > sunrise):
            notes.append("SUN ABOVE THE HORIZON during the block: do not observe while the Sun is up")
        if not (np.isfinite(d0) and np.isfinite(d1)):
            notes.append("no astronomical darkness this night")
        else:
            if s < d0 + margin:
                notes.append("starts in or close to evening twilight")
            if e > d1 - margin:
                notes.append("ends in or close to morning twilight")
    return "; ".join(notes)


def plan_week(visible: pd.DataFrame, availability: pd.DataFrame | None, targets: pd.DataFrame,
              nights: pd.DataFrame, altitude_deg=None, moon_sep_deg=None,
              options: ScheduleOptions = ScheduleOptions()) -> pd.DataFrame:
    """Schedule table (columns :data:`SCHEDULE_COLUMNS`) for the nights of ``nights``.

    Parameters
    ----------
    visible : visible-event table (:data:`VISIBLE_COLUMNS`; ``alt_deg`` used when no altitude
        function is given)
    availability : flexible availability (:data:`AVAILABILITY_COLUMNS`) or None
    targets : catalogue table (:func:`planner.catalogue.read_catalogue`), indexed 0..n-1 in the
        order ``target_index`` refers to
    nights : night table (:data:`NIGHT_COLUMNS`), one row per night; its order is the week's order
    altitude_deg, moon_sep_deg : optional functions ``f(target_index, jd_utc) -> deg`` (arrays of
        one shape in, that shape out) giving the target's altitude and its Moon separation
    options : :class:`ScheduleOptions`

    Returns
    -------
    DataFrame sorted by night (in ``nights`` order) and start. ``kind`` is ``fixed`` or
    ``flexible``; for flexible visits ``event`` is ``visit`` and the event columns are NaN.
    ``notes`` is a ``"; "``-joined list of plain-language notes (partial coverage, event outside
    the block, meridian crossing, twilight, Sun). An empty table (right columns) when nothing fits.
    """
    _require(nights, NIGHT_COLUMNS, "night")
    if availability is not None:
        _require(availability, AVAILABILITY_COLUMNS, "flexible availability")
    order = list(nights["night"].astype(str))
    cands, alt_fixed = _fixed_candidates(visible, targets, altitude_deg, options)
    # a long window (large timing uncertainty) can have its observable stretch on a night other
    # than the event's: a block belongs to the night that holds its middle, so nights never overlap
    held = night_index(0.5 * (cands["start_jd_utc"] + cands["end_jd_utc"]).to_numpy(float), nights)
    cands["night"] = np.where(held >= 0, np.asarray(order + [""], dtype=object)[held], "")
    in_week = cands["night"].isin(order).to_numpy()
    cands, alt_fixed = cands[in_week].reset_index(drop=True), alt_fixed[in_week]
    mask = _choose_fixed(cands, order, options.overhead_min / _MIN_PER_DAY, options.repeats)
    chosen = cands[mask].reset_index(drop=True)
    alts = list(alt_fixed[mask])
    flex = _fill_flexible(availability, targets, nights, chosen, altitude_deg, moon_sep_deg, options)
    alts += [r.pop("_alt") for r in flex]
    if flex:
        chosen = pd.concat([chosen, pd.DataFrame(flex)[list(SCHEDULE_COLUMNS)]], ignore_index=True)
    night_rows = {str(r["night"]): r for _, r in nights.iterrows()}
    chosen["notes"] = [
        _notes(b, np.asarray(a, float), night_rows.get(str(b["night"])), options)
        for (_, b), a in zip(chosen.iterrows(), alts)
    ] if len(chosen) else []
    rank = {lab: i for i, lab in enumerate(order)}
    chosen = chosen.assign(_n=chosen["night"].map(rank))
    chosen = chosen.sort_values(["_n", "start_jd_utc", "target_index"], kind="stable").drop(columns="_n")
    chosen = chosen.reset_index(drop=True)
    chosen["target_index"] = chosen["target_index"].astype(np.int64)
    log.info("scheduled %d blocks (%d fixed of %d candidates, %d flexible) over %d nights",
             len(chosen), int(mask.sum()), len(cands), len(flex), len(order))
    return chosen[list(SCHEDULE_COLUMNS)]


def display_frame(schedule: pd.DataFrame, tz: str | None) -> pd.DataFrame:
    """The schedule for people and spreadsheets: ISO times in UTC and local time, minutes, notes.

    Columns ``night, start_utc, end_utc, start_local, end_local, target, event, label, kind,
    event_utc, event_sigma_min, score, x_priority, x_rarity, pts_*, alt_start_deg, alt_mid_deg, alt_end_deg, airmass,
    moon_sep_deg, moon_illumination, observable_fraction, notes``. Local columns are empty
    without ``tz`` (an IANA zone name).
    """
    from astropy.time import Time

    from .timescales import utc_to_iso_z, utc_to_local_iso

    n = len(schedule)

    def iso(col, local):
        jd = schedule[col].to_numpy(float)
        out = np.full(n, "", dtype=object)
        ok = np.isfinite(jd)
        if ok.any() and (tz or not local):
            t = Time(jd[ok], format="jd", scale="utc")
            out[ok] = utc_to_local_iso(t, tz) if local else utc_to_iso_z(t)
        return out

    frame = pd.DataFrame({
        "night": schedule["night"].to_numpy(object),
        "start_utc": iso("start_jd_utc", False), "end_utc": iso("end_jd_utc", False),
        "start_local": iso("start_jd_utc", True), "end_local": iso("end_jd_utc", True),
        "target": schedule["target"].to_numpy(object), "event": schedule["event"].to_numpy(object),
        "label": schedule["label"].to_numpy(object), "kind": schedule["kind"].to_numpy(object),
        "event_utc": iso("event_jd_utc", False),
        "event_sigma_min": schedule["event_sigma_d"].to_numpy(float) * _MIN_PER_DAY,
        "score": schedule["score"].to_numpy(float),
    })
    for c in SCORE_COLUMNS[:-1] + ("alt_start_deg", "alt_mid_deg", "alt_end_deg", "airmass", "moon_sep_deg",
                              "moon_illumination", "observable_fraction", "notes"):
        frame[c] = schedule[c].to_numpy()
    return frame
