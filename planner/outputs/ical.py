"""The plan as an iCalendar file (RFC 5545): one VEVENT per scheduled block, times in UTC.

:func:`plan_calendar` builds the calendar with the icalendar library (no hand-written text);
:func:`write_ics` writes it atomically through :func:`planner.output.atomic_write`. Each event's
UID is derived from the block (night, target, event, start minute), so re-running the same plan
gives the same UIDs and a calendar application updates the events instead of duplicating them.
"""

from __future__ import annotations

import datetime as dt
import hashlib

import numpy as np
import pandas as pd

from ..errors import TimeScaleError
from ..scheduling.log_requests import new_parts_share
from ..timescales import clock
from . import explain
from .atomic import atomic_write
from .wording import CAUTION_SHORT

PRODID = "-//periplan//observing plan//EN"
UID_DOMAIN = "periplan.invalid"


def block_uid(night: str, target: str, event: str, start_jd_utc: float) -> str:
    """Stable UID of one block: a hash of night, target, event and start minute, ``@periplan.invalid``."""
    minute = int(round(float(start_jd_utc) * 1440.0))
    digest = hashlib.sha256(f"{night}|{target}|{event}|{minute}".encode()).hexdigest()[:24]
    return f"{digest}@{UID_DOMAIN}"


def _description(b: pd.Series) -> str:
    lines = [f"Target: {b['target']}"]
    if b["kind"] == "flexible":
        lines.append("Event: flexible visit (any time inside the block)")
    else:
        what = (b["label"] if isinstance(b.get("label"), str) and b["label"] else b["event"]).replace("_", " ")
        ev = b["event_jd_utc"]
        when = clock.jd_utc_to_datetime(ev).strftime("%Y-%m-%dT%H:%M:%SZ") if np.isfinite(ev) else "unknown"
        unc = explain.sigma_text(b["event_sigma_d"])
        unc = f" {unc}" if unc.startswith("+-") else (f" ({unc})" if unc else "")
        lines.append(f"Event: {what} at {when}{unc}")
        request = b.get("request")
        if isinstance(request, str) and request:
            serves = str(b.get("serves", "") or "").replace("_", " ").replace(";", " and ")
            lines.append(f"Request: {request.replace('_', ' ')} (serves {serves})")
        covers = b.get("covers")
        if isinstance(covers, str) and covers:
            missing = b.get("not_covered")
            lines.append(f"Covers: {covers}" + (f"; not covered: {missing}" if isinstance(missing, str) and missing else ""))
    parts, total = explain.block_points(b)  # printed parts add up to the printed total
    pts = " + ".join(f"{c[4:]} {v:.1f}" for c, v in parts.items())
    logged = b.get("logged_parts") if b.get("request") == "series" else None
    new = (f"x new parts {new_parts_share(b.get('covers', ''), logged):.2f} ({logged} logged already) "
           if isinstance(logged, str) and logged else "")
    lines.append(f"Score: {b['score']:.1f} = priority {b['x_priority']:g} x rarity {b['x_rarity']:.2f} "
                 f"{new}x conditions {total:.1f} points ({pts})")
    if isinstance(b.get("notes"), str) and b["notes"]:
        lines.append(f"Notes: {b['notes']}")
    lines.append(CAUTION_SHORT)
    return "\n".join(lines)


def plan_calendar(schedule: pd.DataFrame, dtstamp_utc: dt.datetime | None = None, site_name: str | None = None):
    """icalendar ``Calendar`` with one VEVENT per row of the schedule table (:mod:`planner.schedule`).

    DTSTART/DTEND are the block's start and end in UTC (written with a trailing ``Z``, RFC 5545
    sec. 3.3.5 form 2), SUMMARY is ``target: event`` (underscores of event names as spaces),
    DESCRIPTION holds target, event, its UTC time and 1-sigma uncertainty, the score and its
    points, the notes and the Sun caution; LOCATION is the block's ``site`` (several sites) or
    ``site_name``. ``dtstamp_utc`` (aware datetime) is written as every
    event's DTSTAMP; default: now (pass a fixed value for byte-identical reruns).
    """
    from icalendar import Calendar, Event

    stamp = dtstamp_utc or dt.datetime.now(dt.timezone.utc).replace(microsecond=0)
    if stamp.tzinfo is None:
        raise TimeScaleError(f"dtstamp_utc {stamp.isoformat()} has no time zone; give an aware datetime, "
                             "e.g. datetime(..., tzinfo=datetime.timezone.utc)")
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", f"periplan observing plan{' - ' + site_name if site_name else ''}")
    for _, b in schedule.iterrows():
        ev = Event()
        ev.add("uid", block_uid(b["night"], b["target"], b["event"], b["start_jd_utc"]))
        ev.add("dtstamp", stamp.astimezone(dt.timezone.utc))
        ev.add("dtstart", clock.jd_utc_to_datetime(b["start_jd_utc"]))
        ev.add("dtend", clock.jd_utc_to_datetime(b["end_jd_utc"]))
        label = b["label"] if isinstance(b["label"], str) and b["label"] else b["event"]
        what = "flexible visit" if b["kind"] == "flexible" else label.replace("_", " ")
        ev.add("summary", f"{b['target']}: {what}")
        ev.add("description", _description(b))
        where = b["site"] if isinstance(b.get("site"), str) and b.get("site") else site_name
        if where:
            ev.add("location", where)
        cal.add_component(ev)
    return cal


def write_ics(path, schedule: pd.DataFrame, dtstamp_utc: dt.datetime | None = None, site_name: str | None = None):
    """Write :func:`plan_calendar` to ``path`` atomically (nothing is left half-written); returns ``path``."""
    data = plan_calendar(schedule, dtstamp_utc, site_name).to_ical()
    with atomic_write(path, "wb") as fh:
        fh.write(data)
    return path
