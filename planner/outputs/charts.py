"""Charts of the plan (PNG, matplotlib): the night's altitudes, the week's blocks, RV over phase.

Each chart has a builder that returns a matplotlib ``Figure`` (``night_figure``, ``week_figure``,
``rv_figure``; every drawn element carries a ``gid`` naming what it shows: ``curve``, ``block``,
``window``, ``event``, ``limit``, ``moon``, ``dark``, ``twilight``, ``planned``, so tests can count
them) and a writer that saves it as PNG through :func:`planner.output.atomic_write`
(``write_night_chart``, ``write_week_chart``, ``write_rv_chart``). Figures are made with the
object-oriented API on an Agg canvas created inside each function: no pyplot, no global backend
switch, nothing happens on import.

Charts do no astronomy: altitude curves, night edges and the schedule come in as arrays and
tables (Julian dates in UTC). The RV chart evaluates the orbit (:func:`planner.orbit.radial_velocity`,
:func:`planner.orbit.event_phases`) and converts the planned UTC times to BJD_TDB for their phase.
"""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd

from ..errors import PeriplanError
from ..scheduling.phase_requests import phase_text
from ..scheduling.score import no_uncertainty
from ..sky.night import darkness_of
from ..timescales import clock
from . import chart_marks, target_style
from .atomic import atomic_write

#: Our own palette: distinguishable on screen and in grey print, one colour per target in a chart.
PALETTE = ("#1f5f8b", "#c4452f", "#2f8f5b", "#8a5ab5", "#d08c00", "#4a4a4a", "#b03a78", "#3a9ab0")
DARK_SHADE = "#1c2a4a"
TWILIGHT_SHADE = "#6f7fa8"
DPI = 110
_HOURS_PER_DAY = 24.0


#: zlib level of the PNG files: 1 encodes several times faster than the default 6 for files
#: about a quarter larger (measured in bench/bench_plan.py's charts stage).
PNG_COMPRESS_LEVEL = 1


def _figure(width_in, height_in, margins_in=(0.75, 0.3, 0.45, 0.5)):
    """A Figure on its own Agg canvas with fixed margins (left, right, top, bottom) in inches.

    Fixed margins instead of a layout engine: the charts' furniture is known in advance, and a
    constrained layout costs about as much as drawing the chart twice.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in), dpi=DPI)
    FigureCanvasAgg(fig)
    left, right, top, bottom = margins_in
    fig.subplots_adjust(left=left / width_in, right=1 - right / width_in, top=1 - top / height_in,
                        bottom=bottom / height_in)
    return fig


def save_png(fig, path):
    """Write ``fig`` as PNG to ``path`` atomically, then release the figure; returns ``path``."""
    with atomic_write(path, "wb") as fh:
        fig.savefig(fh, format="png", dpi=DPI, pil_kwargs={"compress_level": PNG_COMPRESS_LEVEL})
    fig.clear()
    return path


def _clock_ticks(ax, lo_h, hi_h):
    """Whole-hour x ticks between lo_h and hi_h (every 2 h past 14 h) labelled as clock hours (mod 24)."""
    ticks = np.arange(np.ceil(lo_h), hi_h + 1e-9, 1.0 if hi_h - lo_h <= 14 else 2.0)
    ax.set_xticks(ticks, [f"{int(t) % 24:02d}" for t in ticks])
    return ticks


def _shade_night(ax, night, to_h, lo_h, hi_h, y0=None, y1=None, label=True):
    """Twilight and dark-time spans of one night on a time axis; ``to_h`` maps a UTC JD to the axis."""
    def h(col):
        v = float(night[col]) if col in night and night[col] is not None else np.nan
        return float(to_h(v))

    sunset, d0, d1, sunrise = h("sunset_jd_utc"), h("dark_start_jd_utc"), h("dark_end_jd_utc"), h("sunrise_jd_utc")
    span = (lambda a, b, **kw: ax.axvspan(a, b, **kw)) if y0 is None else \
        (lambda a, b, **kw: ax.fill_between([a, b], y0, y1, **kw))
    tw0 = sunset if np.isfinite(sunset) else lo_h
    tw1 = sunrise if np.isfinite(sunrise) else hi_h
    if np.isfinite(d0) and np.isfinite(d1):
        span(tw0, d0, color=TWILIGHT_SHADE, alpha=0.18, lw=0, label="twilight" if label else None, gid="twilight")
        span(d1, tw1, color=TWILIGHT_SHADE, alpha=0.18, lw=0, gid="twilight")
        span(d0, d1, color=DARK_SHADE, alpha=0.22, lw=0, label=darkness_of(night)[0] if label else None,
             gid="dark")
    elif np.isfinite(sunset) or np.isfinite(sunrise):
        span(tw0, tw1, color=TWILIGHT_SHADE, alpha=0.18, lw=0,
             label=f"Sun down, no {darkness_of(night)[0]}" if label else None, gid="twilight")


#: Characters of a line of the night chart's legend (8 pt in its right margin).
LEGEND_WRAP = 22


def night_figure(night, times_jd_utc, alt_deg, names, blocks: pd.DataFrame, min_alt_deg: float,
                 tz: str | None = None, title: str | None = None, moon_alt_deg=None, styles=None, az_deg=None,
                 ha_h=None, site=None):
    """Altitude against time for the night's scheduled targets: a matplotlib Figure.

    Parameters
    ----------
    night : mapping (a row of the night table): ``night`` label and the ``*_jd_utc`` edges
    times_jd_utc : (m,) sample times, Julian date UTC
    alt_deg : (k, m) altitude of each of the k targets at those times (degrees)
    names : k target names, in the order of ``alt_deg`` rows (matching ``blocks['target']``)
    blocks : the schedule rows of this night
    min_alt_deg : the site's minimum altitude, drawn as a dashed line
    tz : IANA zone; local clock hours on the top axis
    moon_alt_deg : optional (m,) altitude of the Moon at the same times, drawn grey and dotted
    styles : ``{name: TargetStyle}`` of the whole plan (default: assigned from ``names``)
    az_deg, ha_h, site : optional (k, m) azimuth and hour angle of the targets and the
        :class:`~planner.inputs.site.Site`: then the site's limits are drawn along each track
        (:func:`planner.outputs.chart_marks.draw_site_limits`), and its ``max_altitude_deg`` as a
        second altitude limit

    Drawn: dark time and twilight shaded, one curve per target (thin), the scheduled block on it
    (thick), each fixed block's event window as a bracket with the event time as a marker, in
    lanes under the horizon line (:func:`planner.outputs.chart_marks.window_lanes`: the chart grows
    a lane's height for each), the altitude limit, the Moon when given; the right axis gives
    airmass (Young 1994, as the visibility engine). Lines: k curves + one per block + one per event
    window + one per event time + the limit (+ the Moon).
    """
    from matplotlib.patches import Rectangle

    from ..sky.positions import altitude_for_airmass_deg

    t = np.asarray(times_jd_utc, dtype=float)
    alt = np.atleast_2d(np.asarray(alt_deg, dtype=float))
    if alt.shape != (len(names), t.size):
        raise PeriplanError(f"altitude array has shape {alt.shape}; expected ({len(names)}, {t.size})")
    ref = clock.date_to_jd_utc(night["night"])
    x = (t - ref) * _HOURS_PER_DAY
    lo_h, hi_h = (float(x.min()), float(x.max())) if x.size else (12.0, 36.0)
    width_in, height_in, margins = 10.0, 5.2, (0.7, 2.45, 0.75, 0.55)
    lanes = chart_marks.window_lanes(blocks, ref, lo_h, hi_h, (width_in - margins[0] - margins[1]) * 72 / (hi_h - lo_h))
    n_lanes = 1 + max((lane for _, lane, _ in lanes), default=-1)
    deg_in = (height_in - margins[2] - margins[3]) / 90.0  # the altitude scale keeps its size
    fig = _figure(width_in, height_in + n_lanes * chart_marks.LANE_DEG * deg_in, margins_in=margins)
    ax = fig.add_subplot()
    _shade_night(ax, night, lambda v: (v - ref) * _HOURS_PER_DAY, lo_h, hi_h)
    styles = styles or target_style.plan_styles(names)
    colour = {nm: styles[nm].colour for nm in names}
    for nm, a in zip(names, alt):
        ax.plot(x, a, lw=1.2, label=str(nm), gid="curve", **styles[nm].line_kwargs())
    if site is not None and az_deg is not None and ha_h is not None:
        chart_marks.draw_site_limits(ax, x, np.atleast_2d(az_deg), np.atleast_2d(ha_h), alt, site, styles, names)
    top = site.max_altitude_deg if site is not None else None
    ax.axhline(min_alt_deg, color="#333333", lw=1.0, ls="--", gid="limit",
               label=f"altitude limit {min_alt_deg:g} deg" if top is None else
               f"altitude limits {min_alt_deg:g} and {top:g} deg")
    if top is not None:  # the mount's zenith limit, drawn as the lower limit is
        ax.axhline(top, color="#333333", lw=1.0, ls="--", gid="ceiling")
    if moon_alt_deg is not None:
        lit = night["moon_illumination"] if "moon_illumination" in night else np.nan
        lit_text = f", {100 * float(lit):.0f}% lit" if np.isfinite(lit) else ""
        ax.plot(x, np.asarray(moon_alt_deg, dtype=float), color="#8c8c8c", lw=1.4, ls=":",
                label=f"Moon{lit_text}", gid="moon")
    for j, (_, b) in enumerate(blocks.iterrows()):
        c = colour.get(b["target"], "#000000")
        xs, xe = (b["start_jd_utc"] - ref) * 24, (b["end_jd_utc"] - ref) * 24
        inside = (x >= xs) & (x <= xe)
        row = names.index(b["target"]) if b["target"] in names else None
        if row is not None and inside.any():
            drawn = alt[row].astype(float).copy()
            p0, p1 = b.get("pause_start_jd_utc", np.nan), b.get("pause_end_jd_utc", np.nan)
            if np.isfinite(p0) and np.isfinite(p1):  # a block that pauses: no thick line over the pause
                drawn[(x > (p0 - ref) * 24) & (x < (p1 - ref) * 24)] = np.nan
            ax.plot(x[inside], drawn[inside], color=c, lw=4.5, alpha=0.8, solid_capstyle="butt", gid="block")
    above = Rectangle((lo_h, 0.0), hi_h - lo_h, 90.0, transform=ax.transData)
    for line in ax.get_lines():  # the curves end at the horizon: the event windows' lanes lie below it
        line.set_clip_path(above)
    bottom = -n_lanes * chart_marks.LANE_DEG
    if n_lanes:
        ax.axhline(0.0, color="#333333", lw=0.8, gid="horizon_line")
    chart_marks.draw_event_windows(ax, blocks, ref, lo_h, hi_h, styles, lanes)
    ax.set_ylim(bottom, 90)
    ax.set_yticks(range(0, 91, 10))
    ax.set_xlim(lo_h, hi_h)
    ax.set_ylabel("altitude (deg)")
    _clock_ticks(ax, lo_h, hi_h)
    ax.set_xlabel("UTC (hour)")
    if tz:
        # local clock hours from the zone's rules at each tick: right across a daylight-saving change
        step_h = 1 if hi_h - lo_h <= 14 else 2
        tick_jd, hours = clock.local_whole_hours(ref + lo_h / _HOURS_PER_DAY, ref + hi_h / _HOURS_PER_DAY, tz,
                                                 step_h)
        names = [clock.zone_abbreviation(tz, v) for v in tick_jd]
        # the first tick after a clock change carries the zone's new abbreviation (02 CET after 02 CEST)
        labels = [f"{v:02d}" + (f" {nm}" if k and nm != names[k - 1] else "")
                  for k, (v, nm) in enumerate(zip(hours, names))]
        top = ax.secondary_xaxis("top")  # same hours as the bottom axis, labelled in local time
        top.set_xticks((tick_jd - ref) * _HOURS_PER_DAY, labels)
        changed = len(set(names)) > 1
        top.set_xlabel(f"local time, {tz} (hour" + (f"; clocks change {names[0]} -> {names[-1]})" if changed
                                                    else ")"))
    right = ax.twinx()
    right.set_ylim(bottom, 90)
    x_marks = np.array([1.0, 1.2, 1.5, 2.0, 3.0, 5.0])
    right.set_yticks([altitude_for_airmass_deg(v) for v in x_marks], [f"{v:g}" for v in x_marks])
    right.set_ylabel("airmass")
    if n_lanes:  # both labels beside the altitude scale, not the lanes under it
        mid = (45.0 - bottom) / (90.0 - bottom)
        ax.yaxis.set_label_coords(-0.06, mid)
        right.yaxis.set_label_coords(1.06, mid)
    ax.grid(alpha=0.3, lw=0.5)
    handles, labels = ax.get_legend_handles_labels()  # long entries wrapped: the margin is 2.1 in wide
    ax.legend(handles, [textwrap.fill(t, LEGEND_WRAP, break_long_words=False) for t in labels], loc="upper left",
              bbox_to_anchor=(1.08, 1.0), fontsize=8, frameon=False)
    ax.set_title(title or f"Night of {night['night']}: altitude of the scheduled targets", fontsize=11)
    return fig


def write_night_chart(path, night, times_jd_utc, alt_deg, names, blocks, min_alt_deg, tz=None, title=None,
                      moon_alt_deg=None, **marks):
    """PNG of :func:`night_figure` at ``path`` (atomic); returns ``path``. ``marks``: its styles, az_deg, ha_h, site."""
    return save_png(night_figure(night, times_jd_utc, alt_deg, names, blocks, min_alt_deg, tz, title,
                                 moon_alt_deg, **marks), path)


def _block_labels(ax, fig, names, lo, hi):
    """Each block's target name where :func:`chart_marks.label_places` puts it: inside its bar
    when it fits, else beside, over or under it in dark text, clear of the row's other bars and
    labels (shortened where a row is crowded). ``names``: (start h, end h, row, name, flexible)."""
    pt_per_h = ax.get_position().width * fig.get_figwidth() * 72 / (hi - lo)
    places = chart_marks.label_places([b[:4] for b in names], lo, hi, pt_per_h)
    for (_, _, y, _, flexible), place in zip(names, places):
        if place is None:
            continue
        x, ha, text, where = place
        dark = "black" if flexible else "white"
        y, va, size, colour = {"inside": (y, "center", 7, dark), "beside": (y, "center", 7, "#222222"),
                               "above": (y + 0.31, "bottom", 6.5, "#222222"),  # bars span row +- 0.3
                               "below": (y - 0.31, "top", 6.5, "#222222")}[where]
        ax.text(x, y, text, ha=ha, va=va, fontsize=size, color=colour, clip_on=True, gid="block_label")


def week_figure(schedule: pd.DataFrame, nights: pd.DataFrame, tz: str | None = None, title: str | None = None,
                styles=None):
    """Overview of the week's blocks, one row per night: a matplotlib Figure.

    x is the clock time of the night (local with ``tz``, else UTC), read from the zone's rules at
    each instant, so a bar starts and ends where the nightly list's local times say, also after a
    daylight-saving change (a block shorter than a clock change that goes back is drawn with its
    true length from its start); rows are the nights in the order of ``nights``; dark time is
    shaded, fixed blocks are solid bars and flexible visits hatched bars in the target's colour,
    each labelled with the target. One bar patch per block.
    """
    labels = list(nights["night"].astype(str))
    n = len(labels)
    fig = _figure(10.0, 1.0 + 0.55 * max(n, 1), margins_in=(1.05, 0.2, 0.35, 0.5))
    ax = fig.add_subplot()
    targets = sorted(set(schedule["target"].astype(str))) if len(schedule) else []
    styles = styles or target_style.plan_styles(targets)
    colour = {nm: styles[nm].colour for nm in targets}
    spans, names = [], []
    for i, (_, night) in enumerate(nights.iterrows()):
        def to_h(v, day=str(night["night"])):
            return clock.local_clock_h(v, tz, day)  # the zone's rules at each instant

        y = n - 1 - i
        _shade_night(ax, night, to_h, 12.0, 36.0, y - 0.4, y + 0.4, label=(i == 0))
        for col in ("sunset_jd_utc", "sunrise_jd_utc"):
            v = night.get(col, np.nan)
            if np.isfinite(v):
                spans.append(float(to_h(v)))
        here = schedule[schedule["night"].astype(str) == night["night"]]
        for _, b in here.iterrows():
            xs, xe = (float(v) for v in to_h(np.array([b["start_jd_utc"], b["end_jd_utc"]])))
            if xe <= xs:  # the clocks went back inside a short block: draw its true length
                xe = xs + (b["end_jd_utc"] - b["start_jd_utc"]) * _HOURS_PER_DAY
            spans += [xs, xe]
            flexible = b["kind"] == "flexible"
            ax.broken_barh([(xs, xe - xs)], (y - 0.3, 0.6), facecolors=colour[str(b["target"])],
                           alpha=0.55 if flexible else 0.9, hatch="//" if flexible else None,
                           edgecolor="white", lw=0.8, gid="block")
            names.append((xs, xe, y, str(b["target"]), flexible))
        if here.empty:
            dark = np.isfinite(night.get("dark_start_jd_utc", np.nan))
            ax.text(24.0, y, "nothing scheduled" if dark else f"no {darkness_of(night)[0]}", ha="center",
                    va="center", fontsize=8, color="#555555", style="italic")
    lo, hi = (min(spans) - 0.5, max(spans) + 0.5) if spans else (16.0, 32.0)
    ax.set_xlim(lo, hi)
    _block_labels(ax, fig, names, lo, hi)
    ax.set_ylim(-0.6, n - 0.4)
    ax.set_yticks(range(n), labels[::-1])
    _clock_ticks(ax, lo, hi)
    ax.set_xlabel(f"local time, {tz} (hour)" if tz else "UTC (hour)")
    ax.grid(axis="x", alpha=0.3, lw=0.5)
    ax.set_title(title or "The week's plan: solid = fixed-time event, hatched = flexible visit", fontsize=11)
    return fig


def write_week_chart(path, schedule, nights, tz=None, title=None, styles=None):
    """PNG of :func:`week_figure` at ``path`` (atomic); returns ``path``."""
    return save_png(week_figure(schedule, nights, tz, title, styles), path)


#: K from which the RV chart is drawn in km/s rather than m/s (common practice: stellar binaries
#: are quoted in km/s, planets in m/s; no single source).
KMS_FROM_K_MS = 1000.0


def rv_figure(target: pd.Series, blocks: pd.DataFrame, n_phase: int = 600, styles=None, event_sigma_d=None,
              logged_jd_utc=None):
    """Radial velocity of the primary over one orbit, with events and planned blocks: a Figure.

    ``target`` is one row of the catalogue table (needs ``tp_bjd_tdb``, ``period_d``, ``e``,
    ``omega_deg``; ``k_ms``/``gamma_ms`` optional: without K the curve is in units of K);
    ``blocks`` the schedule rows of this target. Phase is the mean-anomaly phase after periastron.
    Each wanted orbital event is a dotted vertical line, each wanted phase (``rv_phases``) a dashed one; each block a shaded span from its start
    to its end phase (UTC converted to BJD_TDB in the target's direction), labelled with its night,
    with a dot on the curve at the block's middle. Lines: the curve + one per event + one per block.
    ``styles``: the plan's ``{name: TargetStyle}``; ``event_sigma_d``: ``{event: 1-sigma (days)}``
    drawn as a band around each event's phase; ``logged_jd_utc``: times (UTC) of observations
    already made, marked on the curve with crosses. The axis is in km/s when K >= 1 km/s.
    """
    from ..orbits import geometry
    from ..timescales.epochs import to_bjd_tdb

    tp, p = float(target["tp_bjd_tdb"]), float(target["period_d"])
    e, w_deg = float(target["e"]), float(target["omega_deg"])
    if not (np.isfinite(tp) and np.isfinite(p) and np.isfinite(e) and np.isfinite(w_deg)):
        raise PeriplanError(f"target {target['name']!r} has no orbit (tp, period, e, omega); "
                            "an RV chart needs Keplerian elements")
    k = float(target.get("k_ms", np.nan))
    known_k = np.isfinite(k)
    gamma = float(target.get("gamma_ms", np.nan)) if known_k else 0.0
    gamma = gamma if np.isfinite(gamma) else 0.0
    w = np.radians(w_deg)
    phase = np.linspace(0.0, 1.0, n_phase)
    scale = 1000.0 if known_k and abs(k) >= KMS_FROM_K_MS else 1.0
    rv = geometry.radial_velocity(tp + phase * p, tp, p, e, w, k if known_k else 1.0, gamma) / scale
    fig = _figure(9.8, 4.2, margins_in=(0.85, 2.0, 0.35, 0.55))  # the legend in the right margin
    ax = fig.add_subplot()
    style = (styles or {}).get(str(target["name"])) or target_style.style_for_index(0)
    ax.plot(phase, rv, lw=1.6, label="RV of the primary", gid="curve", **style.line_kwargs())
    ph_events = geometry.event_phases(e, w)
    wanted = target.get("events", geometry.ORBIT_EVENTS) or geometry.ORBIT_EVENTS
    for i, name in enumerate(geometry.ORBIT_EVENTS):
        if name not in wanted:
            continue
        ax.axvline(ph_events[i], color=PALETTE[1 + i % (len(PALETTE) - 1)], lw=1.0, ls=":", gid=f"event:{name}")
        sig_d = (event_sigma_d or {}).get(name, np.nan)
        sig_text = ("" if not np.isfinite(sig_d) else ", no uncertainty given" if no_uncertainty(sig_d)
                    else f", 1 sigma {sig_d * 1440:.1f} min" if sig_d * 1440 < 120 else f", 1 sigma {sig_d * 24:.1f} h")
        ax.annotate(chart_marks.event_words(name) + sig_text, (ph_events[i], 1.0), xycoords=("data", "axes fraction"),
                    xytext=(2, -4), textcoords="offset points", rotation=90, va="top", fontsize=7)
        chart_marks.draw_timing_bands(ax, [ph_events[i]], [sig_d / p], [PALETTE[1 + i % (len(PALETTE) - 1)]])
    wanted_phases = target.get("rv_phases", ())
    for ph in wanted_phases if isinstance(wanted_phases, tuple) else ():
        ax.axvline(ph, color="#2a7f62", lw=1.0, ls="--", gid="wanted_phase")
        ax.annotate(f"wanted phase {phase_text(ph)}", (ph, 0.0), xycoords=("data", "axes fraction"),
                    xytext=(2, 4), textcoords="offset points", rotation=90, va="bottom", fontsize=7)
    if len(blocks):
        ra, dec = float(target["ra_deg"]), float(target["dec_deg"])
        s = to_bjd_tdb(blocks["start_jd_utc"].to_numpy(float), "JD_UTC", ra, dec)
        en = to_bjd_tdb(blocks["end_jd_utc"].to_numpy(float), "JD_UTC", ra, dec)
        night_marks = []
        for j, ((_, b), s_b, e_b) in enumerate(zip(blocks.iterrows(), s, en)):
            p0 = np.mod((s_b - tp) / p, 1.0)
            width = min((e_b - s_b) / p, 1.0)
            pieces = [(p0, min(p0 + width, 1.0))] + ([(0.0, p0 + width - 1.0)] if p0 + width > 1.0 else [])
            for a, z in pieces:
                ax.axvspan(a, max(z, a + 0.002), color="#d08c00", alpha=0.35, lw=0, gid="block")
            mid_bjd = 0.5 * (s_b + e_b)
            mid_ph = np.mod((mid_bjd - tp) / p, 1.0)
            mid_rv = geometry.radial_velocity(mid_bjd, tp, p, e, w, k if known_k else 1.0, gamma) / scale
            ax.plot([mid_ph], [mid_rv], marker=style.marker, color="#d08c00", markeredgecolor="black", ls="none",
                    markersize=7, gid="planned", label="planned (block middle)" if j == 0 else None)
            night_marks.append((p0, width, str(b["night"])))
        for p0, width, text in _merged_marks(night_marks):
            left = p0 > 0.03  # beside the span, clear of the marker in its middle; right of it at the axis
            ax.annotate(text, (p0 if left else p0 + width, 0.02), xycoords=("data", "axes fraction"),
                        fontsize=7, xytext=(-5 if left else 5, 0), textcoords="offset points", rotation=90,
                        va="bottom", ha="right" if left else "left", gid="night_label")
    if logged_jd_utc is not None and len(logged_jd_utc):
        ra, dec = float(target["ra_deg"]), float(target["dec_deg"])
        t_log = to_bjd_tdb(np.asarray(logged_jd_utc, float), "JD_UTC", ra, dec)
        rv_log = geometry.radial_velocity(t_log, tp, p, e, w, k if known_k else 1.0, gamma) / scale
        ax.plot(np.mod((t_log - tp) / p, 1.0), rv_log, marker="x", color="black", ms=7, mew=1.6, ls="none",
                gid="logged", label="logged")
    ax.set_xlim(0.0, 1.0)
    ax.set_xlabel("orbital phase after periastron (mean anomaly / 2 pi)")
    unit = "km/s" if scale == 1000.0 else "m/s"
    ax.set_ylabel(f"radial velocity ({unit})" if known_k else "radial velocity / K (K not in catalogue)")
    if len(blocks) or (logged_jd_utc is not None and len(logged_jd_utc)):
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=7, frameon=False)  # clear of the marks
    ax.grid(alpha=0.3, lw=0.5)
    ax.set_title(f"{target['name']}: RV over one orbit (P = {p:.4g} d, e = {e:.3g}); shaded = planned blocks",
                 fontsize=10)
    return fig


#: Night labels of blocks closer than this in phase (about a label's height on the RV chart's
#: axis) share one label.
_LABEL_GAP_PHASE = 0.015


def _merged_marks(marks):
    """(phase, width, text) of the night labels, those within :data:`_LABEL_GAP_PHASE` of the one
    before them in phase joined into one ("2026-12-10" once; "2026-12-10 / 2027-01-22")."""
    out = []
    for p0, width, text in sorted(marks):
        if out and p0 - out[-1][0] < _LABEL_GAP_PHASE:
            q0, q_width, q_text = out[-1]
            texts = q_text.split(" / ")
            out[-1] = (q0, max(q_width, p0 + width - q0), q_text if text in texts else f"{q_text} / {text}")
        else:
            out.append((p0, width, text))
    return out


def write_rv_chart(path, target, blocks, n_phase: int = 600, **marks):
    """PNG of :func:`rv_figure` at ``path`` (atomic); returns ``path``. ``marks``: styles, event_sigma_d, logged_jd_utc."""
    return save_png(rv_figure(target, blocks, n_phase, **marks), path)
