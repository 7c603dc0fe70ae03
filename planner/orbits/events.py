"""Predicted event times, with 1-sigma timing uncertainties, for a catalogue over a time span.

:func:`predict_events` is the orbital-phase engine: target table in (see
:mod:`planner.catalogue`), events table out. Event times come in closed form through the
anomalies (no root search): for an event at true anomaly nu_k the mean-anomaly phase after
periastron is phi_k = M(nu_k) / 2 pi, so its n-th occurrence after the catalogue epoch T_ref
(itself at phase phi_ref) is

    t_n = T_ref + P (n + d_k),   d_k = (phi_k - phi_ref) mod 1.

Uncertainty, for independent Gaussian element errors (catalogues give no covariances):

    sigma_n^2 = sigma_T^2 + sigma_P^2 (n + d_k)^2 + (P^2 + sigma_P^2) var(d_k)

The first two terms are exact (linear propagation of T and P); var(d_k), the spread of the
phase offset under the e and omega errors, comes from a seeded Monte Carlo draw per target
(``e`` reflected at 0 and kept below 1, omega Gaussian). This equals a full Monte Carlo over
P, epoch, e and omega in expectation, at the cost of one draw per target instead of one per event
(tests/test_events.py checks it against a brute-force draw). For the reference event itself
(e.g. the transit when the catalogue gives Tc) var(d_k) = 0, as it should be.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import PeriplanError
from ..timescales.epochs import bjd_tdb_to_utc
from . import binary_events, element_draws, geometry, light_time, timing
from .geometry import ORBIT_EVENTS, PERIODIC_EVENT

#: Monte Carlo draws per target for the phase-offset spread; the relative error of sigma from
#: N draws is about 1/sqrt(2N), 3 per cent at the default (bench/bench_events.py measures the cost).
DEFAULT_SAMPLES = 500
DEFAULT_SEED = 20261202

EVENT_COLUMNS = (
    "target", "event", "label", "cycle", "bjd_tdb", "sigma_d", "duration_d", "eclipses", "target_index",
)


def _reference_phase(epoch_kind, phases):
    """Phase (after periastron) of each target's catalogue epoch, shape (n,)."""
    ref = np.zeros(len(epoch_kind))
    is_tc = epoch_kind == "tc"
    ref[is_tc] = phases[is_tc, ORBIT_EVENTS.index("primary_conjunction")]
    return ref


def _offsets(e, omega_rad, epoch_kind):
    """Phase offsets d_k (n, 6) of the six events after the catalogue epoch."""
    ph = geometry.event_phases(e, omega_rad)
    return np.mod(ph - _reference_phase(epoch_kind, ph)[:, None], 1.0)


def offset_variance(e, e_err, omega_rad, omega_err_rad, epoch_kind, names, n_samples=DEFAULT_SAMPLES,
                    seed=DEFAULT_SEED, shape=None, method="auto"):
    """Mean square deviation (orbits^2) of the event phase offsets d_k under e and omega errors.

    Returns shape (n, 6), columns in :data:`~planner.orbit.ORBIT_EVENTS` order, taken about the
    nominal offsets (so any bias of the draw counts as spread). Targets with e = 0, or with no e
    and omega errors, get 0. ``method="auto"`` takes the linearised value of
    :mod:`planner.orbits.timing` wherever its switch test trusts it and the Monte Carlo elsewhere;
    ``"monte_carlo"`` draws for every target. Each target draws from its own generator seeded by
    ``seed`` and the CRC-32 of its name, so its value is reproducible and does not depend on the
    other targets.
    ``shape`` (optional: kind, x, y, x_err, y_err per target, see
    :func:`planner.orbits.element_draws.shape_draws`) makes rows that give ecosw/esinw or
    secosw/sesinw draw in those parameters instead of e and omega.
    """
    e = np.asarray(e, float)
    n = e.size
    var = np.zeros((n, len(ORBIT_EVENTS)))
    todo_mask = (e > 0) & ((e_err > 0) | (omega_err_rad > 0))
    alt = np.zeros(e.shape, bool)
    if shape is not None:
        alt = np.asarray(shape[0]) != ""
        todo_mask = np.where(alt, (shape[3] > 0) | (shape[4] > 0), todo_mask)
    todo = np.flatnonzero(todo_mask)
    # the linearised variance assumes independent e and omega errors: rows drawn in ecosw/esinw
    # or secosw/sesinw keep the Monte Carlo in their own parameters
    linear = todo[~alt[todo]]
    if linear.size and method == "auto":
        var[linear], needs_mc = timing.delta_offset_variance(e[linear], e_err[linear], omega_rad[linear],
                                                             omega_err_rad[linear], epoch_kind[linear])
        todo = np.sort(np.concatenate([todo[alt[todo]], linear[needs_mc]]))
    if todo.size == 0:
        return var
    nominal = _offsets(e[todo], omega_rad[todo], epoch_kind[todo])
    chunk = max(1, 2_000_000 // n_samples)
    for start in range(0, todo.size, chunk):
        idx = todo[start:start + chunk]
        z = element_draws.standard_normals([names[i] for i in idx], seed, n_samples)
        sub = None if shape is None else tuple(np.asarray(a)[idx] for a in shape)
        es, ws = element_draws.shape_draws(z, e[idx], e_err[idx], omega_rad[idx], omega_err_rad[idx], sub)
        ph = geometry.event_phases(es, ws)  # (m, S, 6)
        ref = np.where((epoch_kind[idx] == "tc")[:, None], ph[..., ORBIT_EVENTS.index("primary_conjunction")], 0.0)
        dev = ph - ref[..., None] - nominal[start:start + chunk][:, None, :]
        dev -= np.rint(dev)  # whole turns removed: the deviation from nominal in [-0.5, 0.5]
        var[idx] = np.mean(dev * dev, axis=1)
    return var


def predict_events(targets: pd.DataFrame, start_bjd_tdb: float, end_bjd_tdb: float, kinds=None,
                   n_samples: int = DEFAULT_SAMPLES, seed: int = DEFAULT_SEED, reach_d=None) -> pd.DataFrame:
    """Every wanted event of every target with start <= t < end (BJD_TDB days), sorted by time.

    Parameters
    ----------
    targets : DataFrame
        Target table from :func:`planner.catalogue.read_catalogue` (n rows).
    start_bjd_tdb, end_bjd_tdb : float
        Span in BJD_TDB.
    kinds : iterable of str, optional
        Keep only these event names: intersected with the ``events`` list of a target whose
        catalogue names its events (``events_given``), else with every event its elements define
        (the filter asks for them, beyond the target's defaults). The
        aliases of :data:`planner.orbits.geometry.EVENT_ALIASES` are accepted, ``maximum`` /
        ``minimum`` keep the periodic events whose label says so
        (:func:`planner.orbits.geometry.periodic_kind`), and ``primary_conjunction`` those of a
        linear ephemeris given as ``tc`` (:data:`planner.orbits.geometry.LINEAR_TC_LABEL`).
    reach_d : array of shape (n,), optional
        Days (>= 0) by which each target's span reaches beyond the span on either side: row i
        gets its events with start - reach_d[i] <= t < end + reach_d[i] (a planner looking as far
        as a target's widest observing window reaches). Default 0 for every row.

    Returns
    -------
    DataFrame
        Columns :data:`EVENT_COLUMNS`: ``target`` (name), ``event`` (snake_case event name),
        ``label`` (catalogue label of a ``periodic`` event, else the event name), ``cycle``
        (whole orbits since the catalogue epoch), ``bjd_tdb``, ``sigma_d`` (1-sigma, days),
        ``duration_d`` (eclipse/transit length or the catalogue's ``duration_h``; NaN when
        unknown), ``eclipses`` (True/False for conjunctions with geometry, else NA) and
        ``target_index`` (row of ``targets``).
    """
    n = len(targets)
    wanted_kinds = None if kinds is None else _kinds(kinds)
    period = targets["period_d"].to_numpy(float)
    period_err = targets["period_err_d"].to_numpy(float)
    epoch = targets["epoch_bjd_tdb"].to_numpy(float)
    epoch_err = targets["epoch_err_d"].to_numpy(float)
    epoch_kind = targets["epoch_kind"].to_numpy(str)
    is_orbit = (targets["ephemeris"] == "orbit").to_numpy()
    e = np.where(is_orbit, targets["e"].to_numpy(float), 0.0)
    omega = np.radians(np.where(is_orbit, targets["omega_deg"].to_numpy(float), 90.0))
    names = list(ORBIT_EVENTS) + [PERIODIC_EVENT]

    # offsets (n, 7): six orbital events, then 'periodic' at offset 0 of a linear ephemeris
    offsets = np.zeros((n, 7))
    offsets[:, :6] = _offsets(e, omega, epoch_kind)
    var_d = np.zeros((n, 7))
    var_d[:, :6] = offset_variance(e, targets["e_err"].to_numpy(float), omega,
                                   np.radians(targets["omega_err_deg"].to_numpy(float)), epoch_kind,
                                   targets["name"].to_numpy(object), n_samples, seed, shape=_shape(targets))
    want = np.zeros((n, 7), bool)
    asked = targets["events_given"].to_numpy(bool) if "events_given" in targets else np.ones(n, bool)
    for i, (evs, orb, label) in enumerate(zip(targets["events"], is_orbit, targets["label"])):
        if wanted_kinds is not None and not asked[i]:  # the filter asks for events beyond the defaults
            evs = (ORBIT_EVENTS if e[i] > 0 else _CIRCULAR_EVENTS) if orb else (PERIODIC_EVENT,)
        for ev in evs:
            if wanted_kinds is None or any(geometry.names_event(w, ev, label) for w in wanted_kinds):
                want[i, names.index(ev)] = True
        if not orb:
            want[i, :6] = False
        else:
            want[i, 6] = False

    geom = _has_geometry(targets)
    durations = _durations_d(targets, geom, e, omega, period)

    # rows with apsidal motion or two epochs have their own path; a third body's light time is
    # added to every event of its row, which is why those rows look beyond the span by pad_d
    extended = binary_events.extended_mask(targets) if "epoch2_kind" in targets else np.zeros(n, bool)
    ltte = _light_time_elements(targets)
    pad_d = np.where(np.isfinite(ltte[4]), np.abs(np.nan_to_num(ltte[4])) * (1 + 2 * np.nan_to_num(ltte[2])), 0.0)
    reach = np.zeros(n) if reach_d is None else np.asarray(reach_d, float)
    look_d = pad_d + reach
    ti, ki = np.nonzero(want & ~extended[:, None])
    p, d = period[ti], offsets[ti, ki]
    first = np.ceil((start_bjd_tdb - look_d[ti] - epoch[ti]) / p - d)
    last = np.ceil((end_bjd_tdb + look_d[ti] - epoch[ti]) / p - d) - 1
    count = np.maximum(last - first + 1, 0).astype(np.int64)
    rep = np.repeat(np.arange(ti.size), count)
    cycle = first[rep] + (np.arange(rep.size) - np.repeat(np.cumsum(count) - count, count))
    t_i, k_i = ti[rep], ki[rep]
    x = cycle + offsets[t_i, k_i]
    bjd = epoch[t_i] + period[t_i] * x
    sigma = np.sqrt(epoch_err[t_i] ** 2 + (period_err[t_i] * x) ** 2
                    + (period[t_i] ** 2 + period_err[t_i] ** 2) * var_d[t_i, k_i])
    if extended.any():
        ext = binary_events.extended_events(targets, np.flatnonzero(extended), want, start_bjd_tdb, end_bjd_tdb,
                                            look_d, n_samples, seed)
        t_i, k_i, cycle, bjd, sigma = (np.concatenate([a, b]) for a, b in zip((t_i, k_i, cycle, bjd, sigma), ext))
    if np.any(pad_d > 0):
        bjd = bjd + light_time.irwin_delay_d(bjd, *(a[t_i] for a in ltte))
    if np.any(look_d > 0):
        keep = (look_d[t_i] == 0) | ((bjd >= start_bjd_tdb - reach[t_i]) & (bjd < end_bjd_tdb + reach[t_i]))
        t_i, k_i, cycle, bjd, sigma = t_i[keep], k_i[keep], cycle[keep], bjd[keep], sigma[keep]
    order = np.lexsort((t_i, bjd))  # by time, then catalogue order: deterministic
    t_i, k_i, cycle, bjd, sigma = t_i[order], k_i[order], cycle[order], bjd[order], sigma[order]
    event_names = np.asarray(names, dtype=object)[k_i]
    labels = targets["label"].to_numpy(object)[t_i]
    labels = np.where(event_names == PERIODIC_EVENT, labels, event_names)
    dur = durations[t_i, k_i]
    # eclipses: known (True/False) only at the conjunctions of targets with geometry
    known = geom[t_i] & np.isin(k_i, _CONJUNCTIONS)
    out = pd.DataFrame({
        "target": targets["name"].to_numpy(object)[t_i],
        "event": event_names,
        "label": labels,
        "cycle": cycle.astype(np.int64),
        "bjd_tdb": bjd,
        "sigma_d": sigma,
        "duration_d": dur,
        "eclipses": pd.arrays.BooleanArray(np.isfinite(dur) & known, ~known),
        "target_index": t_i.astype(np.int64),
    })
    return out


#: Events a circular orbit defines (its periastron is a convention: omega = 90 deg).
_CIRCULAR_EVENTS = ("primary_conjunction", "secondary_conjunction", "rv_max", "rv_min")


def _kinds(kinds) -> set:
    """The event names and periodic kinds that the words ``kinds`` mean (aliases resolved)."""
    out = set()
    for word in kinds:
        name = geometry.canonical_event(word)
        if name is None:
            raise PeriplanError(f"unknown event {word!r}; expected one of {', '.join(geometry.EVENT_WORDS)}")
        out.add(name)
    return out


_CONJUNCTIONS = (ORBIT_EVENTS.index("primary_conjunction"), ORBIT_EVENTS.index("secondary_conjunction"))


def _shape(targets):
    """(kind, x, y, x_err, y_err) of the catalogue's shape parameters, or None for older tables."""
    if "shape_kind" not in targets:
        return None
    return (targets["shape_kind"].to_numpy(str),) + tuple(
        targets[c].to_numpy(float) for c in ("shape_x", "shape_y", "shape_x_err", "shape_y_err"))


def _light_time_elements(targets):
    """(p3_d, t3, e3, omega3_rad, amplitude_d), NaN amplitude where a row has no third body."""
    n = len(targets)
    if "ltte_amp_d" not in targets:
        return tuple(np.full(n, np.nan) for _ in range(5))
    return (targets["p3_d"].to_numpy(float), targets["t3_bjd_tdb"].to_numpy(float), targets["e3"].to_numpy(float),
            np.radians(targets["omega3_deg"].to_numpy(float)), targets["ltte_amp_d"].to_numpy(float))


def applied_corrections(targets) -> np.ndarray:
    """(n,) text naming the corrections applied to each target's events, ``""`` for none.

    Semicolon list of ``apsidal_motion`` (omega turning; ``anomalistic_period`` added when the
    catalogue period is sidereal), ``two_epochs`` (tc+tp or tsec: nearest epoch, checked and
    combined), ``ecosw_esinw`` / ``secosw_sesinw`` (Monte Carlo drawn in those parameters) and
    ``third_body_light_time`` (Irwin 1952 delay added to every event).
    """
    n = len(targets)
    parts = [[] for _ in range(n)]
    if "omega_dot_deg_d" not in targets:
        return np.full(n, "", dtype=object)
    for i, row in enumerate(targets.itertuples(index=False)):
        if row.omega_dot_deg_d != 0:
            parts[i].append("apsidal_motion")
            if row.period_kind == "sidereal":
                parts[i].append("anomalistic_period")
        if row.epoch2_kind:
            parts[i].append("two_epochs")
        if row.shape_kind:
            parts[i].append(f"{row.shape_kind}_{'esinw' if row.shape_kind == 'ecosw' else 'sesinw'}")
        if np.isfinite(row.ltte_amp_d):
            parts[i].append("third_body_light_time")
    return np.array([";".join(p) for p in parts], dtype=object)


def _has_geometry(targets):
    """(n,) True where the catalogue gives a/R*, inclination and radius ratio."""
    return (np.isfinite(targets["a_rstar"].to_numpy(float)) & np.isfinite(targets["inc_deg"].to_numpy(float))
            & np.isfinite(targets["rp_rstar"].to_numpy(float)))


def _durations_d(targets, geom, e, omega, period):
    """Event durations (n, 7) in days; NaN where none is known (``geom``: :func:`_has_geometry`)."""
    n = len(targets)
    dur = np.full((n, 7), np.nan)
    if geom.any():
        a_rstar = targets["a_rstar"].to_numpy(float)[geom]
        inc = np.radians(targets["inc_deg"].to_numpy(float))[geom]
        k = targets["rp_rstar"].to_numpy(float)[geom]
        for col, secondary in zip(_CONJUNCTIONS, (False, True)):
            dur[geom, col] = geometry.eclipse_duration(period[geom], a_rstar, inc, k, e[geom], omega[geom],
                                                    secondary=secondary)
    given = targets["duration_h"].to_numpy(float) / 24.0
    no_geom = ~geom & np.isfinite(given)
    dur[no_geom, _CONJUNCTIONS[0]] = given[no_geom]
    dur[no_geom & (e == 0), _CONJUNCTIONS[1]] = given[no_geom & (e == 0)]
    dur[:, 6] = given
    return dur


def seen_in_span(events: pd.DataFrame, targets: pd.DataFrame, start_utc, end_utc):
    """(events, utc): the events seen from the Earth with start <= t < end (astropy UTC Times).

    ``events`` keeps the engine's columns (index reset); ``utc`` is an astropy Time (UTC) per row,
    the moment the event is seen from the geocentre (BJD_TDB minus the light travel time).
    """
    idx = events["target_index"].to_numpy()
    t_utc = bjd_tdb_to_utc(events["bjd_tdb"].to_numpy(float), targets["ra_deg"].to_numpy(float)[idx],
                           targets["dec_deg"].to_numpy(float)[idx])
    inside = np.asarray((t_utc >= start_utc) & (t_utc < end_utc))
    return events[inside].reset_index(drop=True), t_utc[inside]
