"""plan.ics: parsed back with the icalendar library and checked against RFC 5545.

References: RFC 5545 (Desruisseaux, ed., "Internet Calendaring and Scheduling Core Object
Specification (iCalendar)", IETF 2009): sec. 3.1 (lines end in CRLF and are folded at 75
octets), sec. 3.3.5 (a UTC date-time is written with a trailing "Z"), sec. 3.6.1 (every VEVENT
has UID and DTSTAMP), sec. 3.7.3/3.7.4 (the VCALENDAR has PRODID and VERSION 2.0); astropy Time
for the Julian date -> calendar date conversion.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest

from planner.outputs import ical
from planner.scheduling import schedule

#: The file carries whole seconds (RFC 5545 DATE-TIME has no fraction); rounding is at most 0.5 s.
ROUNDING_TOL_S = 0.5
STAMP = dt.datetime(2026, 12, 6, 18, 0, 0, tzinfo=dt.timezone.utc)


def make_schedule():
    """Three blocks (two fixed, one flexible) of a hand-made plan; only the writer is under test."""
    j = 2461382.0  # 2026-12-07 12:00 UTC
    rows = []
    for night, (s, e, target, event, kind, ev) in enumerate([
            (0.31, 0.42, "Varda <b>", "periastron", "fixed", 0.37),
            (0.45, 0.52, "Corrie, 2", "primary_conjunction", "fixed", 0.485),
            (1.30, 1.3417, "Lantisca-4", "visit", "flexible", np.nan)]):
        row = {c: np.nan for c in schedule.SCHEDULE_COLUMNS}
        row.update(night="2026-12-07" if s < 1 else "2026-12-08", start_jd_utc=j + s, end_jd_utc=j + e,
                   target=target, target_index=night, event=event, label=event if kind == "fixed" else "flexible visit",
                   kind=kind, event_jd_utc=j + ev, event_sigma_d=4.0 / 1440 if kind == "fixed" else np.nan,
                   score=80.0 + night, x_priority=2.0, x_rarity=2.0, pts_coverage=20.0, pts_airmass=0.0,
                   pts_moon=0.0, pts_timing=0.0 + night, notes="partial: 80% of the event window is observable")
        rows.append(row)
    return pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]


def _utc(jd):
    from astropy.time import Time

    return Time(jd, format="jd", scale="utc").to_datetime(timezone=dt.timezone.utc)


def test_written_file_parses_back_with_one_event_per_block(tmp_path):
    from icalendar import Calendar

    plan = make_schedule()
    path = ical.write_ics(tmp_path / "plan.ics", plan, dtstamp_utc=STAMP, site_name="Test site")
    raw = path.read_bytes()
    cal = Calendar.from_ical(raw)
    events = list(cal.walk("VEVENT"))
    assert len(events) == len(plan)
    assert str(cal["VERSION"]) == "2.0" and str(cal["PRODID"]) == ical.PRODID
    for ev, (_, b) in zip(events, plan.iterrows()):
        start, end = ev.decoded("DTSTART"), ev.decoded("DTEND")
        assert start.utcoffset() == dt.timedelta(0) and end.utcoffset() == dt.timedelta(0)
        assert abs((start - _utc(b["start_jd_utc"])).total_seconds()) <= ROUNDING_TOL_S
        assert abs((end - _utc(b["end_jd_utc"])).total_seconds()) <= ROUNDING_TOL_S
        assert "UID" in ev and "DTSTAMP" in ev
        assert ev.decoded("DTSTAMP") == STAMP
        summary = str(ev["SUMMARY"])
        assert summary.startswith(b["target"])
        desc = str(ev["DESCRIPTION"])
        assert f"Target: {b['target']}" in desc
        assert "Never point the telescope at or near the Sun" in desc
        if b["kind"] == "fixed":
            when = _utc(b["event_jd_utc"])
            when = (when + dt.timedelta(microseconds=500_000)).replace(microsecond=0)
            assert when.strftime("%Y-%m-%dT%H:%M:%SZ") in desc
            assert "+- 4.0 min (1 sigma)" in desc
            assert summary == f"{b['target']}: {b['event'].replace('_', ' ')}"
        assert f"Score: {b['score']:.1f}" in desc


def test_file_follows_rfc5545_line_rules(tmp_path):
    path = ical.write_ics(tmp_path / "plan.ics", make_schedule(), dtstamp_utc=STAMP)
    raw = path.read_bytes()
    assert raw.startswith(b"BEGIN:VCALENDAR\r\n") and raw.endswith(b"END:VCALENDAR\r\n")
    lines = raw.split(b"\r\n")[:-1]
    assert all(b"\n" not in ln for ln in lines)  # every line ends in CRLF
    assert all(len(ln) <= 75 for ln in lines)  # folded at 75 octets
    starts = [ln for ln in lines if ln.startswith(b"DTSTART")]
    assert len(starts) == 3 and all(ln.endswith(b"Z") for ln in starts)  # UTC form, sec. 3.3.5


def test_uids_are_unique_and_stable_across_runs():
    from icalendar import Calendar

    a = Calendar.from_ical(ical.plan_calendar(make_schedule(), STAMP).to_ical())
    b = Calendar.from_ical(ical.plan_calendar(make_schedule(), STAMP + dt.timedelta(days=1)).to_ical())
    ua = [str(e["UID"]) for e in a.walk("VEVENT")]
    ub = [str(e["UID"]) for e in b.walk("VEVENT")]
    assert ua == ub and len(set(ua)) == len(ua)


def test_empty_plan_gives_a_valid_calendar_without_events(tmp_path):
    from icalendar import Calendar

    empty = make_schedule().iloc[:0]
    cal = Calendar.from_ical(ical.write_ics(tmp_path / "plan.ics", empty, STAMP).read_bytes())
    assert list(cal.walk("VEVENT")) == []


def test_failure_leaves_the_previous_file_untouched(tmp_path):
    path = tmp_path / "plan.ics"
    path.write_bytes(b"previous")
    broken = make_schedule().drop(columns="start_jd_utc")
    with pytest.raises(KeyError):
        ical.write_ics(path, broken, STAMP)
    assert path.read_bytes() == b"previous"
    assert [p.name for p in tmp_path.iterdir()] == ["plan.ics"]


def test_naive_dtstamp_is_refused():
    from planner.errors import TimeScaleError

    with pytest.raises(TimeScaleError, match="2026-12-06T18:00:00 has no time zone; give an aware datetime"):
        ical.plan_calendar(make_schedule(), dt.datetime(2026, 12, 6, 18, 0))
