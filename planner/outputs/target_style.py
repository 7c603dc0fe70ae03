"""One look per target for every chart of a plan: a colour, a line style and a marker.

A plan's charts (the nights' altitudes, the week, the RV curves) draw the same target the same
way, so an observer who learnt that a target is the blue dashed line on one chart finds it
again on the next. Colour alone fails in grey print and for colour-blind readers, so each
target also gets a line style and a marker; the pair (line style, marker) differs for every
target up to ``len(LINE_STYLES) * len(MARKERS)`` targets, and the colours are ordered so that
neighbours differ strongly in lightness.

Assignment is by the sorted target names of the whole plan (:func:`plan_styles`), never by the
order in which one chart meets them, so it is the same in every chart and in every run.
"""

from __future__ import annotations

from dataclasses import dataclass

#: Our own palette, ordered so that consecutive colours alternate dark and light.
COLOURS = ("#1f4e79", "#e08a00", "#5b3a99", "#9bbb3b", "#2e7d4f", "#4fa3c7", "#8b2d1f", "#c44e8a")
#: Line styles (matplotlib spellings): solid, dashed, dash-dot, dotted, long dash.
LINE_STYLES = ("-", "--", "-.", ":", (0, (8, 3)))
#: Markers (matplotlib spellings): circle, square, triangle, diamond, cross, plus-filled.
MARKERS = ("o", "s", "^", "D", "X", "P")


@dataclass(frozen=True)
class TargetStyle:
    """How one target is drawn: ``colour`` (hex), ``linestyle`` and ``marker`` (matplotlib)."""

    colour: str
    linestyle: object
    marker: str

    def line_kwargs(self) -> dict:
        """Keyword arguments for ``Axes.plot`` drawing this target's line."""
        return {"color": self.colour, "ls": self.linestyle}


def style_for_index(i: int) -> TargetStyle:
    """The style of the ``i``-th target (0-based) in the sorted list of a plan's targets.

    Line styles and markers each cycle through their lists; their lengths (5 and 6) have no
    common factor, so the pair (line style, marker) first repeats after 5 x 6 = 30 targets.
    """
    return TargetStyle(COLOURS[i % len(COLOURS)], LINE_STYLES[i % len(LINE_STYLES)], MARKERS[i % len(MARKERS)])


def plan_styles(names) -> dict:
    """``{target name: TargetStyle}`` for the given names, assigned in sorted order of names."""
    return {nm: style_for_index(i) for i, nm in enumerate(sorted({str(n) for n in names}))}


def relative_luminance(colour_hex: str) -> float:
    """WCAG 2.1 relative luminance (0 black .. 1 white) of an sRGB colour ``#rrggbb``."""
    rgb = [int(colour_hex[k:k + 2], 16) / 255.0 for k in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]
