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

import datetime as dt
import functools
import html
import os
import re

import numpy as np
import pandas as pd

from ..orbits.geometry import event_meant
from ..sky.night import darkness_of
from ..scheduling.blocks import MIN_PER_DAY
from ..scheduling.phase_requests import phase_of_event, phase_text
from ..scheduling.log_requests import PHASE_GROUP, new_parts_share
from ..scheduling.series_parts import PART_WORDS, parts_in_words
from ..timescales import clock
from . import explain
from . import sheet_pointing, sheet_style
from .atomic import atomic_write
from .chart_marks import event_words, target_labels
from .wording import count

CAUTION = ("CAUTION: Never point the telescope at or near the Sun: it can blind in an instant and destroy "
           "instruments. The observatory's own safety rules and local regulations come first.")

#: What to do for each kind of block (``{label}``: the catalogue's label of a periodic event).
ACTIONS = {
    "periastron": "photometric time series around the periastron passage",
    "apastron": "photometric time series around apastron",
    "primary_conjunction": "photometric time series of the transit or primary eclipse",
    "secondary_conjunction": "photometric time series of the occultation or secondary eclipse",
    "periodic": "photometric time series around the predicted {label}",
    "visit": "one visit (an RV point or a monitoring exposure) at any time inside the block",
}


def sky_rows(night) -> tuple[tuple[str, str], ...]:
    """(night-table column, label) of the sky times, the darkness named as the site asked for it.

    ``"Nautical darkness begins"`` for a site with ``darkness = "nautical"``, ``"Darkness (Sun
    below -15 deg) begins"`` for a number (:func:`planner.sky.night.darkness_name`).
    """
    name = darkness_of(night)[0]
    name = name[0].upper() + name[1:]
    return (("sunset_jd_utc", "Sunset"), ("dark_start_jd_utc", f"{name} begins"),
            ("dark_end_jd_utc", f"{name} ends"), ("sunrise_jd_utc", "Sunrise"))


#: What to do for the visits of RV requests, by request kind.
RV_ACTIONS = {
    "rv_visit": "one RV spectrum of about {minutes:.0f} min near the {what}",
    "rv_sequence": "RV visit {slot} of {n_slots} over the periastron passage, in the orbit's fastest RV swing: "
                   "one spectrum of about {minutes:.0f} min",
}


def _clock(jd_utc, tz=None) -> str:
    """``HH:MM`` of a Julian date (UTC) in UTC, or in the IANA zone ``tz``; ``--:--`` for NaN."""
    if jd_utc is None or not np.isfinite(jd_utc):
        return "--:--"
    return _clock_text(float(jd_utc), tz)


@functools.lru_cache(maxsize=4096)
def _clock_text(jd_utc: float, tz) -> str:
    """``HH:MM`` of a finite Julian date (UTC); cached, as a sheet shows each time in two files."""
    return clock.hhmm(jd_utc, tz)[0]


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
    """What to do in a block, in words, from its request kind and event (see :data:`ACTIONS`)."""
    label = block.get("label") if isinstance(block.get("label"), str) and block.get("label") else block["event"]
    request = block.get("request", "")
    asides = []  # said in one parenthesis at the end
    if request in RV_ACTIONS:
        minutes = (block["end_jd_utc"] - block["start_jd_utc"]) * MIN_PER_DAY
        what = str(block["event"]).replace("rv_max", "RV maximum").replace("rv_min", "RV minimum").replace("_", " ")
        text = RV_ACTIONS[request].format(minutes=minutes, what=what, slot=int(block.get("slot", 1)),
                                          n_slots=int(block.get("n_slots", 1))) + _swing_offset(block)
        asides.append(_other_slots(block))
        if block["event"] == "visit":  # a phase-coverage visit: its bin, not an event
            text, asides = f"one RV spectrum of about {minutes:.0f} min in orbital {label}", ["not yet observed"]
        phase = phase_of_event(block["event"])
        if np.isfinite(phase):  # a wanted phase: the phase, and the mean anomaly it means
            text = f"one RV spectrum of about {minutes:.0f} min at orbital phase {phase_text(phase)}"
            asides = [f"mean anomaly {360.0 * phase:.4g} deg from periastron"]
    else:
        event = event_meant(str(block["event"]), label)  # a linear ephemeris given as tc: a transit
        text = ACTIONS.get(event, "observe {label}").format(label="periodic event" if label == event else label)
    serves = str(block.get("serves", "") or "")
    if ";" in serves:
        asides.append("it serves " + " and ".join(w.replace("_", " ") for w in serves.split(";")) + " at once")
    asides = [a for a in asides if a]
    return text + (f" ({'; '.join(asides)})" if asides else "")


def planned_slots(schedule: pd.DataFrame) -> np.ndarray:
    """Per block of an RV sequence, the slots of its periastron passage in the plan (``"1;3"``,
    object array; ``""`` for other blocks): the passage is the target's event at the same
    minute, whatever the night of each visit."""
    from ..scheduling.blocks import instance_keys

    seq = (schedule["request"].astype(str) == "rv_sequence").to_numpy()
    if not seq.any():
        return np.full(len(schedule), "", dtype=object)
    key = pd.Series(instance_keys(schedule["target_index"], schedule["event"].astype(str), schedule["event_jd_utc"]),
                    index=schedule.index)
    slots = schedule["slot"].where(seq).dropna().astype(int)
    joined = slots.groupby(key[seq]).apply(lambda g: ";".join(map(str, sorted(g))))
    return np.where(seq, key.map(joined).to_numpy(object), "")


#: A periastron-sequence visit further than this from the periastron says how far (days): the
#: RV swing of an orbit close to circular is wide, and its fastest part is not at periastron.
SWING_NOTE_D = 0.5


def _swing_offset(block) -> str:
    """``", 4.9 d after the periastron itself"`` for a periastron-sequence
    visit more than :data:`SWING_NOTE_D` from the periastron; ``""`` otherwise."""
    if block.get("request") != "rv_sequence" or not np.isfinite(block.get("event_jd_utc", np.nan)):
        return ""
    off = 0.5 * (block["start_jd_utc"] + block["end_jd_utc"]) - block["event_jd_utc"]
    if abs(off) <= SWING_NOTE_D:
        return ""
    return f", {abs(off):.1f} d {'after' if off > 0 else 'before'} the periastron itself"


def _other_slots(block) -> str:
    """``"visits 1 and 2 are not in the plan"`` (or ``"... logged already"``) for an RV sequence's
    block whose passage has slots the plan leaves out; ``""`` otherwise."""
    n, planned = int(block.get("n_slots", 1) or 1), str(block.get("planned_slots", "") or "")
    if block.get("request") != "rv_sequence" or not planned or n < 2:
        return ""
    logged = block.get("logged_parts", "")
    logged = logged.split(";") if isinstance(logged, str) and logged else []
    left = [k for k in range(1, n + 1) if str(k) not in planned.split(";")]
    said = [_visits([k for k in left if str(k) in logged], "logged already"),
            _visits([k for k in left if str(k) not in logged], "not in the plan")]
    return "; ".join(s for s in said if s)


def _visits(numbers, what) -> str:
    """``"visits 1 and 2 are not in the plan"`` / ``"visit 1 logged already"``; ``""`` for none."""
    if not numbers:
        return ""
    verb = "" if what.startswith("logged") else ("is " if len(numbers) == 1 else "are ")
    if len(numbers) == 1:
        return f"visit {numbers[0]} {verb}{what}"
    return f"visits {', '.join(map(str, numbers[:-1]))} and {numbers[-1]} {verb}{what}"


def covers_line(block) -> str:
    """Which parts of the event a series block covers and which it misses, in words ("" for visits)."""
    if block.get("request") != "series":
        return ""
    covers, missing = str(block.get("covers", "") or ""), str(block.get("not_covered", "") or "")
    if " | " in covers:  # a merged block: one clause per event
        parts = []
        for c, m in zip(covers.split(" | "), missing.split(" | ")):
            event, _, got = c.partition(": ")
            parts.append(f"{event.replace('_', ' ')}: " + parts_in_words(got, m.partition(": ")[2]))
        return " ".join(parts)
    if not np.isfinite(block.get("t1_jd_utc", np.nan)):
        held = "the mid-event" if "mid" in covers else "no predicted moment"
        why = ("a duration_h is the primary eclipse's; an eccentric orbit's secondary needs the eclipse geometry, "
               "a_rstar, inc_deg and rp_rstar" if block.get("event") == "secondary_conjunction"
               else "the catalogue gives no duration or eclipse geometry")
        return f"Covers {held} ({100 * block['observable_fraction']:.0f}% of the window); contacts not known ({why})."
    return parts_in_words(covers, missing)


def reasons(block) -> list[str]:
    """The score of one block as phrases: the two factors, then each condition with its points.

    Every condition is listed, the timing term of a flexible visit included, and the points are
    rounded by :func:`planner.outputs.explain.block_points`, so the printed parts add up to the
    printed conditions total.
    """
    period = block["period_d"]
    recurs = f"event recurs every {period:.4g} d" if np.isfinite(period) else "no event: a visit"
    out = [f"priority {block['x_priority']:g}", f"rarity x{block['x_rarity']:.2f} ({recurs})"]
    if str(block.get("group", "")).startswith(PHASE_GROUP):  # a phase-coverage visit
        out[1] = f"gap x{block['x_rarity']:.2f} (1 + the share of the orbit in the run of empty phase bins it fills)"
    logged = _logged_parts(block)
    if logged:
        share = new_parts_share(block.get("covers", ""), logged)
        out.append(f"new parts x{share:.2f} ({', '.join(PART_WORDS.get(p, p) for p in logged.split(';'))} "
                   "logged already)")
    pts, total = explain.block_points(block)
    conditions = []
    frac = block["observable_fraction"]
    science = block.get("science_fraction", np.nan)
    if block.get("request") == "series" and np.isfinite(science) and np.isfinite(frac):
        cut = block.get("baseline_min", np.nan)
        cut = f" (baselines cut to {cut:.0f} min)" if np.isfinite(cut) else ""
        conditions.append(f"{100 * science:.0f}% of the series' science kept{cut}, {100 * frac:.0f}% of the window "
                          f"observable ({pts['pts_coverage']:.1f})")
    elif block.get("request") in RV_ACTIONS:
        conditions.append(f"a visit inside its window: full value, whatever its length ({pts['pts_coverage']:.1f})")
    elif np.isfinite(frac):
        conditions.append(f"{100 * frac:.0f}% of the event window observable ({pts['pts_coverage']:.1f})")
    else:
        conditions.append(f"whole block usable ({pts['pts_coverage']:.1f})")
    x = block["airmass"]
    conditions.append(f"mean airmass {x:.2f} ({pts['pts_airmass']:.1f})" if np.isfinite(x)
                      else f"airmass not known ({pts['pts_airmass']:.1f})")
    sep, lit = block["moon_sep_deg"], block["moon_illumination"]
    lit_text = f"{100 * lit:.0f}% lit" if np.isfinite(lit) else "phase not known"
    conditions.append(f"Moon {sep:.0f} deg away, {lit_text} ({pts['pts_moon']:.1f})" if np.isfinite(sep)
                      else f"Moon {lit_text}, separation not computed ({pts['pts_moon']:.1f})")
    conditions.append(explain.timing_phrase(block, pts["pts_timing"]))
    out.append(f"conditions {total:.1f} points: " + ", ".join(conditions))
    return out


def _logged_parts(block) -> str:
    """The parts of a series block that the observation log holds already (``""``: none, and for
    visits, whose ``logged_parts`` are the logged visits of an RV sequence's passage)."""
    logged = block.get("logged_parts", "")
    return logged if isinstance(logged, str) and block.get("request") == "series" else ""


def shared_score(block):
    """(own, other) phrases of a block serving two requests, ``"228.5 for the periastron"`` and
    ``"257.9 for the rv min it serves too"`` (rounded so that they add up to the printed score),
    or None for a block serving one; :func:`reasons` then gives the first's factors."""
    serves = str(block.get("serves", "") or "").split(";")
    own = block["x_priority"] * block["x_rarity"] * sum(block[c] for c in ("pts_coverage", "pts_airmass", "pts_moon",
                                                                            "pts_timing"))
    own *= new_parts_share(block.get("covers", ""), _logged_parts(block))
    if len(serves) < 2 or abs(block["score"] - own) <= 1e-6:
        return None
    (mine, other), _ = explain.rounded_parts([own, block["score"] - own])
    return (f"{mine:.1f} for the {serves[0].replace('_', ' ')}",
            f"{other:.1f} for the {serves[1].replace('_', ' ')} it serves too")


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
        name, alt = darkness_of(night)
        below = (f" (The Sun stays less than {abs(alt):g} deg below the horizon.)" if np.isfinite(alt) else "")
        return f"No {name} this night: nothing is scheduled.{below}"
    return ("Nothing scheduled: no event window is observable in darkness above the altitude limit, and no "
            "flexible target fits.")


#: Catalogue columns that hold a magnitude (``mag``, ``vmag``, ``V_mag``, ``mag_r``, ...), shown
#: beside the target's name on the block line.
MAGNITUDE_COLUMN = re.compile(r"^(mag|[a-z]{1,2}_?mag|mag_?[a-z]{1,2})$", re.IGNORECASE)


def magnitude_texts(targets: pd.DataFrame) -> np.ndarray:
    """Per target, ``"vmag 9.5"`` from the first magnitude column of the catalogue (``""`` where none)."""
    column = next((c for c in targets.columns if MAGNITUDE_COLUMN.match(str(c))), None)
    if column is None:
        return np.full(len(targets), "", dtype=object)
    values = targets[column].to_numpy(object)
    return np.array(["" if v is None or (isinstance(v, float) and not np.isfinite(v)) or str(v).strip() == ""
                     else f"{column} {v:g}" if isinstance(v, float) else f"{column} {str(v).strip()}"
                     for v in values], dtype=object)


def _block_lines(b, tz):
    what = _what(b)
    when_utc = f"{_clock(b['start_jd_utc'])}-{_clock(b['end_jd_utc'])} UTC"
    when_local = f"{_clock(b['start_jd_utc'], tz)}-{_clock(b['end_jd_utc'], tz)} local" if tz else ""
    head = f"{when_local + '  (' + when_utc + ')' if tz else when_utc}  {b['target']}: {what}"
    detail = []
    if b["kind"] != "flexible" and np.isfinite(b["event_jd_utc"]):
        unc = explain.sigma_text(b["event_sigma_d"])
        unc = f", {unc}" if unc else ""
        loc = f" ({_clock(b['event_jd_utc'], tz)} local)" if tz else ""
        far = abs(b["event_jd_utc"] - 0.5 * (b["start_jd_utc"] + b["end_jd_utc"])) > 0.5
        day = clock.jd_utc_to_iso_z([b["event_jd_utc"]])[0][:10] + " " if far else ""  # a wide RV window
        detail.append(f"Event at {day}{_clock(b['event_jd_utc'])} UTC{loc}{unc}.")
    alt_text = []
    if np.isfinite(b.get("alt_low_deg", np.nan)):
        alt_text.append(f"lowest {b['alt_low_deg']:.0f} deg")
    if np.isfinite(b.get("alt_event_deg", np.nan)):
        alt_text.append(f"at the event {b['alt_event_deg']:.0f} deg")
    for c in ("t1", "t2", "t3", "t4"):
        if np.isfinite(b.get(f"alt_{c}_deg", np.nan)):
            alt_text.append(f"at {c.upper()} {b[f'alt_{c}_deg']:.0f} deg")
    if alt_text:
        detail.append("Altitude: " + ", ".join(alt_text) + ".")
    return head, " ".join(detail)


#: Unscheduled requests of at least this priority are listed on their night's sheet [our choice].
MISSED_MIN_PRIORITY = 3.0
#: At most this many of them, highest priority first.
MISSED_MAX_LINES = 6
#: Reasons not worth a line on a sheet: the observer could not have done anything that night.
_MISSED_SKIP = ("no_darkness", "never_rises", "outside_nights")


def missed_lines(unscheduled: pd.DataFrame | None, label: str, tz: str | None = None,
                 labels: dict | None = None) -> list[str]:
    """One line per unscheduled high-priority request of the night ``label``, with its reason:
    ``"Star RV maximum at 21:40 (priority 4): ..."``, the event named as on the blocks (a periodic
    event by its target's label, from ``labels`` ``{target: label}``) and its time (local in
    ``tz``), so two instances of one night can be told apart."""
    if unscheduled is None or unscheduled.empty:
        return []
    u = unscheduled[(unscheduled["night"].astype(str) == label) & (unscheduled["priority"] >= MISSED_MIN_PRIORITY)
                    & ~unscheduled["reason_code"].isin(_MISSED_SKIP)]
    u = u.sort_values("priority", ascending=False, kind="stable").head(MISSED_MAX_LINES)
    labels = labels or {}

    def when(iso):
        if not isinstance(iso, str) or not iso:
            return ""
        return f" at {_clock(clock.datetime_to_jd_utc(dt.datetime.fromisoformat(iso)), tz)}"

    return [f"{r.target} {event_words(r.event, labels.get(r.target))}{when(r.event_utc)} (priority {r.priority:g}): "
            f"{r.reason}" for r in u.itertuples()]


def night_sheet_text(night, blocks: pd.DataFrame, tz: str | None = None, site_name: str | None = None,
                     missed: list[str] = ()) -> str:
    """Plain-text observing list of one night (a row of the night table and its schedule rows).

    Opens with :data:`CAUTION`; times are HH:MM in UTC and, with ``tz``, local. ``missed``
    (:func:`missed_lines`) lists the night's high-priority requests left out, and why.
    """
    lines = [_title(night, site_name), "=" * len(_title(night, site_name)), "", CAUTION, ""]
    rows = sky_rows(night)
    width = max(32, 2 + max(len(name) for _, name in rows))
    lines.append(f"{'Sky':{width}s}{'UTC':>7s}" + (f"   local ({tz})" if tz else ""))
    for col, name in rows:
        lines.append(f"{name:{width}s}{_clock(night[col]):>7s}" + (f"   {_clock(night[col], tz)}" if tz else ""))
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
            if covers_line(b):
                lines.append(f"   {covers_line(b)}")
            shared, factors = shared_score(b), " x ".join(reasons(b))
            lines.append(f"   Why: score {b['score']:.1f} = "
                         + (f"{shared[0]} ({factors}) + {shared[1]}." if shared else factors + "."))
            if isinstance(b["notes"], str) and b["notes"]:
                lines.append(f"   Notes: {b['notes']}.")
    if missed:
        lines += ["", "Not scheduled tonight (high priority):"] + [f"  - {m}" for m in missed]
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


def night_sheet_html(night, blocks: pd.DataFrame, tz: str | None = None, site_name: str | None = None,
                     missed: list[str] = ()) -> str:
    """HTML observing list of one night, with print styling; every shown text is HTML-escaped."""
    e = html.escape
    title = _title(night, site_name)
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>{e(title)}</title>", f"<style>{_CSS}</style>", sheet_style.head_html(), "</head>",
           "<body>", sheet_style.SWITCH_HTML,
           f"<h1>{e(title)}</h1>", f'<p class="caution">{e(CAUTION)}</p>',
           '<table class="sky">', f"<tr><th>Sky</th><th>UTC</th>{f'<th>local ({e(tz)})</th>' if tz else ''}</tr>"]
    for col, name in sky_rows(night):
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
        if covers_line(b):
            out.append(f"<p>{e(covers_line(b))}</p>")
        items = "".join(f"<li>{e(r)}</li>" for r in reasons(b))
        shared = shared_score(b)
        factors = "priority x rarity x new parts x conditions" if _logged_parts(b) else "priority x rarity x conditions"
        why = f"{e(shared[0])} + {e(shared[1])}; the first = {factors}" if shared else factors
        out.append(f"<p><strong>Why:</strong> score {b['score']:.1f} = {why}</p><ul>{items}</ul>")
        if isinstance(b["notes"], str) and b["notes"]:
            out.append(f'<p class="notes">Notes: {e(b["notes"])}.</p>')
        out.append("</div>")
    if missed:
        out.append('<h2 class="missed">Not scheduled tonight (high priority)</h2>')
        out.append("<ul>" + "".join(f"<li>{e(m)}</li>" for m in missed) + "</ul>")
    out += [f'<p class="caution">{e(CAUTION)}</p>', "</body>", "</html>", ""]
    return "\n".join(out)


def write_night_sheets(out_dir, schedule: pd.DataFrame, nights: pd.DataFrame, tz: str | None = None,
                       site_name: str | None = None, targets: pd.DataFrame | None = None,
                       unscheduled: pd.DataFrame | None = None) -> list[str]:
    """Write ``night-YYYY-MM-DD.txt`` and ``.html`` for every night into ``out_dir``; returns the paths.

    With ``targets`` (the catalogue's target table), a magnitude column of the catalogue is shown
    on each block's pointing line (:func:`magnitude_texts`).
    """
    labels = target_labels(targets)
    if targets is not None and len(schedule):
        schedule = schedule.assign(magnitude=magnitude_texts(targets)[schedule["target_index"].to_numpy(int)])
    if len(schedule) and "slot" in schedule:
        schedule = schedule.assign(planned_slots=planned_slots(schedule))
    paths = []
    for _, night in nights.iterrows():
        label = str(night["night"])
        blocks = schedule[schedule["night"].astype(str) == label]
        for ext, build in (("txt", night_sheet_text), ("html", night_sheet_html)):
            path = os.path.join(os.fspath(out_dir), f"night-{label}.{ext}")
            text = build(night, blocks, tz, site_name, missed_lines(unscheduled, label, tz, labels))
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
    fmt.update({c: ".1f" for c in frame.columns if c.startswith("alt_")})
    fmt.update({"science_fraction": ".2f", "baseline_min": ".0f", "airmass": ".3f",
                "moon_sep_deg": ".1f", "moon_illumination": ".2f", "observable_fraction": ".3f"})
    text = render(frame, "csv", fmt)
    with atomic_write(path) as fh:
        fh.write(text)
    return path


def idle_dark_h(night, blocks: pd.DataFrame) -> float:
    """Hours of the night's darkness that no block uses (0 without darkness)."""
    d0, d1 = night["dark_start_jd_utc"], night["dark_end_jd_utc"]
    if not (np.isfinite(d0) and np.isfinite(d1)):
        return 0.0
    used = np.clip(np.minimum(blocks["end_jd_utc"].to_numpy(float), d1) - np.maximum(blocks["start_jd_utc"].to_numpy(float), d0),
                   0.0, None).sum() if len(blocks) else 0.0
    return max(0.0, (d1 - d0 - used) * 24.0)


def week_summary_text(schedule: pd.DataFrame, nights: pd.DataFrame, tz: str | None = None, report=None) -> str:
    """Terminal summary: one line per night (darkness, idle dark hours, the blocks), then totals.

    ``report`` (the solver's :class:`~planner.scheduling.solver.SolveReport`) adds how the
    blocks were chosen: proven optimal, or the gap to the solver's bound.
    """
    lines = []
    for _, night in nights.iterrows():
        label = str(night["night"])
        here = schedule[schedule["night"].astype(str) == label].sort_values("start_jd_utc", kind="stable")
        dark = np.isfinite(night["dark_start_jd_utc"]) and np.isfinite(night["dark_end_jd_utc"])
        dark_text = (f"dark {_clock(night['dark_start_jd_utc'], tz)}-{_clock(night['dark_end_jd_utc'], tz)}"
                     f" ({idle_dark_h(night, here):.1f} h idle)" if dark else f"no {darkness_of(night)[0]}")
        if here.empty:
            lines.append(f"{label}  {dark_text}  nothing scheduled")
            continue
        items = [f"{_clock(b['start_jd_utc'], tz)} {b['target']} {_what(b)}" for _, b in here.iterrows()]
        lines += _fill(f"{label}  {dark_text}  {len(here)} block{'s' if len(here) != 1 else ''}:", items,
                       indent=" " * (len(label) + 2))
    n = len(schedule)
    clock = f"local time ({tz})" if tz else "UTC"
    if n == 0:
        lines.append("Nothing could be scheduled in these nights; unscheduled.csv gives each request's reason.")
    else:
        lines.append(f"{count(n, 'block')}, {count(schedule['target'].nunique(), 'target')}, "
                     f"{count(len(nights), 'night')}; times in {clock}.")
    if report is not None and report.n_options:
        lines.append(f"Choice of blocks: {report.describe()}.")
    return "\n".join(_wrap(lines)) + "\n"


def _fill(head: str, items, indent: str, width: int = TEXT_WIDTH) -> list[str]:
    """``head`` and the ``items`` joined by ", " in lines of at most ``width`` characters, each
    item whole on one line (one longer than a line stands alone), continuation lines indented."""
    lines, line = [], head
    for k, item in enumerate(items):
        piece = item + ("," if k < len(items) - 1 else "")
        if len(line) + 1 + len(piece) > width and line.strip():
            lines.append(line)
            line = indent + piece
        else:
            line += " " + piece
    return lines + [line]
