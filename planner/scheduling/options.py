"""Candidate blocks -> solver options: every way of serving each request, with its groups.

A fixed candidate (a series stretch) is one option. A movable candidate (an RV visit or a slot of
an RV sequence, which may start anywhere in [``earliest_start_jd_utc``, ``latest_start_jd_utc``])
becomes up to :data:`MAX_STARTS` options: its proposed start (the lowest airmass, chosen by the
request stage) and starts evenly spread over the allowed range. Each later start is worth a
little less, at most :data:`MOVE_PENALTY` of the value at the far end of the range, so the solver
keeps the proposed start whenever it is free and moves a visit only to make room. A monitor visit
of a night is handled the same way over its free stretch (:func:`monitor_options`).

A later start sees the target at another airmass: given ``airmass_points`` (:func:`airmass_points_at`),
each moved option is scored with the airmass points of its own block (the score's rule,
:func:`planner.scheduling.score.score_components`), so a visit moved lower in the sky is worth
what the sheet will say it is worth; the options table carries that ``score`` and
``pts_airmass`` beside the solver's ``value``.

Groups (columns of the options table, see :func:`planner.scheduling.solver.choose_options`):
``group`` (the request: at most one of its options), ``week_key`` (target, event and visit
slot of a sequence, for the week rules), ``monitor_night`` (one monitor visit of a target a night) and ``spacing``/``gap_d``
(the minimum gap between a monitor target's visits, across nights).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .blocks import block_airmass
from .score import FACTOR_COLUMNS, POINT_COLUMNS, airmass_points


#: Most start times tried for one movable visit (the proposed one included).
MAX_STARTS = 7
#: Value given up by a visit moved to the far end of its allowed range: 0.1 per cent, far below
#: the score's own resolution, so it only breaks ties towards the lowest airmass.
MOVE_PENALTY = 1e-3
MOVABLE = ("rv_visit", "rv_sequence")


def _spread(proposed, lo, hi, length, movable):
    """(row, start) of every option: each candidate's proposed start first, then, for a movable one
    with a finite range, an even spread of [lo, hi] in :data:`MAX_STARTS` - 1 starts, less those
    within a quarter of its length of the proposed one (a start barely moved adds nothing); rows in
    candidate order."""
    n = proposed.size
    spread = movable & np.isfinite(lo) & np.isfinite(hi) & (hi > lo)
    frac = np.linspace(0.0, 1.0, MAX_STARTS - 1) if MAX_STARTS > 1 else np.zeros(0)
    grid = np.where(spread[:, None], lo[:, None] + (hi - lo)[:, None] * frac[None, :], np.nan)
    starts = np.concatenate([proposed[:, None], grid], axis=1)
    keep = np.concatenate([np.ones((n, 1), bool),
                           spread[:, None] & (np.abs(grid - proposed[:, None]) > 0.25 * length[:, None])], axis=1)
    rows = np.broadcast_to(np.arange(n)[:, None], starts.shape)
    return rows[keep], starts[keep]


def airmass_points_at(altitude_by_telescope: dict, weights):
    """``points(target_index, telescope, start, end)``: the score's airmass points
    (:func:`~planner.scheduling.score.airmass_points` of the mean airmass of
    :data:`~planner.scheduling.blocks.ALT_SAMPLES` altitudes through each block) of blocks from
    UTC Julian dates ``start`` to ``end``, on the telescope named for each (a key of
    ``altitude_by_telescope``, whose values are ``altitude_deg(target_index, jd_utc)``)."""

    def points(target_index, telescope, start, end):
        out = np.zeros(len(start))
        for name, altitude_deg in altitude_by_telescope.items():
            m = np.flatnonzero(telescope == name)
            out[m] = airmass_points(block_airmass(altitude_deg, target_index[m], start[m], end[m]), weights)
        return out

    return points


def candidate_options(cands: pd.DataFrame, telescope: str = "telescope", airmass_points=None) -> pd.DataFrame:
    """Options (one row per start) of the candidate blocks; ``candidate`` is the row they come from.

    ``cands`` has the schedule's columns (:data:`planner.scheduling.blocks.SCHEDULE_COLUMNS`):
    ``start_jd_utc``, ``end_jd_utc``, ``score`` (the value), ``group``, ``request``,
    ``earliest_start_jd_utc``, ``latest_start_jd_utc``, ``target_index``, ``event``, ``night``;
    a ``site`` column, when present, names the telescope. ``airmass_points``
    (:func:`airmass_points_at`) rescores the moved starts (module docstring); a candidate whose
    score is not its own points' (a merged visit, worth two requests) keeps its score.
    """
    c = cands.reset_index(drop=True)
    start = c["start_jd_utc"].to_numpy(float)
    length = c["end_jd_utc"].to_numpy(float) - start
    value = c["score"].to_numpy(float)
    movable = c["request"].isin(MOVABLE).to_numpy() if "request" in c else np.zeros(len(c), bool)
    lo = c["earliest_start_jd_utc"].to_numpy(float) if "earliest_start_jd_utc" in c else np.full(len(c), np.nan)
    hi = c["latest_start_jd_utc"].to_numpy(float) if "latest_start_jd_utc" in c else np.full(len(c), np.nan)
    k, s = _spread(start, lo, hi, length, movable)
    group = c["group"].astype(str).to_numpy(object) if "group" in c else np.arange(len(c)).astype(str)
    tel = c["site"].astype(str).to_numpy(object) if "site" in c else np.full(len(c), telescope, dtype=object)
    score = value[k]
    air = c["pts_airmass"].to_numpy(float) if "pts_airmass" in c else np.full(len(c), np.nan)
    pts = air[k]
    if airmass_points is not None and "pts_airmass" in c:
        factor = c[list(FACTOR_COLUMNS)].to_numpy(float).prod(axis=1)
        points = c[list(POINT_COLUMNS)].to_numpy(float).sum(axis=1)
        own = np.isclose(factor * points, value, rtol=1e-9, atol=1e-9)
        m = np.flatnonzero((s != start[k]) & own[k])
        km = k[m]
        pts[m] = airmass_points(c["target_index"].to_numpy(int)[km], tel[km], s[m], s[m] + length[km])
        score[m] = factor[km] * (points[km] - air[km] + pts[m])
    span = np.where(movable & np.isfinite(hi - lo), np.maximum(hi - lo, 1e-9), 1.0)
    option_value = score * (1.0 - MOVE_PENALTY * np.abs(s - start[k]) / span[k])
    if "site" in c:  # request ids are a site's own: one site's request 5 is not another's
        group = tel + "|" + group
    week_key = (c["target_index"].astype(str) + "|" + c["event"].astype(str) + "|"
                + (c["slot"].astype(str) if "slot" in c else "0"))
    return pd.DataFrame({
        "candidate": k.astype(np.int64), "telescope": _text_at(tel, k), "start_jd_utc": s,
        "end_jd_utc": s + length[k], "value": option_value, "score": score, "pts_airmass": pts,
        "group": _text_at("g" + group, k), "week_key": _text_at(week_key, k),
        "night": _text_at(c["night"].astype(str), k),
    })


def _text_at(values, rows):
    """The text column of the options from the candidates' ``values`` (one string each, NaN for
    none): those at ``rows``, taken as Arrow text, so each candidate's string is made once and
    not once per option (the same column as from a numpy object array of them, which stays an
    object column when empty)."""
    rows = np.asarray(rows, np.int64)
    if rows.size == 0:
        return np.asarray(values, dtype=object)[rows]
    text = values.array if isinstance(values, pd.Series) else np.asarray(values, dtype=object)
    return pd.array(text, dtype="str").take(rows)
