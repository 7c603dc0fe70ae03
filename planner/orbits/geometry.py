"""Orbital geometry of the primary: event anomalies, Tp <-> Tc, radial velocity, eclipse duration.

Conventions (fixed in DEVELOPERS.md, "Conventions"):

* ``omega`` is the argument of periastron of the *primary's* orbit (the star whose radial
  velocity is measured), as in the radial-velocity literature; z points away from the observer.
* RV of the primary: v = gamma + K [cos(nu + omega) + e cos omega].
* Event true anomalies: periastron 0, apastron pi, primary conjunction (companion in front:
  transit, primary eclipse) pi/2 - omega, secondary conjunction (companion behind: occultation,
  secondary eclipse) 3 pi/2 - omega, RV maximum -omega, RV minimum pi - omega.
* For a circular orbit omega is undefined; the catalogue loader sets omega = 90 deg, which puts
  periastron at primary conjunction (Tp = Tc).

Angles are radians, times are days (BJD_TDB when absolute). Functions broadcast over arrays.
"""

from __future__ import annotations

import numpy as np

from . import kepler

#: Event names, in the order of the columns of :func:`event_true_anomalies`.
ORBIT_EVENTS = (
    "periastron",
    "apastron",
    "primary_conjunction",
    "secondary_conjunction",
    "rv_max",
    "rv_min",
)
#: Event of a target that has only a linear ephemeris T0 + n P.
PERIODIC_EVENT = "periodic"
ALL_EVENTS = ORBIT_EVENTS + (PERIODIC_EVENT,)
#: The usual words for the conjunctions, accepted wherever an event is named (the catalogue's
#: ``events`` column, the events filter); they mean the event they map to.
EVENT_ALIASES = {
    "transit": "primary_conjunction",
    "primary_eclipse": "primary_conjunction",
    "occultation": "secondary_conjunction",
    "secondary_eclipse": "secondary_conjunction",
}
#: Kinds of a ``periodic`` event: a target with only a linear ephemeris says which it is by its
#: label (a label holding the word ``maximum``/``max`` or ``minimum``/``min``, as "light maximum"
#: or "Min I"); as a filter, ``maximum`` keeps the periodic events of such targets only.
PERIODIC_KINDS = ("maximum", "minimum")
#: The label of a linear ephemeris whose epoch is given as ``tc`` and that names no label or kind
#: of its own: the column says the epoch is a primary conjunction (a transit or primary eclipse),
#: and ``--kinds primary_conjunction`` (or ``transit``) keeps its events.
LINEAR_TC_LABEL = "primary conjunction"
#: Every word accepted as an event name.
EVENT_WORDS = ALL_EVENTS + tuple(EVENT_ALIASES) + PERIODIC_KINDS
_PERIODIC_KIND_WORDS = {"maximum": "maximum", "max": "maximum", "minimum": "minimum", "min": "minimum"}


def canonical_event(word: str) -> str | None:
    """The event name (:data:`ALL_EVENTS`) or periodic kind (:data:`PERIODIC_KINDS`) that ``word``
    means, case, spaces and hyphens aside (``"Primary eclipse"`` -> ``primary_conjunction``);
    None for a word that names no event."""
    key = "_".join(str(word).strip().lower().replace("-", " ").split())
    key = EVENT_ALIASES.get(key, key)
    return key if key in ALL_EVENTS or key in PERIODIC_KINDS else None


def periodic_kind(label: str) -> str:
    """``maximum`` or ``minimum`` when the label of a periodic event says so, else ``""``."""
    words = {_PERIODIC_KIND_WORDS.get(w) for w in str(label).lower().replace("_", " ").replace("-", " ").split()}
    kinds = [k for k in PERIODIC_KINDS if k in words]
    return kinds[0] if len(kinds) == 1 else ""


def event_meant(event: str, label) -> str:
    """The event a row of ``event`` and ``label`` stands for: ``primary_conjunction`` for the
    periodic event of a linear ephemeris given as ``tc`` (:data:`LINEAR_TC_LABEL`), else ``event``."""
    return "primary_conjunction" if event == PERIODIC_EVENT and label == LINEAR_TC_LABEL else event


def names_event(word: str, event: str, label) -> bool:
    """True when ``word`` (an event name or periodic kind, :func:`canonical_event`) asks for the
    event ``event`` of a row labelled ``label``: its name, the periodic kind its label says
    (:func:`periodic_kind`), or the event it stands for (:func:`event_meant`)."""
    return word in (event, event_meant(event, label)) or (event == PERIODIC_EVENT and periodic_kind(label) == word)


def event_true_anomalies(omega_rad):
    """True anomalies (radians, in [0, 2 pi)) of the six orbital events.

    Returns an array of shape ``omega_rad.shape + (6,)``, columns in the order of
    :data:`ORBIT_EVENTS`. ``omega_rad`` is the primary's argument of periastron.
    """
    w = np.asarray(omega_rad, dtype=float)[..., None]
    offsets = np.array([0.0, np.pi, np.pi / 2, 3 * np.pi / 2, 0.0, np.pi])
    signs = np.array([0.0, 0.0, -1.0, -1.0, -1.0, -1.0])
    return kepler.wrap_angle(offsets + signs * w)


def event_phases(e, omega_rad):
    """Mean-anomaly phases (fractions of an orbit after periastron, in [0, 1)) of the six events.

    Shape ``broadcast(e, omega_rad).shape + (6,)``, columns in the order of :data:`ORBIT_EVENTS`.

    Periastron and apastron are at M = 0 and pi for every e. For the other four the half true
    anomalies are pi/4 - w/2, 3 pi/4 - w/2, -w/2 and pi/2 - w/2, whose sines and cosines follow
    from sin(w/2) and cos(w/2) by the angle-addition formulae (a common factor 1/sqrt(2) cancels
    in atan2); then E = 2 atan2(sqrt(1 - e) sin(nu/2), sqrt(1 + e) cos(nu/2)) and M = E - e sin E.
    Same values as :func:`planner.kepler.mean_from_true` on :func:`event_true_anomalies`, with
    two trigonometric calls instead of eight (this is the inner loop of the timing Monte Carlo).
    """
    e = np.asarray(e, dtype=float)
    w = np.asarray(omega_rad, dtype=float)
    shape = np.broadcast_shapes(e.shape, w.shape)
    out = np.empty(shape + (len(ORBIT_EVENTS),))
    out[..., 0] = 0.0
    out[..., 1] = 0.5
    c, s = np.cos(0.5 * w), np.sin(0.5 * w)
    sin_half = np.stack(np.broadcast_arrays(c - s, c + s, -s, c), axis=-1)
    cos_half = np.stack(np.broadcast_arrays(c + s, s - c, c, s), axis=-1)
    out[..., 2:] = _phase_from_half_angle(e[..., None], sin_half, cos_half)
    return out


def _phase_from_half_angle(e, sin_half, cos_half):
    """Mean-anomaly phase in [0, 1) of the true anomaly whose half angle has these (scaled) sine and cosine."""
    big_e = 2.0 * np.arctan2(np.sqrt(1.0 - e) * sin_half, np.sqrt(1.0 + e) * cos_half)
    m = big_e - e * np.sin(big_e)
    return kepler.wrap_angle(m) / kepler.TWO_PI


def conjunction_phase(e, omega_rad, secondary: bool = False):
    """Mean-anomaly phase (in [0, 1)) of primary (or secondary) conjunction after periastron.

    Column 2 (3) of :func:`event_phases`, computed alone with the same operations.
    """
    e = np.asarray(e, dtype=float)
    w = np.asarray(omega_rad, dtype=float)
    c, s = np.cos(0.5 * w), np.sin(0.5 * w)
    return _phase_from_half_angle(e, c + s if secondary else c - s, s - c if secondary else c + s)


def tp_from_tc(tc, period_d, e, omega_rad, secondary: bool = False):
    """Time of periastron (days) preceding the given time of conjunction.

    ``tc`` is the time of primary conjunction (transit, primary eclipse), or of secondary
    conjunction with ``secondary=True``, in any absolute scale of days; the result is in the same
    scale and satisfies Tp <= Tc < Tp + P. Method: nu_c -> E_c -> M_c, Tp = Tc - P M_c / (2 pi)
    (Kallrath & Milone, *Eclipsing Binary Stars*, 2nd ed. 2009, sec. 3.1), with M_c taken in
    [0, 2 pi).
    """
    phase = conjunction_phase(e, omega_rad, secondary)
    return np.asarray(tc, dtype=float) - np.asarray(period_d, dtype=float) * phase


def tc_from_tp(tp, period_d, e, omega_rad, secondary: bool = False):
    """First time of primary (or secondary) conjunction at or after the periastron time ``tp``.

    Inverse of :func:`tp_from_tc`; same units and scale as ``tp``.
    """
    phase = conjunction_phase(e, omega_rad, secondary)
    return np.asarray(tp, dtype=float) + np.asarray(period_d, dtype=float) * phase


def radial_velocity(t, tp, period_d, e, omega_rad, k_ms, gamma_ms=0.0):
    """Radial velocity of the primary (m/s, positive receding) at times ``t`` (days).

    v = gamma + K [cos(nu + omega) + e cos omega]; all arguments broadcast.
    """
    m = kepler.mean_motion_rad_per_day(period_d) * (np.asarray(t, dtype=float) - tp)
    nu = kepler.true_from_mean(m, e)
    return gamma_ms + k_ms * (np.cos(nu + omega_rad) + e * np.cos(omega_rad))


def separation_at_conjunction(e, omega_rad, secondary: bool = False):
    """Star-companion distance at conjunction in units of the semi-major axis.

    r/a = (1 - e^2) / (1 + e cos nu_c), which is (1 - e^2)/(1 + e sin omega) at primary and
    (1 - e^2)/(1 - e sin omega) at secondary conjunction.
    """
    sign = -1.0 if secondary else 1.0
    return (1.0 - e**2) / (1.0 + sign * e * np.sin(omega_rad))


def impact_parameter(a_rstar, inc_rad, e, omega_rad, secondary: bool = False):
    """Sky-projected separation at conjunction in units of the primary's radius.

    b = (a/R*) cos i (1 - e^2) / (1 +- e sin omega) (Winn 2010, "Transits and Occultations",
    in *Exoplanets*, ed. S. Seager, eqs. 7-8), + at primary, - at secondary conjunction.
    """
    return a_rstar * np.cos(inc_rad) * separation_at_conjunction(e, omega_rad, secondary)


def inclination_from_impact(b, a_rstar, e, omega_rad):
    """Orbital inclination (radians) that gives impact parameter ``b`` at primary conjunction."""
    cos_i = b / (a_rstar * separation_at_conjunction(e, omega_rad))
    return np.arccos(np.clip(cos_i, -1.0, 1.0))


def eclipse_duration(period_d, a_rstar, inc_rad, radius_ratio, e, omega_rad, secondary=False):
    """Total duration (first to fourth contact, days) of the eclipse at a conjunction.

    T_tot = (P/pi) arcsin[(R*/a) sqrt((1 + k)^2 - b^2) / sin i] x (r_c/a) / sqrt(1 - e^2), where
    r_c/a is :func:`separation_at_conjunction` (Winn 2010, eqs. 14 and 16: the eccentric factor
    sqrt(1 - e^2)/(1 +- e sin omega)). NaN where the conjunction does not eclipse
    (b >= 1 + k). Accurate to a few per cent for a/R* >~ 3 (the formula treats the orbit arc across
    the star as straight and the speed as constant).
    """
    b = impact_parameter(a_rstar, inc_rad, e, omega_rad, secondary)
    chord2 = (1.0 + radius_ratio) ** 2 - b**2
    with np.errstate(invalid="ignore"):
        arg = np.sqrt(np.where(chord2 > 0, chord2, np.nan)) / (a_rstar * np.sin(inc_rad))
        t14 = (period_d / np.pi) * np.arcsin(np.minimum(arg, 1.0))
    return t14 * separation_at_conjunction(e, omega_rad, secondary) / np.sqrt(1.0 - e**2)
