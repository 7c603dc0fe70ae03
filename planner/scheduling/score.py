"""Explainable candidate scores: importance times conditions, every factor and point named.

:func:`score_components` takes one value per candidate block (arrays of shape (n,)) and returns
one column per factor or term and the ``score``:

    score = x_priority x x_rarity x (pts_coverage + pts_airmass + pts_moon + pts_timing)

so a plan can say "priority 5 x rarity 3.76 (recurs every 111 d) x conditions 40.2 points" and the
observer sees why a block won. Importance multiplies: a priority-5 target's block is worth five
priority-1 blocks in equal conditions, and a once-a-season periastron is worth several routine
events of the same target in one night, which a sum of points could not guarantee (two short
blocks of a 3-hour pulsator would outscore one long periastron block). The conditions are points,
each a dimensionless quality in [0, 1] times its weight in :class:`ScoreWeights`.

============  ==================================================================================
x_priority    catalogue priority ** ``weights.priority_power`` (priority > 0; NaN counts as 1)
x_rarity      1 + ``weights.rarity`` x rarity, rarity = 1 / (1 + log2(1 + N_week)), N_week = 7 d / P
pts_coverage  fraction of the event window that is observable (0..1)
pts_airmass   linear from 1 at airmass 1 to 0 at ``weights.airmass_zero``
pts_moon      1 - f_moon x max(0, 1 - s / ``weights.moon_clear_deg``)
pts_timing    max(0, 1 - 2 n sigma / W): how much of the window the +-n sigma band leaves free;
              :data:`NEUTRAL_TIMING_QUALITY` when no uncertainty is given (sigma exactly 0)
============  ==================================================================================

The weighted interval scheduler (:mod:`planner.schedule`) maximises the plain total of scores
over a night. Weights are a policy, not physics: the defaults are our own choice and every plan
prints the factors. Airmass is Young's (1994) formula of the airless altitude (see
:func:`airmass_from_alt`); it is used only to rank blocks, never as a photometric correction.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
import pandas as pd

#: Length (days) over which event recurrence is counted for the rarity term.
RARITY_SPAN_D = 7.0
#: Timing quality (0..1) of an event whose catalogue gives no uncertainty (a 1-sigma of exactly
#: 0: no error columns, or all zero). Half the range: such an event is ranked neither as a sure
#: timing (1) nor as one likely missed (0); it is the quality of an event whose +-n sigma band
#: fills half its window. Our own choice, not from a source; the outputs say so.
NEUTRAL_TIMING_QUALITY = 0.5

#: Multiplying factors and condition points of :func:`score_components`, in order.
FACTOR_COLUMNS = ("x_priority", "x_rarity")
POINT_COLUMNS = ("pts_coverage", "pts_airmass", "pts_moon", "pts_timing")
SCORE_COLUMNS = FACTOR_COLUMNS + POINT_COLUMNS + ("score",)


@dataclass(frozen=True)
class ScoreWeights:
    """Weights of the score and the constants that shape them.

    ``priority_power`` is the exponent of the catalogue priority in x_priority (1: as given, 0:
    priorities ignored, between: softened); ``rarity`` is the extra factor a never-repeating event
    would earn (x_rarity runs from 1 to 1 + rarity); ``coverage``, ``airmass``, ``moon`` and ``timing`` are the points a perfect value
    of each condition earns. ``airmass_zero`` is the airmass at which the airmass term
    reaches 0 (3.0 is altitude 19.5 deg); ``moon_clear_deg`` the Moon separation (deg) beyond which
    the Moon costs nothing; ``timing_n_sigma`` the half-width, in sigma, of the timing band compared
    with the window. Defaults are our own choice, not from a source.
    """

    priority_power: float = 1.0
    rarity: float = 3.0
    coverage: float = 20.0
    airmass: float = 10.0
    moon: float = 10.0
    timing: float = 10.0
    airmass_zero: float = 3.0
    moon_clear_deg: float = 60.0
    timing_n_sigma: float = 3.0

    def __post_init__(self):
        from ..errors import PeriplanError

        for name, value in asdict(self).items():
            if not np.isfinite(value) or value < 0:
                raise PeriplanError(f"score weight {name} must be a finite number >= 0; got {value!r}")
        if self.airmass_zero <= 1.0:
            raise PeriplanError(f"score weight airmass_zero must exceed 1 (airmass at the zenith); "
                                f"got {self.airmass_zero!r}")
        if self.moon_clear_deg <= 0.0:
            raise PeriplanError(f"score weight moon_clear_deg must be positive; got {self.moon_clear_deg!r}")


DEFAULT_WEIGHTS = ScoreWeights()


def airmass_from_alt(alt_deg):
    """Airmass of airless altitudes ``alt_deg`` (Young 1994, as the rest of periplan); same shape.

    Delegates to :func:`planner.visibility.airmass_young1994`, so the score ranks blocks with the
    airmass the visibility engine and the outputs show; ``inf`` below -1 deg, NaN stays NaN.
    """
    from ..sky.positions import airmass_young1994

    return airmass_young1994(alt_deg)


def rarity_term(period_d):
    """Rarity (0..1] of an event that recurs every ``period_d`` days; 0 where the period is NaN.

    rarity = 1 / (1 + log2(1 + N_week)), N_week = 7 d / P, the number of events of this kind in a
    week. Why: a periastron every 111 d (N_week = 0.063) gives 0.92, one more transit of a 3-d
    planet (N_week = 2.33) gives 0.37, a pulsation maximum every 3.3 h (N_week = 51) gives 0.15.
    The logarithm keeps the term from collapsing for short periods: each doubling of the rate
    costs about the same. A NaN period (a flexible visit, which has no event) scores 0.
    """
    p = np.asarray(period_d, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        n_week = RARITY_SPAN_D / p
        r = 1.0 / (1.0 + np.log2(1.0 + n_week))
    return np.where(np.isfinite(p) & (p > 0), r, 0.0)


def coverage_term(observable_fraction):
    """Covered fraction of the event window, clipped to [0, 1]; NaN counts as 1 (a flexible block)."""
    f = np.asarray(observable_fraction, dtype=float)
    return np.where(np.isnan(f), 1.0, np.clip(f, 0.0, 1.0))


def airmass_term(airmass, airmass_zero=DEFAULT_WEIGHTS.airmass_zero):
    """Airmass quality in [0, 1]: (X0 - X) / (X0 - 1), clipped; 0 where X is NaN or infinite.

    ``airmass`` is the airmass through the block, shape (n,), or samples through each block,
    shape (n, k), whose mean is used (a block that dips low is charged for the time it spends
    there). Why linear: the extinction in magnitudes grows linearly with X, and so does the loss
    of signal-to-noise for most targets.
    """
    x = np.asarray(airmass, dtype=float)
    if x.ndim == 2:
        x = np.where(np.isfinite(x), x, np.inf).mean(axis=1) if x.shape[1] else np.full(x.shape[0], np.nan)
    q = (airmass_zero - x) / (airmass_zero - 1.0)
    return np.where(np.isfinite(x), np.clip(q, 0.0, 1.0), 0.0)


def airmass_points(airmass, weights: ScoreWeights = DEFAULT_WEIGHTS):
    """The score's airmass points: ``weights.airmass`` x :func:`airmass_term` of the airmass
    through each block (shape (n,), or (n, k) samples)."""
    return weights.airmass * airmass_term(airmass, weights.airmass_zero)


def moon_term(moon_sep_deg, moon_illumination, clear_deg=DEFAULT_WEIGHTS.moon_clear_deg):
    """Moon quality in [0, 1]: 1 - f max(0, 1 - s / s_clear); 1 where either input is NaN.

    ``moon_sep_deg`` is the target-Moon separation s and ``moon_illumination`` the illuminated
    fraction f (0 new, 1 full). Why: scattered moonlight grows with the Moon's brightness and
    falls off with distance; the avoidance rules observers use scale a separation of some tens of
    degrees with the phase [common practice, no single source]. A new Moon costs nothing at any
    distance, a full Moon at the target costs the whole term. A NaN (no Moon data, or the Moon
    below the horizon as the caller chooses to report it) costs nothing.
    """
    s = np.asarray(moon_sep_deg, dtype=float)
    f = np.asarray(moon_illumination, dtype=float)
    q = 1.0 - np.clip(f, 0.0, 1.0) * np.clip(1.0 - s / clear_deg, 0.0, 1.0)
    return np.where(np.isnan(s) | np.isnan(f), 1.0, q)


def timing_term(sigma_d, window_d, n_sigma=DEFAULT_WEIGHTS.timing_n_sigma):
    """Timing quality in [0, 1]: max(0, 1 - 2 n sigma / W); 1 where sigma is NaN (no event).

    A sigma of exactly 0 means the catalogue gave no uncertainty (:func:`no_uncertainty`): it
    scores :data:`NEUTRAL_TIMING_QUALITY`, not the full quality a perfectly known time would earn.

    ``sigma_d`` is the 1-sigma uncertainty of the predicted event time and ``window_d`` the length
    W of its window (days). Why: the +-n sigma band of possible event times should sit well inside
    the window; when it is as wide as the window the block may miss the event entirely (0).
    A non-positive or NaN window with a finite sigma scores 0.
    """
    sigma = np.asarray(sigma_d, dtype=float)
    w = np.asarray(window_d, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.clip(1.0 - 2.0 * n_sigma * sigma / w, 0.0, 1.0)
    q = np.where(np.isfinite(w) & (w > 0), q, 0.0)
    q = np.where(no_uncertainty(sigma), NEUTRAL_TIMING_QUALITY, q)
    return np.where(np.isnan(sigma), 1.0, q)


def no_uncertainty(sigma_d):
    """True where an event's 1-sigma time uncertainty is exactly 0: the catalogue gave none.

    The loader reads a missing ``period_err_d``, epoch, ``e_err`` or ``omega_err_deg`` error as 0,
    so an event whose every error is missing (or given as 0) has sigma 0. NaN (no event) is False.
    """
    return np.asarray(sigma_d, dtype=float) == 0.0


def score_components(priority, period_d, observable_fraction, airmass, moon_sep_deg, moon_illumination,
                     sigma_d, window_d, weights: ScoreWeights = DEFAULT_WEIGHTS) -> pd.DataFrame:
    """Factors, condition points and score of n candidate blocks: columns :data:`SCORE_COLUMNS`.

    Parameters (all shape (n,), broadcastable; ``airmass`` may be (n, k) samples)
    -----------------------------------------------------------------------------
    priority : catalogue priority (> 0; NaN counts as 1, the catalogue's default)
    period_d : recurrence period of the event (days; NaN for a flexible visit)
    observable_fraction : covered fraction of the event window (NaN for a flexible visit)
    airmass : airmass through the block (see :func:`airmass_term`)
    moon_sep_deg, moon_illumination : target-Moon separation (deg) and illuminated fraction
    sigma_d, window_d : 1-sigma event-time uncertainty and window length (days)

    Returns a DataFrame with one row per candidate: ``x_priority, x_rarity, pts_coverage,
    pts_airmass, pts_moon, pts_timing, score`` with score = x_priority x x_rarity x (sum of pts).
    Worked value: priority 5, P = 111.4 d, fully covered, airmass 1.2, Moon 90 deg away, sigma
    5 min in a 4 h window: 5 x (1 + 3 x 0.9192) x (20 + 9.0 + 10 + 8.75) = 5 x 3.7575 x 47.75
    = 897.1.
    """
    w = weights
    prio = np.asarray(priority, dtype=float)
    terms = np.broadcast_arrays(
        np.where(np.isnan(prio), 1.0, prio) ** w.priority_power,
        1.0 + w.rarity * rarity_term(period_d),
        w.coverage * coverage_term(observable_fraction),
        airmass_points(airmass, w),
        w.moon * moon_term(moon_sep_deg, moon_illumination, w.moon_clear_deg),
        w.timing * timing_term(sigma_d, window_d, w.timing_n_sigma),
    )
    cols = dict(zip(FACTOR_COLUMNS + POINT_COLUMNS, terms))
    frame = pd.DataFrame({k: np.array(v, dtype=float, copy=True).reshape(-1) for k, v in cols.items()})
    frame["score"] = frame["x_priority"] * frame["x_rarity"] * frame[list(POINT_COLUMNS)].sum(axis=1)
    return frame
