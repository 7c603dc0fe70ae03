"""Observing requests: what each visible event asks the telescope for, one row per candidate.

:func:`build_requests` turns the visible-event table (:mod:`planner.sky.windows`), the observable
intervals and the target table into the *request table*, which the scheduler consumes (today
:func:`planner.scheduling.schedule.plan_week`; a solver can take the same table). Each target's
``observe`` column (``photometry``, ``rv`` or both) decides what its events become:

==========================  ===========  ==========================================================
event                       photometry   rv
==========================  ===========  ==========================================================
primary / secondary         series       (nothing: an RV point at conjunction measures no extremum)
conjunction                 only when the geometry eclipses (b < 1 + Rp/R*) or is not given
periodic (linear ephem.)    series       (nothing)
rv_max, rv_min              (nothing)    rv_visit: ``visit_h`` (default 0.5 h) anywhere in the
                                         phase window where v is within ``rv_fraction_k`` K of it
periastron                  series       rv_sequence: ``rv_visits`` visits over the RV swing,
                            (mid-event)  at least ``rv_gap_h`` apart (one request per visit slot)
apastron                    series       rv_visit in the 2 h around apastron
wanted phase (``rv_phases``, either      rv_visit: ``visit_h`` anywhere in the window where the
:mod:`.phase_requests`)                  mean-anomaly phase is within ``rv_phase_tol`` of it
targets with ``visit_h``    monitor: one flexible visit a night (placed by the gap filler)
==========================  ===========  ==========================================================

Rows and columns
----------------
One row per *candidate*: an observable stretch (every one, not only the longest) of a request's
time window, or a merged candidate. Times are UTC Julian dates, lengths days.

``request_id``           the request (an event's series or visit, one slot of a sequence, one
                         night's monitor visit); candidates of one request share it. At most
                         one candidate per ``group`` should be scheduled (``group`` joins the
                         requests that a merged candidate serves).
``request``              ``series``, ``rv_visit``, ``rv_sequence`` or ``monitor``
``placement``            ``fixed``: the block is exactly [start, end]; ``movable``: a visit of
                         ``length_d`` starting anywhere in [``earliest_start_jd_utc``,
                         ``latest_start_jd_utc``], proposed at ``start_jd_utc`` (lowest airmass)
``target_index``, ``target``, ``event`` (the main event), ``serves`` (``;``-list of the events
the candidate serves), ``label``, ``night`` (label of the event's night), ``slot``/``n_slots``
(visit k of n of a sequence, else 0/1)
``event_jd_utc``, ``event_sigma_d``   the event moment seen from the Earth, its 1-sigma uncertainty
``window_start_jd_utc``, ``window_end_jd_utc``  the whole window the request asks for: series
                         T1 - baseline - k sigma .. T4 + baseline + k sigma (or the visible
                         table's window when no contacts are known), rv_visit the RV phase
                         window +- k sigma (a wanted phase: +- (rv_phase_tol x P + k sigma)),
                         rv_sequence slot its share of the swing
``stretch_start_jd_utc``, ``stretch_end_jd_utc``  the observable stretch of the window
``start_jd_utc``, ``end_jd_utc``, ``length_d``  the proposed block
``t1_jd_utc`` .. ``t4_jd_utc``  contacts of a series (NaN when not known or not reached)
``covers``, ``not_covered``  parts of a series the block holds / misses
                         (:mod:`planner.scheduling.series_parts`); empty for visits
``science_fraction``     value share of the science kept (series parts; 1 for a visit)
``baseline_min``         a series offered with its baselines cut (``series_parts``): the
                         baseline (minutes) it keeps either side; NaN for whole baselines and visits
``pause_start_jd_utc``,  a series block over two stretches of its window: the unobservable gap
``pause_end_jd_utc``     between them (at most ``MAX_PAUSE_MIN``), when observing pauses; NaN otherwise
``observable_fraction``  observable share of the window (all stretches together)
``merged_with``          request id of the second request a merged candidate serves (-1 if none)
``priority``, ``period_d``, ``moon_sep_deg``, ``moon_illumination``, the score columns
                         (:data:`~planner.scheduling.score.SCORE_COLUMNS`; ``score`` is the value)

Contacts of a series come from the sky-projected separation of the eccentric orbit
(:func:`planner.orbits.contacts.contact_offsets_d`) when a/R*, i and Rp/R* are given, else
T1/T4 = event -+ ``duration_h`` / 2. Offsets are computed in BJD_TDB and added to the event's UTC
time (the light time changes by a few seconds over a day at most).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..orbits import contacts as orbit_contacts
from ..sky.windows import DEFAULT_BASELINE_H, DEFAULT_EVENT_LENGTH_H, DEFAULT_K_SIGMA, window_stretches
from . import series_parts
from .blocks import ALT_CHUNK, MIN_PER_DAY, moon_at_blocks
from .phase_requests import PHASE_EVENT_PREFIX, is_wanted_phase
from .request_merge import merge_requests
from .score import score_components

SERIES, RV_VISIT, RV_SEQUENCE, MONITOR = "series", "rv_visit", "rv_sequence", "monitor"
REQUEST_KINDS = (SERIES, RV_VISIT, RV_SEQUENCE, MONITOR)
#: Length of an RV visit when the catalogue gives no ``visit_h`` [common practice: one spectrum
#: of tens of minutes with its overheads].
DEFAULT_VISIT_H = 0.5
#: Candidate starts tried for a movable visit inside its allowed range (lowest airmass wins).
PLACEMENT_SAMPLES = 13
CONJUNCTIONS = ("primary_conjunction", "secondary_conjunction")

REQUEST_COLUMNS = (
    "request_id", "group", "request", "placement", "target_index", "target", "event", "serves", "label", "night",
    "slot", "n_slots", "event_jd_utc", "event_sigma_d", "window_start_jd_utc", "window_end_jd_utc",
    "stretch_start_jd_utc", "stretch_end_jd_utc", "start_jd_utc", "end_jd_utc", "length_d",
    "earliest_start_jd_utc", "latest_start_jd_utc", "t1_jd_utc", "t2_jd_utc", "t3_jd_utc", "t4_jd_utc",
    "covers", "not_covered", "science_fraction", "observable_fraction", "priority", "period_d",
    "moon_sep_deg", "moon_illumination", "merged_with", "baseline_min", "pause_start_jd_utc", "pause_end_jd_utc",
)


@dataclass(frozen=True)
class RequestSettings:
    """Baseline (h) wanted either side of a series, windows widened by ``k_sigma`` 1-sigma
    timing uncertainties either side, and the shortest fixed block worth scheduling (minutes)."""

    baseline_h: float = DEFAULT_BASELINE_H
    k_sigma: float = DEFAULT_K_SIGMA
    min_block_min: float = 10.0


def _col(frame, name, default):
    return frame[name].to_numpy() if name in frame else np.full(len(frame), default)


def request_kinds(visible: pd.DataFrame, targets: pd.DataFrame) -> np.ndarray:
    """Request kind of each visible event (object array; ``""`` where it asks for nothing).

    Worked out once per target (``observe``) and once per event name, then indexed: a survey's
    week holds millions of rows of a few names."""
    ti = visible["target_index"].to_numpy(int)
    observe = _col(targets, "observe", "photometry;rv").astype(str)
    phot = (np.char.find(observe, "photometry") >= 0)[ti]
    rv = (np.char.find(observe, "rv") >= 0)[ti]
    codes, names = pd.factorize(visible["event"])
    names = np.asarray(names, dtype=object).astype(str)

    def named(*wanted):
        return np.append(np.isin(names, wanted), False)[codes]  # code -1 (no name): False

    if "eclipses" in visible:  # False: a conjunction known to hold no eclipse; missing: not known
        no_eclipse = visible["eclipses"].astype("boolean").eq(False).fillna(False).to_numpy(bool)
    else:
        no_eclipse = np.zeros(len(visible), bool)
    kind = np.full(len(visible), "", dtype=object)
    kind[named(*CONJUNCTIONS, "periodic") & phot & ~no_eclipse] = SERIES
    kind[named("rv_max", "rv_min", "apastron") & rv] = RV_VISIT
    kind[named("apastron") & phot & ~rv] = SERIES
    kind[named("periastron") & rv] = RV_SEQUENCE
    kind[named("periastron") & phot & ~rv] = SERIES
    kind[is_wanted_phase(visible)] = RV_VISIT  # asked for as RV points, whatever ``observe`` says
    return kind


def _series_contacts(v, targets):
    """(n, 4) contact times (UTC JD) of the series rows ``v``; NaN where unknown."""
    n = len(v)
    out = np.full((n, 4), np.nan)
    ti = v["target_index"].to_numpy(int)
    jd = v["jd_utc"].to_numpy(float)
    ev = v["event"].to_numpy(object).astype(str)
    geo = np.zeros(n, bool)
    if {"a_rstar", "inc_deg", "rp_rstar"} <= set(targets.columns):
        a = targets["a_rstar"].to_numpy(float)[ti]
        inc = np.radians(targets["inc_deg"].to_numpy(float)[ti])
        k = targets["rp_rstar"].to_numpy(float)[ti]
        geo = np.isin(ev, CONJUNCTIONS) & np.isfinite(a) & np.isfinite(inc) & np.isfinite(k)
        for secondary, name in ((False, CONJUNCTIONS[0]), (True, CONJUNCTIONS[1])):
            sel = geo & (ev == name)
            if sel.any():
                e = np.nan_to_num(targets["e"].to_numpy(float)[ti[sel]])
                w = np.radians(np.nan_to_num(targets["omega_deg"].to_numpy(float)[ti[sel]], nan=90.0))
                off = orbit_contacts.contact_offsets_d(targets["period_d"].to_numpy(float)[ti[sel]], a[sel],
                                                       inc[sel], k[sel], e, w, secondary=secondary)
                out[sel] = jd[sel, None] + off
    dur = v["duration_d"].to_numpy(float) if "duration_d" in v else np.full(n, np.nan)
    by_duration = ~geo & np.isfinite(dur)
    out[by_duration, 0] = jd[by_duration] - dur[by_duration] / 2.0
    out[by_duration, 3] = jd[by_duration] + dur[by_duration] / 2.0
    return out


def _rv_offsets_d(ti, ev, kind, targets):
    """(lo, hi): days from each RV request's event moment to the ends of its window, before the
    k-sigma widening; NaN for rows that are not RV requests. ``ti``, ``ev``, ``kind`` shape (n,).

    rv_max/rv_min: the phase window where v is within ``rv_fraction_k`` K of the extremum;
    apastron: the 2 h around it; periastron (rv_sequence): the RV swing; a wanted phase: its
    tolerance either side (``rv_phase_tol`` of the period).
    """
    n = ti.size
    lo, hi = np.full(n, np.nan), np.full(n, np.nan)
    # event names as Arrow text, compared there (a missing name is none of them), not as numpy
    # unicode, whose conversion took seconds for a survey
    ev = pd.Series(ev, dtype="str", copy=False)
    p_t = targets["period_d"].to_numpy(float)
    e_t = np.nan_to_num(_col(targets, "e", 0.0).astype(float))
    w_t = np.radians(np.nan_to_num(_col(targets, "omega_deg", 90.0).astype(float), nan=90.0))
    p, e, w = p_t[ti], e_t[ti], w_t[ti]
    frac = _col(targets, "rv_fraction_k", 0.1).astype(float)[ti]
    for name, maximum in (("rv_max", True), ("rv_min", False)):
        sel = (kind == RV_VISIT) & (ev == name).to_numpy(bool)
        if sel.any():
            lo[sel], hi[sel] = orbit_contacts.rv_window_offsets_d(p[sel], e[sel], w[sel], frac[sel], maximum=maximum)
    sel = (kind == RV_VISIT) & (ev == "apastron").to_numpy(bool)
    lo[sel], hi[sel] = -DEFAULT_EVENT_LENGTH_H / 48.0, DEFAULT_EVENT_LENGTH_H / 48.0
    sel = (kind == RV_VISIT) & ev.str.startswith(PHASE_EVENT_PREFIX, na=False).to_numpy(bool)
    if sel.any():  # the times whose mean-anomaly phase is within the tolerance of the wanted one
        half_d = _col(targets, "rv_phase_tol", np.nan).astype(float)[ti[sel]] * p[sel]
        lo[sel], hi[sel] = -half_d, half_d
    sel = kind == RV_SEQUENCE
    if sel.any():  # one swing per target of the table
        s_lo, s_hi = _swings(p_t, e_t, w_t)
        lo[sel], hi[sel] = s_lo[ti[sel]], s_hi[ti[sel]]
    return lo, hi


_LAST_SWINGS: dict = {}


def _swings(period_d, e, omega_rad):
    """:func:`planner.orbits.contacts.rv_swing_offsets_d` of every target, the last table's answer
    kept: a plan asks for them three times (the events' reach, the windows, the requests), and a
    survey's 100,000 orbits take 1-2 s each time."""
    key = (period_d.tobytes(), e.tobytes(), omega_rad.tobytes())
    kept = _LAST_SWINGS.get(key)
    if kept is None:
        kept = orbit_contacts.rv_swing_offsets_d(period_d, e, omega_rad)
        for a in kept:
            a.flags.writeable = False
        _LAST_SWINGS.clear()
        _LAST_SWINGS[key] = kept
    return kept


def request_reach_d(targets: pd.DataFrame) -> np.ndarray:
    """(n,) days either side of an event's moment that a target's RV request windows reach, before
    the k-sigma widening: the largest offset of its rv_max/rv_min phase windows, apastron visit and
    periastron swing (:func:`_rv_offsets_d`); 0 for a target not observed in RV or with a linear
    ephemeris. An RV phase window is a share of the orbit (0.0718 of the period either side of
    an extremum of a circular orbit with ``rv_fraction_k`` 0.1), so a long period's window reaches
    days from its event: the pipeline predicts each target's events that far beyond the nights.
    """
    n = len(targets)
    if n == 0:
        return np.zeros(0)
    names = np.array(["rv_max", "rv_min", "apastron", "periastron"], dtype=object)
    kinds = np.array([RV_VISIT, RV_VISIT, RV_VISIT, RV_SEQUENCE], dtype=object)
    ti = np.repeat(np.arange(n), names.size)
    lo, hi = _rv_offsets_d(ti, np.tile(names, n), np.tile(kinds, n), targets)
    reach = np.nan_to_num(np.maximum(np.abs(lo), np.abs(hi))).reshape(n, names.size).max(axis=1)
    observe = _col(targets, "observe", "photometry;rv").astype(str)
    rv = np.char.find(observe.astype(str), "rv") >= 0
    orbit = _col(targets, "ephemeris", "orbit").astype(str) == "orbit"
    return np.where(rv & orbit, reach, 0.0)


def request_windows(visible: pd.DataFrame, targets: pd.DataFrame,
                    settings: "RequestSettings | None" = None) -> tuple[np.ndarray, np.ndarray]:
    """(start, end) UTC Julian dates of the window each visible event's request asks for (the
    ``window_*`` columns of the request table; module docstring); the visible table's own window
    for an event that asks for nothing. Shapes (len(visible),)."""
    if len(visible) == 0:
        return np.zeros(0), np.zeros(0)
    w0, w1, _ = _windows(visible, request_kinds(visible, targets), targets, settings or RequestSettings())
    return w0, w1


def _windows(v, kind, targets, settings):
    """(w0, w1, contacts (n, 4)) of each request row."""
    n = len(v)
    ti = v["target_index"].to_numpy(int)
    jd = v["jd_utc"].to_numpy(float)
    sig = np.nan_to_num(v["sigma_d"].to_numpy(float)) * settings.k_sigma
    base = settings.baseline_h / 24.0
    w0 = v["window_start_jd_utc"].to_numpy(float).copy()
    w1 = v["window_end_jd_utc"].to_numpy(float).copy()
    contacts = np.full((n, 4), np.nan)
    s = kind == SERIES
    if s.any():
        contacts[s] = _series_contacts(v[s], targets)
        known = s & np.isfinite(contacts[:, 0]) & np.isfinite(contacts[:, 3])
        w0[known] = contacts[known, 0] - base - sig[known]
        w1[known] = contacts[known, 3] + base + sig[known]
    lo, hi = _rv_offsets_d(ti, v["event"].astype(str).array, kind, targets)
    rv = np.isfinite(lo)
    w0[rv], w1[rv] = jd[rv] + lo[rv] - sig[rv], jd[rv] + hi[rv] + sig[rv]
    return w0, w1, contacts


def _sequence_slots(rows: pd.DataFrame, targets) -> pd.DataFrame:
    """Each rv_sequence row split into its visit slots (one request each)."""
    if rows.empty:
        return rows.assign(slot=np.zeros(0, int), n_slots=np.zeros(0, int))
    ti = rows["target_index"].to_numpy(int)
    visit_d = rows["length_d"].to_numpy(float)
    gap_d = _col(targets, "rv_gap_h", 1.0).astype(float)[ti] / 24.0
    want = _col(targets, "rv_visits", 3).astype(int)[ti]
    w0, w1 = rows["window_start_jd_utc"].to_numpy(float), rows["window_end_jd_utc"].to_numpy(float)
    fits = np.maximum(1, np.floor((w1 - w0 + gap_d) / (visit_d + gap_d))).astype(int)
    n_slots = np.minimum(want, fits)
    rep = np.repeat(np.arange(len(rows)), n_slots)
    slot = np.arange(rep.size) - np.repeat(np.cumsum(n_slots) - n_slots, n_slots)
    out = rows.iloc[rep].reset_index(drop=True)
    width = (w1 - w0)[rep] / n_slots[rep]
    start = w0[rep] + slot * width
    last = slot == n_slots[rep] - 1
    out["window_start_jd_utc"] = start
    out["window_end_jd_utc"] = np.where(last, start + width, start + width - gap_d[rep])
    out["slot"], out["n_slots"] = slot + 1, n_slots[rep]
    return out


def build_requests(visible: pd.DataFrame, targets: pd.DataFrame, intervals: pd.DataFrame | None,
                   altitude_deg=None, settings: RequestSettings = RequestSettings(), weights=None,
                   moon_sep_deg=None, nights: pd.DataFrame | None = None) -> pd.DataFrame:
    """The request table (:data:`REQUEST_COLUMNS` and the score columns; module docstring).

    ``visible``: event visibility table; ``intervals``: observable intervals (every stretch of
    every window becomes a candidate); without them the visible table's one observable stretch
    is used. ``altitude_deg(target_index, jd_utc)`` places movable visits at the lowest airmass.
    ``moon_sep_deg(target_index, jd_utc)`` and the night table (``night``, ``moon_illumination``),
    when given, score each RV visit with the Moon at its block's middle and the illuminated
    fraction of the night holding it (an RV window reaches hours or days from its event);
    otherwise, and for series, the Moon is the visible table's, at the event. Monitor requests
    are not rows of this table: :func:`monitor_requests` gives them.
    """
    from .score import DEFAULT_WEIGHTS

    weights = weights or DEFAULT_WEIGHTS
    kind = request_kinds(visible, targets)
    keep = kind != ""
    v = visible[keep].reset_index(drop=True)
    kind = kind[keep]
    n = len(v)
    ti = v["target_index"].to_numpy(int)
    w0, w1, contacts = _windows(v, kind, targets, settings)
    visit_h = _col(targets, "visit_h", np.nan).astype(float)[ti]
    length = np.where(kind == SERIES, np.nan, np.where(np.isfinite(visit_h), visit_h, DEFAULT_VISIT_H) / 24.0)
    base = pd.DataFrame({
        # text columns passed on as they are: a round trip through Python strings is seconds at 10^5 targets
        "request": kind, "target_index": ti.astype(np.int64), "target": v["target"].astype(str).array,
        "event": v["event"].astype(str).array, "serves": v["event"].astype(str).array,
        "label": v["label"].astype(str).array, "night": v["night"].astype(str).array,
        "slot": np.zeros(n, int), "n_slots": np.ones(n, int),
        "event_jd_utc": v["jd_utc"].to_numpy(float), "event_sigma_d": v["sigma_d"].to_numpy(float),
        "window_start_jd_utc": w0, "window_end_jd_utc": w1, "length_d": length,
        "t1_jd_utc": contacts[:, 0], "t2_jd_utc": contacts[:, 1], "t3_jd_utc": contacts[:, 2],
        "t4_jd_utc": contacts[:, 3],
        "moon_sep_deg": v["moon_sep_deg"].to_numpy(float), "moon_illumination": v["moon_illumination"].to_numpy(float),
        "_obs0": v["observable_start_jd_utc"].to_numpy(float), "_obs1": v["observable_end_jd_utc"].to_numpy(float),
    })
    base["_obs_fraction"] = v["observable_fraction"].to_numpy(float)
    seq = base["request"] == RV_SEQUENCE
    base = pd.concat([base[~seq], _sequence_slots(base[seq].reset_index(drop=True), targets)], ignore_index=True)
    # request ids in a fixed order, whatever the order of the input rows
    base = base.sort_values(["target_index", "event_jd_utc", "event", "slot"], kind="stable").reset_index(drop=True)
    base["request_id"] = np.arange(len(base), dtype=np.int64)
    cands = _stretches(base, intervals)
    cands = _fixed_series(cands, targets, settings)
    cands = _movable_visits(cands, altitude_deg)
    cands["group"] = cands["request_id"]
    cands["priority"] = targets["priority"].to_numpy(float)[cands["target_index"].to_numpy(int)]
    cands["period_d"] = targets["period_d"].to_numpy(float)[cands["target_index"].to_numpy(int)]
    if moon_sep_deg is not None and nights is not None:
        cands = _moon_at_blocks(cands, moon_sep_deg, nights)
    cands = _score(cands, altitude_deg, weights)
    order = ["stretch_start_jd_utc", "stretch_end_jd_utc", "target_index", "event", "request_id"]
    cands = merge_requests(cands.sort_values(order, kind="stable"))
    return cands.sort_values(order, kind="stable").reset_index(drop=True)


def _stretches(base, intervals):
    """One row per observable stretch of each request's window, with the observable fraction."""
    w0, w1 = base["window_start_jd_utc"].to_numpy(float), base["window_end_jd_utc"].to_numpy(float)
    if intervals is not None:
        row, s, e = window_stretches(base["target_index"].to_numpy(int), w0, w1, intervals)
    else:  # the visible table's one stretch, cut to the request's window
        s = np.maximum(base["_obs0"].to_numpy(float), w0)
        e = np.minimum(base["_obs1"].to_numpy(float), w1)
        row = np.flatnonzero(np.isfinite(s) & np.isfinite(e) & (e > s))
        s, e = s[row], e[row]
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.bincount(row, weights=e - s, minlength=len(base)) / (w1 - w0)
    if intervals is None:  # the visible table knows the window's observable share
        frac = np.where(np.isfinite(base["_obs_fraction"].to_numpy(float)), base["_obs_fraction"].to_numpy(float), frac)
    out = base.iloc[row].reset_index(drop=True).drop(columns=["_obs0", "_obs1", "_obs_fraction"])
    out["stretch_start_jd_utc"], out["stretch_end_jd_utc"] = s, e
    out["observable_fraction"] = np.clip(frac[row], 0.0, 1.0)
    return out


#: Longest unobservable gap (minutes) between two stretches of a series window that a block may
#: pause through [our policy, common practice with no source: the zenith blind spot of an
#: alt-az mount (half an hour for a target passing 1 deg from the zenith under an 86 deg
#: limit), a tree or a mast; a light curve keeps both sides of such a gap].
MAX_PAUSE_MIN = 45.0


def _with_pauses(c):
    """The candidate stretches plus, for each pair of consecutive stretches of one series request
    whose gap is at most :data:`MAX_PAUSE_MIN`, one block over both that pauses in the gap
    (``pause_start_jd_utc``, ``pause_end_jd_utc``; NaN for every other row)."""
    c = c.assign(pause_start_jd_utc=np.nan, pause_end_jd_utc=np.nan)
    order = np.lexsort((c["stretch_start_jd_utc"].to_numpy(float), c["request_id"].to_numpy(np.int64)))
    rid = c["request_id"].to_numpy(np.int64)[order]
    s, e = c["stretch_start_jd_utc"].to_numpy(float)[order], c["stretch_end_jd_utc"].to_numpy(float)[order]
    series = (c["request"] == SERIES).to_numpy()[order]
    gap = s[1:] - e[:-1]
    pair = np.flatnonzero((rid[1:] == rid[:-1]) & series[:-1] & (gap > 0) & (gap <= MAX_PAUSE_MIN / MIN_PER_DAY))
    if not pair.size:
        return c
    bridged = c.iloc[order[pair]].reset_index(drop=True)
    bridged["stretch_end_jd_utc"] = e[pair + 1]
    bridged["pause_start_jd_utc"], bridged["pause_end_jd_utc"] = e[pair], s[pair + 1]
    return pd.concat([c, bridged], ignore_index=True)


def _fixed_series(c, targets, settings):
    """Series stretches (and pairs of them across a short pause, :func:`_with_pauses`): parts
    covered, science kept; stretches worth nothing are dropped."""
    c = _with_pauses(c)
    series = (c["request"] == SERIES).to_numpy()
    c = c.assign(placement=np.where(series, "fixed", "movable"), covers="", not_covered="", science_fraction=1.0,
                 start_jd_utc=np.nan, end_jd_utc=np.nan)
    c["covers"] = c["covers"].astype(object)
    c["not_covered"] = c["not_covered"].astype(object)
    s_idx = np.flatnonzero(series)
    if s_idx.size:
        sub = c.iloc[s_idx]
        t = [sub[f"t{j}_jd_utc"].to_numpy(float) for j in (1, 2, 3, 4)]
        s, e = sub["stretch_start_jd_utc"].to_numpy(float), sub["stretch_end_jd_utc"].to_numpy(float)
        parts = series_parts.covered_parts_with_pause(s, e, sub["pause_start_jd_utc"].to_numpy(float),
                                                      sub["pause_end_jd_utc"].to_numpy(float), *t,
                                                      sub["event_jd_utc"].to_numpy(float), settings.baseline_h / 24.0)
        known = np.isfinite(t[0]) & np.isfinite(t[3])
        sci = series_parts.science_fraction(parts, known, sub["observable_fraction"].to_numpy(float))
        full_only = _col(targets, "full_coverage", False).astype(bool)[sub["target_index"].to_numpy(int)]
        sci = np.where(full_only & (sci < series_parts.FULL), 0.0, sci)
        c.loc[s_idx, "covers"] = series_parts.covers_text(parts, known)
        c.loc[s_idx, "not_covered"] = series_parts.missing_text(parts, known, np.isfinite(t[1]))
        c.loc[s_idx, "science_fraction"] = sci
        c.loc[s_idx, "start_jd_utc"], c.loc[s_idx, "end_jd_utc"] = s, e
        c.loc[s_idx, "length_d"] = e - s
    long_enough = (c["stretch_end_jd_utc"] - c["stretch_start_jd_utc"]) * MIN_PER_DAY >= max(settings.min_block_min, 1e-6)
    worth = ~series | ((c["science_fraction"] > 0) & long_enough).to_numpy()
    c = c[worth].reset_index(drop=True)
    c["baseline_min"] = np.nan
    return pd.concat([c, _short_baselines(c, settings)], ignore_index=True)


#: Least time (minutes) cutting the baselines of a series must free for the cut series to be offered.
MIN_BASELINE_CUT_MIN = 10.0


def _short_baselines(c, settings):
    """The series stretches with their baselines cut to :data:`series_parts.BASELINE_PART` of the
    wanted length (:mod:`series_parts`): from T1 - that - k sigma to T4 + that + k sigma, inside
    the stretch, where that frees at least :data:`MIN_BASELINE_CUT_MIN`. Each covers the parts of its
    whole stretch, is worth :data:`series_parts.SHORT_BASELINE` of its science and is an alternative
    candidate of the same request; ``baseline_min`` is the baseline it keeps."""
    t1, t4 = c["t1_jd_utc"].to_numpy(float), c["t4_jd_utc"].to_numpy(float)
    s, e = c["start_jd_utc"].to_numpy(float), c["end_jd_utc"].to_numpy(float)
    keep_d = series_parts.BASELINE_PART * settings.baseline_h / 24.0
    margin = np.nan_to_num(c["event_sigma_d"].to_numpy(float)) * settings.k_sigma
    with np.errstate(invalid="ignore"):
        s2, e2 = np.maximum(s, t1 - keep_d - margin), np.minimum(e, t4 + keep_d + margin)
        cut = ((c["request"] == SERIES).to_numpy() & np.isfinite(t1) & np.isfinite(t4)
               & ((s2 - s) + (e - e2) >= MIN_BASELINE_CUT_MIN / MIN_PER_DAY - 1e-9))
    out = c[cut].reset_index(drop=True)
    out["start_jd_utc"], out["end_jd_utc"] = s2[cut], e2[cut]
    out["length_d"] = e2[cut] - s2[cut]
    out["science_fraction"] = out["science_fraction"].to_numpy(float) * series_parts.SHORT_BASELINE
    out["baseline_min"] = keep_d * MIN_PER_DAY
    return out


def _movable_visits(c, altitude_deg):
    """Movable visits: allowed start range inside the stretch, proposed start at the lowest airmass."""
    mov = (c["placement"] == "movable").to_numpy()
    s, e = c["stretch_start_jd_utc"].to_numpy(float), c["stretch_end_jd_utc"].to_numpy(float)
    length = c["length_d"].to_numpy(float)
    lo = s
    hi = np.where(mov, e - length, s)
    ok = ~mov | (hi >= lo)
    c = c.assign(earliest_start_jd_utc=lo, latest_start_jd_utc=hi)[ok].reset_index(drop=True)
    mov, lo, hi, length = mov[ok], lo[ok], hi[ok], length[ok]
    start = c["start_jd_utc"].to_numpy(float).copy()
    m = np.flatnonzero(mov)
    if m.size:
        f = np.linspace(0.0, 1.0, PLACEMENT_SAMPLES)
        starts = lo[m, None] + (hi - lo)[m, None] * f
        pick = np.full(m.size, PLACEMENT_SAMPLES // 2)
        if altitude_deg is not None:
            ti = c["target_index"].to_numpy(int)[m]
            for k in range(0, m.size, ALT_CHUNK):  # bounds the altitude arrays of a survey
                sl = slice(k, k + ALT_CHUNK)
                idx = np.broadcast_to(ti[sl, None], starts[sl].shape)
                alt = np.asarray(altitude_deg(idx, starts[sl] + 0.5 * length[m[sl], None]), float)
                pick[sl] = np.argmax(np.where(np.isfinite(alt), alt, -np.inf), axis=1)
        start[m] = starts[np.arange(m.size), pick]
    c["start_jd_utc"] = start
    c["end_jd_utc"] = np.where(mov, start + length, c["end_jd_utc"].to_numpy(float))
    return c


def _moon_at_blocks(c, moon_sep_deg, nights):
    """The candidates with each RV visit's Moon separation at its block's middle and the Moon's
    illuminated fraction of its block's night (the visible table gives them at the event)."""
    rv = np.flatnonzero(c["request"].isin((RV_VISIT, RV_SEQUENCE)).to_numpy())
    if not rv.size:
        return c
    sep = c["moon_sep_deg"].to_numpy(float).copy()
    illumination = c["moon_illumination"].to_numpy(float).copy()
    # the night holding the block, not the request's ``night`` (its event's)
    sep[rv], illumination[rv] = moon_at_blocks(moon_sep_deg, nights, c["target_index"].to_numpy(int)[rv],
                                               c["start_jd_utc"].to_numpy(float)[rv],
                                               c["end_jd_utc"].to_numpy(float)[rv])
    return c.assign(moon_sep_deg=sep, moon_illumination=illumination)


def _score(c, altitude_deg, weights):
    """Score columns of each candidate at its proposed block (value: priority x rarity x points)."""
    from .blocks import block_airmass

    airmass = block_airmass(altitude_deg, c["target_index"].to_numpy(int), c["start_jd_utc"].to_numpy(float),
                            c["end_jd_utc"].to_numpy(float))
    window = (c["window_end_jd_utc"] - c["window_start_jd_utc"]).to_numpy(float)
    sc = score_components(c["priority"].to_numpy(float), c["period_d"].to_numpy(float),
                          c["science_fraction"].to_numpy(float), airmass,
                          c["moon_sep_deg"].to_numpy(float), c["moon_illumination"].to_numpy(float),
                          c["event_sigma_d"].to_numpy(float), window, weights)
    for col in sc.columns:
        c[col] = sc[col].to_numpy()
    return c


def monitor_requests(availability: pd.DataFrame | None, targets: pd.DataFrame) -> pd.DataFrame:
    """Monitor requests: one row per target with ``visit_h`` and observable interval of a night.

    Columns ``target_index, target, night, start_jd_utc, end_jd_utc`` (the interval in which the
    visit may start and end), ``length_d`` and ``request`` = ``monitor``; the gap filler places one
    visit per target and night, ``visit_gap_h`` after the previous.
    """
    if availability is None or availability.empty or "visit_h" not in targets:
        return pd.DataFrame({c: [] for c in ("target_index", "target", "night", "start_jd_utc", "end_jd_utc",
                                             "length_d", "request")})
    visit_d = targets["visit_h"].to_numpy(float)[availability["target_index"].to_numpy(int)] / 24.0
    keep = np.isfinite(visit_d)
    out = availability[keep][["target_index", "target", "night", "start_jd_utc", "end_jd_utc"]].reset_index(drop=True)
    out["length_d"] = visit_d[keep]
    out["request"] = MONITOR
    return out
