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
from .requests import request_kinds

UNSCHEDULED_COLUMNS = ("night", "target", "event", "request", "priority", "event_utc", "best_value",
                       "reason_code", "reason")
#: Moments of a window at which the limiting constraint is asked for.
WINDOW_SAMPLES = 9


def _key(target_index, event, jd_utc):
    """One event instance, whichever site or candidate names it: target, event, UTC minute."""
    minute = np.round(np.asarray(jd_utc, float) * 1440.0)
    return [f"{t}|{e}|{m:.0f}" for t, e, m in zip(np.asarray(target_index, int), event, minute)]


def _limit_reason(targets, site, tracks, ti, w0, w1):
    """The limit that stops a target at most of its window's moments (code, words)."""
    t = np.linspace(w0, w1, WINDOW_SAMPLES)
    inside = (t >= tracks.jd_utc[1]) & (t <= tracks.jd_utc[-2])
    codes = limiting_constraint(targets, site, ti, t[inside], tracks) if inside.any() else np.zeros(0, object)
    codes = [c for c in codes if c]
    if not codes:
        return "too_short", "something is observable, but no stretch long enough to be worth a block"
    code = max(set(codes), key=codes.count)
    return code, LIMIT_REASONS[code]


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
    served = set(_key(schedule["target_index"], schedule["event"], schedule["event_jd_utc"])) if len(schedule) else set()
    for serves, ti, night in zip(schedule.get("serves", []), schedule.get("target_index", []),
                                 schedule.get("night", [])):
        for name in str(serves or "").split(";")[1:]:  # the second event a merged block serves
            served.add(f"{ti}|{name}|{night}")
    ckeys = np.array(_key(candidates["target_index"], candidates["event"], candidates["event_jd_utc"]), dtype=object) \
        if len(candidates) else np.zeros(0, object)
    never_idx = set(never["target_index"].astype(int))
    dark = dict(zip(nights["night"].astype(str), np.isfinite(nights["dark_start_jd_utc"].to_numpy(float))))
    done_nights = {}
    for ti, ev, night in zip(schedule.get("target_index", []), schedule.get("event", []), schedule.get("night", [])):
        done_nights.setdefault((int(ti), ev), []).append(str(night))
    rules = (targets["week_rule"].astype(str).replace("", week_rule).to_numpy(object) if "week_rule" in targets
             else np.full(len(targets), week_rule, dtype=object))
    rows = []
    keys = _key(v["target_index"], v["event"], v["jd_utc"])
    for k, (key, r) in enumerate(zip(keys, v.itertuples())):
        ti = int(r.target_index)
        if key in served or f"{ti}|{r.event}|{r.night}" in served:
            continue
        mine = candidates[ckeys == key] if len(candidates) else candidates
        value = float(mine["score"].max()) if len(mine) else np.nan
        night = str(r.night)
        if ti in never_idx:
            code, words = "never_rises", "never rises high enough at the site"
        elif not dark.get(night, True):
            code, words = "no_darkness", "the night has no darkness at the site"
        elif len(mine) == 0 and not (r.observable_h > 0):
            code, words = _limit_reason(targets, site, tracks, ti, r.window_start_jd_utc, r.window_end_jd_utc)
        elif len(mine) == 0:
            code, words = "too_short", "observable only in stretches too short or holding no contact with its baseline"
        elif rules[ti] != "every" and (ti, r.event) in done_nights and night not in done_nights[(ti, r.event)]:
            code, words = "better_night", f"done on {', '.join(sorted(set(done_nights[(ti, r.event)])))} instead"
        else:
            best = mine.loc[mine["score"].idxmax()]
            s0, s1 = best["start_jd_utc"] - overhead_d, best["end_jd_utc"] + overhead_d
            rivals = schedule[(schedule["start_jd_utc"] < s1) & (schedule["end_jd_utc"] > s0)]
            if "site" in schedule and "site" in best:
                rivals = rivals[rivals["site"] == best["site"]]
            named = ", ".join(f"{t} {e.replace('_', ' ')} ({s:.0f})" for t, e, s in
                              zip(rivals["target"], rivals["event"], rivals["score"])) or "the week's other blocks"
            code, words = "lost", f"lost to higher-value blocks: {named}"
        rows.append({"night": night, "target": r.target, "event": r.event, "request": r.request,
                     "priority": float(targets["priority"].iloc[ti]), "event_utc": jd_utc_to_iso_z([r.jd_utc])[0],
                     "best_value": value, "reason_code": code, "reason": words})
    out = pd.DataFrame(rows, columns=list(UNSCHEDULED_COLUMNS))
    return out.sort_values(["night", "priority"], ascending=[True, False], kind="stable").reset_index(drop=True)
