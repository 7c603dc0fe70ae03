"""Wanted orbital phases: each phase a target asks for (``rv_phases``) in every orbit of a span.

Phases are mean-anomaly phases after periastron, the convention of phase coverage
(:func:`planner.orbits.coverage.mean_phase`, :mod:`planner.scheduling.coverage`):

    phase = M / 2 pi = frac((t - Tp) / P),    t and Tp in BJD_TDB,

with Tp the catalogue's periastron epoch (``tp_bjd_tdb``; from Tc when the catalogue gives Tc,
and Tp = Tc for a circular orbit, whose omega is taken as 90 deg) and P the catalogue period.
So phase 0 is periastron and phase 0.25 is a quarter of the orbit's *time* after it (mean
anomaly 90 deg), not a true anomaly of 90 deg. As in phase coverage, apsidal motion and a third
body's light time are not applied to these phases.

:func:`wanted_phase_events` gives one row per *instance* (a wanted phase in one orbit) whose
window reaches into a span, in the layout of the events table
(:data:`planner.orbits.events.EVENT_COLUMNS`) plus ``phase`` and ``phase_tol``, so that the sky
stage places it like any event (its UTC time, night, Moon and the observable share of its
window, :func:`planner.sky.windows.event_visibility` with no baseline) and the request stage
turns it into an ``rv_visit`` request (:func:`planner.scheduling.requests.build_requests`):

    t_n = Tp + P (n + phase)                        (BJD_TDB)
    window: t_n +- (tol P + k sigma_n)              (tol: ``rv_phase_tol``, orbits)
    sigma_n^2 = sigma_T^2 + sigma_P^2 x^2 + (P^2 + sigma_P^2) var(d_peri),  x = (t_n - T_epoch) / P

The uncertainty is that of periastron (:mod:`planner.orbits.events`) carried to the phase: the
phase is counted from periastron, so only the catalogue epoch's error, the period's error over
the x orbits since the epoch and, when the epoch is a Tc, the spread of periastron's offset from
Tc under the e and omega errors enter. ``duration_d`` is the window's own length, 2 tol P (the
sky stage sizes an event's window from it). The event of an instance is named
``phase_0.25`` (:func:`phase_event_name`), its label ``phase 0.25``: one event name per wanted
phase, so a target's week rule applies to each wanted phase on its own.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits.events import EVENT_COLUMNS, offset_variance
from ..orbits.geometry import ORBIT_EVENTS

#: Event names of wanted phases start with this; the rest is the phase (:func:`phase_event_name`).
PHASE_EVENT_PREFIX = "phase_"
PHASE_COLUMNS = EVENT_COLUMNS + ("phase", "phase_tol")
_PERIASTRON = ORBIT_EVENTS.index("periastron")


def phase_text(phase: float) -> str:
    """The phase as written in names and labels: up to 6 decimals, no trailing zeros (``0.25``, ``0``)."""
    return f"{float(phase):.6f}".rstrip("0").rstrip(".") or "0"


def phase_event_name(phase: float) -> str:
    """Event name of a wanted phase: ``phase_0.25``."""
    return PHASE_EVENT_PREFIX + phase_text(phase)


def phase_of_event(event) -> float:
    """The phase of a wanted-phase event name (``phase_0.25`` -> 0.25); NaN for any other event."""
    text = str(event)
    if not text.startswith(PHASE_EVENT_PREFIX):
        return np.nan
    try:
        return float(text[len(PHASE_EVENT_PREFIX):])
    except ValueError:
        return np.nan


def is_wanted_phase(table: pd.DataFrame) -> np.ndarray:
    """(n,) True for the rows of an events, visible or request table that are wanted phases."""
    if "phase" in table:
        return np.isfinite(table["phase"].to_numpy(float))
    ev = table["event"].astype(str) if "event" in table else pd.Series([], dtype=str)
    return ev.str.startswith(PHASE_EVENT_PREFIX).to_numpy(bool)


def wanted_phase_events(targets: pd.DataFrame, start_bjd_tdb: float, end_bjd_tdb: float, n_samples=None,
                        seed=None) -> pd.DataFrame:
    """Every instance of every wanted phase whose window [t - tol P, t + tol P] reaches into
    [start, end) (BJD_TDB days); columns :data:`PHASE_COLUMNS`, sorted by time then target.

    ``targets``: the catalogue table (``rv_phases``, ``rv_phase_tol``; a table without them has
    no wanted phase and gives an empty table). ``cycle`` counts whole orbits since the
    catalogue epoch, as :func:`planner.orbits.events.predict_events` does. ``n_samples`` and
    ``seed`` are those of the events' Monte Carlo (its defaults when None), so the spread of
    periastron here is the one of the periastron events.
    Worked value: Tp = 2454388.0718, P = 5.6334729 d, phase 0.25, tol 0.02: the instance after
    Tp is at 2454389.48017, its window 0.11267 d (2.70 h) either side.
    """
    empty = pd.DataFrame({c: [] for c in PHASE_COLUMNS})
    if "rv_phases" not in targets or len(targets) == 0:
        return empty
    counts = np.array([len(p) if isinstance(p, tuple) else 0 for p in targets["rv_phases"]], dtype=int)
    if counts.sum() == 0:
        return empty
    ti = np.repeat(np.arange(len(targets)), counts)
    phase = np.concatenate([np.asarray(p, float) for p, c in zip(targets["rv_phases"], counts) if c])
    period = targets["period_d"].to_numpy(float)[ti]
    tp = targets["tp_bjd_tdb"].to_numpy(float)[ti]
    tol = targets["rv_phase_tol"].to_numpy(float)[ti]
    half = tol * period
    # orbits n with t_n + half >= start and t_n - half < end
    first = np.ceil((start_bjd_tdb - half - tp) / period - phase)
    last = np.ceil((end_bjd_tdb + half - tp) / period - phase) - 1
    n = np.maximum(last - first + 1, 0).astype(np.int64)
    rep = np.repeat(np.arange(ti.size), n)
    k = first[rep] + (np.arange(rep.size) - np.repeat(np.cumsum(n) - n, n))
    ti_r, phase_r, p_r = ti[rep], phase[rep], period[rep]
    t = tp[rep] + p_r * (k + phase_r)
    epoch = targets["epoch_bjd_tdb"].to_numpy(float)[ti_r]
    x = (t - epoch) / p_r
    sigma = np.sqrt(_nan0(targets["epoch_err_d"].to_numpy(float)[ti_r]) ** 2
                    + (_nan0(targets["period_err_d"].to_numpy(float)[ti_r]) * x) ** 2
                    + (p_r ** 2 + _nan0(targets["period_err_d"].to_numpy(float)[ti_r]) ** 2)
                    * _periastron_variance(targets, n_samples, seed)[ti_r])
    order = np.lexsort((ti_r, t))
    ti_r, phase_r, t, x, sigma = ti_r[order], phase_r[order], t[order], x[order], sigma[order]
    tol_r = targets["rv_phase_tol"].to_numpy(float)[ti_r]
    return pd.DataFrame({
        "target": targets["name"].to_numpy(object)[ti_r],
        "event": np.array([phase_event_name(v) for v in phase_r], dtype=object),
        "label": np.array(["phase " + phase_text(v) for v in phase_r], dtype=object),
        "cycle": np.floor(x + 1e-9).astype(np.int64),
        "bjd_tdb": t,
        "sigma_d": sigma,
        "duration_d": 2.0 * tol_r * targets["period_d"].to_numpy(float)[ti_r],
        "eclipses": pd.array([pd.NA] * ti_r.size, dtype="boolean"),
        "target_index": ti_r.astype(np.int64),
        "phase": phase_r,
        "phase_tol": tol_r,
    }, columns=list(PHASE_COLUMNS))


def _nan0(values):
    return np.nan_to_num(np.asarray(values, float))


def _periastron_variance(targets, n_samples, seed) -> np.ndarray:
    """(n,) spread (orbits^2) of periastron's offset from the catalogue epoch under the e, omega errors."""
    from ..orbits import events

    wants = np.array([isinstance(p, tuple) and len(p) > 0 for p in targets["rv_phases"]], dtype=bool)
    out = np.zeros(len(targets))
    if not wants.any():
        return out
    sub = targets[wants]
    orbit = (sub["ephemeris"] == "orbit").to_numpy()
    e = np.where(orbit, sub["e"].to_numpy(float), 0.0)
    omega = np.radians(np.where(orbit, sub["omega_deg"].to_numpy(float), 90.0))
    shape = None
    if "shape_kind" in sub:
        shape = (sub["shape_kind"].to_numpy(str),) + tuple(
            sub[c].to_numpy(float) for c in ("shape_x", "shape_y", "shape_x_err", "shape_y_err"))
    var = offset_variance(e, _nan0(sub["e_err"].to_numpy(float)), omega,
                          np.radians(_nan0(sub["omega_err_deg"].to_numpy(float))), sub["epoch_kind"].to_numpy(str),
                          sub["name"].to_numpy(object),
                          events.DEFAULT_SAMPLES if n_samples is None else n_samples,
                          events.DEFAULT_SEED if seed is None else seed, shape=shape)
    out[wants] = var[:, _PERIASTRON]
    return out
