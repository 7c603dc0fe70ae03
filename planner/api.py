"""The public API's functions that take astropy ``Time`` and ``Quantity`` at the edge.

Each converts once to the engine's plain floats (BJD_TDB days, hours, minutes) and calls the
stage that does the work; :mod:`planner` exports them with the stages' own public functions.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from .numerics import value_in
from .orbits import events as _events
from .pipeline import PlanSettings, make_plan as _make_plan
from .timescales.epochs import bjd_bounds


def predict_events(targets: pd.DataFrame, start, end, kinds=None) -> pd.DataFrame:
    """Every wanted event of every target in a span, sorted by time (see :mod:`planner.orbits.events`).

    ``start`` and ``end`` are astropy ``Time`` instants (any scale): the result holds the events
    seen from the Earth with start <= t < end, with their UTC Julian date in ``jd_utc``. Plain
    numbers are BJD_TDB days and select on ``bjd_tdb`` (no ``jd_utc`` column then).
    ``kinds`` keeps only these event names.
    """
    if hasattr(start, "jd") and hasattr(end, "jd"):
        found = _events.predict_events(targets, *bjd_bounds(start, end), kinds=kinds)
        seen, t_utc = _events.seen_in_span(found, targets, start.utc, end.utc)
        return seen.assign(jd_utc=np.asarray(t_utc.jd1 + t_utc.jd2, dtype=float))
    return _events.predict_events(targets, float(start), float(end), kinds=kinds)


def make_plan(targets: pd.DataFrame, site, first_night, n_nights: int, settings: PlanSettings | None = None,
              *, baseline=None, k_sigma=None, overhead=None, repeats=None, progress=None, log=None):
    """The :class:`~planner.pipeline.Plan` of ``n_nights`` nights from ``first_night``.

    ``first_night`` is a ``datetime.date`` (or ``YYYY-MM-DD``): the local date of the first
    evening. ``baseline`` (hours, or a time Quantity) is the out-of-event time wanted either side,
    ``k_sigma`` the widening of each window in 1-sigma timing uncertainties, ``overhead``
    (minutes, or a time Quantity) the setup/slew time between blocks, ``repeats`` the week rule;
    each given one replaces the value in ``settings`` (default :class:`PlanSettings`). ``log``
    is an observation log (:func:`planner.read_log`): what it says was observed is planned around.
    """
    settings = settings or PlanSettings()
    sched = settings.schedule
    if overhead is not None:
        sched = dataclasses.replace(sched, overhead_min=value_in(overhead, "min", "overhead"))
    if repeats is not None:
        sched = dataclasses.replace(sched, repeats=repeats)
    settings = dataclasses.replace(
        settings, schedule=sched,
        **({} if baseline is None else {"baseline_h": value_in(baseline, "h", "baseline")}),
        **({} if k_sigma is None else {"k_sigma": float(k_sigma)}))
    return _make_plan(targets, site, first_night, n_nights, settings, progress=progress, log=log)
