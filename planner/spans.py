"""Time spans asked for on the command line: calendar dates -> UTC instants -> BJD_TDB bounds."""

from __future__ import annotations

import datetime as dt

from .errors import PeriplanError

#: Margin (days) added either side when a UTC span is turned into BJD_TDB bounds: more than the
#: largest light-travel time (8.4 min) plus TDB - UTC (70 s), so no event seen inside the span
#: is missed; events are then filtered on their UTC time.
BJD_MARGIN_D = 0.02


def parse_date(text: str) -> dt.date:
    """Calendar date from ``YYYY-MM-DD``; a PeriplanError saying what was expected otherwise."""
    try:
        return dt.date.fromisoformat(text)
    except (TypeError, ValueError):
        raise PeriplanError(f"--start {text!r} is not a date; expected YYYY-MM-DD, e.g. 2026-12-07") from None


def zone(name: str):
    """zoneinfo ZoneInfo for an IANA name, or a PeriplanError naming the bad zone."""
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        raise PeriplanError(f"unknown time zone {name!r}; expected an IANA name such as Europe/Madrid "
                            "or America/Santiago") from None


def span_utc(start: str, days: float, tz: str | None = None):
    """(start, end) astropy Times (UTC) of a span starting at 00:00 of ``start``.

    Midnight is UTC, or local midnight in the IANA zone ``tz`` when given.
    """
    import astropy.units as u
    from astropy.time import Time

    day = parse_date(start)
    tzinfo = zone(tz) if tz else dt.timezone.utc
    t0 = dt.datetime(day.year, day.month, day.day, tzinfo=tzinfo).astimezone(dt.timezone.utc)
    start_t = Time(t0.replace(tzinfo=None), scale="utc")
    return start_t, start_t + days * u.day


def bjd_bounds(start_utc, end_utc):
    """BJD_TDB (start, end) that contain every event seen from the Earth in the UTC span."""
    return start_utc.tdb.jd - BJD_MARGIN_D, end_utc.tdb.jd + BJD_MARGIN_D
