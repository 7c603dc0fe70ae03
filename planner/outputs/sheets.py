"""Printable nightly lists (plain text and HTML), the schedule CSV and the terminal summary.

A nightly list is what the observer takes to the telescope: the Sun caution first, then the
night's sunset, darkness and sunrise times (UTC and local), the Moon, then the blocks in time
order with what to do and why (the score's points in words), and the notes. The HTML page has
print styling (``@media print``: A4, no colours needed, a block never split across pages) and
escapes every text it shows (:func:`html.escape`).

Builders return strings (``night_sheet_text``, ``night_sheet_html``, ``week_summary_text``);
writers (``write_night_sheets``, ``write_schedule_csv``) go through
:func:`planner.output.atomic_write`, so nothing is left half-written.
"""

from __future__ import annotations

import html
import os

import numpy as np
import pandas as pd

from ..scheduling.blocks import MIN_PER_DAY
from ..timescales import clock
from . import sheet_pointing, sheet_style
from .atomic import atomic_write

CAUTION = ("CAUTION: Never point the telescope at or near the Sun: it can blind in an instant and destroy "
           "instruments. The observatory's own safety rules and local regulations come first.")

#: What to do for each kind of block (``{label}``: the catalogue's label of a periodic event).
ACTIONS = {
    "periastron": "cover the periastron passage: RV spectra spread through the block (the RV changes "
                  "fastest here)",
    "apastron": "observe around apastron: RV spectra through the block",
    "primary_conjunction": "time series through primary conjunction (transit or primary eclipse where the "
                           "geometry eclipses), with out-of-event baseline before and after",
    "secondary_conjunction": "time series through secondary conjunction (occultation or secondary eclipse "
                             "where the geometry eclipses), with baseline before and after",
    "rv_max": "RV measurements near the RV maximum",
    "rv_min": "RV measurements near the RV minimum",
    "periodic": "time series around the predicted {label}",
    "visit": "one visit (an RV point or a monitoring exposure) at any time inside the block",
}
SKY_ROWS = (("sunset_jd_utc", "Sunset"), ("dark_start_jd_utc", "Astronomical darkness begins"),
            ("dark_end_jd_utc", "Astronomical darkness ends"), ("sunrise_jd_utc", "Sunrise"))


def _clock(jd_utc, tz=None) -> str:
    """``HH:MM`` of a Julian date (UTC) in UTC, or in the IANA zone ``tz``; ``--:--`` for NaN."""
    if jd_utc is None or not np.isfinite(jd_utc):
        return "--:--"
    text = clock.jd_utc_to_local_iso([jd_utc], tz)[0] if tz else clock.jd_utc_to_iso_z([jd_utc])[0]
    return text[11:16]


def _day(jd_utc, tz=None) -> str:
    """``on YYYY-MM-DD``: the date (local with ``tz``, else UTC) of a Julian date (UTC)."""
    text = clock.jd_utc_to_local_iso([jd_utc], tz)[0] if tz else clock.jd_utc_to_iso_z([jd_utc])[0]
    return f"on {text[:10]}"


#: Longest line of the text sheet (characters); longer lines wrap under their own indent.
TEXT_WIDTH = 100


def _wrap(lines, width=TEXT_WIDTH):
    """Each line wrapped to ``width`` characters, continuation lines indented like the first + 3."""
    import textwrap

    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        lead = " " * (len(line) - len(line.lstrip(" ")))
        out += textwrap.wrap(line, width, subsequent_indent=lead + "   ", break_on_hyphens=False)
    return out


def action(block) -> str:
    """What to do in a block, in words, from its event (see :data:`ACTIONS`)."""
    template = ACTIONS.get(str(block["event"]), "observe {label}")
    label = block.get("label") if isinstance(block.get("label"), str) and block.get("label") else block["event"]
    return template.format(label=label)


def reasons(block) -> list[str]:
    """The score of one block as phrases: the two factors, then each condition with its points."""
    period = block["period_d"]
    recurs = f"event recurs every {period:.4g} d" if np.isfinite(period) else "no event: a visit"
    out = [f"priority {block['x_priority']:g}", f"rarity x{block['x_rarity']:.2f} ({recurs})"]
    conditions = []
    frac = block["observable_fraction"]
    if np.isfinite(frac):
        conditions.append(f"{100 * frac:.0f}% of the event window observable ({block['pts_coverage']:.1f})")
    else:
        conditions.append(f"whole block usable ({block['pts_coverage']:.1f})")
    x = block["airmass"]
    conditions.append(f"mean airmass {x:.2f} ({block['pts_airmass']:.1f})" if np.isfinite(x)
                      else f"airmass not known ({block['pts_airmass']:.1f})")
    sep, lit = block["moon_sep_deg"], block["moon_illumination"]
    lit_text = f"{100 * lit:.0f}% lit" if np.isfinite(lit) else "phase not known"
    conditions.append(f"Moon {sep:.0f} deg away, {lit_text} ({block['pts_moon']:.1f})" if np.isfinite(sep)
                      else f"Moon {lit_text}, separation not computed ({block['pts_moon']:.1f})")
    sigma = block["event_sigma_d"]
    if np.isfinite(sigma):
        window_h = (block["window_end_jd_utc"] - block["window_start_jd_utc"]) * 24.0
        conditions.append(f"timing +-{sigma * MIN_PER_DAY:.1f} min (1 sigma) in a {window_h:.1f} h window "
                          f"({block['pts_timing']:.1f})")
    points = sum(block[c] for c in ("pts_coverage", "pts_airmass", "pts_moon", "pts_timing"))
    out.append(f"conditions {points:.1f} points: " + ", ".join(conditions))
    return out


def _what(b) -> str:
    """Name of what a block observes: the event's label, or "flexible visit"."""
    if b["kind"] == "flexible":
        return "flexible visit"
    what = b["label"] if isinstance(b.get("label"), str) and b.get("label") else str(b["event"])
    return what.replace("_", " ")


def _moon_text(night, tz=None) -> str:
    """The Moon in one line: illumination, and rise/set and hours up in the dark when known."""
    lit = night["moon_illumination"]
    parts = [f"{100 * lit:.0f}% illuminated" if np.isfinite(lit) else "illumination not known"]
    zone = " local" if tz else " UTC"
    pairs = [(night.get(c, np.nan), w) for c, w in (("moon_rise_jd_utc", "rises"), ("moon_set_jd_utc", "sets"))]
    for v, word in sorted(pairs, key=lambda p: p[0] if p[0] is not None and np.isfinite(p[0]) else np.inf):
        if v is not None and np.isfinite(v):
            parts.append(f"{word} {_clock(v, tz)}{zone} {_day(v, tz)}")
    up = night.get("moon_up_dark_h", np.nan)
    if up is not None and np.isfinite(up):
        parts.append(f"up for {up:.1f} h of the dark time")
    return ", ".join(parts)


def _title(night, site_name):
    return f"Observing list, night of {night['night']}" + (f" - {site_name}" if site_name else "")


def _empty_message(night) -> str:
    dark = np.isfinite(night["dark_start_jd_utc"]) and np.isfinite(night["dark_end_jd_utc"])
    if not dark:
        return ("No astronomical darkness this night: nothing is scheduled. (The Sun stays less than "
                "18 deg below the horizon.)")
    return ("Nothing scheduled: no event window is observable in darkness above the altitude limit, and no "
            "flexible target fits.")


def _block_lines(b, tz):
    what = _what(b)
    when_utc = f"{_clock(b['start_jd_utc'])}-{_clock(b['end_jd_utc'])} UTC"
    when_local = f"{_clock(b['start_jd_utc'], tz)}-{_clock(b['end_jd_utc'], tz)} local" if tz else ""
    head = f"{when_local + '  (' + when_utc + ')' if tz else when_utc}  {b['target']}: {what}"
    detail = []
    if b["kind"] != "flexible" and np.isfinite(b["event_jd_utc"]):
        sig = b["event_sigma_d"] * MIN_PER_DAY
        unc = f", +- {sig:.1f} min (1 sigma)" if np.isfinite(sig) else ""
        loc = f" ({_clock(b['event_jd_utc'], tz)} local)" if tz else ""
        detail.append(f"Event at {_clock(b['event_jd_utc'])} UTC{loc}{unc}.")
    alts = [b["alt_start_deg"], b["alt_mid_deg"], b["alt_end_deg"]]
    if all(np.isfinite(alts)):
        detail.append(f"Altitude {alts[0]:.0f} / {alts[1]:.0f} / {alts[2]:.0f} deg (start / middle / end).")
    return head, " ".join(detail)


def night_sheet_text(night, blocks: pd.DataFrame, tz: str | None = None, site_name: str | None = None) -> str:
    """Plain-text observing list of one night (a row of the night table and its schedule rows).

    Opens with :data:`CAUTION`; times are HH:MM in UTC and, with ``tz``, local.
    """
    lines = [_title(night, site_name), "=" * len(_title(night, site_name)), "", CAUTION, ""]
    lines.append(f"{'Sky':32s}{'UTC':>7s}" + (f"   local ({tz})" if tz else ""))
    for col, name in SKY_ROWS:
        lines.append(f"{name:32s}{_clock(night[col]):>7s}" + (f"   {_clock(night[col], tz)}" if tz else ""))
    lines.append(f"Moon: {_moon_text(night, tz)}")
    lines.append("")
    blocks = blocks.sort_values("start_jd_utc", kind="stable")
    if blocks.empty:
        lines.append(_empty_message(night))
    else:
        lines.append(f"Blocks in time order ({len(blocks)}):")
        for i, (_, b) in enumerate(blocks.iterrows(), 1):
            head, detail = _block_lines(b, tz)
            lines.append("")
            lines.append(f"{i}. {head}")
            if detail:
                lines.append(f"   {detail}")
            point = sheet_pointing.pointing_text(b, tz)
            if point:
                lines.append(f"   Point: {point}.")
            lines.append(f"   Do: {action(b)}.")
            lines.append(f"   Why: score {b['score']:.1f} = " + " x ".join(reasons(b)) + ".")
            if isinstance(b["notes"], str) and b["notes"]:
                lines.append(f"   Notes: {b['notes']}.")
    lines += ["", CAUTION, ""]
    return "\n".join(_wrap(lines))


_CSS = """
body { font-family: "DejaVu Sans", Arial, sans-serif; margin: 1.5em; color: #111; max-width: 60em; }
h1 { font-size: 1.4em; margin-bottom: 0.2em; }
.caution { border: 3px solid #b00000; padding: 0.6em 0.8em; font-weight: bold; margin: 0.8em 0; }
table { border-collapse: collapse; margin: 0.5em 0 1em 0; }
th, td { border: 1px solid #999; padding: 0.25em 0.6em; text-align: left; vertical-align: top; }
.block { border-left: 6px solid #1f5f8b; padding: 0.3em 0.8em; margin: 0.8em 0; }
.block.flexible { border-left-style: dashed; }
.block h2 { font-size: 1.05em; margin: 0.1em 0; }
.notes { font-style: italic; }
@media print {
  @page { size: A4; margin: 12mm; }
  body { margin: 0; font-size: 10pt; max-width: none; }
  .block, table, .caution { break-inside: avoid; page-break-inside: avoid; }
  .caution { border-color: #000; }
  a { color: inherit; text-decoration: none; }
}
"""


def night_sheet_html(night, blocks: pd.DataFrame, tz: str | None = None, site_name: str | None = None) -> str:
    """HTML observing list of one night, with print styling; every shown text is HTML-escaped."""
    e = html.escape
    title = _title(night, site_name)
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>{e(title)}</title>", f"<style>{_CSS}</style>", sheet_style.head_html(), "</head>",
           "<body>", sheet_style.SWITCH_HTML,
           f"<h1>{e(title)}</h1>", f'<p class="caution">{e(CAUTION)}</p>',
           '<table class="sky">', f"<tr><th>Sky</th><th>UTC</th>{f'<th>local ({e(tz)})</th>' if tz else ''}</tr>"]
    for col, name in SKY_ROWS:
        local = f"<td>{e(_clock(night[col], tz))}</td>" if tz else ""
        out.append(f"<tr><td>{e(name)}</td><td>{e(_clock(night[col]))}</td>{local}</tr>")
    out.append(f"<tr><td>Moon</td><td colspan=\"{2 if tz else 1}\">{e(_moon_text(night, tz))}</td></tr>")
    out.append("</table>")
    blocks = blocks.sort_values("start_jd_utc", kind="stable")
    if blocks.empty:
        out.append(f"<p><strong>{e(_empty_message(night))}</strong></p>")
    for i, (_, b) in enumerate(blocks.iterrows(), 1):
        head, detail = _block_lines(b, tz)
        out.append(f'<div class="block {e(str(b["kind"]))}">')
        out.append(f"<h2>{i}. {e(head)}</h2>")
        if detail:
            out.append(f"<p>{e(detail)}</p>")
        point = sheet_pointing.pointing_items(b, tz)
        if point:
            out.append('<p class="pointing">' + " ".join(f"<span><strong>{e(k)}</strong> {e(v)}</span>"
                                                       for k, v in point) + "</p>")
        out.append(f"<p><strong>Do:</strong> {e(action(b))}.</p>")
        items = "".join(f"<li>{e(r)}</li>" for r in reasons(b))
        out.append(f"<p><strong>Why:</strong> score {b['score']:.1f} = priority x rarity x conditions</p>"
                   f"<ul>{items}</ul>")
        if isinstance(b["notes"], str) and b["notes"]:
            out.append(f'<p class="notes">Notes: {e(b["notes"])}.</p>')
        out.append("</div>")
    out += [f'<p class="caution">{e(CAUTION)}</p>', "</body>", "</html>", ""]
    return "\n".join(out)


def write_night_sheets(out_dir, schedule: pd.DataFrame, nights: pd.DataFrame, tz: str | None = None,
                       site_name: str | None = None) -> list[str]:
    """Write ``night-YYYY-MM-DD.txt`` and ``.html`` for every night into ``out_dir``; returns the paths."""
    paths = []
    for _, night in nights.iterrows():
        label = str(night["night"])
        blocks = schedule[schedule["night"].astype(str) == label]
        for ext, build in (("txt", night_sheet_text), ("html", night_sheet_html)):
            path = os.path.join(os.fspath(out_dir), f"night-{label}.{ext}")
            text = build(night, blocks, tz, site_name)
            with atomic_write(path) as fh:
                fh.write(text)
            paths.append(path)
    return paths


def write_schedule_csv(path, schedule: pd.DataFrame, tz: str | None = None):
    """Write ``schedule.csv`` (columns of :func:`planner.schedule.display_frame`) atomically; returns ``path``."""
    from .tables import render
    from .tables import display_frame

    frame = display_frame(schedule, tz)
    fmt = {c: ".2f" for c in frame.columns if c.startswith("pts_") or c in ("score", "event_sigma_min")}
    fmt.update({"alt_start_deg": ".1f", "alt_mid_deg": ".1f", "alt_end_deg": ".1f", "airmass": ".3f",
                "moon_sep_deg": ".1f", "moon_illumination": ".2f", "observable_fraction": ".3f"})
    text = render(frame, "csv", fmt)
    with atomic_write(path) as fh:
        fh.write(text)
    return path


def week_summary_text(schedule: pd.DataFrame, nights: pd.DataFrame, tz: str | None = None) -> str:
    """Terminal summary: one line per night (darkness, number of blocks, the blocks), then totals."""
    lines = []
    for _, night in nights.iterrows():
        label = str(night["night"])
        here = schedule[schedule["night"].astype(str) == label].sort_values("start_jd_utc", kind="stable")
        dark = np.isfinite(night["dark_start_jd_utc"]) and np.isfinite(night["dark_end_jd_utc"])
        dark_text = (f"dark {_clock(night['dark_start_jd_utc'], tz)}-{_clock(night['dark_end_jd_utc'], tz)}"
                     if dark else "no darkness")
        if here.empty:
            lines.append(f"{label}  {dark_text}  nothing scheduled")
            continue
        items = ", ".join(f"{_clock(b['start_jd_utc'], tz)} {b['target']} "
                          f"{_what(b)}"
                          for _, b in here.iterrows())
        lines.append(f"{label}  {dark_text}  {len(here)} block{'s' if len(here) != 1 else ''}: {items}")
    n = len(schedule)
    clock = f"local time ({tz})" if tz else "UTC"
    if n == 0:
        lines.append("Nothing could be scheduled this week (no dark time, or no target visible in darkness).")
    else:
        lines.append(f"{n} blocks, {schedule['target'].nunique()} targets, {len(nights)} nights; times in {clock}.")
    return "\n".join(lines) + "\n"
