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

Formulation: x_i in {0, 1}, maximise sum v_i x_i subject to clique inequalities sum_{i in C} x_i <= 1.
Blocks on a line form an interval graph, whose maximal cliques are the sets of blocks covering one
moment; a sweep over the start times finds each maximal clique once (at most one per block), so
the overlap rows are exact and few (Golumbic, *Algorithmic Graph Theory and Perfect Graphs*, 1980,
ch. 8: interval graphs and their clique matrices). Spacing groups are interval graphs of the
windows [start, start + gap) and are written the same way; exclusive groups are one row each;
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
    total, the relative gap between them (0 when proven optimal), seconds, and the model's size."""

    status: str
    objective: float
    bound: float
    gap: float
    seconds: float
    n_options: int
    n_rows: int

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


def _overlap_cliques(start, end_padded):
    """Maximal sets of intervals [start, end_padded) sharing a moment (lists of positions).

    Sweep over the sorted starts: a clique is emitted when an interval is about to end after at
    least one has started since the last emission, so every maximal clique comes out once.
    """
    order = np.argsort(start, kind="stable")
    active: list[int] = []
    cliques = []
    grown = False
    for i in order:
        s = start[i]
        if grown and any(end_padded[j] <= s for j in active):
            if len(active) > 1:
                cliques.append(list(active))
            grown = False
        active = [j for j in active if end_padded[j] > s]
        active.append(int(i))
        grown = True
    if grown and len(active) > 1:
        cliques.append(active)
    return cliques


def _window_cliques(start, gap):
    """Maximal sets of starts lying within ``gap`` of the first: windows [s_i, s_i + gap)."""
    order = np.argsort(start, kind="stable")
    s = start[order]
    hi = np.searchsorted(s, s + gap, side="left")
    keep = np.ones(s.size, bool)
    keep[1:] = hi[1:] > hi[:-1]  # a window ending where the previous one ends lies inside it
    return [order[k:h].tolist() for k, h in zip(np.flatnonzero(keep), hi[keep]) if h - k > 1]


def choose_options(options: pd.DataFrame, overhead_d: float = 0.0, exclusive=(), spacing=None, excludes=None,
                   time_limit_s: float = DEFAULT_TIME_LIMIT_S, rel_gap: float = DEFAULT_REL_GAP):
    """(chosen, report): a boolean mask over ``options`` and a :class:`SolveReport`.

    ``options`` has columns ``telescope``, ``start_jd_utc``, ``end_jd_utc`` (UTC Julian dates,
    end > start) and ``value`` (>= 0), and the group columns named in ``exclusive`` (labels; an
    empty label or NA puts an option in no group). ``spacing`` is None or a pair of column names
    ``(group, gap_d)``: options sharing a non-empty group label must start at least the gap
    (days, the group's largest value) apart. ``excludes`` is None or a pair of columns
    ``(leader, member)``: options whose ``leader`` label is L exclude every option whose
    ``member`` label is L (the leaders of a label must also share an exclusive group).
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
    rows: list[list[int]] = []
    for tel in pd.unique(options["telescope"]):
        idx = np.flatnonzero((options["telescope"] == tel).to_numpy())
        rows += [idx[c].tolist() for c in _overlap_cliques(start[idx], end[idx] + overhead_d)]
    for col in exclusive:
        labels = options[col].astype("string").fillna("").to_numpy(object)
        for label, members in pd.Series(np.arange(n)).groupby(labels):
            if label != "" and len(members) > 1:
                rows.append(members.tolist())
    if spacing is not None:
        group_col, gap_col = spacing
        labels = options[group_col].astype("string").fillna("").to_numpy(object)
        gaps = options[gap_col].to_numpy(float)
        for label, members in pd.Series(np.arange(n)).groupby(labels):
            gap = np.nanmax(gaps[members.to_numpy()]) if label != "" else 0.0
            if label != "" and len(members) > 1 and gap > 0:
                m = members.to_numpy()
                rows += [m[c].tolist() for c in _window_cliques(start[m], gap)]
    if excludes is not None:
        leader = options[excludes[0]].astype("string").fillna("").to_numpy(object)
        member = options[excludes[1]].astype("string").fillna("").to_numpy(object)
        leaders = pd.Series(np.arange(n)).groupby(leader).apply(list).to_dict()
        for j in np.flatnonzero(member != ""):
            lead = leaders.get(member[j], []) if member[j] in leaders else []
            if lead:
                rows.append(list(lead) + [int(j)])
    tel = options["telescope"].to_numpy(object)
    chosen, report = _solve(value, rows, time_limit_s, rel_gap,
                            relaxed_bound=lambda: _interval_bound(tel, start, end + overhead_d, value))
    return chosen, dataclasses.replace(report, seconds=time.perf_counter() - t0)


def _solve(value, rows, time_limit_s, rel_gap, relaxed_bound=None):
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import csr_array

    n = value.size
    useful = value > 0
    if not rows:  # nothing conflicts: take every option worth something
        total = float(value[useful].sum())
        return useful, SolveReport("optimal", total, total, 0.0, 0.0, n, 0)
    indptr = np.cumsum([0] + [len(r) for r in rows])
    a = csr_array((np.ones(indptr[-1]), np.concatenate(rows), indptr), shape=(len(rows), n))
    res = milp(-np.where(useful, value, 0.0), constraints=LinearConstraint(a, -np.inf, 1.0),
               integrality=np.ones(n), bounds=Bounds(0.0, useful.astype(float)),
               options={"time_limit": float(time_limit_s), "mip_rel_gap": float(rel_gap), "presolve": True})
    if res.status == 1:  # stopped by the time limit: the best plan found, or a greedy one if better
        return _time_limited_plan(a, value, useful, res, relaxed_bound)
    if res.x is None:
        raise PeriplanError(f"the solver found no plan: {res.message}")
    chosen = res.x > 0.5
    total = float(value[chosen].sum())
    bound = -float(res.mip_dual_bound) if getattr(res, "mip_dual_bound", None) is not None else total
    bound = max(bound, total)
    gap = (bound - total) / bound if bound > 0 else 0.0
    status = "optimal" if res.status == 0 else str(res.message)
    return chosen, SolveReport(status, total, bound, gap, 0.0, n, len(rows))


def _interval_bound(telescope, start, end_padded, value):
    """Best total with the overlap rule alone (each telescope's weighted interval scheduling,
    Kleinberg & Tardos, *Algorithm Design*, 2006, sec. 6.1): a bound on the full programme,
    which only adds rules. Intervals [start, end_padded) (the overhead included) may touch."""
    total = 0.0
    for tel in pd.unique(telescope):
        idx = np.flatnonzero((telescope == tel) & (value > 0))
        order = idx[np.argsort(end_padded[idx], kind="stable")]
        e, s, v = end_padded[order], start[order], value[order]
        before = np.searchsorted(e, s, side="right")  # intervals ending by each start
        best = np.zeros(order.size + 1)
        for j in range(order.size):
            best[j + 1] = max(best[j], v[j] + best[min(before[j], j)])
        total += float(best[-1])
    return total


def _greedy_choice(a, value, useful):
    """Options taken by value, largest first, while every row keeps room (all rows are "at most
    one"), so the choice keeps every rule."""
    cols = a.tocsc()
    taken = np.zeros(a.shape[0], bool)
    chosen = np.zeros(value.size, bool)
    for i in np.argsort(-value, kind="stable"):
        if not useful[i]:
            break
        rows_i = cols.indices[cols.indptr[i]:cols.indptr[i + 1]]
        if not taken[rows_i].any():
            taken[rows_i] = True
            chosen[i] = True
    return chosen


def _time_limited_plan(a, value, useful, res, relaxed_bound=None):
    """(chosen, report) when the time limit stops HiGHS: its best plan, or the greedy choice
    (:func:`_greedy_choice`) when HiGHS has none or a worse one. The bound is the smallest of
    the solver's dual bound, ``relaxed_bound()`` (the overlap rule alone) and the sum of every
    useful value: each is a true bound, so their minimum is one."""
    greedy = _greedy_choice(a, value, useful)
    solver = res.x > 0.5 if res.x is not None else None
    if solver is not None and value[solver].sum() >= value[greedy].sum():
        chosen, status = solver, "time limit reached"
    else:
        chosen = greedy
        status = ("time limit reached before the solver had a plan (a plan taken by value is used)" if solver is None
                  else "time limit reached (a plan taken by value, better than the solver's, is used)")
    total = float(value[chosen].sum())
    bounds = [float(value[useful].sum())]
    dual = getattr(res, "mip_dual_bound", None)
    if dual is not None and np.isfinite(dual):
        bounds.append(-float(dual))
    if relaxed_bound is not None:
        bounds.append(relaxed_bound())
    bound = max(min(bounds), total)
    gap = (bound - total) / bound if bound > 0 else 0.0
    return chosen, SolveReport(status, total, bound, gap, 0.0, value.size, a.shape[0])
