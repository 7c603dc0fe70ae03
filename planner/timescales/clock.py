"""Calendar dates, time zones and clock strings: the one home of every date and zone conversion.

UTC Julian dates (``*_jd_utc``, astropy's quasi-JD for UTC) <-> calendar dates, aware datetimes
and ISO 8601 strings; IANA zones through zoneinfo (tzdata). Strings follow the Unix-time
convention for leap seconds (a moment inside 23:59:60 shows as the next second).
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from ..errors import TimeScaleError

#: Julian date of 1970-01-01 00:00 UTC (the Unix epoch).
UNIX_EPOCH_JD = 2440587.5
#: Julian date of 00:00 UTC on the date whose proleptic Gregorian ordinal is 0
#: (``date.toordinal()`` counts 0001-01-01 as 1), derived from the Unix epoch.
_ORDINAL_EPOCH_JD = UNIX_EPOCH_JD - dt.date(1970, 1, 1).toordinal()
SECONDS_PER_DAY = 86400.0


def zone(name: str):
    """zoneinfo ZoneInfo for an IANA name, or a TimeScaleError naming the bad zone."""
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        import difflib
        from zoneinfo import available_timezones

        close = difflib.get_close_matches(str(name), sorted(available_timezones()), n=1, cutoff=0.8)
        hint = f" (is {close[0]!r} meant?)" if close else ""
        raise TimeScaleError(f"unknown time zone {name!r}{hint}; expected an IANA name such as Europe/Madrid "
                             "or America/Santiago") from None


def calendar_date(value) -> dt.date:
    """A ``datetime.date`` from a date or a ``YYYY-MM-DD`` string; a TimeScaleError otherwise."""
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    try:
        return dt.date.fromisoformat(str(value))
    except (TypeError, ValueError):
        raise TimeScaleError(f"{value!r} is not a date; expected YYYY-MM-DD, e.g. 2026-12-07") from None


def date_to_jd_utc(day) -> float:
    """UTC Julian date of 00:00 UTC on the calendar date ``day`` (a date or ``YYYY-MM-DD``)."""
    return calendar_date(day).toordinal() + _ORDINAL_EPOCH_JD


def datetime_to_jd_utc(when: dt.datetime) -> float:
    """UTC Julian date of an aware datetime (a naive one is refused: its zone would be a guess)."""
    if when.tzinfo is None:
        raise TimeScaleError(f"naive datetime {when.isoformat()} has no time zone; give one, e.g. "
                             "tzinfo=zoneinfo.ZoneInfo('UTC') or the site's zone")
    return when.timestamp() / SECONDS_PER_DAY + UNIX_EPOCH_JD


def jd_utc_to_datetime(jd_utc: float) -> dt.datetime:
    """Aware UTC datetime, rounded to the nearest second, of a UTC Julian date."""
    from astropy.time import Time

    if not np.isfinite(jd_utc):
        raise TimeScaleError(f"{jd_utc!r} is not a finite Julian date; expected a UTC Julian date such as 2461381.5")
    seconds = _utc_seconds(Time(float(jd_utc), format="jd", scale="utc"))[0]
    return dt.datetime.fromtimestamp(int(seconds.astype(np.int64)), tz=dt.timezone.utc)


def utc_offset_h(tz: str | None, jd_utc: float) -> float:
    """Offset (hours) of the IANA zone ``tz`` from UTC at the moment ``jd_utc``; 0 without a zone."""
    if not tz or not np.isfinite(jd_utc):
        return 0.0
    moment = dt.datetime.fromtimestamp((float(jd_utc) - UNIX_EPOCH_JD) * SECONDS_PER_DAY, tz=dt.timezone.utc)
    return moment.astimezone(zone(tz)).utcoffset().total_seconds() / 3600.0


def local_clock_h(jd_utc, tz: str | None, day) -> np.ndarray:
    """Local wall-clock hours of each UTC Julian date, counted from 00:00 of the local date ``day``.

    The zone's rules are applied at each instant (so after a daylight-saving change the hours
    are the clock's new ones): 01:30 on the day after ``day`` is 25.5. Without ``tz`` the
    hours are UTC hours from 00:00 UTC of ``day``. NaN stays NaN; shape of ``jd_utc``.
    """
    jd = np.asarray(jd_utc, dtype=float)
    base = calendar_date(day)
    if not tz:
        return (jd - date_to_jd_utc(base)) * 24.0
    where = zone(tz)
    out = np.full(jd.shape, np.nan)
    for i, v in np.ndenumerate(jd):
        if np.isfinite(v):
            # to the millisecond: a JD float carries ~40 us, and a tick placed exactly on a clock
            # change must not fall a few microseconds on the other side of it
            seconds = round((v - UNIX_EPOCH_JD) * SECONDS_PER_DAY, 3)
            local = dt.datetime.fromtimestamp(seconds, tz=dt.timezone.utc)
            local = local.astimezone(where)
            since = local.replace(tzinfo=None) - dt.datetime.combine(base, dt.time())
            out[i] = since.total_seconds() / 3600.0
    return out


def zone_abbreviation(tz: str, jd_utc: float) -> str:
    """The zone's abbreviation in force at ``jd_utc`` (``CEST``, ``CET``; ``-03`` where the rules have none)."""
    seconds = round((float(jd_utc) - UNIX_EPOCH_JD) * SECONDS_PER_DAY, 3)
    return dt.datetime.fromtimestamp(seconds, tz=dt.timezone.utc).astimezone(zone(tz)).tzname() or ""


#: Every zone offset in use is a whole number of quarter hours from UTC.
_QUARTER_HOURS_PER_DAY = 96


def local_whole_hours(jd0_utc: float, jd1_utc: float, tz: str | None, step_h: int = 1):
    """(jd_utc, hour) of the instants from ``jd0_utc`` to ``jd1_utc`` where the local clock shows a whole hour.

    Only hours divisible by ``step_h`` are kept. The zone's rules are applied at each instant, so
    a night across a daylight-saving change gets its ticks where the clock really reads them
    (01:00 twice when the clocks go back, no 02:00 when they go forward). Without ``tz``: UTC.
    Returns a float array of UTC Julian dates and a list of ints (0..23).
    """
    first = np.ceil(jd0_utc * _QUARTER_HOURS_PER_DAY)
    last = np.floor(jd1_utc * _QUARTER_HOURS_PER_DAY)
    where = zone(tz) if tz else dt.timezone.utc
    jds, hours = [], []
    for k in np.arange(first, last + 1):
        seconds = round((k / _QUARTER_HOURS_PER_DAY - UNIX_EPOCH_JD) * SECONDS_PER_DAY)
        local = dt.datetime.fromtimestamp(seconds, tz=dt.timezone.utc).astimezone(where)
        if local.minute == 0 and local.second == 0 and local.hour % step_h == 0:
            jds.append(k / _QUARTER_HOURS_PER_DAY)
            hours.append(local.hour)
    return np.asarray(jds, dtype=float), hours


def jd_utc_to_iso_z(jd_utc) -> np.ndarray:
    """ISO 8601 UTC strings (``...Z``, to the second) of UTC Julian dates; ``""`` where NaN."""
    return _jd_strings(jd_utc, None)


def jd_utc_to_local_iso(jd_utc, tz: str) -> np.ndarray:
    """Local ISO 8601 strings (``...+HH:MM``) in the IANA zone ``tz`` of UTC Julian dates; ``""`` where NaN."""
    return _jd_strings(jd_utc, tz)


def _jd_strings(jd_utc, tz):
    from astropy.time import Time

    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    out = np.full(jd.shape, "", dtype=object)
    ok = np.isfinite(jd)
    if ok.any():
        t = Time(jd[ok], format="jd", scale="utc")
        out[ok] = utc_to_local_iso(t, tz) if tz else utc_to_iso_z(t)
    return out


def hhmm(jd_utc, tz=None) -> list[str]:
    """``HH:MM`` of each UTC Julian date on the clock of the IANA zone ``tz`` (UTC without one),
    rounded to the second first, in one conversion; ``""`` where NaN."""
    jd = np.atleast_1d(np.asarray(jd_utc, dtype=float))
    if not jd.size:
        return []
    text = jd_utc_to_local_iso(jd, tz) if tz else jd_utc_to_iso_z(jd)
    return [str(x)[11:16] for x in text]


def local_and_utc(*jd_utc, tz=None) -> str:
    """The moments as the sheets give them: ``HH:MM local (HH:MM UTC)`` in the zone ``tz``, or
    ``HH:MM UTC`` without one; several moments as a range (``06:28 to 06:55 local (05:28-05:55 UTC)``)."""
    utc = hhmm(jd_utc)
    if not tz:
        return " to ".join(utc) + " UTC"
    return f"{' to '.join(hhmm(jd_utc, tz))} local ({'-'.join(utc)} UTC)"


def _utc_seconds(t_utc) -> np.ndarray:
    """datetime64[s] of astropy UTC times, rounded to the nearest second.

    Calendar fields come from ERFA's d2dtf, which knows the leap seconds (astropy's ``unix``
    spreads a leap second over its day and is up to 1 s off there); a time rounded into a leap
    second (23:59:60) becomes the next day's 00:00:00, as in Unix time.
    """
    import erfa

    jd1 = np.atleast_1d(np.asarray(t_utc.jd1, dtype=float))
    jd2 = np.atleast_1d(np.asarray(t_utc.jd2, dtype=float))
    iy, im, iday, ihmsf = erfa.d2dtf("UTC", 0, jd1, jd2)
    mjd0, mjd = erfa.cal2jd(iy, im, iday)
    unix_day = np.round(mjd0 + mjd - UNIX_EPOCH_JD).astype(np.int64)  # days since 1970-01-01
    secs = unix_day * 86400 + ihmsf["h"].astype(np.int64) * 3600 + ihmsf["m"] * 60 + ihmsf["s"]
    return secs.astype("datetime64[s]")


def _iso_strings(clock, offset_min=None) -> np.ndarray:
    """``YYYY-MM-DDTHH:MM:SS`` plus ``Z`` (no offset) or ``+HH:MM``, built digit by digit.

    ``clock`` is datetime64[s] (years 0-9999), ``offset_min`` the UTC offset in minutes per
    element. Writing the digits into a byte array is some ten times faster than numpy's string
    functions for the millions of events a year of a large catalogue has.
    """
    days = clock.astype("datetime64[D]")
    months = days.astype("datetime64[M]")
    year = months.astype("datetime64[Y]").astype(np.int64) + 1970
    month = months.astype(np.int64) % 12 + 1
    day = (days - months).astype(np.int64) + 1
    sec = (clock - days).astype(np.int64)
    width = 20 if offset_min is None else 25
    out = np.empty((clock.size, width), dtype=np.uint8)

    def put(col, value, digits):
        for k in range(digits):
            out[:, col + digits - 1 - k] = 48 + (value // 10**k) % 10

    put(0, year, 4)
    put(5, month, 2)
    put(8, day, 2)
    put(11, sec // 3600, 2)
    put(14, sec // 60 % 60, 2)
    put(17, sec % 60, 2)
    out[:, [4, 7]] = ord("-")
    out[:, 10] = ord("T")
    out[:, [13, 16]] = ord(":")
    if offset_min is None:
        out[:, 19] = ord("Z")
    else:
        offset_min = np.asarray(offset_min, dtype=np.int64)
        out[:, 19] = np.where(offset_min < 0, ord("-"), ord("+"))
        put(20, np.abs(offset_min) // 60, 2)
        out[:, 22] = ord(":")
        put(23, np.abs(offset_min) % 60, 2)
    return out.view(f"S{width}").ravel().astype(str).astype(object)


def utc_to_iso_z(t_utc) -> np.ndarray:
    """ISO 8601 strings ``YYYY-MM-DDTHH:MM:SSZ`` (rounded to the second) for astropy UTC times.

    Strings follow the Unix-time convention: a moment inside a leap second (23:59:60) is shown as
    the start of the following second.
    """
    return _iso_strings(_utc_seconds(t_utc))


def utc_to_local_iso(t_utc, tz: str) -> np.ndarray:
    """Local clock times ``YYYY-MM-DDTHH:MM:SS+HH:MM`` in the IANA zone ``tz`` (zoneinfo rules)."""
    import pandas as pd

    zone(tz)  # a TimeScaleError for an unknown zone
    utc = _utc_seconds(t_utc)
    local = pd.DatetimeIndex(utc).tz_localize("UTC").tz_convert(tz).tz_localize(None).to_numpy().astype("datetime64[s]")
    return _iso_strings(local, (local - utc).astype(np.int64) // 60)
