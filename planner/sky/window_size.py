"""How long each event's window is: duration, baseline, timing uncertainty, and the period's share.

:func:`window_half_width_d` gives the half-width (days) of the window centred on each event:

- an event with a duration (an eclipse or transit computed from the geometry, or the
  catalogue's ``duration_h``): duration / 2 + baseline + k sigma;
- an orbital event with no duration (periastron, apastron, RV extrema, a conjunction without
  geometry): :data:`DEFAULT_EVENT_LENGTH_H` / 2 + baseline + k sigma;
- a ``periodic`` event (linear ephemeris: pulsation maxima, minima) with no duration: a
  window of :data:`PERIODIC_WINDOW_FRACTION` of the period, never more than the window of an
  orbital event with no duration (:data:`DEFAULT_EVENT_LENGTH_H` + 2 baselines), + k sigma
  either side. Why: a pulsation maximum is timed from the light curve around it, a share of the
  cycle, and a window longer than the period would hold the next maximum as well (a 3.3-hour
  pulsator with the fixed 4-hour window got two overlapping blocks a night). The baseline is
  inside the fraction: a pulsator's light curve has no out-of-event stretch.

All of these are common practice for transit, RV and pulsation follow-up, not a published
standard; the values are stated here and printed with every block (its window length).
"""

from __future__ import annotations

import numpy as np

from ..orbits.geometry import PERIODIC_EVENT

#: Out-of-event baseline wanted either side of an event, hours [common practice: ~1 h].
DEFAULT_BASELINE_H = 1.0
#: Number of 1-sigma timing uncertainties added either side [common practice].
DEFAULT_K_SIGMA = 2.0
#: Length (hours) given to orbital events with no duration before baseline and sigma are added:
#: a periastron passage or RV extremum is observed over a couple of hours around the predicted
#: moment [common practice; no single source].
DEFAULT_EVENT_LENGTH_H = 2.0
#: Window of a periodic event with no duration, as a fraction of its period: 0.3, i.e. +-0.15
#: in phase around the predicted maximum or minimum, enough of the rising and falling branches
#: to time the extremum, and well short of the next cycle [common practice; no single source].
#: Capped at DEFAULT_EVENT_LENGTH_H + 2 baselines (4 h by default, reached at P = 13.3 h).
PERIODIC_WINDOW_FRACTION = 0.3


def window_half_width_d(event, duration_d, period_d, sigma_d, baseline_h: float = DEFAULT_BASELINE_H,
                        k_sigma: float = DEFAULT_K_SIGMA,
                        default_length_h: float = DEFAULT_EVENT_LENGTH_H) -> np.ndarray:
    """Half-width (days) of each event's window, centred on the event (rules in the module docstring).

    ``event`` (event names), ``duration_d`` (NaN when unknown), ``period_d`` (the target's period)
    and ``sigma_d`` (1-sigma timing uncertainty) are arrays of one shape (n,); ``baseline_h`` and
    ``default_length_h`` are hours. Worked values (baseline 1 h, k = 2, sigma 0): a periastron
    gets 2 h (a 4 h window); a pulsation maximum every 3.3 h gets 0.495 h (a 0.99 h window); one
    every 0.57 d (13.7 h) gets the cap, 2 h; a transit of 2.35 h gets 2.175 h.
    """
    dur = np.asarray(duration_d, dtype=float)
    period = np.asarray(period_d, dtype=float)
    known = np.isfinite(dur)
    half = np.where(known, dur, default_length_h / 24.0) / 2.0 + baseline_h / 24.0
    periodic = (np.asarray(event, dtype=object) == PERIODIC_EVENT) & ~known & np.isfinite(period) & (period > 0)
    cap_d = (default_length_h + 2.0 * baseline_h) / 24.0
    with np.errstate(invalid="ignore"):
        share_d = np.minimum(PERIODIC_WINDOW_FRACTION * period, cap_d)
    half = np.where(periodic, share_d / 2.0, half)
    return half + k_sigma * np.asarray(sigma_d, dtype=float)
