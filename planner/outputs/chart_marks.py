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


def draw_event_windows(ax, blocks, ref_jd, lo_h, hi_h, styles: dict) -> None:
    """Each fixed block's event window as a bracket, its moment a marker, labelled in words.

    A window reaching past the chart's edge is drawn to the edge and ends in an arrow there,
    with the hours it goes on beyond the chart written beside it.
    """
    row = 0
    for _, b in blocks.iterrows():
        if b["kind"] != "fixed" or not np.isfinite(b["window_start_jd_utc"]):
            continue
        st = styles.get(b["target"])
        colour = st.colour if st else "#000000"
        y = 6.0 + 3.5 * (row % 6)
        row += 1
        ws = (b["window_start_jd_utc"] - ref_jd) * _HOURS_PER_DAY
        we = (b["window_end_jd_utc"] - ref_jd) * _HOURS_PER_DAY
        a, z = max(ws, lo_h), min(we, hi_h)
        if z <= a:
            continue
        ax.plot([a, z], [y, y], color=colour, lw=2.0, gid="window",
                marker=None if (ws < lo_h or we > hi_h) else "|", markersize=10)
        for edge, beyond, sign in ((a, lo_h - ws, -1), (z, we - hi_h, 1)):
            if beyond > 0:
                ax.annotate("", xy=(edge, y), xytext=(edge - sign * 0.6, y), gid="clipped",
                            arrowprops={"arrowstyle": "-|>", "color": colour, "lw": 1.5})
                ax.annotate(f"+{beyond:.1f} h", (edge, y), xytext=(-sign * 4 - (22 if sign > 0 else 0), -9),
                            textcoords="offset points", fontsize=6.5, color=colour)
        if np.isfinite(b["event_jd_utc"]):
            xe = (b["event_jd_utc"] - ref_jd) * _HOURS_PER_DAY
            if lo_h <= xe <= hi_h:
                ax.plot([xe], [y], marker=st.marker if st else "D", color=colour, markersize=6, ls="none",
                        markeredgecolor="black", markeredgewidth=0.5, gid="event")
        ax.annotate(f"{b['target']}: {event_words(b['event'], b.get('label'))}", (a, y), xytext=(0, 3),
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
