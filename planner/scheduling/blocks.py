"""What the scheduler's stages share: table layouts, block kinds, options and small helpers.

All times are UTC Julian dates (plain floats, ``*_jd_utc``); the scheduler does no astronomy or
time-scale work of its own: altitudes and Moon separations come in as functions, each event's
UTC time as the visible table's ``jd_utc`` column.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import PeriplanError
from ..sky.night import night_of
from ..timescales.clock import date_to_jd_utc
from .score import DEFAULT_WEIGHTS, SCORE_COLUMNS, ScoreWeights

#: Week rules of a target's repeated event: every instance; once in the week on its best night;
#: the first night that has one.
WEEK_RULES = ("every", "best", "first")
#: Seconds the solver may spend per night of the plan, unless told otherwise [our choice: the demo
#: week is proven optimal in 0.3 s and each night of 3,000 random targets in 0.3-2 s; a night of
#: 10,000 (20,000 options) needs about 2 s for its LP alone; see bench/bench_plan.py].
DEFAULT_TIME_LIMIT_S_PER_NIGHT = 4.0
FIXED, FLEXIBLE = "fixed", "flexible"
MIN_PER_DAY = 1440.0
#: Samples of altitude through a block (start, interior, end) for airmass and the notes.
ALT_SAMPLES = 9

VISIBLE_COLUMNS = ("target", "event", "label", "bjd_tdb", "sigma_d", "target_index", "night",
                   "window_start_jd_utc", "window_end_jd_utc", "observable_fraction",
                   "observable_start_jd_utc", "observable_end_jd_utc", "moon_sep_deg", "moon_illumination",
                   "jd_utc")
AVAILABILITY_COLUMNS = ("target_index", "target", "night", "start_jd_utc", "end_jd_utc", "max_alt_deg")
NIGHT_COLUMNS = ("night", "sunset_jd_utc", "dark_start_jd_utc", "dark_end_jd_utc", "sunrise_jd_utc",
                 "moon_illumination")

#: Contacts of a series, as ``*_jd_utc`` columns of requests and blocks.
CONTACT_NAMES = ("t1", "t2", "t3", "t4")
SCHEDULE_COLUMNS = (
    "night", "start_jd_utc", "end_jd_utc", "target", "target_index", "event", "serves", "label", "kind",
    "request", "request_id", "group", "slot", "n_slots", "covers", "not_covered",
) + tuple(f"{c}_jd_utc" for c in CONTACT_NAMES) + (
    "event_jd_utc", "event_sigma_d", "window_start_jd_utc", "window_end_jd_utc", "earliest_start_jd_utc",
    "latest_start_jd_utc", "observable_fraction", "science_fraction", "priority", "period_d", "alt_low_deg",
    "alt_event_deg",
) + tuple(f"alt_{c}_deg" for c in CONTACT_NAMES) + (
    "airmass", "moon_sep_deg", "moon_illumination", "baseline_min", "pause_start_jd_utc", "pause_end_jd_utc",
) + SCORE_COLUMNS + ("logged_parts", "notes")


@dataclass(frozen=True)
class ScheduleOptions:
    """Settings of :func:`plan_week`.

    ``overhead_min``: setup/slew time (minutes) required between consecutive blocks.
    ``repeats``: the default week rule of a target's repeated event, one of :data:`WEEK_RULES`
    (a target's ``week_rule`` column overrides it). ``time_limit_s_per_night``: the solver's
    time limit is this times the number of nights; the best plan found by then is used.
    ``min_block_min``: fixed candidates with a shorter observable stretch are dropped.
    ``twilight_margin_min``: a block starting or ending this close to the edges of the site's
    darkness gets a note. ``flex_step_min``: step of the search for a flexible visit's start.
    ``weights``: the score weights. What a block must hold to be worth scheduling (a contact
    with its baseline, or the mid-event) is the request stage's rule
    (:mod:`planner.scheduling.series_parts`).
    """

    overhead_min: float = 10.0
    repeats: str = "every"
    min_block_min: float = 10.0
    twilight_margin_min: float = 30.0
    flex_step_min: float = 5.0
    time_limit_s_per_night: float = DEFAULT_TIME_LIMIT_S_PER_NIGHT
    weights: ScoreWeights = field(default_factory=lambda: DEFAULT_WEIGHTS)

    def __post_init__(self):
        if self.repeats not in WEEK_RULES:  # a target's own week_rule is checked by the catalogue
            raise PeriplanError(f"week rule {self.repeats!r} is unknown; expected one of {', '.join(WEEK_RULES)}")
        if not (np.isfinite(self.time_limit_s_per_night) and self.time_limit_s_per_night > 0):
            raise PeriplanError(f"the solver's time limit must be a positive number of seconds; "
                                f"got {self.time_limit_s_per_night!r}")
        for name in ("overhead_min", "min_block_min", "twilight_margin_min"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise PeriplanError(f"{name} must be a finite number of minutes >= 0; got {v!r}")
        if not (np.isfinite(self.flex_step_min) and self.flex_step_min > 0):
            raise PeriplanError(f"flex_step_min must be a positive number of minutes; got {self.flex_step_min!r}")



#: pandas' default text dtype (``"str"``): Arrow-backed, NaN for a missing value.
TEXT = pd.StringDtype("pyarrow", na_value=np.nan)


def column_values(series: pd.Series):
    """The values of ``series`` for a new table, which gets the same column as from
    ``series.to_numpy()``: a text column (:data:`TEXT`) is passed as its Arrow-backed array (a
    new table would infer that dtype from the Python strings of ``to_numpy()``, about 0.1 s a
    million rows each way), any other column as ``series.to_numpy()``."""
    if series.dtype == TEXT:
        return series.array
    return series.to_numpy()


def require_columns(frame: pd.DataFrame, columns, what: str) -> None:
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise PeriplanError(f"{what} table lacks column(s) {', '.join(missing)}; expected {', '.join(columns)}")


def sample_times(start, end, k=ALT_SAMPLES):
    """(n, k) times evenly spaced from start to end of each block."""
    f = np.linspace(0.0, 1.0, k)
    return np.asarray(start, float)[:, None] + (np.asarray(end, float) - np.asarray(start, float))[:, None] * f


def altitudes(altitude_deg, target_index, times):
    """(n, k) altitudes from the caller's function, or NaN when none is given."""
    if altitude_deg is None or times.size == 0:
        return np.full(times.shape, np.nan)
    idx = np.broadcast_to(np.asarray(target_index, dtype=int)[:, None], times.shape)
    alt = np.asarray(altitude_deg(idx, times), dtype=float)
    if alt.shape != times.shape:
        raise PeriplanError(f"altitude function returned shape {alt.shape}; expected {times.shape}")
    return alt


def moon_at_blocks(moon_sep_deg, nights: pd.DataFrame, target_index, start, end, night=None):
    """(separation deg, illuminated fraction) of the Moon for each block: the Moon-target
    separation at the block's middle from the caller's ``moon_sep_deg(target_index, jd_utc)``
    (NaN without one), and the ``moon_illumination`` of the block's night in ``nights``, the
    night labelled ``night`` or, without labels, the night holding the block's middle (NaN for
    a block in no night)."""
    ti = np.asarray(target_index, dtype=int)
    mid = 0.5 * (np.asarray(start, float) + np.asarray(end, float))
    sep = np.asarray(moon_sep_deg(ti, mid), float) if moon_sep_deg is not None else np.full(ti.size, np.nan)
    lit = nights["moon_illumination"].to_numpy(float)
    if night is not None:
        return sep, pd.Series(lit, index=nights["night"].astype(str)).reindex(np.asarray(night, object)).to_numpy(float)
    row = night_index(mid, nights)
    return sep, np.where(row >= 0, lit[np.maximum(row, 0)], np.nan)


def night_index(jd_utc, nights: pd.DataFrame) -> np.ndarray:
    """Row of ``nights`` (int array, -1 when none) whose night holds each UTC Julian date.

    A night runs from ``noon_jd_utc`` to ``next_noon_jd_utc`` when the table has them (the
    night engine's windows); otherwise from 12 h before to 12 h after the middle of sunset and
    sunrise (or of the dark interval, or of the label date's following midnight UTC).
    """
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    if len(nights) == 0:
        return np.full(jd.shape, -1)
    if "noon_jd_utc" in nights and "next_noon_jd_utc" in nights:
        return night_of(jd, nights)
    mid = 0.5 * (nights["sunset_jd_utc"].to_numpy(float) + nights["sunrise_jd_utc"].to_numpy(float))
    dark_mid = 0.5 * (nights["dark_start_jd_utc"].to_numpy(float) + nights["dark_end_jd_utc"].to_numpy(float))
    label_mid = np.array([_label_midnight_jd_utc(x) for x in nights["night"].astype(str)])
    mid = np.where(np.isfinite(mid), mid, np.where(np.isfinite(dark_mid), dark_mid, label_mid))
    lo, hi = mid - 0.5, mid + 0.5
    inside = (jd[:, None] >= lo[None, :]) & (jd[:, None] < hi[None, :])
    return np.where(inside.any(axis=1), np.argmax(inside, axis=1), -1)


def _label_midnight_jd_utc(label: str) -> float:
    """JD (UTC) of 00:00 UTC on the day after the date ``label``; NaN when it is not a date."""
    try:
        return date_to_jd_utc(label) + 1.0
    except PeriplanError:
        return np.nan


#: Blocks whose altitude samples are computed at once: bounds the memory of a survey's millions
#: of candidates (65,536 x 13 samples of float64 and their temporaries).
ALT_CHUNK = 65_536


def block_airmass(altitude_deg, target_index, start, end):
    """(n,) mean airmass (Young 1994) of :data:`ALT_SAMPLES` altitudes through each block from UTC
    Julian dates ``start`` to ``end``, computed :data:`ALT_CHUNK` blocks at a time; NaN without
    an altitude function."""
    from .score import airmass_from_alt

    target_index, start, end = (np.asarray(a) for a in (target_index, start, end))
    out = np.full(len(start), np.nan)
    for k in range(0, len(start), ALT_CHUNK):
        sl = slice(k, k + ALT_CHUNK)
        out[sl] = mean_airmass(airmass_from_alt(altitudes(altitude_deg, target_index[sl],
                                                          sample_times(start[sl], end[sl]))))
    return out


def mean_airmass(airmass):
    """(n,) mean over the samples of (n, k) airmasses, ignoring NaN; NaN where all are NaN."""
    known = ~np.isnan(airmass)
    count = known.sum(axis=1)
    total = np.where(known, airmass, 0.0).sum(axis=1)
    return np.where(count > 0, total / np.maximum(count, 1), np.nan)


def instance_minutes(jd_utc) -> np.ndarray:
    """The UTC minute (int64) of each event moment, the part of an instance's name that says
    which passage it is (the moment it is seen from the Earth); -1 for no moment (a monitor
    visit), so that such rows still match each other."""
    minute = np.round(np.asarray(jd_utc, float) * MIN_PER_DAY)
    return np.where(np.isfinite(minute), minute, -1).astype(np.int64)


def instance_keys(target_index, event, jd_utc) -> list[str]:
    """``target|event|minute`` of each event instance: one instance, whichever site, candidate or
    log row names it (:func:`instance_minutes`)."""
    return [f"{t}|{e}|{m}" for t, e, m in zip(np.asarray(target_index, int), event, instance_minutes(jd_utc).tolist())]
