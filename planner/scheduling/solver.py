"""The best set of candidate blocks for a campaign, chosen exactly by a 0/1 programme (HiGHS).

Every way of serving a request is an *option*: one block on one telescope, from ``start_jd_utc``
to ``end_jd_utc`` (UTC Julian dates), worth ``value``. :func:`choose_options` picks the options
of largest total value such that

- no two chosen blocks on one telescope overlap, counting the setup/slew overhead after each block
  (``end + overhead <= next start``);
- in each *exclusive* group column at most one option per label is chosen (an event instance done
  once, one visit of a target per night, a request done once per week ...);
- in each *spacing* group, chosen options start at least the group's gap apart (monitor visits
  keep their minimum gap across nights; the visits of an RV sequence their spacing);
- an option of an *excluding* label shuts out every option of the same label in a second column
  (a monitor visit of a target and night, and any other block of that target that night).

Formulation: x_i in {0, 1}, maximise sum v_i x_i. No overlap on a telescope is a path: the
telescope's time points (every start and every end plus overhead, sorted) are the nodes of a
network, each option an arc from its start to its end plus overhead, and an idle arc joins each
point to the next; one unit of flow from the first point to the last picks a sequence of blocks
that never overlap (flow conservation, two nonzeros per arc; the constraint matrix of a network
is totally unimodular, Ahuja, Magnanti & Orlin, *Network Flows*, 1993, ch. 11, so the rule costs
the search nothing by itself). The earlier clique form (one row per moment, hundreds of options in
each for a large catalogue) held millions of nonzeros at 3,000 targets. Spacing groups are
interval graphs of the windows [start, start + gap): a sweep writes their maximal cliques once
(Golumbic, *Algorithmic Graph Theory and Perfect Graphs*, 1980, ch. 8); exclusive groups are one row each;
an exclusion is one row per shut-out option (its label's excluding options, themselves at most
one, plus it).

The programme is solved by HiGHS (Huangfu & Hall 2018, Math. Prog. Comp. 10, 119) through
``scipy.optimize.milp``, which proves optimality or reports the gap to its dual bound when the
time limit stops it; the best plan found is used then (when the limit comes before HiGHS
has any plan, one taken greedily by value, which keeps every rule). tests/test_solver.py
compares totals with exhaustive search on random cases.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np
import pandas as pd

from ..errors import PeriplanError

#: Relative gap at which HiGHS may stop and call the plan optimal (0.01 %: far below the
#: precision of any score term).
DEFAULT_REL_GAP = 1e-4
#: Seconds the solver may take for the whole campaign, unless the caller says otherwise.
DEFAULT_TIME_LIMIT_S = 20.0


@dataclasses.dataclass(frozen=True)
class SolveReport:
    """How a choice was made: ``status`` in words, the chosen total, the solver's bound on the best
    total, the relative gap between them (0 when proven optimal), seconds, and the model's size.
    ``runs``: when a large part was solved night by night, one dict per night (``start_jd_utc`` of
    its first option, ``options``, ``seconds``, ``lp_seconds``, ``status``, ``total``, and ``bound``,
    the night's own bound given what the nights before it took). ``lp_seconds``: of the seconds,
    those of HiGHS's LP relaxation (:func:`_lp_prices`), the part branch and bound cannot save."""

    status: str
    objective: float
    bound: float
    gap: float
    seconds: float
    n_options: int
    n_rows: int
    runs: tuple = ()
    lp_seconds: float = 0.0

    @property
    def optimal(self) -> bool:
        return self.status == "optimal"

    def describe(self) -> str:
        """One line for people: proven optimal, or the gap to the bound and why the search stopped."""
        if self.n_options == 0:
            return "nothing to choose from"
        if self.optimal:
            return f"proven optimal (total {self.objective:.1f}; {self.n_options} options, {self.seconds:.1f} s)"
        return (f"{self.status}: total {self.objective:.1f}, within {100 * self.gap:.2f}% of the bound "
                f"{self.bound:.1f} ({self.n_options} options, {self.seconds:.1f} s)")


def _window_cliques(start, gap):
    """Maximal sets of starts lying within ``gap`` of the first: windows [s_i, s_i + gap)."""
    order = np.argsort(start, kind="stable")
    s = start[order]
    hi = np.searchsorted(s, s + gap, side="left")
    keep = np.ones(s.size, bool)
    keep[1:] = hi[1:] > hi[:-1]  # a window ending where the previous one ends lies inside it
    return [order[k:h].tolist() for k, h in zip(np.flatnonzero(keep), hi[keep]) if h - k > 1]


def choose_options(options: pd.DataFrame, overhead_d: float = 0.0, exclusive=(), spacing=None, excludes=None,
                   capacity=None, time_limit_s: float = DEFAULT_TIME_LIMIT_S, rel_gap: float = DEFAULT_REL_GAP):
    """(chosen, report): a boolean mask over ``options`` and a :class:`SolveReport`.

    ``options`` has columns ``telescope``, ``start_jd_utc``, ``end_jd_utc`` (UTC Julian dates,
    end > start) and ``value`` (>= 0), and the group columns named in ``exclusive`` (labels; an
    empty label or NA puts an option in no group). ``spacing`` is None or a pair of column names
    ``(group, gap_d)``: options sharing a non-empty group label must start at least the gap
    (days, the group's largest value) apart. ``excludes`` is None or a pair of columns
    ``(leader, member)``: options whose ``leader`` label is L exclude every option whose
    ``member`` label is L (the leaders of a label must also share an exclusive group).
    ``capacity`` maps an exclusive column to a column of per-option capacities: a label of that
    column may then have up to its largest capacity chosen (an event followed from two sites).
    ``overhead_d`` (days) must separate consecutive blocks on a telescope. Options of value
    <= 0 are never chosen.
    """
    t0 = time.perf_counter()
    n = len(options)
    if n == 0:
        return np.zeros(0, bool), SolveReport("optimal", 0.0, 0.0, 0.0, 0.0, 0, 0)
    start = options["start_jd_utc"].to_numpy(float)
    end = options["end_jd_utc"].to_numpy(float)
    value = options["value"].to_numpy(float)
    if not (np.all(np.isfinite(start)) and np.all(end > start) and np.all(np.isfinite(value))):
        raise PeriplanError("every option needs finite times with end after start and a finite value")
    rows: list = []  # each an int array of option positions
    upper: list[float] = []
    for col in exclusive:
        caps = options[capacity[col]].to_numpy(float) if capacity and col in capacity else None
        for members in _groups(options[col], min_size=1 if caps is not None else 2).values():
            cap = 1.0 if caps is None else float(np.nanmax(caps[members]))
            if len(members) > cap:
                rows.append(members)
                upper.append(cap)
    if spacing is not None:
        group_col, gap_col = spacing
        gaps = options[gap_col].to_numpy(float)
        for members in _groups(options[group_col], min_size=2).values():
            gap = np.nanmax(gaps[members])
            if len(members) > 1 and gap > 0:
                for c in _window_cliques(start[members], gap):
                    rows.append(members[c])
                    upper.append(1.0)
    if excludes is not None:
        leaders = _groups(options[excludes[0]])
        member = options[excludes[1]].astype("string").fillna("")
        for j in np.flatnonzero(member.isin(list(leaders)).to_numpy()) if leaders else ():
            rows.append(np.r_[leaders[member.iat[j]], j])
            upper.append(1.0)
    tel = options["telescope"].to_numpy(object)
    left = max(time_limit_s - (time.perf_counter() - t0), 0.2)  # the limit counts the model's building too
    chosen, report = _solve_parts(value, rows, np.asarray(upper, float), tel, start, end + overhead_d, left, rel_gap)
    return chosen, dataclasses.replace(report, seconds=time.perf_counter() - t0)


def _groups(labels: pd.Series, min_size: int = 1) -> dict:
    """{label: its rows' positions (sorted int array)} for every non-empty label of at least
    ``min_size`` rows, in label order (an empty label or NA is in no group)."""
    codes, uniques = pd.factorize(labels.astype("string").fillna(""), sort=True)
    names = np.asarray(uniques, dtype=object)  # an arrow string's scalar lookup costs microseconds
    order = np.argsort(codes, kind="stable")
    counts = np.bincount(codes, minlength=len(names))
    first = np.cumsum(counts) - counts
    wanted = np.flatnonzero((counts >= min_size) & (names != ""))
    return {str(names[g]): order[first[g]:first[g] + counts[g]] for g in wanted.tolist()}


def _runs(telescope, start, end_padded):
    """Label (int array) of each option's run: options overlapping on one telescope, one after
    another with no free moment between them (overhead included), form one run (a night, usually)."""
    label = np.zeros(start.size, np.int64)
    offset = 0
    for t in pd.unique(telescope):
        idx = np.flatnonzero(telescope == t)
        order = idx[np.argsort(start[idx], kind="stable")]
        reach = np.maximum.accumulate(end_padded[order])
        new = np.r_[True, start[order][1:] >= reach[:-1]]  # starts after every earlier option is over
        label[order] = offset + np.cumsum(new) - 1
        offset += int(new.sum())
    return label


def _components(rows, telescope, start, end_padded):
    """Label (int array) of the independent part of the model each option belongs to.

    Options join one part when they lie in one run (:func:`_runs`) or share a row (a request over
    two nights, a week rule, a monitor gap). Parts share nothing, so each is solved alone. The
    labels are connected components (scipy.sparse.csgraph) of the graph joining each option to
    its run's first option and to its rows' first options.
    """
    from scipy.sparse import coo_array
    from scipy.sparse.csgraph import connected_components

    n = start.size
    run = _runs(telescope, start, end_padded)
    first_of_run = np.full(run.max() + 1 if n else 0, n, np.int64)
    np.minimum.at(first_of_run, run, np.arange(n))
    lengths = np.array([len(r) for r in rows], np.int64)
    members = np.concatenate([np.asarray(r, np.int64) for r in rows]) if rows else np.zeros(0, np.int64)
    heads = np.repeat(members[np.r_[0, np.cumsum(lengths)[:-1]]] if rows else members, lengths)
    i = np.r_[np.arange(n), members]
    j = np.r_[first_of_run[run], heads]
    graph = coo_array((np.ones(i.size), (i, j)), shape=(n, n))
    return connected_components(graph, directed=False)[1]


#: A part of the model with more options than this is solved run by run (night by night, in time
#: order, :func:`_relaxed_runs`); below it the whole part is one programme [our choice: about two
#: nights of a 1,000-target catalogue, where one programme still solves in seconds].
SPLIT_ABOVE = 4000


def _solve_parts(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap):
    """:func:`_solve` on each independent part (:func:`_components`), the time shared by size.

    A part larger than :data:`SPLIT_ABOVE` options is solved run by run (:func:`_relaxed_runs`):
    the plan keeps every rule, and the sum of the runs' optima with the rows that join runs left
    out is a bound on the part, so the reported gap is a true one.
    """
    t0 = time.perf_counter()
    part = _components(rows, telescope, start, end_padded)
    labels, sizes = np.unique(part, return_counts=True)
    chosen = np.zeros(value.size, bool)
    total = bound = 0.0
    statuses, n_rows, runs = set(), 0, []
    matrix = _row_matrix(rows, value.size)
    done = 0
    for label, size in zip(labels, sizes):
        idx = np.flatnonzero(part == label)
        _, keep, sub_rows = _rows_of(matrix, idx)  # a part holds its rows whole
        share = _share(time_limit_s, t0, size, value.size, done)
        done += size
        if size > SPLIT_ABOVE:
            got, rep = _relaxed_runs(value[idx], sub_rows, upper[keep], telescope[idx], start[idx], end_padded[idx],
                                     share, rel_gap)
        else:
            got, rep = _solve(value[idx], sub_rows, upper[keep], telescope[idx], start[idx], end_padded[idx], share,
                              rel_gap, relaxed_bound=lambda i=idx: _interval_bound(telescope[i], start[i],
                                                                                   end_padded[i], value[i]))[:2]
        chosen[idx] = got
        total += rep.objective
        bound += rep.bound
        statuses.add(rep.status)
        n_rows += rep.n_rows
        runs += rep.runs
    status = "optimal" if statuses <= {"optimal"} else sorted(statuses - {"optimal"})[0]
    gap = (bound - total) / bound if bound > 0 else 0.0
    runs = tuple(sorted(runs, key=lambda r: r["start_jd_utc"]))
    return chosen, SolveReport(status, total, max(bound, total), gap, 0.0, value.size, n_rows, runs)


def _share(time_limit_s, t0, size, n, done):
    """Seconds for a piece of ``size`` of ``n`` options when ``done`` of them are solved: its share
    of the limit, less where the pieces before it (and the work since ``t0``) took more than
    theirs, so the whole stays within the limit; at least 0.2 s."""
    left = time_limit_s - (time.perf_counter() - t0)
    return max(0.2, min(time_limit_s * size / n, left * size / max(n - done, 1)))


def _run_bounds(telescope, start, end_padded, value, run):
    """(total, per run label): the best plan of the overlap rule alone (values clipped at 0) of
    the options, and of each run's options (:func:`_runs`), from one weighted interval scheduling
    pass per telescope. No option crosses the moment between two runs of a telescope, so the
    pass's best total at that moment is the sum of the runs' before it, and a run's best is the
    difference of the totals at its two ends (equal to :func:`_interval_bound` of its options but
    for rounding)."""
    per_run = np.zeros(int(run.max()) + 1 if run.size else 0)
    total = 0.0
    for t in pd.unique(telescope):
        m = np.flatnonzero(telescope == t)
        ends, best = _prefix_best(start[m], end_padded[m], value[m])
        order = np.argsort(end_padded[m], kind="stable")  # the order of ``ends``
        r = run[m][order]
        last = np.flatnonzero(np.r_[r[1:] != r[:-1], True])  # each run's last option in end order
        at_end = best[last + 1]
        per_run[r[last]] = np.diff(np.r_[0.0, at_end])
        total += float(best[-1])
    return total, per_run


def _relaxed_runs(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap):
    """(chosen, report) of a large part, run by run (night by night) in time order.

    Each run of blocks is solved exactly with its own rows and with the rows that join it to other
    runs, whose room is what the runs before it left (a request taken on Monday is not offered
    on Tuesday); so the plan keeps every rule. The bound is a Lagrangian one, priced by the LP of
    the options the nights' branch and bound ran on and grown by pricing (:func:`_week_lp`); with
    the time left, LP-guided neighbourhoods of the plan are solved exactly (:func:`_neighbourhoods`).
    """
    t_part = time.perf_counter()
    run = _runs(telescope, start, end_padded)
    first = {label: start[run == label].min() for label in np.unique(run)}
    upper = np.asarray(upper, float)
    used = np.zeros(len(rows))
    chosen = np.zeros(value.size, bool)
    kept = np.zeros(value.size, bool)
    bound, statuses, n_rows, runs = 0.0, set(), 0, []
    matrix = _row_matrix(rows, value.size)
    lengths = np.diff(matrix.tocsr().indptr)
    overlap_only, run_bound = _run_bounds(telescope, start, end_padded, value, run)
    done = 0
    for label in sorted(first, key=first.get):
        t_run = time.perf_counter()
        idx = np.flatnonzero(run == label)
        sub, which, sub_rows = _rows_of(matrix, idx)
        joined = bool(np.any(np.diff(sub.indptr) < lengths[which]))
        room = np.maximum(upper[which] - used[which], 0.0)  # a row with no room left shuts its options
        share = _share(time_limit_s, t_part, idx.size, value.size, done)
        done += idx.size
        got, rep, kept_run = _solve(value[idx], sub_rows, room, telescope[idx], start[idx], end_padded[idx], share,
                                    rel_gap)
        chosen[idx] = got
        kept[idx] = True if kept_run is None else kept_run
        used[which] += sub @ got.astype(float)
        # when the part's LP below fails: the run's own bound when no row joins it to another run
        # (then the two are the same problem), else its overlap-only optimum
        bound += run_bound[label] if joined else rep.bound
        statuses.add(rep.status)
        n_rows += rep.n_rows
        runs.append({"start_jd_utc": float(first[label]), "options": int(idx.size),
                     "seconds": round(time.perf_counter() - t_run, 3), "lp_seconds": round(rep.lp_seconds, 3),
                     "status": rep.status,
                     "total": rep.objective, "bound": rep.bound})
    nightly = float(value[chosen].sum())
    left = time_limit_s - (time.perf_counter() - t_part)
    week = _week_lp(value, rows, upper, telescope, start, end_padded, kept | chosen, max(left, 0.2), nightly)
    if week is not None:
        bound = min(bound, week.bound)
        left = time_limit_s - (time.perf_counter() - t_part)
        chosen = _neighbourhoods(value, rows, upper, telescope, start, end_padded, chosen, week, left, rel_gap)
    bound = min(bound, overlap_only)
    total = float(value[chosen].sum())
    bound = max(bound, total)
    gap = (bound - total) / bound if bound > 0 else 0.0
    status = "optimal" if statuses <= {"optimal"} and gap <= rel_gap else (
        sorted(statuses - {"optimal"})[0] if not statuses <= {"optimal"}
        else "solved night by night (each night exact, in time order)" if total <= nightly
        else "solved night by night, then improved across the week")
    return chosen, SolveReport(status, total, bound, gap, 0.0, value.size, n_rows, tuple(runs))


@dataclasses.dataclass(frozen=True)
class _WeekLP:
    """The LP relaxation of a whole programme, solved on a working set of its options: the bound,
    each option's LP value ``x`` and LP reduced value ``reduced`` (-inf outside the set)."""

    bound: float
    x: np.ndarray
    reduced: np.ndarray


#: Rounds of the week's LP (:func:`_week_lp`), and options added to its working set in each
#: [our choice: on 3,000-target weeks two rounds reach the LP bound of all 54,000 options]. Each
#: round's LP may take WEEK_LP_SLACK times its expected time (:data:`LP_SECONDS_PER_OPTION`):
#: the same 10,500-option week LP took 0.6-1 s in most runs and 10-22 s in some (HiGHS's
#: crossover), and the rounds stop there with the bound they have.
WEEK_LP_ROUNDS = 6
WEEK_LP_ADD = 1000
WEEK_LP_SLACK = 3.0
#: The week's working set holds at least this share of the useful options, at most
#: WEEK_LP_LEAST_MAX and what half the time left lets its LP take: nights solved on working sets
#: (:data:`SIFT_ABOVE`) leave a small set, whose LP prices the rest badly [our choice, measured on
#: random weeks: 10,000 targets, a set of 2,600 of 181,000 options gave a 6 % gap in 13.5 s, one of
#: 12,600 gives 0.22 % in 4.5 s; 30,000 targets: 3.65 % in 6.9 s -> 0.32 % in 23 s and a plan
#: 0.6 % better; 3,000 targets (their set is larger already) and 100,000 (no time) unchanged].
WEEK_LP_LEAST_SHARE = 0.07
WEEK_LP_LEAST_MAX = 40_000
#: The week's LP rounds stop when its bound is within this share of the gap between the working
#: set's LP and the plan in hand (:func:`_week_lp`) [our choice: the reported gap is then at most
#: 5 % of itself above the one of the LP of every option].
WEEK_LP_CLOSE = 0.05


def _week_lp(value, rows, upper, telescope, start, end_padded, work, time_limit_s, incumbent=0.0):
    """:class:`_WeekLP` by column generation, or None when its LP does not fit ``time_limit_s``.

    The LP of the options ``work`` gives row prices y >= 0, and with them a bound on every plan of
    the whole programme: upper @ y plus the best plan of the overlap rule alone for the values less
    their rows' prices (Lagrangian relaxation, Fisher 1981, Management Science 27, 1; exact for
    that rule by weighted interval scheduling, :func:`_interval_bound`), which holds for any
    y >= 0. A set smaller than :data:`WEEK_LP_LEAST_SHARE` of the options is first filled with
    those whose bound when forced into the plan (:func:`_option_bounds`), unpriced, is largest;
    then the options whose priced bound is largest join the set until the bound meets the set's
    own LP (then it is the LP bound of every option), or comes within :data:`WEEK_LP_CLOSE` of
    the gap between that LP and the plan in hand (``incumbent``, its total): the LP bound of every
    option lies between the set's LP and the bound, so a further round could shrink the reported
    gap by no more than that share of it. On
    a 3,000-target week: two LPs of 6,000 and 7,000 options, 1.1 s, give a bound 0.02 % above the
    LP bound of all 54,000 options, where a third round to it took 0.7 s more and one LP of all 7 s.
    """
    t0 = time.perf_counter()
    upper = np.asarray(upper, float)
    matrix = _row_matrix(rows, value.size)
    useful = value > 0
    work = work & useful
    least = min(int(WEEK_LP_LEAST_SHARE * np.count_nonzero(useful)), WEEK_LP_LEAST_MAX,
                int(time_limit_s / (2 * WEEK_LP_SLACK * LP_SECONDS_PER_OPTION)))
    if np.count_nonzero(work) < least:  # a small set (nights solved on working sets): the best by value first
        forced = np.where(useful & ~work, _option_bounds(telescope, start, end_padded, np.where(useful, value, 0.0)),
                          -np.inf)
        work[np.argsort(-forced, kind="stable")[:least - np.count_nonzero(work)]] = True
    best = None
    for _ in range(WEEK_LP_ROUNDS):
        keep = np.flatnonzero(work)
        left = time_limit_s - (time.perf_counter() - t0)
        if keep.size == 0 or keep.size * LP_SECONDS_PER_OPTION > left:
            break  # an LP too big for the time left (its crossover ignores the limit)
        sub, row_of = _cut(value, rows, upper, keep, telescope, start, end_padded)
        prices = _lp_prices(sub, min(left, max(1.0, WEEK_LP_SLACK * keep.size * LP_SECONDS_PER_OPTION)))
        if prices is None:
            break
        y = np.zeros(len(rows))
        y[row_of] = prices[1]
        priced = np.where(useful, value - matrix.T @ y, -np.inf)
        base = float(upper @ y)
        bound = base + _interval_bound(telescope, start, end_padded, priced)
        if best is None or bound < best.bound:
            x, reduced = np.zeros(value.size), np.full(value.size, -np.inf)
            x[keep], reduced[keep] = prices[3], prices[0][:keep.size]
            best = _WeekLP(bound, x, reduced)
        own = _dual_bound(sub, prices)
        outside = np.flatnonzero(useful & ~work)
        if bound - own <= max(1e-6 * max(bound, 1.0), WEEK_LP_CLOSE * (own - incumbent)) or outside.size == 0:
            break
        forced = (base + _option_bounds(telescope, start, end_padded, priced))[outside]
        work[outside[np.argsort(-forced, kind="stable")[:WEEK_LP_ADD]]] = True
    return best


#: Neighbourhoods of :func:`_neighbourhoods`: options whose LP reduced value is within this
#: fraction of the LP bound are set free, the fraction growing fourfold a round [our choice: on
#: 3,000-target weeks the fourth (0.6 %) reached a plan 2 % better than night by night in 0.3 s].
NEIGHBOURHOOD_FIRST = 1e-4
NEIGHBOURHOOD_ROUNDS = 5
#: ... and the rounds go on widening after one that finds nothing better while the plan is
#: further than this from the bound [our choice: on a 3-night week of 3,000 targets the round
#: after such a one took the gap from 1.34 % to 0.82 % in 0.8 s].
WIDEN_GAP = 0.01


def _neighbourhoods(value, rows, upper, telescope, start, end_padded, incumbent, week, time_limit_s, rel_gap):
    """A better plan than ``incumbent`` near the LP (:func:`_week_lp`), or ``incumbent``.

    Relaxation-induced neighbourhoods (Danna, Rothberg & Le Pape 2005, Math. Prog. 102, 71): the
    options where the plan and the LP agree are fixed; those where they differ, where the LP is
    fractional, or whose LP reduced value is within a margin of 0 are solved exactly
    (:func:`_solve`) with the room the fixed ones leave, and the margin grows while time is left,
    the gap to ``week.bound`` exceeds ``rel_gap`` and a wider margin still finds a better plan
    (or the gap exceeds :data:`WIDEN_GAP`). While the gap still exceeds :data:`WIDEN_GAP` after
    that, the rounds run again with the options near the LP set free where the plan and the LP
    agree too (2 nights x 3,000 targets: gap 1.43 % -> 0.94 %, 2 s -> 6.3 s of an 8 s limit; a
    week whose gap is within 1 % never reaches them). Every plan found keeps every rule.
    """
    t0 = time.perf_counter()
    upper = np.asarray(upper, float)
    matrix = _row_matrix(rows, value.size)
    by_row = matrix.tocsr()
    useful = value > 0
    best = incumbent.copy()
    fractional = (week.x > 1e-6) & (week.x < 1 - 1e-6)
    for loose in (False, True):  # loose: the options near the LP are set free even where the plan agrees
        for k in range(NEIGHBOURHOOD_ROUNDS):
            total = float(value[best].sum())
            left = time_limit_s - (time.perf_counter() - t0)
            gap = week.bound - total
            if gap <= rel_gap * week.bound or left <= 0.05 or (loose and gap <= WIDEN_GAP * week.bound):
                return best
            agree = np.abs(week.x - best) < 0.5
            near = week.reduced >= -NEIGHBOURHOOD_FIRST * 4 ** k * week.bound
            fixed = best & agree & ~(near & loose)
            free = (~agree | fractional | near) & ~fixed & useful
            free &= ~_overlaps(telescope, start, end_padded, fixed)
            room = upper - by_row @ fixed.astype(float)
            free &= (matrix.T @ (room < 1).astype(float)) == 0
            idx = np.flatnonzero(free)
            if idx.size * LP_SECONDS_PER_OPTION > left:
                return best
            if idx.size == 0:
                break
            _, row_of, sub_rows = _rows_of(matrix, idx)
            got = _solve(value[idx], sub_rows, room[row_of], telescope[idx], start[idx], end_padded[idx],
                         max(left / 2, 0.05), rel_gap)[0]  # half the time left: a wider round may follow
            plan = fixed.copy()
            plan[idx[got]] = True
            if value[plan].sum() <= total * (1 + 1e-9) and k > 0 and gap <= WIDEN_GAP * week.bound:
                break  # a wider neighbourhood that finds nothing better, the plan close: the next would cost more still
            if value[plan].sum() > total:
                best = plan
    return best


def _overlaps(telescope, start, end_padded, chosen):
    """True where an option overlaps a ``chosen`` one on its telescope (overhead included)."""
    out = np.zeros(start.size, bool)
    for t in pd.unique(telescope):
        mine = telescope == t
        c = np.flatnonzero(mine & chosen)
        order = np.argsort(start[c], kind="stable")
        s, e = start[c][order], end_padded[c][order]
        m = np.flatnonzero(mine)
        k = np.searchsorted(s, end_padded[m], side="left")  # chosen options starting before each end
        reach = np.r_[-np.inf, np.maximum.accumulate(e)][k]
        out[m] = reach > start[m]
    return out


def _flow_rows(telescope, start, end_padded):
    """(sparse rows of the overlap rule, right-hand sides, number of idle arcs) as a network flow.

    Per telescope: option i is an arc from the node of its start to the node of its end (overhead
    included), an idle arc joins each node to the next; conservation out - in = 1 at the first
    node, -1 at the last, 0 between. Columns: the n options, then the idle arcs.

    Nodes: the telescope's starts and ends sorted in time (an end before a start at the same
    moment: blocks may touch); each run of ends together with the run of starts after it is one
    node. Nothing leaves an end-only point but its idle arc, and nothing arrives at a start-only
    point but its idle arc, so merging them changes no path (the model is the same as with a node
    per time point) and the network has about a third of the rows.
    """
    n = start.size
    r_idx, c_idx, vals, rhs = [], [], [], []
    n_idle, n_rows = 0, 0
    for t in pd.unique(telescope):
        idx = np.flatnonzero(telescope == t)
        k = idx.size
        s_node, e_node, m = _nodes(start[idx], end_padded[idx])
        s_node, e_node = s_node + n_rows, e_node + n_rows
        idle = n + n_idle + np.arange(m - 1)
        link = n_rows + np.arange(m - 1)
        # out of a node: +1 (the option from its start, the idle arc to the next node); in: -1
        r_idx += [s_node, e_node, link, link + 1]
        c_idx += [idx, idx, idle, idle]
        vals += [np.ones(k), -np.ones(k), np.ones(m - 1), -np.ones(m - 1)]
        b = np.zeros(m)
        b[0], b[-1] = 1.0, -1.0
        rhs.append(b)
        n_idle += m - 1
        n_rows += m
    return (np.concatenate(r_idx), np.concatenate(c_idx), np.concatenate(vals)), np.concatenate(rhs), n_idle, n_rows


def _nodes(start, end_padded):
    """(node of each start, node of each end, number of nodes) of one telescope's network
    (:func:`_flow_rows`): times sorted, an end before a start at the same moment, and a new node
    opened by each end that follows a start."""
    k = start.size
    tag = np.repeat([0, 1], k)  # 0: an end, 1: a start
    order = np.lexsort((tag, np.concatenate([end_padded, start])))
    sorted_tag = tag[order]
    opens = np.r_[False, (sorted_tag[1:] == 0) & (sorted_tag[:-1] == 1)]
    node = np.empty(2 * k, int)
    node[order] = np.cumsum(opens)
    return node[k:], node[:k], int(opens.sum()) + 1


def _sparse_rows(rows, indptr, n_columns):
    """The rows (lists of column indices) as a 0/1 CSR matrix."""
    from scipy.sparse import csr_array

    members = np.concatenate(rows).astype(int) if rows else np.zeros(0, int)
    return csr_array((np.ones(indptr[-1]), members, indptr), shape=(len(rows), n_columns))


def _row_matrix(rows, n_columns):
    """The rows (lists of column indices) as a 0/1 CSC matrix, for cutting them down by columns."""
    return _sparse_rows(rows, np.cumsum([0] + [len(r) for r in rows]), n_columns).tocsc()


def _rows_of(matrix, keep):
    """(sub, row_of, sub_rows) of the options ``keep`` (indices): the rows of ``matrix``
    (:func:`_row_matrix`) holding any of them, cut down to them (``sub``, CSR, columns = positions
    in ``keep``; ``sub_rows``, each a sorted array of such positions), and their indices."""
    sub = matrix[:, keep].tocsr()
    row_of = np.flatnonzero(np.diff(sub.indptr) > 0)
    sub = sub[row_of]
    sub.sort_indices()
    return sub, row_of, np.split(sub.indices, sub.indptr[1:-1]) if row_of.size else []


@dataclasses.dataclass(frozen=True)
class _Programme:
    """The 0/1 programme in matrix form: maximise value @ x[:n] subject to ``flow @ x == rhs``
    (the overlap rule, :func:`_flow_rows`) and ``rows @ x <= upper``, 0 <= x <= ``ub``; columns
    are the n options, then the idle arcs."""

    value: np.ndarray
    flow: object
    rhs: np.ndarray
    rows: object
    upper: np.ndarray
    ub: np.ndarray

    @classmethod
    def build(cls, value, rows, upper, telescope, start, end_padded):
        from scipy.sparse import coo_array

        n = value.size
        (fr, fc, fv), rhs, n_idle, n_flow = _flow_rows(telescope, start, end_padded)
        m = n + n_idle
        flow = coo_array((fv, (fr, fc)), shape=(n_flow, m)).tocsr()
        a = _sparse_rows(rows, np.cumsum([0] + [len(r) for r in rows]), m)
        ub = np.ones(m)
        ub[:n] = value > 0
        return cls(np.where(value > 0, value, 0.0), flow, rhs, a, np.asarray(upper, float), ub)

    @property
    def n(self):
        return self.value.size

    def objective(self):
        c = np.zeros(self.ub.size)
        c[:self.n] = self.value
        return c


def _lp_prices(prog, time_limit_s):
    """(reduced values, row prices, node prices, the options' LP values x) of the programme's LP
    relaxation, or None when HiGHS does not solve it.

    Solved by HiGHS's interior-point method (on these flow-and-packing programmes several times
    faster than its dual simplex, which a branch-and-bound root would use). The prices need not be
    optimal for what is built on them to hold: for any row prices y >= 0 and node prices p,
    every plan is worth at most ``_dual_bound`` (weak duality), and a plan holding option i at
    most that bound plus i's reduced value d_i = v_i - y @ rows[:, i] - p @ flow[:, i] (< 0 for
    an option the LP leaves out).
    """
    from scipy.optimize import linprog

    res = linprog(-prog.objective(), A_ub=prog.rows if prog.rows.shape[0] else None,
                  b_ub=prog.upper if prog.rows.shape[0] else None, A_eq=prog.flow, b_eq=prog.rhs,
                  bounds=np.c_[np.zeros(prog.ub.size), prog.ub], method="highs-ipm",
                  options={"time_limit": float(max(time_limit_s, 0.05))})
    if res.status != 0 or res.eqlin is None:
        return None
    y = np.maximum(-res.ineqlin.marginals, 0.0) if prog.rows.shape[0] else np.zeros(0)
    p = -res.eqlin.marginals
    reduced = prog.objective() - prog.rows.T @ y - prog.flow.T @ p
    return reduced, y, p, res.x[:prog.n]


def _dual_bound(prog, prices):
    """Weak-duality bound on every plan of ``prog``: upper @ y + rhs @ p + the positive reduced
    values up to each column's upper bound."""
    reduced, y, p = prices[:3]
    return float(prog.upper @ y + prog.rhs @ p + (prog.ub * np.maximum(reduced, 0.0)).sum())


#: Seconds of HiGHS's interior-point LP per option, to judge whether a programme's LP fits its time
#: limit [measured: 0.3-0.5 s for a 6,000-option night, about 2 s for 20,000; a 200,000-option
#: night (100,000 targets) ran 120 s on a 4 s limit, in a crossover that does not heed it].
LP_SECONDS_PER_OPTION = 1e-4
#: Reduced-value margin of the first restricted programme, as a fraction of the LP bound; doubled
#: until the restricted optimum proves itself [our choice: 1 % keeps about a tenth of a
#: 3,000-target night's options, and its optimum is then proven in one or two rounds].
FIX_MARGIN = 0.01


def _solve(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap, relaxed_bound=None):
    """(chosen, report, kept): the best plan of one programme, its report, and the options its
    last branch and bound ran on (a mask; None when the LP was not solved). A programme whose LP
    would not fit the time limit (:data:`LP_SECONDS_PER_OPTION`), or of more than
    :data:`SIFT_ABOVE` options, is solved on a working set (:func:`_sifted`), a smaller one whole
    (:func:`_solve_whole`)."""
    if value.size > min(SIFT_ABOVE, time_limit_s / LP_SECONDS_PER_OPTION):
        return _sifted(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap)
    return _solve_whole(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap, relaxed_bound)[:3]


#: Programmes of more options than this are solved on a working set grown by pricing (as are
#: those whose LP would not fit the time limit); the first working set holds :data:`SIFT_START`
#: options, and each round adds up to as many [our choice: 3,000-target nights of 7,600 options
#: are solved whole, whose LP of every option then prices the week (0.55 % gap); 10,000-target
#: nights of 25,700 options took 2.5-3 s each whole (the LP alone 2.4-3 s), 0.1-0.5 s on a working
#: set with the same optimum, and the week's LP (:data:`WEEK_LP_LEAST_SHARE`) gives the bound
#: back; on 100,000-target nights of 250,000 options a set of 2,000 prices the rest].
SIFT_ABOVE = 12_000
SIFT_START = 2000


def _sifted(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap):
    """(chosen, report, kept) of a large programme, solved exactly on a working set of options
    that grows until no option outside it can better the plan (column generation in the manner
    of "sifting", Bixby et al. 1992, Operations Research 40, 885 [memory for the reference]).

    The working set W starts with the options of largest value and of largest value per day.
    W is solved by :func:`_solve_whole`; its LP's row prices y >= 0 then bound every plan: any
    plan holding option i is worth at most upper @ y + (v_i - y @ rows_i) + the best plans of the
    overlap rule alone, for the values less their prices, before i's start and after its end
    (:func:`_option_bounds`, weighted interval scheduling); every plan at most upper @ y + that
    rule's best plan of all (Lagrangian relaxation, Fisher 1981, Management Science 27, 1). An
    option outside W whose bound exceeds the plan in hand joins W; when none does, the plan is
    optimal. The time limit or a working set grown past what its LP can take in the time left
    stops the rounds, and the gap to the least of these bounds is reported.
    """
    t0 = time.perf_counter()
    n = value.size
    upper = np.asarray(upper, float)
    a = _sparse_rows(rows, np.cumsum([0] + [len(r) for r in rows]), n)
    useful = (value > 0) & (a.T @ (upper < 1).astype(float) == 0)  # a row with no room shuts its options
    v = np.where(useful, value, 0.0)
    density = v / np.maximum(end_padded - start, 1e-9)
    work = np.zeros(n, bool)
    for key in (v, density):
        ranked = np.argsort(-key, kind="stable")[:SIFT_START // 2]
        work[ranked[useful[ranked]]] = True
    best, kept, best_total, bound, status = np.zeros(n, bool), np.zeros(n, bool), 0.0, np.inf, "optimal"
    lp_seconds = 0.0
    a_csc = a.tocsc()
    while True:
        keep = np.flatnonzero(work)
        _, row_of, sub_rows = _rows_of(a_csc, keep)
        left = time_limit_s - (time.perf_counter() - t0)
        got, rep, kept_sub, y_sub = _solve_whole(v[keep], sub_rows, upper[row_of], telescope[keep], start[keep],
                                          end_padded[keep], max(0.8 * left, 0.05), rel_gap)
        lp_seconds += rep.lp_seconds
        if float(v[keep[got]].sum()) >= best_total:
            best, kept = np.zeros(n, bool), np.zeros(n, bool)
            best[keep[got]] = True
            kept[keep[got if kept_sub is None else kept_sub]] = True
            best_total, status = float(v[best].sum()), rep.status
        y = np.zeros(len(rows))
        if y_sub is not None:
            y[row_of] = y_sub
        priced = np.where(useful, v - a.T @ y, -np.inf)
        base = float(upper @ y)
        forced, overlap_only = _option_bounds(telescope, start, end_padded, priced, with_total=True)
        option_bound = base + forced
        outside = useful & ~work
        within = max(rep.bound, best_total)
        bound = min(bound, base + overlap_only,
                    max(within, float(option_bound[outside].max()) if outside.any() else within))
        bound = max(bound, best_total)
        gap = (bound - best_total) / bound if bound > 0 else 0.0
        better = np.flatnonzero(outside & (option_bound > best_total * (1 + 1e-9) + 1e-12))
        left = time_limit_s - (time.perf_counter() - t0)
        grown = keep.size + min(better.size, SIFT_START)
        if gap <= rel_gap or better.size == 0 or not rep.optimal or grown * LP_SECONDS_PER_OPTION > left:
            break
        work[better[np.argsort(-option_bound[better], kind="stable")[:SIFT_START]]] = True
    if gap <= rel_gap:
        status = "optimal"
    elif status == "optimal":
        status = "time limit reached (a working set of the options solved exactly)"
    n_rows = len(rows) + _nodes(start, end_padded)[2]
    # kept, for a bound on a larger programme (:func:`_week_lp`): the options the last
    # branch and bound ran on, and every option whose bound is within FIX_MARGIN of the plan
    near = useful & (option_bound >= (1 - FIX_MARGIN) * best_total)
    return best, SolveReport(status, best_total, bound, gap, 0.0, n, n_rows, lp_seconds=lp_seconds), kept | best | near


def _solve_whole(value, rows, upper, telescope, start, end_padded, time_limit_s, rel_gap, relaxed_bound=None):
    """(chosen, report, kept, y): the best plan of one programme, its report, the options its
    last branch and bound ran on (a mask; None when the LP was not solved) and the LP's row
    prices (None then too).

    Reduced-value fixing (Nemhauser & Wolsey, *Integer and Combinatorial Optimization*, 1988,
    sec. II.5.6.2 [memory for the section]): the LP relaxation gives a bound B and each option's
    reduced value d_i; a plan holding an option with d_i < -tau is worth less than B - tau. The
    branch and bound therefore runs on the options with d_i >= -tau only; when its optimum reaches
    B - tau it is the optimum of the whole programme, else tau doubles. A 3,000-target night of
    6,000 options is proven optimal on a few hundred of them in a fraction of a second, where
    HiGHS on all of them needed its whole time limit.
    """
    t0 = time.perf_counter()
    prog = _Programme.build(value, rows, upper, telescope, start, end_padded)
    n = prog.n
    too_big = n * LP_SECONDS_PER_OPTION > time_limit_s
    t_lp = time.perf_counter()
    prices = _lp_prices(prog, time_limit_s) if n and not too_big else None
    lp_seconds = time.perf_counter() - t_lp
    if prices is None:
        if too_big or time.perf_counter() - t0 >= 0.9 * time_limit_s:
            # no time for the LP, or stopped by the limit: branch and bound would begin with the
            # same LP by dual simplex, which does not heed the limit on a large programme (a
            # 20,000-option night ran 30-50 s on a 2 s limit), so the plan taken by value is used
            chosen, rep = _time_limited_plan(prog.rows[:, :n], prog.upper, telescope, start, end_padded, prog.value,
                                             prog.ub[:n] > 0, None, relaxed_bound,
                                             prog.rows.shape[0] + prog.flow.shape[0])
            return chosen, rep, None, None
        chosen, rep = _branch_and_bound(prog, telescope, start, end_padded, time_limit_s, rel_gap, relaxed_bound)
        return chosen, rep, None, None
    lp_bound = _dual_bound(prog, prices)
    d, useful = prices[0][:n], prog.ub[:n] > 0
    tau = FIX_MARGIN * lp_bound
    best = np.zeros(n, bool)
    while True:
        keep = np.flatnonzero((d >= -tau) & useful)
        whole = keep.size == np.count_nonzero(useful)
        left = time_limit_s - (time.perf_counter() - t0)
        got, rep = _restricted(value, rows, prog.upper, keep, telescope, start, end_padded, max(left, 0.05), rel_gap)
        chosen = np.zeros(n, bool)
        chosen[keep[got]] = True
        if prog.value[chosen].sum() >= prog.value[best].sum():
            best, status = chosen, rep.status
        total = float(prog.value[best].sum())
        # a plan is worth at most the restricted bound, or B - tau when it holds an option left out
        bound = max(total, min(lp_bound, rep.bound if whole else max(rep.bound, lp_bound - tau)))
        gap = (bound - total) / bound if bound > 0 else 0.0
        stopped = not rep.optimal or left <= 0.05
        if gap > rel_gap and stopped:
            if best is not chosen:
                status = "time limit reached"
            # the LP's own plan, rounded (options by LP value, then value) and kept feasible, is
            # often better than the incumbent branch and bound had when the limit stopped it
            rounded = _greedy_choice(prog.rows[:, :n], prog.upper, telescope, start, end_padded, prog.value, useful,
                                     order=np.lexsort((-prog.value, -prices[3])))
            if prog.value[rounded].sum() > total:
                best, status = rounded, "time limit reached (the LP's plan, rounded, is used)"
                total = float(prog.value[best].sum())
                bound = max(total, bound)
                gap = (bound - total) / bound if bound > 0 else 0.0
        if gap <= rel_gap or whole or stopped:
            status = "optimal" if gap <= rel_gap else status
            report = SolveReport(status, total, bound, gap, 0.0, n, prog.rows.shape[0] + prog.flow.shape[0],
                                 lp_seconds=lp_seconds)
            kept = np.zeros(n, bool)
            kept[keep] = True
            return best, report, kept | best, prices[1]
        tau = (lp_bound - total) * (1 + 1e-9)  # the least margin that proves the plan in hand or betters it


def _restricted(value, rows, upper, keep, telescope, start, end_padded, time_limit_s, rel_gap):
    """:func:`_branch_and_bound` on the options ``keep`` only (the rows cut down to them)."""
    if keep.size == 0:
        return np.zeros(0, bool), SolveReport("optimal", 0.0, 0.0, 0.0, 0.0, 0, 0)
    sub, _ = _cut(value, rows, upper, keep, telescope, start, end_padded)
    return _branch_and_bound(sub, telescope[keep], start[keep], end_padded[keep], time_limit_s, rel_gap, None)


def _cut(value, rows, upper, keep, telescope, start, end_padded):
    """(programme, row_of): the programme of the options ``keep`` alone, its rows cut down to them
    (rows holding none dropped), and the index in ``rows`` of each row kept."""
    _, row_of, sub_rows = _rows_of(_row_matrix(rows, value.size), keep)
    sub_upper = np.asarray(upper, float)[row_of]
    return _Programme.build(value[keep], sub_rows, sub_upper, telescope[keep], start[keep], end_padded[keep]), row_of


def _branch_and_bound(prog, telescope, start, end_padded, time_limit_s, rel_gap, relaxed_bound):
    """(chosen, report) of HiGHS's branch and bound on ``prog``; when its time limit comes first,
    its best plan or a greedy one (:func:`_time_limited_plan`)."""
    from scipy.optimize import Bounds, LinearConstraint, milp

    n = prog.n
    constraints = [LinearConstraint(prog.flow, prog.rhs, prog.rhs)]
    if prog.rows.shape[0]:
        constraints.append(LinearConstraint(prog.rows, -np.inf, prog.upper))
    integrality = np.zeros(prog.ub.size)
    integrality[:n] = 1
    res = milp(-prog.objective(), constraints=constraints, integrality=integrality, bounds=Bounds(0.0, prog.ub),
               options={"time_limit": float(time_limit_s), "mip_rel_gap": float(rel_gap), "presolve": True})
    n_rows = prog.rows.shape[0] + prog.flow.shape[0]
    useful = prog.ub[:n] > 0
    if res.status == 1:  # stopped by the time limit: the best plan found, or a greedy one if better
        return _time_limited_plan(prog.rows[:, :n], prog.upper, telescope, start, end_padded, prog.value, useful, res,
                                  relaxed_bound, n_rows)
    if res.x is None:
        raise PeriplanError(f"the solver found no plan: {res.message}")
    chosen = res.x[:n] > 0.5
    total = float(prog.value[chosen].sum())
    bound = -float(res.mip_dual_bound) if getattr(res, "mip_dual_bound", None) is not None else total
    bound = max(bound, total)
    gap = (bound - total) / bound if bound > 0 else 0.0
    status = "optimal" if res.status == 0 else str(res.message)
    return chosen, SolveReport(status, total, bound, gap, 0.0, n, n_rows)


#: Options per chunk of the interval DP's Python lists (bounded memory; the loop's speed is the same).
_DP_CHUNK = 65536


def _prefix_best(start, end_padded, value):
    """(ends, best) of one telescope's weighted interval scheduling (Kleinberg & Tardos,
    *Algorithm Design*, 2006, sec. 6.1), values clipped at 0: ``best[k]`` is the best total of
    non-overlapping options among the k that end first, so the best plan of the options ending by
    t is ``best[np.searchsorted(ends, t, side="right")]``. Intervals [start, end_padded) may touch."""
    order = np.argsort(end_padded, kind="stable")
    ends = end_padded[order]
    before = np.minimum(np.searchsorted(ends, start[order], side="right"), np.arange(order.size))
    values = np.maximum(value[order], 0.0)
    best = np.zeros(order.size + 1)
    # a plain loop over lists (0.3 us an option), a chunk at a time: lists of a survey's millions
    # of options would hold ~100 bytes of Python objects each; an earlier chunk's totals are final
    for c0 in range(0, order.size, _DP_CHUNK):
        c1 = min(c0 + _DP_CHUNK, order.size)
        k_all = before[c0:c1]
        earlier = best[np.minimum(k_all, c0)].tolist()  # best[k] for k <= c0
        local = [float(best[c0])] + [0.0] * (c1 - c0)  # local[i] = best[c0 + i]
        for j, (v, k, b) in enumerate(zip(values[c0:c1].tolist(), (k_all - c0).tolist(), earlier)):
            take = v + (local[k] if k > 0 else b)
            local[j + 1] = take if take > local[j] else local[j]
        best[c0 + 1:c1 + 1] = local[1:]
    return ends, best


def _interval_bound(telescope, start, end_padded, value):
    """Best total with the overlap rule alone (:func:`_prefix_best` on each telescope): a bound on
    the full programme, which only adds rules."""
    return float(sum(_prefix_best(start[m], end_padded[m], value[m])[1][-1]
                     for m in (telescope == t for t in pd.unique(telescope))))


def _option_bounds(telescope, start, end_padded, value, with_total=False):
    """Per option i: value_i plus the best plan of the overlap rule alone (values clipped at 0)
    among the options ending by i's start and among those starting after i's end: no plan
    holding i, with the overlap rule, is worth more. With ``with_total``, also
    :func:`_interval_bound` of the same values, which the forward pass holds already."""
    out = np.empty(value.size)
    total = 0
    for t in pd.unique(telescope):
        m = np.flatnonzero(telescope == t)
        s, e, v = start[m], end_padded[m], value[m]
        ends, best = _prefix_best(s, e, v)
        mirror_ends, after = _prefix_best(-e, -s, v)  # time reversed: [-end, -start) "ends by" -t iff start >= t
        out[m] = (v + best[np.searchsorted(ends, s, side="right")]
                  + after[np.searchsorted(mirror_ends, -e, side="right")])
        total += best[-1]
    return (out, float(total)) if with_total else out


def _greedy_choice(a, upper, telescope, start, end_padded, value, useful, order=None):
    """Options taken by value, largest first (or in ``order``), while every row keeps room and
    the option's telescope is free over its time (overhead included), so the choice keeps every
    rule."""
    import bisect

    cols = a.tocsc()
    used = np.zeros(a.shape[0])
    busy: dict = {}
    chosen = np.zeros(value.size, bool)
    for i in np.argsort(-value, kind="stable") if order is None else order:
        if not useful[i]:
            continue
        rows_i = cols.indices[cols.indptr[i]:cols.indptr[i + 1]]
        if np.any(used[rows_i] + 1 > upper[rows_i]):
            continue
        spans = busy.setdefault(telescope[i], [])
        k = bisect.bisect_left(spans, (start[i],))
        if (k > 0 and spans[k - 1][1] > start[i]) or (k < len(spans) and spans[k][0] < end_padded[i]):
            continue
        spans.insert(k, (start[i], end_padded[i]))
        used[rows_i] += 1
        chosen[i] = True
    return chosen


def _time_limited_plan(a, upper, telescope, start, end_padded, value, useful, res, relaxed_bound, n_rows):
    """(chosen, report) when the time limit stops HiGHS (``res``: its result, None when the limit
    stopped the LP before any branch and bound): its best plan, or the greedy choice
    (:func:`_greedy_choice`) when HiGHS has none or a worse one. The bound is the smallest of
    the solver's dual bound, ``relaxed_bound()`` (the overlap rule alone) and the sum of every
    useful value: each is a true bound, so their minimum is one."""
    greedy = _greedy_choice(a, upper, telescope, start, end_padded, value, useful)
    solver = res.x[:value.size] > 0.5 if res is not None and res.x is not None else None
    if solver is not None and value[solver].sum() >= value[greedy].sum():
        chosen, status = solver, "time limit reached"
    else:
        chosen = greedy
        status = ("time limit reached before the solver had a plan (a plan taken by value is used)" if solver is None
                  else "time limit reached (a plan taken by value, better than the solver's, is used)")
    total = float(value[chosen].sum())
    bounds = [float(value[useful].sum())]
    dual = getattr(res, "mip_dual_bound", None) if res is not None else None
    if dual is not None and np.isfinite(dual):
        bounds.append(-float(dual))
    if relaxed_bound is not None:
        bounds.append(relaxed_bound())
    bound = max(min(bounds), total)
    gap = (bound - total) / bound if bound > 0 else 0.0
    return chosen, SolveReport(status, total, bound, gap, 0.0, value.size, n_rows)
