"""The season chart: targets and their events down the side, dates across, each observable event
drawn where it falls as a bar whose height is its observable fraction.

One row per (target, event) pair, in the order of the season table; each row's shaded band is its
full height (100% observable). Bars are drawn in the event's colour with its marker on
top, so the chart reads in grey too. Dates are UTC; matplotlib's date axis (days since
1970-01-01, its default epoch). Every bar carries ``gid="season_event"`` and every row band
``gid="row"`` so tests can count them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits.geometry import PERIODIC_EVENT, event_meant
from ..timescales.clock import UNIX_EPOCH_JD
from .chart_marks import event_words
from .charts import _figure, save_png

#: Colour and marker of each kind of event (ours; dark and light alternate for grey print).
EVENT_LOOK = {
    "periastron": ("#8b2d1f", "o"), "apastron": ("#9bbb3b", "s"), "primary_conjunction": ("#1f4e79", "v"),
    "secondary_conjunction": ("#4fa3c7", "^"), "rv_max": ("#5b3a99", "D"), "rv_min": ("#e08a00", "d"),
    "periodic": ("#2e7d4f", "|"),
}
#: Height of a row's bar at 100% observable, in row units (rows are 1 apart).
BAR_HEIGHT = 0.8


def season_figure(season: pd.DataFrame, first_jd_utc: float, last_jd_utc: float, title: str | None = None,
                  min_fraction: float = 0.0):
    """The season chart (a matplotlib Figure) of a :func:`planner.sky.season.season_events` table.

    Events with ``observable_fraction`` above ``min_fraction`` (or equal to it when it is
    positive) are drawn; rows exist for every (target, event) of the table, so a pair with no
    observable event shows as an empty row.
    """
    import matplotlib.dates as mdates

    keys = list(dict.fromkeys(zip(season["target"].astype(str), season["event"].astype(str),
                                  season["label"].astype(str))))
    n = len(keys)
    fig = _figure(11.0, 1.3 + 0.32 * max(n, 1), margins_in=(2.6, 0.25, 0.45, 0.9))
    ax = fig.add_subplot()
    frac = season["observable_fraction"].to_numpy(float)
    shown = (frac >= min_fraction) & (frac > 0) if min_fraction > 0 else frac > 0
    x_all = season["jd_utc"].to_numpy(float) - UNIX_EPOCH_JD
    seen_kinds = set()
    for r, (target, event, label) in enumerate(keys):
        y = n - 1 - r
        ax.axhspan(y, y + BAR_HEIGHT, color="#eeeeee" if r % 2 else "#e2e6ee", lw=0, gid="row")
        here = shown & (season["target"].astype(str).to_numpy() == target) & \
            (season["event"].astype(str).to_numpy() == event)
        if not here.any():
            continue
        look = event_meant(event, label)
        colour, marker = EVENT_LOOK.get(look, ("#444444", "o"))
        xs, hs = x_all[here], BAR_HEIGHT * frac[here]
        ax.vlines(xs, y, y + hs, color=colour, lw=1.6, gid="season_event")
        ax.plot(xs, y + hs, ls="none", marker=marker, color=colour, markersize=4 if look == PERIODIC_EVENT else 5,
                markeredgecolor="black", markeredgewidth=0.4,
                label=None if look in seen_kinds else event_words(look, "periodic event"))
        seen_kinds.add(look)
    ax.set_yticks(np.arange(n) + BAR_HEIGHT / 2, [f"{t}: {event_words(e, lab)}" for t, e, lab in keys][::-1], fontsize=8)
    ax.set_ylim(-0.3, max(n, 1) - 0.05)
    ax.set_xlim(first_jd_utc - UNIX_EPOCH_JD, last_jd_utc - UNIX_EPOCH_JD)
    locator = mdates.AutoDateLocator(minticks=4, maxticks=14)
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    ax.grid(axis="x", alpha=0.3, lw=0.5)
    ax.set_xlabel("date of the event (UTC); bar height = observable fraction of its window (full band = 100%)")
    if seen_kinds:
        fig.legend(loc="lower center", ncol=7, fontsize=7, frameon=False)
    ax.set_title(title or "When the key events can be observed", fontsize=11)
    if not n:
        ax.text(0.5, 0.5, "no event of the catalogue falls in these months", transform=ax.transAxes,
                ha="center", va="center", style="italic")
    return fig


def write_season_chart(path, season, first_jd_utc, last_jd_utc, title=None, min_fraction=0.0):
    """PNG of :func:`season_figure` at ``path`` (atomic); returns ``path``."""
    return save_png(season_figure(season, first_jd_utc, last_jd_utc, title, min_fraction), path)
