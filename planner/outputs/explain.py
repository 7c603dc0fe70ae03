"""The timing and the score of a block in words, shared by the nightly lists and the calendar.

:func:`sigma_text` shows a 1-sigma time uncertainty in the unit that reads (minutes below two
hours, hours below two days, days beyond) or "no uncertainty given" when the catalogue gave
none; :func:`timing_phrase` is the timing condition of a score in words (a flexible visit's
included: it has no event time, and its timing points count all the same); :func:`block_points`
rounds the condition points of a score so that the printed parts always add up to the printed
total (largest-remainder rounding); :func:`no_uncertainty_note` is the once-per-run line that
names the targets without uncertainties.
"""

from __future__ import annotations

import numpy as np

from ..scheduling.blocks import MIN_PER_DAY
from ..scheduling.score import NEUTRAL_TIMING_QUALITY, POINT_COLUMNS, no_uncertainty
from .wording import first_few

#: Shown instead of a 1-sigma value when the catalogue gives no uncertainty.
NO_UNCERTAINTY = "no uncertainty given"
#: Decimals of the printed condition points.
POINT_DECIMALS = 1


def length_text(days: float) -> str:
    """A time length (days) in the unit that reads: ``4.2 min``, ``3.5 h`` or ``2.1 d``.

    Minutes below 2 h, hours below 2 d, days beyond, one decimal (``0.0 min`` for less than 3 s).
    """
    d = abs(float(days))
    if d < 2.0 / 24.0:
        return f"{d * MIN_PER_DAY:.1f} min"
    if d < 2.0:
        return f"{d * 24.0:.1f} h"
    return f"{d:.1f} d"


def sigma_text(sigma_d) -> str:
    """``+- 4.2 min (1 sigma)`` (unit as :func:`length_text`), or :data:`NO_UNCERTAINTY` for 0; "" for NaN."""
    if sigma_d is None or not np.isfinite(sigma_d):
        return ""
    if no_uncertainty(sigma_d):
        return NO_UNCERTAINTY
    return f"+- {length_text(sigma_d)} (1 sigma)"


def rounded_parts(values, decimals: int = POINT_DECIMALS) -> tuple[list[float], float]:
    """(parts, total) rounded to ``decimals`` so that the rounded parts add up to the rounded total.

    The total is the true sum rounded; each part is rounded down and the units left over go to
    the parts with the largest remainders (the largest-remainder method of apportionment), so a
    part is never off by more than one unit of the last decimal and the printed sum holds.
    """
    scale = 10 ** decimals
    v = np.asarray(values, dtype=float) * scale
    total_units = int(np.round(v.sum()))
    floors = np.floor(v)
    left = total_units - int(floors.sum())
    order = np.argsort(-(v - floors), kind="stable")
    units = floors.copy()
    if left > 0:
        units[order[:left]] += 1
    elif left < 0:
        units[order[::-1][:-left]] -= 1
    return [u / scale for u in units], total_units / scale


def block_points(block) -> tuple[dict, float]:
    """({column: printed points}, printed total) of one block's condition points (:data:`POINT_COLUMNS`)."""
    parts, total = rounded_parts([float(block[c]) for c in POINT_COLUMNS])
    return dict(zip(POINT_COLUMNS, parts)), total


def timing_phrase(block, points: float) -> str:
    """The timing condition of one block in words, with its printed points."""
    sigma = block["event_sigma_d"]
    if block["kind"] == "flexible" or not np.isfinite(sigma):
        return f"no event time to catch ({points:.{POINT_DECIMALS}f})"
    if no_uncertainty(sigma):
        return (f"timing: {NO_UNCERTAINTY}, neutral value {NEUTRAL_TIMING_QUALITY:g} "
                f"({points:.{POINT_DECIMALS}f})")
    window_d = block["window_end_jd_utc"] - block["window_start_jd_utc"]
    return (f"timing {sigma_text(sigma)} in a {length_text(window_d)} window "
            f"({points:.{POINT_DECIMALS}f})")


def no_uncertainty_note(events) -> str | None:
    """The once-per-run line naming the targets whose events have no uncertainty; None if there are none.

    ``events``: any table with ``target`` and ``sigma_d`` (the plan's visible events, or the
    events command's table).
    """
    if len(events) == 0:
        return None
    mask = no_uncertainty(events["sigma_d"].to_numpy(float))
    names = list(dict.fromkeys(events["target"].to_numpy(object)[mask]))
    if not names:
        return None
    shown = first_few(names)
    which, its = ("target gives", "its") if len(names) == 1 else ("targets give", "their")
    return (f"{len(names)} {which} no timing uncertainty ({shown}): {its} sigma is left empty in tables "
            f"and shown as '{NO_UNCERTAINTY}' on the nightly lists and the calendar, and plans score "
            f"{its} events with the neutral timing value {NEUTRAL_TIMING_QUALITY:g} (half the timing points); "
            "add period_err_d and the epoch's error (tp_err_d, tc_err_d or t0_err_d) to the catalogue")
