"""Time spans asked for on the command line: ``--start`` dates -> UTC instants -> BJD_TDB bounds."""

from __future__ import annotations

import datetime as dt

from ..errors import PeriplanError
from ..timescales.clock import calendar_date, zone
from ..timescales.epochs import bjd_bounds

__all__ = ["bjd_bounds", "parse_date", "span_utc"]


def parse_date(text: str, option: str = "--start") -> dt.date:
    """Calendar date from ``YYYY-MM-DD``; a PeriplanError naming ``option`` otherwise."""
    try:
        return calendar_date(text)
    except PeriplanError as exc:
        raise PeriplanError(f"{option} {exc}") from None


def now() -> dt.datetime:
    """The present moment (aware, UTC): the commands' one clock, so tests can set it."""
    return dt.datetime.now(dt.timezone.utc)


def today(tz: str | None = None) -> str:
    """Today's date (``YYYY-MM-DD``) in the IANA zone ``tz``, or in UTC."""
    return now().astimezone(zone(tz) if tz else dt.timezone.utc).date().isoformat()


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
