"""Marks the altitude and RV charts add on top of their curves: site limits, event windows, bands.

- the site's real limits along each target's track: the horizon profile at the target's
  azimuth (only where it rises above the minimum altitude), the airmass limit as an altitude,
  and the stretches of each curve outside the hour-angle limits;
- event windows labelled with words (``primary conjunction``, the catalogue's label of a
  periodic event), and a window longer than the chart drawn to the chart's edge with an arrow
  saying it goes on;
- the RV chart's timing band: each event's 1-sigma uncertainty as a band on the phase axis.

Every artist carries a ``gid`` (``horizon``, ``airmass_limit``, ``ha_outside``, ``window``,
``event``, ``clipped``, ``sigma``) so tests can count what was drawn. Pure drawing: positions
and limits come in as arrays (degrees, hours, hours after the chart's reference date).
"""

from __future__ import annotations

import numpy as np

#: Words for each event name, as the charts write them.
EVENT_WORDS = {
    "periastron": "periastron", "apastron": "apastron", "primary_conjunction": "primary conjunction",
    "secondary_conjunction": "secondary conjunction", "rv_max": "RV maximum", "rv_min": "RV minimum",
    "visit": "flexible visit",
}
_HOURS_PER_DAY = 24.0


def event_words(event, label=None) -> str:
    """The event in words: the catalogue's label for a periodic event, else :data:`EVENT_WORDS`."""
    event = str(event)
    if event in ("periodic", "visit") and isinstance(label, str) and label:  # a visit's own label: phase bin 3 of 10
        return label.replace("_", " ")
    return EVENT_WORDS.get(event, event.replace("_", " "))


def target_labels(targets) -> dict:
    """``{target name: label}`` of a target table (empty for None or a table without labels), for
    :func:`event_words` of rows that name their target only."""
    if targets is None or "label" not in targets:
        return {}
    return dict(zip(targets["name"], targets["label"]))


def draw_site_limits(ax, x_h, az_deg, ha_h, alt_deg, site, styles: dict, names) -> None:
    """Horizon profile along each track, the airmass limit and the curves outside the HA limits.

    ``x_h`` (m,) chart time axis; ``az_deg``, ``ha_h``, ``alt_deg`` (k, m) for the k ``names``;
    ``site`` a :class:`planner.inputs.site.Site`; ``styles`` ``{name: TargetStyle}``.
    """
    from ..sky.positions import altitude_for_airmass_deg

    shown_horizon = shown_ha = False
    for nm, az, ha, alt in zip(names, az_deg, ha_h, alt_deg):
        st = styles[nm]
        if site.horizon_az_deg:
            limit = site.horizon_limit_deg(az)
            above = np.where(limit > site.min_altitude_deg + 0.05, limit, np.nan)
            if np.isfinite(above).any():
                ax.plot(x_h, above, color=st.colour, ls=st.linestyle, lw=0.9, alpha=0.75, gid="horizon",
                        label=None if shown_horizon else "horizon at its azimuth")
                shown_horizon = True
        outside = np.zeros(np.shape(ha), bool)
        if site.min_hour_angle_h is not None:
            outside |= ha < site.min_hour_angle_h
        if site.max_hour_angle_h is not None:
            outside |= ha > site.max_hour_angle_h
        if outside.any() and (alt[outside] > 0).any():
            ax.plot(x_h, np.where(outside, alt, np.nan), color="#9a9a9a", lw=3.2, alpha=0.7, gid="ha_outside",
                    solid_capstyle="butt", zorder=1.5,
                    label=None if shown_ha else f"outside HA {_ha_range(site)}")
            shown_ha = True
    if site.max_airmass is not None:
        ax.axhline(altitude_for_airmass_deg(site.max_airmass), color="#333333", lw=1.0, ls=(0, (1, 2)),
                   gid="airmass_limit", label=f"airmass limit {site.max_airmass:g}")


def _ha_range(site) -> str:
    lo = "" if site.min_hour_angle_h is None else f"{site.min_hour_angle_h:+g} h"
    hi = "" if site.max_hour_angle_h is None else f"{site.max_hour_angle_h:+g} h"
    return f"{lo}..{hi}" if lo and hi else (f"> {lo}" if lo else f"< {hi}")


#: Height of one event-window lane under the altitude chart, in degrees of its altitude scale,
#: and the width of a label character at 7 pt, in points (DejaVu Sans averages about 0.6 em;
#: an estimate that errs towards too wide) [our choices: a 7 pt label and its line in a lane].
LANE_DEG = 4.0
LABEL_CHAR_PT = 0.62 * 7


#: Gap between a bar and a label written beside it, and the smallest share of a name (in
#: characters, an ellipsis included) worth writing in the room left [our choices].
LABEL_GAP_H = 0.1
MIN_LABEL_CHARS = 4


def label_places(bars, lo_h, hi_h, pt_per_h) -> list:
    """Where each bar's name goes on a row chart: a list of (x, ha, text, place) in the order of
    ``bars``, or None for a bar left without a name; ``place`` is ``inside`` (centred in the bar),
    ``beside`` (after the bar, or before it), ``above`` or ``below`` (centred over or under the
    bar, in the gap between rows).

    ``bars``: (start h, end h, row, name); a name is :data:`LABEL_CHAR_PT` a character wide at
    ``pt_per_h`` points an hour. A name that does not fit in its bar goes, in this order of
    preference, to the right of the bar, to its left, above it or below it, wherever it runs into
    no other bar or label of its row nor past the chart's edges; failing all of these it is
    shortened with an ellipsis into the wider free side, and a bar whose room holds fewer than
    :data:`MIN_LABEL_CHARS` characters keeps no name (the night's sheet lists every block).
    """
    def width(text):
        return len(text) * LABEL_CHAR_PT / pt_per_h

    def free(a, z, taken):
        return lo_h <= a and z <= hi_h and all(z <= s or a >= e for s, e in taken)

    out = [None] * len(bars)
    for row in {b[2] for b in bars}:
        here = sorted((k for k, b in enumerate(bars) if b[2] == row), key=lambda k: bars[k][:2])
        lanes = {"beside": [(bars[k][0], bars[k][1]) for k in here], "above": [], "below": []}
        for k in here:
            xs, xe, _, name = bars[k][:4]
            need, mid = width(name), 0.5 * (xs + xe)
            if need <= 0.92 * (xe - xs):
                out[k] = (mid, "center", name, "inside")
                continue
            tries = [("beside", xe + LABEL_GAP_H, "left"), ("beside", xs - LABEL_GAP_H - need, "right"),
                     ("above", mid - need / 2, "center"), ("below", mid - need / 2, "center")]
            beside = lanes["beside"]
            room_r = min([s for s, _ in beside if s >= xe] + [hi_h]) - xe - 2 * LABEL_GAP_H
            room_l = xs - max([e for _, e in beside if e <= xs] + [lo_h]) - 2 * LABEL_GAP_H
            text = name[:max(int(max(room_r, room_l) * pt_per_h / LABEL_CHAR_PT) - 1, 0)] + "\u2026"
            if len(text) >= MIN_LABEL_CHARS:
                tries.append(("beside", xe + LABEL_GAP_H, "left") if room_r >= room_l
                             else ("beside", xs - LABEL_GAP_H - width(text), "right"))
            for n, (lane, start, ha) in enumerate(tries):
                shown = text if n == 4 else name
                span = (start, start + width(shown))
                if free(*span, lanes[lane]):
                    x = {"left": span[0], "right": span[1], "center": mid}[ha]
                    out[k] = (x, ha, shown, lane)
                    lanes[lane].append(span)
                    break
    return out


def _window_label(b) -> str:
    return f"{b['target']}: {event_words(b['event'], b.get('label'))}"


def window_lanes(blocks, ref_jd, lo_h, hi_h, pt_per_h) -> list:
    """(row of ``blocks``, lane, label hour) of each fixed block whose event window shows on the
    chart: lanes from 0, so that no two windows of a lane overlap, labels included (a label is as
    wide as :data:`LABEL_CHAR_PT` a character, at ``pt_per_h`` points an hour, and starts at its
    window's start, or earlier where it would run past the chart's right edge); each window, in
    order of its start, takes the first lane free there (interval partitioning, which uses as few
    lanes as any assignment can)."""
    spans = []
    for k, (_, b) in enumerate(blocks.iterrows()):
        if b["kind"] != "fixed" or not np.isfinite(b["window_start_jd_utc"]):
            continue
        a = max((b["window_start_jd_utc"] - ref_jd) * _HOURS_PER_DAY, lo_h)
        z = min((b["window_end_jd_utc"] - ref_jd) * _HOURS_PER_DAY, hi_h)
        if z > a:
            label_h = (len(_window_label(b)) + 9) * LABEL_CHAR_PT / pt_per_h  # 9: room for "+26.0 h"
            at = max(min(a, hi_h - label_h), lo_h)
            spans.append((min(a, at), max(z, at + label_h), k, at))
    free_at, out = [], []
    for a, z, k, at in sorted(spans):
        lane = next((j for j, t in enumerate(free_at) if t <= a), len(free_at))
        if lane == len(free_at):
            free_at.append(z)
        else:
            free_at[lane] = z
        out.append((k, lane, at))
    return sorted(out)


def draw_event_windows(ax, blocks, ref_jd, lo_h, hi_h, styles: dict, lanes) -> None:
    """Each fixed block's event window as a bracket in its lane under the altitude scale (lane j
    at altitude ``-(j + 0.75) * LANE_DEG``; ``lanes`` from :func:`window_lanes`, with where each
    label starts), its moment a marker, labelled in words.

    A window reaching past the chart's edge is drawn to the edge and ends in an arrow there,
    with the hours it goes on beyond the chart written above that end.
    """
    rows = list(blocks.iterrows())
    for k, lane, at in lanes:
        b = rows[k][1]
        st = styles.get(b["target"])
        colour = st.colour if st else "#000000"
        y = -(lane + 0.75) * LANE_DEG
        ws = (b["window_start_jd_utc"] - ref_jd) * _HOURS_PER_DAY
        we = (b["window_end_jd_utc"] - ref_jd) * _HOURS_PER_DAY
        a, z = max(ws, lo_h), min(we, hi_h)
        ax.plot([a, z], [y, y], color=colour, lw=2.0, gid="window",
                marker=None if (ws < lo_h or we > hi_h) else "|", markersize=7)
        for edge, beyond, sign in ((a, lo_h - ws, -1), (z, we - hi_h, 1)):
            if beyond > 0:
                ax.annotate("", xy=(edge, y), xytext=(edge - sign * 0.6, y), gid="clipped",
                            arrowprops={"arrowstyle": "-|>", "color": colour, "lw": 1.5})
                if sign > 0:  # the left end's are written before the label (further down)
                    ax.annotate(f"+{beyond:.1f} h", (edge, y), xytext=(-2, 2.5), textcoords="offset points",
                                fontsize=6.5, color=colour, ha="right")
        if np.isfinite(b["event_jd_utc"]):
            xe = (b["event_jd_utc"] - ref_jd) * _HOURS_PER_DAY
            if lo_h <= xe <= hi_h:
                ax.plot([xe], [y], marker=st.marker if st else "D", color=colour, markersize=5, ls="none",
                        markeredgecolor="black", markeredgewidth=0.5, gid="event")
        before = f"+{lo_h - ws:.1f} h " if ws < lo_h else ""
        if before:
            ax.annotate(before, (a, y), xytext=(2, 2.5), textcoords="offset points", fontsize=6.5, color=colour)
        ax.annotate(_window_label(b), (at, y), xytext=(2 + len(before) * LABEL_CHAR_PT * 6.5 / 7, 2.5),
                    textcoords="offset points", fontsize=7, color=colour)


def draw_timing_bands(ax, phases, sigma_phase, colours) -> None:
    """Each event's +-1 sigma timing band on a phase axis (at least one pixel wide to be seen)."""
    for ph, sig, colour in zip(phases, sigma_phase, colours):
        if not np.isfinite(sig):
            continue
        for shift in (-1.0, 0.0, 1.0):  # a band across phase 0 shows on both sides
            a, z = ph + shift - sig, ph + shift + sig
            if z >= 0.0 and a <= 1.0:
                ax.axvspan(max(a, 0.0), min(z, 1.0), color=colour, alpha=0.25, lw=0.6, gid="sigma")
