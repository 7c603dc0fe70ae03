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
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .options import candidate_options
from .solver import choose_options


def _target_night(frame: pd.DataFrame) -> np.ndarray:
    """``target|night`` of each row (object array)."""
    return (frame["target_index"].astype(str) + "|" + frame["night"].astype(str)).to_numpy(object)


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
                  overhead_d: float, week_rule: str, time_limit_s: float):
    """(chosen candidates, chosen monitor visits, report): the best blocks of the week.

    ``cands``: request candidates (schedule columns, ``night`` already the night holding each);
    ``monitors``: monitor candidates (:func:`planner.scheduling.monitor.monitor_candidates`, with
    ``gap_d``). Chosen movable visits carry their chosen start and end. ``report`` is the
    solver's :class:`~planner.scheduling.solver.SolveReport`.
    """
    opts = candidate_options(cands)
    rules = _week_rules(cands, targets, week_rule)[opts["candidate"].to_numpy()] if len(opts) else np.zeros(0)
    # "every": no week key, so each instance may be taken; "best"/"first": the week key allows one;
    # "first" also makes each later night worth less
    rank = opts["night"].map({lab: i for i, lab in enumerate(nights_order)}).to_numpy(float)
    opts["week_key"] = np.where(rules == "every", "", opts["week_key"].to_numpy(object))
    opts["value"] = np.where(rules == "first", opts["value"] * FIRST_NIGHT_FACTOR ** rank, opts["value"])
    opts["source"] = "request"
    opts["monitor_night"] = ""
    opts["block_night"] = _target_night(cands.iloc[opts["candidate"].to_numpy()].reset_index(drop=True)) \
        if len(opts) else np.zeros(0, dtype=object)
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
        c = cands.iloc[opts["candidate"].to_numpy()]
        finite = np.isfinite(c["event_jd_utc"].to_numpy(float))
        key = (c["target_index"].astype(str) + "|" + c["event"].astype(str) + "|" + c["request"].astype(str) + "|"
               + c["slot"].astype(str) + "|" + np.round(c["event_jd_utc"].fillna(0) * 1440).astype(np.int64).astype(str))
        opts["instance"] = np.where(finite, key.to_numpy(object), "")
        sites = targets["sites"].to_numpy(float) if "sites" in targets else np.ones(len(targets))
        opts["sites_wanted"] = sites[c["target_index"].to_numpy(int)]
        mon["instance"], mon["sites_wanted"] = "", 1.0
        exclusive, capacity = ("group", "week_key", "instance"), {"instance": "sites_wanted"}
    every = pd.concat([opts, mon], ignore_index=True)
    chosen, report = choose_options(every, overhead_d, exclusive=exclusive, spacing=("spacing", "gap_d"),
                                    excludes=("monitor_night", "block_night"), capacity=capacity,
                                    time_limit_s=time_limit_s)
    pick = every[chosen]
    req = pick[pick["source"] == "request"]
    blocks = cands.iloc[req["candidate"].to_numpy()].copy()
    blocks["start_jd_utc"] = req["start_jd_utc"].to_numpy()
    blocks["end_jd_utc"] = req["end_jd_utc"].to_numpy()
    visits = monitors.iloc[pick[pick["source"] == "monitor"]["candidate"].to_numpy()]
    return blocks.reset_index(drop=True), visits, report
