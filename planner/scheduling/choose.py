"""The week's choice of blocks: every candidate and monitor visit in one model, solved exactly.

:func:`choose_blocks` turns the candidate blocks of the requests (series stretches, RV visits
and sequence slots, with their allowed starts) and the monitor visits into solver options
(:mod:`planner.scheduling.options`, :mod:`planner.scheduling.monitor`) and hands them to the
campaign solver (:func:`planner.scheduling.solver.choose_options`) with the rules of the week:

- no overlap on a telescope, with the setup/slew overhead between blocks;
- each request (``group``) served at most once: one stretch of a window, one start of a visit;
- the week rule of each target's event (``every``, ``best``: once in the week on the best
  night, ``first``: the first night that has it), from the catalogue's ``week_rule`` column
  or the plan's default;
- one monitor visit or RV visit of a target a night (an RV sequence may take several), and
  ``visit_gap_h`` between a monitor target's visits, across nights;
- the total value (the sum of the chosen blocks' scores) as large as possible.

Phase-coverage visits (:func:`planner.scheduling.log_requests.phase_candidates`) come second:
they take the time the week's other blocks leave. An event instance has one chance, a few hours
long; a phase bin is filled by one exposure anywhere in its share of any orbit, on every night
that share lasts. So the week's events and monitor visits are chosen first, exactly as without
phase coverage, and a phase visit never takes the place of one, whatever the priorities (a
priority-5 target's empty bin waits for a gap beside a priority-1 pulsation maximum). Then one
more model keeps every block of that choice (each worth more than all phase visits together;
a movable visit or a monitor visit may still move to another of its starts, a fixed block
stays) and adds the phase visits with the largest total value: one per bin in the plan whatever
the site, none on a night with a monitor visit of its target, each bin on the first night that
has room for it (the week rule ``first``, whatever the target's own).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import TEXT
from .log_requests import PHASE_GROUP
from .options import candidate_options
from .solver import SolveReport, choose_options


def _target_night(frame: pd.DataFrame) -> np.ndarray:
    """``target|night`` of each row (object array)."""
    return _target_night_text(frame).to_numpy(object)


def _target_night_text(frame: pd.DataFrame) -> pd.Series:
    """``target|night`` of each row (Arrow text)."""
    return frame["target_index"].astype(str) + "|" + frame["night"].astype(str)


def _blank_where(mask, column: pd.Series):
    """``np.where(mask, "", column)``: the text ``column`` emptied where ``mask``, done on its Arrow
    text when it has some (the same column, without a Python string per row)."""
    if len(column) and column.dtype == TEXT:
        return column.where(~np.asarray(mask, bool), "")
    return np.where(mask, "", column.to_numpy(object))


def _night_rank(nights: pd.Series, nights_order) -> np.ndarray:
    """Position of each row's night in ``nights_order`` (float; NaN for a night not in it), looked
    up once per night name, not once per option."""
    codes, names = pd.factorize(nights)
    rank_of = {lab: float(i) for i, lab in enumerate(nights_order)}
    return np.append([rank_of.get(n, np.nan) for n in names], np.nan)[codes]  # code -1: no night


#: Factor on the value of a "first" request for each night it waits: its first night wins over a
#: later one unless it is worth less than half as much there (a clash with a better block, a
#: window mostly lost) [our choice].
FIRST_NIGHT_FACTOR = 0.5


def _week_rules(cands: pd.DataFrame, targets: pd.DataFrame, default: str) -> np.ndarray:
    """Week rule of each candidate: the target's ``week_rule`` when given, else ``default``."""
    if "week_rule" not in targets:
        return np.full(len(cands), default, dtype=object)
    rule = targets["week_rule"].astype(str).to_numpy(object)[cands["target_index"].to_numpy(int)]
    return np.where(rule == "", default, rule)


def choose_blocks(cands: pd.DataFrame, monitors: pd.DataFrame, targets: pd.DataFrame, nights_order,
                  overhead_d: float, week_rule: str, time_limit_s: float, airmass_points=None):
    """(chosen candidates, chosen monitor visits, report): the best blocks of the week.

    ``cands``: request candidates (schedule columns, ``night`` already the night holding each),
    phase-coverage visits among them (``group`` starting with :data:`PHASE_GROUP`);
    ``monitors``: monitor candidates (:func:`planner.scheduling.monitor.monitor_candidates`, with
    ``gap_d``). Chosen movable visits carry their chosen start and end; chosen monitor visits
    keep their row labels of ``monitors``; ``airmass_points``
    (:func:`~planner.scheduling.options.airmass_points_at`) scores each moved start with its own
    airmass, and a chosen visit carries the ``score`` and ``pts_airmass`` of its chosen start.
    The phase visits take the time the other blocks leave (module docstring). ``report`` is the solver's
    :class:`~planner.scheduling.solver.SolveReport` of the whole choice.
    """
    phase = is_phase_visit(cands)
    first = cands[~phase].reset_index(drop=True)
    every, rules = _model(first, monitors, targets, nights_order, week_rule, airmass_points)
    chosen, report = choose_options(every, overhead_d, time_limit_s=time_limit_s, **rules)
    if not phase.any():
        return (*_picked(every, chosen, first, monitors), report)
    left_s = max(time_limit_s - report.seconds, 0.1 * time_limit_s)
    return _with_phase_visits(every, chosen, report, first, cands[phase].reset_index(drop=True), monitors, targets,
                              nights_order, overhead_d, week_rule, left_s, airmass_points)


def is_phase_visit(cands: pd.DataFrame) -> np.ndarray:
    """(n,) True for the phase-coverage visits among candidate blocks."""
    if "group" not in cands or not len(cands):
        return np.zeros(len(cands), bool)
    return cands["group"].astype(str).str.startswith(PHASE_GROUP).to_numpy()


#: Relative gap of the second choice, where every kept block is worth more than all phase visits
#: together: tight enough that the phase visits' own total is optimal to far below a score point.
PHASE_REL_GAP = 1e-9


def _with_phase_visits(every, chosen, report, first, phase, monitors, targets, nights_order, overhead_d, week_rule,
                       time_limit_s, airmass_points=None):
    """The first choice with the phase visits added in the time it leaves (module docstring).

    Second model: the chosen requests (every start of each chosen movable visit) and the chosen
    monitor visits' nights (every start), each option worth its value plus more than all phase
    options together, so the optimum keeps every one of them and only moves them within their
    own starts; and the phase options, one per bin in the plan, each worth less by
    :data:`FIRST_NIGHT_FACTOR` for every night it waits (:func:`_model`). When the time limit stops that solve
    before it keeps them all, the phase visits go into the free runs of the first choice as it
    stands (:func:`fill_phase_visits`).
    """
    pick = every[chosen]
    kept = np.unique(pick.loc[pick["source"] == "request", "candidate"].to_numpy(int))
    nights_kept = set(pick.loc[pick["source"] == "monitor", "group"])
    second = pd.concat([first.iloc[kept], phase], ignore_index=True)
    mon = monitors[monitors["group"].astype(str).isin(nights_kept).to_numpy()]
    every2, rules = _model(second, mon, targets, nights_order, week_rule, airmass_points)
    req = (every2["source"] == "request").to_numpy()
    is_phase = req & (every2["candidate"].to_numpy() >= kept.size)  # the rows of `phase` come after the kept ones
    value = every2["value"].to_numpy(float).copy()
    big = float(value[is_phase].sum()) + 1.0
    must = ~is_phase
    every2["value"] = np.where(must, value + big, value)
    n_must = len(kept) + len(nights_kept)
    chosen2, report2 = choose_options(every2, overhead_d, time_limit_s=time_limit_s, rel_gap=PHASE_REL_GAP, **rules)
    served = every2.loc[chosen2 & must, "group"].nunique()
    if served < n_must:  # stopped early: keep the first choice as it is, fill its free runs
        blocks, visits = _picked(every, chosen, first, monitors)
        filled, report_fill = fill_phase_visits(phase, blocks, visits, nights_order, overhead_d, time_limit_s,
                                                airmass_points)
        return pd.concat([blocks, filled], ignore_index=True), visits, _both(report, report_fill)
    every2["value"] = value
    blocks, visits = _picked(every2, chosen2, second, mon)
    total = float(value[chosen2].sum())
    phase_bound = report2.bound - big * n_must - float(value[chosen2 & must].sum())
    bound = max(total, report.bound + max(phase_bound, float(value[chosen2 & is_phase].sum())))
    status = report.status if not report.optimal else report2.status
    final = SolveReport(status, total, bound, (bound - total) / bound if bound > 0 else 0.0,
                        report.seconds + report2.seconds, report.n_options + int(is_phase.sum()),
                        report.n_rows + report2.n_rows, report.runs)
    return blocks, visits, final


def _telescopes(frame: pd.DataFrame) -> np.ndarray:
    return (frame["site"].astype(str).to_numpy(object) if "site" in frame
            else np.full(len(frame), "telescope", dtype=object))


def free_starts(earliest, latest, length_d, busy_start, busy_end, overhead_d):
    """[(lo, hi), ...]: the starts in [earliest, latest] (UTC JD) of a visit of ``length_d`` days
    that keep ``overhead_d`` from every busy interval [busy_start_k, busy_end_k]."""
    # a visit starting at x clashes with a busy [s, e] when x < e + overhead and x + length + overhead > s
    order = np.argsort(busy_start)
    runs, lo = [], float(earliest)
    for s, e in zip(np.asarray(busy_start, float)[order], np.asarray(busy_end, float)[order]):
        shut_lo, shut_hi = s - overhead_d - length_d, e + overhead_d
        if shut_hi <= lo or shut_lo >= latest:
            continue
        if shut_lo >= lo:
            runs.append((lo, shut_lo))
        lo = max(lo, shut_hi)
    if lo <= latest:
        runs.append((lo, float(latest)))
    return runs


def fill_phase_visits(phase: pd.DataFrame, blocks: pd.DataFrame, visits: pd.DataFrame, nights_order,
                      overhead_d: float, time_limit_s: float, airmass_points=None):
    """(chosen phase visits, report): the phase-coverage visits of largest total value in the time
    ``blocks`` and monitor ``visits`` leave (``overhead_d`` days from each on its telescope), one
    per bin (``group``) whatever the site, none on a night with a monitor visit of its target.
    Each candidate's allowed starts are cut to the free runs; a visit is proposed at the start
    nearest its own proposed (lowest-airmass) one. A bin follows the week rule ``first``: its
    value is multiplied by :data:`FIRST_NIGHT_FACTOR` for each night of ``nights_order`` it
    waits, so it is filled on the first night that has room for it (a later night of the plan may
    be lost, and tomorrow's plan would put it off again)."""
    tel = _telescopes(phase)
    busy = pd.concat([pd.DataFrame({"telescope": _telescopes(f), "start": f["start_jd_utc"].to_numpy(float),
                                    "end": f["end_jd_utc"].to_numpy(float)}) for f in (blocks, visits) if len(f)]
                     + [pd.DataFrame({"telescope": [], "start": [], "end": []})], ignore_index=True)
    shut = set(_target_night(visits)) if len(visits) else set()
    rows, lo, hi = [], [], []
    columns = (phase[c].to_numpy(float) for c in ("earliest_start_jd_utc", "latest_start_jd_utc", "start_jd_utc",
                                                  "end_jd_utc"))
    for k, (t, key, a, b, s, e) in enumerate(zip(tel, _target_night(phase), *columns)):
        if key in shut:
            continue
        mine = busy[busy["telescope"] == t]
        for r0, r1 in free_starts(a, b, e - s, mine["start"].to_numpy(), mine["end"].to_numpy(), overhead_d):
            rows.append(k)
            lo.append(r0)
            hi.append(r1)
    if not rows:
        return phase.iloc[:0], SolveReport("optimal", 0.0, 0.0, 0.0, 0.0, 0, 0)
    cut = phase.iloc[rows].reset_index(drop=True)
    length = (cut["end_jd_utc"] - cut["start_jd_utc"]).to_numpy(float)
    start = np.clip(cut["start_jd_utc"].to_numpy(float), lo, hi)
    cut["earliest_start_jd_utc"], cut["latest_start_jd_utc"] = lo, hi
    cut["start_jd_utc"], cut["end_jd_utc"] = start, start + length
    opts = candidate_options(cut, airmass_points=airmass_points)
    opts["group"] = "g" + cut["group"].astype(str).to_numpy(object)[opts["candidate"].to_numpy()]  # a bin, any site
    rank = _night_rank(opts["night"], nights_order)
    opts["value"] = opts["value"] * FIRST_NIGHT_FACTOR ** rank
    chosen, report = choose_options(opts, overhead_d, exclusive=("group",), time_limit_s=time_limit_s)
    pick = opts[chosen]
    return _at_chosen_starts(cut.iloc[pick["candidate"].to_numpy()], pick).reset_index(drop=True), report


def _both(first: SolveReport, second: SolveReport) -> SolveReport:
    """One report of the two choices: totals, bounds, seconds and sizes added; optimal when both are;
    the nights' solves are the first choice's."""
    status = first.status if not first.optimal else second.status
    objective, bound = first.objective + second.objective, first.bound + second.bound
    gap = (bound - objective) / bound if bound > 0 else 0.0
    return SolveReport(status, objective, bound, gap, first.seconds + second.seconds,
                       first.n_options + second.n_options, first.n_rows + second.n_rows, first.runs)


def _model(cands: pd.DataFrame, monitors: pd.DataFrame, targets: pd.DataFrame, nights_order, week_rule: str,
           airmass_points=None):
    """(options, rules): every option of the candidates and monitor visits with the groups of the
    week's rules (module docstring), and the keyword arguments of
    :func:`~planner.scheduling.solver.choose_options` that state them."""
    opts = candidate_options(cands, airmass_points=airmass_points)
    rules = _week_rules(cands, targets, week_rule)[opts["candidate"].to_numpy()] if len(opts) else np.zeros(0)
    # a phase bin is its own request, once in the plan whatever the site, filled on the first
    # night that has room for it
    phase = is_phase_visit(cands)[opts["candidate"].to_numpy()]
    rules = np.where(phase, "first", rules)
    if phase.any() or not len(opts):  # else the column stays as it is
        opts["group"] = np.where(phase, "g" + cands["group"].astype(str).to_numpy(object)[opts["candidate"].to_numpy()],
                                 opts["group"].to_numpy(object))
    # "every": no week key, so each instance may be taken; "best"/"first": the week key allows one;
    # "first" also makes each later night worth less
    rank = _night_rank(opts["night"], nights_order)
    opts["week_key"] = _blank_where((rules == "every") | phase, opts["week_key"])
    opts["value"] = np.where(rules == "first", opts["value"] * FIRST_NIGHT_FACTOR ** rank, opts["value"])
    opts["source"] = "request"
    opts["monitor_night"] = ""
    opts["block_night"] = (_target_night_text(cands).array.take(opts["candidate"].to_numpy()) if len(opts)
                           else np.zeros(0, dtype=object))
    opts["spacing"], opts["gap_d"] = "", 0.0
    mon = pd.DataFrame({
        "candidate": np.arange(len(monitors), dtype=np.int64), "telescope": "telescope",
        "start_jd_utc": monitors["start_jd_utc"].to_numpy(float), "end_jd_utc": monitors["end_jd_utc"].to_numpy(float),
        "value": monitors["score"].to_numpy(float), "group": monitors["group"].astype(str).to_numpy(object),
        "week_key": "", "night": monitors["night"].astype(str).to_numpy(object), "source": "monitor",
        "monitor_night": _target_night(monitors) if len(monitors) else np.zeros(0, dtype=object), "block_night": "",
        "spacing": ("spacing|" + monitors["target_index"].astype(str)).to_numpy(object),
        "gap_d": monitors["gap_d"].to_numpy(float) if len(monitors) else np.zeros(0),
    })
    if "site" in cands:
        opts["telescope"] = cands["site"].astype(str).to_numpy(object)[opts["candidate"].to_numpy()]
    if "site" in monitors:
        mon["telescope"] = monitors["site"].astype(str).to_numpy(object)
    exclusive, capacity = ("group", "week_key"), None
    if "site" in cands:  # several sites: an event instance is observed once, or at the sites it asks for
        keyed = ["target_index", "event", "request", "slot", "event_jd_utc"]  # the columns the key is made of
        c = cands[keyed].iloc[opts["candidate"].to_numpy()]
        finite = np.isfinite(c["event_jd_utc"].to_numpy(float))
        key = (c["target_index"].astype(str) + "|" + c["event"].astype(str) + "|" + c["request"].astype(str) + "|"
               + c["slot"].astype(str) + "|" + np.round(c["event_jd_utc"].fillna(0) * 1440).astype(np.int64).astype(str))
        opts["instance"] = np.where(finite, key.to_numpy(object), "")
        sites = targets["sites"].to_numpy(float) if "sites" in targets else np.ones(len(targets))
        opts["sites_wanted"] = sites[c["target_index"].to_numpy(int)]
        mon["instance"], mon["sites_wanted"] = "", 1.0
        exclusive, capacity = ("group", "week_key", "instance"), {"instance": "sites_wanted"}
    every = pd.concat([opts, mon], ignore_index=True)
    return every, {"exclusive": exclusive, "spacing": ("spacing", "gap_d"),
                   "excludes": ("monitor_night", "block_night"), "capacity": capacity}


def _picked(every: pd.DataFrame, chosen: np.ndarray, cands: pd.DataFrame, monitors: pd.DataFrame):
    """(blocks, monitor visits) of the chosen options: candidate rows with the chosen starts."""
    pick = every[chosen]
    req = pick[pick["source"] == "request"]
    blocks = _at_chosen_starts(cands.iloc[req["candidate"].to_numpy()], req)
    visits = monitors.iloc[pick[pick["source"] == "monitor"]["candidate"].to_numpy()]
    return blocks.reset_index(drop=True), visits


def _at_chosen_starts(blocks: pd.DataFrame, options: pd.DataFrame) -> pd.DataFrame:
    """Candidate rows (one per chosen option, in order) with the option's start, end, score and
    airmass points (those of the chosen start, :func:`~planner.scheduling.options.candidate_options`)."""
    out = blocks.copy()
    for col in ("start_jd_utc", "end_jd_utc", "score", "pts_airmass"):
        if col in out and col in options:
            out[col] = options[col].to_numpy()
    return out
