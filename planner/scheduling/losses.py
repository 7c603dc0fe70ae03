"""Why a request is not in the plan: one row per unserved request, its reason in words and as a code.

Every visible event that asks for an observation (:func:`planner.scheduling.requests.request_kinds`)
and has no block in the schedule gets the first reason that applies, in this order:

==================  ==========================================================================
``never_rises``     the target never rises above the site's limits
``no_darkness``     the night has no dark time
``outside_nights``  the event's window lies outside the planned nights
``declination``,    no part of the window is observable, for this limit (the one that stops the
``altitude``,       target at most of the window's moments, :func:`planner.sky.limits.limiting_constraint`)
``horizon``,
``hour_angle``,
``moon``, ``sun``
``too_short``       something is observable, but no stretch long enough and holding a contact
                    with its baseline or the mid-event (the request stage's rule)
``better_night``    the target's event is done on another night (its week rule)
``lost``            lost to higher-value blocks, named with their values
==================  ==========================================================================
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..sky.limits import REASONS as LIMIT_REASONS
from ..sky.limits import limiting_constraint
from ..timescales.clock import jd_utc_to_iso_z
from .blocks import instance_keys
from .requests import request_kinds

UNSCHEDULED_COLUMNS = ("night", "target", "event", "request", "priority", "event_utc", "best_value",
                       "reason_code", "reason")
#: Moments of a window at which the limiting constraint is asked for.
WINDOW_SAMPLES = 9


def _limit_reasons(targets, site, tracks, ti, w0, w1):
    """Per row, the limit that stops its target at most of its window's moments (code, words)."""
    t = w0[:, None] + (w1 - w0)[:, None] * np.linspace(0.0, 1.0, WINDOW_SAMPLES)[None, :]
    inside = (t >= tracks.jd_utc[1]) & (t <= tracks.jd_utc[-2])
    codes = np.full(t.shape, "", dtype=object)
    if inside.any():
        tis = np.broadcast_to(ti[:, None], t.shape)
        codes[inside] = limiting_constraint(targets, site, tis[inside], t[inside], tracks)
    out = []
    for row in codes:
        found = [c for c in row if c]
        if not found:
            out.append(("too_short", "something is observable, but no stretch long enough to be worth a block"))
        else:
            code = max(set(found), key=found.count)
            out.append((code, LIMIT_REASONS[code]))
    return out


def unscheduled(visible: pd.DataFrame, candidates: pd.DataFrame, schedule: pd.DataFrame, targets: pd.DataFrame,
                site, nights: pd.DataFrame, tracks, never: pd.DataFrame, overhead_d: float = 0.0,
                week_rule: str = "every") -> pd.DataFrame:
    """The requests of ``visible`` that ``schedule`` does not serve (columns :data:`UNSCHEDULED_COLUMNS`).

    ``candidates`` are every block the scheduler chose from (with ``night``), ``never`` the
    never-rising table (:func:`planner.sky.windows.never_rising`), ``tracks`` the Sun/Moon tracks of
    the site; ``week_rule`` the plan's default (a target's ``week_rule`` column overrides it).
    Sorted by night, then by priority (highest first).
    """
    kinds = request_kinds(visible, targets) if len(visible) else np.zeros(0, object)
    v = visible[kinds != ""].assign(request=kinds[kinds != ""]).reset_index(drop=True)
    if v.empty:
        return pd.DataFrame({c: [] for c in UNSCHEDULED_COLUMNS})
    served = set(instance_keys(schedule["target_index"], schedule["event"], schedule["event_jd_utc"])) if len(schedule) else set()
    for serves, ti, night in zip(schedule.get("serves", []), schedule.get("target_index", []),
                                 schedule.get("night", [])):
        for name in str(serves or "").split(";")[1:]:  # the second event a merged block serves
            served.add(f"{ti}|{name}|{night}")
    ckeys = np.array(instance_keys(candidates["target_index"], candidates["event"], candidates["event_jd_utc"]), dtype=object) \
        if len(candidates) else np.zeros(0, object)
    by_key = pd.Series(np.arange(len(candidates))).groupby(ckeys).apply(list).to_dict() if len(candidates) else {}
    never_idx = set(never["target_index"].astype(int))
    dark = dict(zip(nights["night"].astype(str), np.isfinite(nights["dark_start_jd_utc"].to_numpy(float))))
    done_nights = {}
    for ti, ev, night in zip(schedule.get("target_index", []), schedule.get("event", []), schedule.get("night", [])):
        done_nights.setdefault((int(ti), ev), []).append(str(night))
    rules = (targets["week_rule"].astype(str).replace("", week_rule).to_numpy(object) if "week_rule" in targets
             else np.full(len(targets), week_rule, dtype=object))
    rows, pending = [], []
    priority = targets["priority"].to_numpy(float)
    keys = instance_keys(v["target_index"], v["event"], v["jd_utc"])
    score = candidates["score"].to_numpy(float) if len(candidates) else np.zeros(0)
    event_utc = jd_utc_to_iso_z(v["jd_utc"].to_numpy(float))
    c_start = candidates["start_jd_utc"].to_numpy(float) if len(candidates) else np.zeros(0)
    c_end = candidates["end_jd_utc"].to_numpy(float) if len(candidates) else np.zeros(0)
    both = "site" in candidates and "site" in schedule
    c_site = candidates["site"].astype(str).to_numpy(object) if both else None
    b_start = schedule["start_jd_utc"].to_numpy(float) if len(schedule) else np.zeros(0)
    b_end = schedule["end_jd_utc"].to_numpy(float) if len(schedule) else np.zeros(0)
    b_site = schedule["site"].astype(str).to_numpy(object) if both else None
    b_target = schedule["target"].to_numpy(object) if len(schedule) else np.zeros(0, object)
    b_event = schedule["event"].astype(str).to_numpy(object) if len(schedule) else np.zeros(0, object)
    b_score = schedule["score"].to_numpy(float) if len(schedule) else np.zeros(0)
    for k, (key, r) in enumerate(zip(keys, v.itertuples())):
        ti = int(r.target_index)
        if key in served or f"{ti}|{r.event}|{r.night}" in served:
            continue
        members = by_key.get(key, [])
        value = float(score[members].max()) if members else np.nan
        night = str(r.night)
        if ti in never_idx:
            code, words = "never_rises", "never rises high enough at the site"
        elif not dark.get(night, True):
            code, words = "no_darkness", "the night has no darkness at the site"
        elif not members and not (r.observable_h > 0):
            code, words = "", ""  # the limit that stops it, found for all such rows at once below
            pending.append((len(rows), ti, r.window_start_jd_utc, r.window_end_jd_utc))
        elif not members:
            code, words = "too_short", "observable only in stretches too short or holding no contact with its baseline"
        elif rules[ti] != "every" and (ti, r.event) in done_nights and night not in done_nights[(ti, r.event)]:
            code, words = "better_night", f"done on {', '.join(sorted(set(done_nights[(ti, r.event)])))} instead"
        else:
            best = members[int(np.argmax(score[members]))]
            s0, s1 = c_start[best] - overhead_d, c_end[best] + overhead_d
            hit = (b_start < s1) & (b_end > s0) & ((b_site == c_site[best]) if c_site is not None else True)
            named = ", ".join(f"{t} {e.replace('_', ' ')} ({v:.0f})" for t, e, v in
                              zip(b_target[hit], b_event[hit], b_score[hit])) or "the week's other blocks"
            code, words = "lost", f"lost to higher-value blocks: {named}"
        rows.append({"night": night, "target": r.target, "event": r.event, "request": r.request,
                     "priority": priority[ti], "event_utc": event_utc[k],
                     "best_value": value, "reason_code": code, "reason": words})
    if pending:
        at, ti, w0, w1 = (np.array(x) for x in zip(*pending))
        for k, (code, words) in zip(at, _limit_reasons(targets, site, tracks, ti.astype(int), w0.astype(float),
                                                       w1.astype(float))):
            rows[k]["reason_code"], rows[k]["reason"] = code, words
    out = pd.DataFrame(rows, columns=list(UNSCHEDULED_COLUMNS))
    return out.sort_values(["night", "priority"], ascending=[True, False], kind="stable").reset_index(drop=True)
