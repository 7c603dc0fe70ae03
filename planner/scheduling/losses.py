"""Why a request is not in the plan: one row per unserved request, its reason in words and as a code.

Every visible event that asks for an observation (:func:`planner.scheduling.requests.request_kinds`)
and has no block in the schedule gets the first reason that applies, in this order:

==================  ==========================================================================
``never_rises``     the target never rises above the site's limits
``no_darkness``     the night has no dark time, or the window misses it
``outside_nights``  the event's window lies outside the planned nights
``declination``,    no part of the window is observable, for this limit (the one that stops the
``altitude``,       target at most of the moments of the window's part in its night's darkness,
                    :func:`planner.sky.limits.limiting_constraint`)
``horizon``,
``hour_angle``,
``moon``, ``sun``
``logged``          observed already: the observation log holds the instance (done, or every
                    part a block of it could add), so it has no candidate block
``too_short``       something is observable, but no stretch long enough and holding a contact
                    with its baseline or the mid-event (the request stage's rule)
``better_night``    the target's event is done on another night (its week rule)
``lost``            lost to higher-value blocks, named with their values
==================  ==========================================================================
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits.geometry import PERIODIC_EVENT
from ..sky.limits import REASONS as LIMIT_REASONS
from ..sky.limits import limit_codes
from ..timescales.clock import jd_utc_to_iso_z
from .blocks import column_values, instance_minutes
from .log_requests import logged_instances
from .requests import SERIES, request_kinds

UNSCHEDULED_COLUMNS = ("night", "target", "event", "request", "priority", "event_utc", "best_value",
                       "reason_code", "reason")
#: Moments of a window at which the limiting constraint is asked for.
WINDOW_SAMPLES = 9
#: Moments asked for at once (bounds the memory of a survey-sized list of losses).
LIMIT_CHUNK = 200_000
_CODES = tuple(LIMIT_REASONS)
LOST = "lost to higher-value blocks: "
#: The reasons of a request with observable stretches, none of which can hold its block.
TOO_SHORT_SERIES = "observable only in stretches too short or holding no contact with its baseline"
TOO_SHORT_VISIT = "observable only in stretches too short for its visits"
#: The reason of a request the observation log has served.
LOGGED = "observed already: the observation log holds it (done, or every part a block could add)"
#: The reason of a window that lies wholly in its night's daylight or twilight.
MISSES_DARKNESS = "in daylight or twilight: its window misses the night's darkness"


def _limit_reasons(targets, site, tracks, ti, w0, w1):
    """Per row, the limit that stops its target at most of its window's moments: (codes, words),
    object arrays; ``too_short`` where no moment is stopped. A tie goes to the limit checked first."""
    t = w0[:, None] + (w1 - w0)[:, None] * np.linspace(0.0, 1.0, WINDOW_SAMPLES)[None, :]
    tis = np.broadcast_to(ti[:, None], t.shape).ravel()
    t = t.ravel()
    counts = np.zeros((len(ti), len(_CODES)), int)
    inside = np.flatnonzero((t >= tracks.jd_utc[1]) & (t <= tracks.jd_utc[-2]))
    for lo in range(0, len(inside), LIMIT_CHUNK):
        at = inside[lo:lo + LIMIT_CHUNK]
        codes = limit_codes(targets, site, tis[at], t[at], tracks)
        found = codes >= 0
        np.add.at(counts, (at[found] // WINDOW_SAMPLES, codes[found]), 1)
    code = np.asarray(_CODES, object)[counts.argmax(axis=1)]
    words = np.asarray([LIMIT_REASONS[c] for c in _CODES], object)[counts.argmax(axis=1)]
    none = counts.sum(axis=1) == 0
    code[none] = "too_short"
    words[none] = "something is observable, but no stretch long enough to be worth a block"
    return code, words


def _keys(*tables):
    """One int64 key per row of each table (a tuple of equal-length columns, strings or integers,
    as many in every table): equal rows get equal keys, in every table, and unequal rows unequal
    ones. Each column becomes small codes (an integer column of a range narrower than its length
    its offset from its least value, any other column its factorized codes, -1 for missing), and
    the key is their mixed-radix number, made dense again (factorized) only where the next column
    could overflow it; a survey's millions of rows are matched by ``np.isin`` where a MultiIndex
    took seconds."""
    sizes = [len(t[0]) for t in tables]
    key, span = np.zeros(sum(sizes), np.int64), 1
    for j in range(len(tables[0])):
        column = np.concatenate([np.asarray(t[j]) for t in tables])
        dense = column.dtype.kind in "iu" and column.size and int(column.max()) - int(column.min()) < column.size
        if dense:  # integers of a narrow range (target indices, minutes of a week): their offsets
            codes = column.astype(np.int64) - int(column.min())
            n = int(codes.max()) + 1
        else:  # at most one code per row, so a renumbered key times n never overflows
            codes, uniques = pd.factorize(column)
            n = len(uniques)
        if span * (n + 1) >= 2**62:
            key, span = _dense(key)
        key = key * (n + 1) + codes + 1  # code -1 (missing) becomes 0
        span *= n + 1
    return np.split(key, np.cumsum(sizes)[:-1])


def _dense(key):
    """(key, span): the keys renumbered 0..k-1 in the same classes, and k."""
    codes, uniques = pd.factorize(key)
    return codes.astype(np.int64), max(len(uniques), 1)


def _rivals(starts, ends, sites, schedule, both):
    """Per lost row (its best option widened by the overhead: ``starts``..``ends`` UTC JD, at
    ``sites``), the schedule's blocks it overlaps, named with their values; one text per distinct
    set. A site's blocks never overlap (the solver's no-overlap rows), so sorted by start the blocks
    a stretch overlaps are a run: those starting before its end, after the last ending before its
    start."""
    out = np.full(len(starts), LOST + "the week's other blocks", dtype=object)
    b_site = schedule["site"].astype(str).to_numpy(object) if both else np.zeros(len(schedule), object)
    for place in pd.unique(b_site):
        rows = np.flatnonzero(sites == place) if both else np.arange(len(starts))
        block = schedule[b_site == place].sort_values("start_jd_utc", kind="stable")
        b0, b1 = block["start_jd_utc"].to_numpy(float), block["end_jd_utc"].to_numpy(float)
        lo = np.searchsorted(np.maximum.accumulate(b1), starts[rows], side="right")
        hi = np.searchsorted(b0, ends[rows], side="left")
        labels = block["label"] if "label" in block else [""] * len(block)
        names = [f"{t} {_event_name(e, label)} ({v:.0f})"
                 for t, e, label, v in zip(block["target"], block["event"], labels, block["score"].to_numpy(float))]
        runs, which = np.unique(np.stack([lo, hi], axis=1), axis=0, return_inverse=True)
        texts = np.array([LOST + (", ".join(names[a:b]) or "the week's other blocks") for a, b in runs], dtype=object)
        out[rows] = texts[which.ravel()]
    return out


def _event_name(event, label) -> str:
    """A block's event in words: a periodic event's label, else the event's name."""
    if event == PERIODIC_EVENT and isinstance(label, str) and label:
        return label
    return str(event).replace("_", " ")


def _second_instances(second, candidates):
    """The instances (target, event, minute) that merged blocks serve besides their own event:
    per ``(target_index, event, night, block middle)`` of ``second``, the candidate of that
    target and event whose moment is nearest the block (its night may be another: an RV window
    lasting days), so every row of that instance is served."""
    blocks = pd.DataFrame([(t, name, mid) for t, name, _, mid in second], columns=["target_index", "event", "mid"])
    c = candidates[["target_index", "event", "event_jd_utc"]].astype({"event": str}).merge(blocks)
    c = c.assign(off=np.abs(c["event_jd_utc"] - c["mid"])).sort_values("off", kind="stable")
    c = c.drop_duplicates(["target_index", "event", "mid"])
    return c["target_index"].to_numpy(int), c["event"].to_numpy(object), instance_minutes(c["event_jd_utc"])


def _iso_z_text(jd_utc):
    """:func:`~planner.timescales.clock.jd_utc_to_iso_z` of each UTC Julian date, as Arrow text:
    made once per distinct moment (a survey's events are each the reason of several rows)."""
    moments, at = np.unique(np.asarray(jd_utc, float), return_inverse=True)
    return pd.array(jd_utc_to_iso_z(moments), dtype="str").take(at.ravel())


def unscheduled(visible: pd.DataFrame, candidates: pd.DataFrame, schedule: pd.DataFrame, targets: pd.DataFrame,
                site, nights: pd.DataFrame, tracks, never: pd.DataFrame, overhead_d: float = 0.0,
                week_rule: str = "every", log: pd.DataFrame | None = None) -> pd.DataFrame:
    """The requests of ``visible`` that ``schedule`` does not serve (columns :data:`UNSCHEDULED_COLUMNS`).

    ``candidates`` are every block the scheduler chose from (with ``night``), ``never`` the
    never-rising table (:func:`planner.sky.windows.never_rising`), ``tracks`` the Sun/Moon tracks of
    the site; ``week_rule`` the plan's default (a target's ``week_rule`` column overrides it);
    ``log`` the observation log the plan was made with (its instances are ``logged``).
    Sorted by night, then by priority (highest first). Vectorised over the requests (a survey's
    week lists millions).
    """
    kinds = request_kinds(visible, targets) if len(visible) else np.zeros(0, object)
    v = visible[kinds != ""].assign(request=kinds[kinds != ""]).reset_index(drop=True)
    if v.empty:
        return pd.DataFrame({c: [] for c in UNSCHEDULED_COLUMNS})
    ti = v["target_index"].to_numpy(int)
    event = v["event"].astype(str).to_numpy(object)
    night = v["night"].astype(str).to_numpy(object)
    minute = instance_minutes(v["jd_utc"])
    s_ti = schedule["target_index"].to_numpy(int) if len(schedule) else np.zeros(0, int)
    s_event = schedule["event"].astype(str).to_numpy(object) if len(schedule) else np.zeros(0, object)
    s_night = schedule["night"].astype(str).to_numpy(object) if len(schedule) else np.zeros(0, object)
    s_minute = instance_minutes(schedule["event_jd_utc"]) if len(schedule) else np.zeros(0, np.int64)
    instance, scheduled = _keys((ti, event, minute), (s_ti, s_event, s_minute))
    served = np.isin(instance, scheduled)
    second = [(t, name, n, 0.5 * (b0 + b1)) for serves, t, n, b0, b1 in
              zip(schedule.get("serves", []), s_ti, s_night, schedule.get("start_jd_utc", []),
                  schedule.get("end_jd_utc", []))
              for name in str(serves or "").split(";")[1:]]  # the second event a merged block serves
    if second:
        mine, theirs = _keys((ti, event, night), tuple(np.asarray(c) for c in list(zip(*second))[:3]))
        served |= np.isin(mine, theirs)
        mine, theirs = _keys((ti, event, minute), _second_instances(second, candidates))
        served |= np.isin(mine, theirs)
    keep = ~served
    v, ti, event, night, minute = v[keep].reset_index(drop=True), ti[keep], event[keep], night[keep], minute[keep]

    # the best candidate of each instance (the first of the highest score)
    score = candidates["score"].to_numpy(float) if len(candidates) else np.zeros(0)
    if len(candidates):
        first = np.lexsort((np.arange(len(candidates)), -score))
        cands, instance = _keys((candidates["target_index"].to_numpy(int)[first],
                                 candidates["event"].astype(str).to_numpy(object)[first],
                                 instance_minutes(candidates["event_jd_utc"].to_numpy(float)[first])),
                                (ti, event, minute))
        unique, at = np.unique(cands, return_index=True)  # at: each key's first row, the best
        k = np.minimum(np.searchsorted(unique, instance), len(unique) - 1)
        best = np.where(unique[k] == instance, first[at[k]], -1)
    else:
        best = np.full(len(v), -1)
    has = best >= 0
    value = np.where(has, score[np.maximum(best, 0)] if len(score) else np.nan, np.nan)

    dark = dict(zip(nights["night"].astype(str), np.isfinite(nights["dark_start_jd_utc"].to_numpy(float))))
    rules = (targets["week_rule"].astype(str).replace("", week_rule).to_numpy(object) if "week_rule" in targets
             else np.full(len(targets), week_rule, dtype=object))
    done = pd.DataFrame({"ti": s_ti, "event": s_event, "night": s_night})
    done_on = {k: f"done on {', '.join(sorted(set(g)))} instead" for k, g in done.groupby(["ti", "event"])["night"]}
    pair, s_pair = _keys((ti, event), (s_ti, s_event))
    trio, s_trio = _keys((ti, event, night), (s_ti, s_event, s_night))
    done_elsewhere = np.isin(pair, s_pair) & ~np.isin(trio, s_trio)
    observable = v["observable_h"].to_numpy(float) > 0
    held = [key.split("|") for key in logged_instances(log, targets, v)]  # "ti|event|minute"
    logged = np.zeros(len(v), bool)
    if held:
        mine, theirs = _keys((ti, event, minute), (np.array([int(k[0]) for k in held], int),
                                                   np.array(["|".join(k[1:-1]) for k in held], object),
                                                   np.array([int(k[-1]) for k in held], np.int64)))
        logged = np.isin(mine, theirs)

    code = np.full(len(v), "", dtype=object)
    words = np.full(len(v), "", dtype=object)
    steps = [  # the first reason that applies, in the docstring's order
        ("never_rises", np.isin(ti, never["target_index"].to_numpy(int)), "never rises high enough at the site"),
        ("no_darkness", np.isin(night, [n for n, d in dark.items() if not d]), "the night has no darkness at the site"),
        ("logged", ~has & logged, LOGGED),
        ("limit", ~has & ~observable, None),
        ("too_short", ~has, None),
        ("better_night", (rules[ti] != "every") & done_elsewhere, None),
        ("lost", np.ones(len(v), bool), None),
    ]
    open_ = np.ones(len(v), bool)
    for name, applies, text in steps:
        rows = np.flatnonzero(open_ & applies)
        open_[rows] = False
        if name == "limit" and len(rows):
            # the part of the window in its night's darkness: a window of days (a poorly known
            # periastron) is mostly daylight, but the limit that matters is the one in the dark
            by_night = nights.set_index(nights["night"].astype(str))
            w0 = np.maximum(v["window_start_jd_utc"].to_numpy(float)[rows],
                            by_night["dark_start_jd_utc"].reindex(night[rows]).to_numpy(float))
            w1 = np.minimum(v["window_end_jd_utc"].to_numpy(float)[rows],
                            by_night["dark_end_jd_utc"].reindex(night[rows]).to_numpy(float))
            missed = ~(w1 > w0)
            code[rows[missed]], words[rows[missed]] = "no_darkness", MISSES_DARKNESS
            inside = rows[~missed]
            code[inside], words[inside] = _limit_reasons(targets, site, tracks, ti[inside], w0[~missed], w1[~missed])
            continue
        code[rows] = name
        if name == "too_short":
            words[rows] = np.where((v["request"] == SERIES).to_numpy(bool)[rows], TOO_SHORT_SERIES, TOO_SHORT_VISIT)
        elif name == "better_night":
            words[rows] = [done_on[(t, e)] for t, e in zip(ti[rows], event[rows])]
        elif name == "lost" and len(rows):
            both = "site" in candidates and "site" in schedule
            c_site = candidates["site"].astype(str).to_numpy(object)[best[rows]] if both else None
            words[rows] = _rivals(candidates["start_jd_utc"].to_numpy(float)[best[rows]] - overhead_d,
                                  candidates["end_jd_utc"].to_numpy(float)[best[rows]] + overhead_d,
                                  c_site, schedule, both)
        else:
            words[rows] = text
    # the text columns of ``v`` as they are (Arrow), not through Python strings: the same values
    # as ``night`` and ``event``
    out = pd.DataFrame({"night": column_values(v["night"].astype(str)), "target": column_values(v["target"]),
                        "event": column_values(v["event"].astype(str)), "request": column_values(v["request"]),
                        "priority": targets["priority"].to_numpy(float)[ti],
                        "event_utc": _iso_z_text(v["jd_utc"].to_numpy(float)),
                        "best_value": value, "reason_code": code, "reason": words}, columns=list(UNSCHEDULED_COLUMNS))
    return out.sort_values(["night", "priority"], ascending=[True, False], kind="stable").reset_index(drop=True)
