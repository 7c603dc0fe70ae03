"""Observing site: a TOML file -> a validated, frozen :class:`Site`.

This is the only module that reads site files. :func:`read_site` takes a path, :func:`parse_site`
the text; both return a :class:`Site` or raise :class:`~planner.errors.InputErrors` listing every
bad key (file, key, value, what was expected). A longitude more than
:data:`ZONE_LONGITUDE_WARN_H` hours of local mean time away from the zone's standard UTC offset
(a wrong sign, most often) is accepted with a one-line :class:`~planner.errors.PeriplanWarning`.

Site file keys (TOML, top level; units in the names):

=============================  ===================================================================
``name``                       site name (required)
``latitude_deg``               geodetic latitude, north positive, -90..90 (required)
``longitude_deg``              longitude, **east positive**, -180..360 (required)
``elevation_m``                height above the WGS84 ellipsoid, metres (required)
``timezone``                   IANA zone name, e.g. ``Europe/Madrid`` (required)
``min_altitude_deg``           lowest usable airless altitude, -5..90 (default 30)
``max_airmass``                highest usable airmass (Young 1994 formula), >= 1 (default none)
``max_altitude_deg``           highest usable airless altitude, above min_altitude_deg and at most
                               90 (default none): the blind spot around the zenith of an alt-az
                               mount, whose azimuth cannot follow a target passing close to it
``horizon``                    local horizon: list of ``[azimuth_deg, altitude_deg]`` pairs,
                               azimuth from north through east; interpolated linearly in
                               azimuth, wrapping through north (default none: flat)
``min_hour_angle_h``,          hour-angle limits of the mount, hours, -12..12 (default none)
``max_hour_angle_h``
``min_declination_deg``,       declination limits of the mount (default none)
``max_declination_deg``
``darkness``                   ``"civil"`` (Sun centre -6 deg), ``"nautical"`` (-12),
                               ``"astronomical"`` (-18, the default) or a number: the Sun's
                               altitude in degrees, -90..0
``moon_min_separation_deg``    least Moon-target separation (default 10 deg, common practice)
``moon_separation_growth_deg`` extra separation at full Moon, scaled by the illuminated fraction:
                               needed = min + growth x illumination (default 0)
``sun_min_separation_deg``     least Sun-target separation (default 30 deg, common practice; a
                               safety margin, not a substitute for the observatory's own rules)
=============================  ===================================================================

Example::

    name = "Altozano Ridge Observatory"
    latitude_deg = 37.62
    longitude_deg = -3.12
    elevation_m = 1650
    timezone = "Europe/Madrid"
    horizon = [[0, 5], [90, 18], [180, 5]]
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import difflib
import math
import tomllib
import warnings

from ..errors import InputError, InputErrors, PeriplanWarning

#: Sun-centre altitude (degrees) that ends each kind of twilight (USNO, Almanac for Computers 1990:
#: zenith distances 96, 102 and 108 deg).
DARKNESS_SUN_ALT_DEG = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}

#: Default lowest altitude: 30 deg ~ airmass 2, the usual limit for photometry [common practice].
DEFAULT_MIN_ALTITUDE_DEG = 30.0
#: Default Moon and Sun separations [common practice; no single source].
DEFAULT_MOON_MIN_SEP_DEG = 10.0
DEFAULT_SUN_MIN_SEP_DEG = 30.0

MIN_ALTITUDE_RANGE_DEG = (-5.0, 90.0)

#: Largest difference (hours) between a zone's standard UTC offset and longitude / 15 deg per hour
#: accepted without a warning [common practice, no single source: zones follow borders, and
#: wide countries keep one zone, so 2-3 h occur; a longitude of the wrong sign is usually more].
ZONE_LONGITUDE_WARN_H = 3.0

REQUIRED_KEYS = ("name", "latitude_deg", "longitude_deg", "elevation_m", "timezone")
OPTIONAL_KEYS = (
    "min_altitude_deg", "max_airmass", "max_altitude_deg", "horizon", "min_hour_angle_h", "max_hour_angle_h",
    "min_declination_deg", "max_declination_deg", "darkness", "moon_min_separation_deg",
    "moon_separation_growth_deg", "sun_min_separation_deg", "notes",
)
KNOWN_KEYS = REQUIRED_KEYS + OPTIONAL_KEYS


@dataclasses.dataclass(frozen=True)
class Site:
    """An observing site and its limits; angles in degrees, hour angles in hours.

    ``horizon_az_deg`` / ``horizon_alt_deg`` are the horizon profile as given: increasing azimuth
    (north through east, 0 <= az < 360), possibly starting west of north and wrapping through it
    once; empty tuples mean a flat horizon. ``darkness_sun_alt_deg`` is
    the Sun-centre altitude below which the sky counts as dark. Optional limits are ``None``
    when the site sets none.
    """

    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float
    timezone: str
    min_altitude_deg: float = DEFAULT_MIN_ALTITUDE_DEG
    max_airmass: float | None = None
    max_altitude_deg: float | None = None
    horizon_az_deg: tuple = ()
    horizon_alt_deg: tuple = ()
    min_hour_angle_h: float | None = None
    max_hour_angle_h: float | None = None
    min_declination_deg: float | None = None
    max_declination_deg: float | None = None
    darkness_sun_alt_deg: float = DARKNESS_SUN_ALT_DEG["astronomical"]
    moon_min_sep_deg: float = DEFAULT_MOON_MIN_SEP_DEG
    moon_sep_growth_deg: float = 0.0
    sun_min_sep_deg: float = DEFAULT_SUN_MIN_SEP_DEG
    source: str = "<site>"

    def earth_location(self):
        """astropy ``EarthLocation`` of the site (geodetic, WGS84)."""
        import astropy.units as u
        from astropy.coordinates import EarthLocation

        return EarthLocation.from_geodetic(self.longitude_deg * u.deg, self.latitude_deg * u.deg,
                                           self.elevation_m * u.m)

    def horizon_limit_deg(self, az_deg):
        """Lowest usable altitude (deg) towards each azimuth: max(min_altitude, horizon profile).

        Same shape as ``az_deg``. The profile is interpolated linearly in azimuth and wraps from
        the last point through north to the first.
        """
        import numpy as np

        az = np.mod(np.asarray(az_deg, dtype=float), 360.0)
        limit = np.full(az.shape, self.min_altitude_deg)
        if self.horizon_az_deg:
            xp = np.asarray(self.horizon_az_deg, float)
            fp = np.asarray(self.horizon_alt_deg, float)
            profile = np.interp(az, xp, fp, period=360.0)
            limit = np.maximum(limit, profile)
        return limit

    def moon_min_sep_at_deg(self, illumination):
        """Needed Moon separation (deg) for an illuminated fraction 0..1 (same shape)."""
        import numpy as np

        return self.moon_min_sep_deg + self.moon_sep_growth_deg * np.asarray(illumination, float)


def read_site(path) -> Site:
    """Validated :class:`Site` from the TOML file at ``path``."""
    from .textfile import decode_text, read_bytes

    raw, source = read_bytes(path, "site")
    return parse_site(decode_text(raw, source, "a TOML site file"), source=source)


def _number(data, key, source, errors, default=None, lo=None, hi=None, expected=""):
    """Float value of ``key`` (or ``default`` when absent); appends an InputError when bad."""
    if key not in data:
        return default
    value = data[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        errors.append(InputError(f"{value!r} is not a number; expected {expected or 'a number'}",
                                 file=source, column=key, value=value))
        return default
    value = float(value)
    if (lo is not None and value < lo) or (hi is not None and value > hi):
        errors.append(InputError(f"{value:g} is out of range; expected {expected}", file=source,
                                 column=key, value=value))
        return default
    return value


def _horizon(value, source, errors):
    """(az tuple, alt tuple) from a list of [az, alt] pairs given in increasing azimuth."""
    bad = InputError(
        "malformed horizon profile; expected a list of [azimuth_deg, altitude_deg] pairs with "
        "0 <= azimuth < 360 (each azimuth once) and -5 <= altitude <= 90, e.g. [[0, 5], [90, 18]]",
        file=source, column="horizon", value=value)
    if not isinstance(value, list) or not value:
        errors.append(bad)
        return (), ()
    pairs = []
    for item in value:
        if (not isinstance(item, list) or len(item) != 2
                or any(isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v)
                       for v in item)):
            errors.append(bad)
            return (), ()
        az, alt = float(item[0]), float(item[1])
        if not (0.0 <= az < 360.0) or not (-5.0 <= alt <= 90.0):
            errors.append(dataclasses.replace(bad, message=f"horizon point [{item[0]}, {item[1]}] is out of "
                                              "range; " + bad.message.split("; ", 1)[1]))
            return (), ()
        pairs.append((az, alt))
    azs = [p[0] for p in pairs]
    if len(set(azs)) != len(azs):
        errors.append(dataclasses.replace(bad, message="horizon profile gives the same azimuth twice; "
                                          + bad.message.split("; ", 1)[1]))
        return (), ()
    # points go round once in increasing azimuth, possibly starting west of north ([350, 10, 90]);
    # anything else is refused rather than sorted: a swapped pair is the likely cause
    descents = [i for i in range(1, len(azs)) if azs[i] < azs[i - 1]]
    wraps_once = len(descents) == 1 and azs[-1] < azs[0]
    back = None if not descents or wraps_once else descents[-1 if len(descents) == 1 else 1]
    if back is not None:
        errors.append(dataclasses.replace(bad, message=(
            f"horizon point [{value[back][0]}, {value[back][1]}] comes after azimuth {value[back - 1][0]}; "
            "list the points in increasing azimuth from north through east, e.g. [[0, 5], [90, 18], [200, 6]]")))
        return (), ()
    return tuple(azs), tuple(p[1] for p in pairs)


def standard_offsets_h(tz: str, year: int | None = None) -> list[float]:
    """Standard-time UTC offsets (hours, east positive) of the IANA zone ``tz`` in ``year``.

    The offset less any daylight-saving shift, on 15 January and 15 July (default: this year);
    one value for most zones, two where the zone changed its standard time within the year.
    """
    from ..timescales.clock import zone

    tzinfo = zone(tz)
    year = year or dt.datetime.now(dt.timezone.utc).year
    offsets = []
    for month in (1, 7):
        local = dt.datetime(year, month, 15, 12, tzinfo=tzinfo)
        std = local.utcoffset() - (local.dst() or dt.timedelta(0))
        offsets.append(std.total_seconds() / 3600.0)
    return sorted(set(offsets))


def zone_longitude_gap_h(tz: str, longitude_deg: float, year: int | None = None) -> float:
    """Hours between the zone's standard UTC offset and local mean time (longitude / 15 deg per h).

    Taken round the clock (-157 deg with UTC+14 is 0.5 h, not 24.5 h) and the smaller one where
    the zone has two standard offsets in the year.
    """
    mean_time_h = longitude_deg / 15.0
    return min(abs((off - mean_time_h + 12.0) % 24.0 - 12.0) for off in standard_offsets_h(tz, year))


def _hh_mm(hours: float) -> str:
    minutes = round(abs(hours) * 60)
    return f"{'-' if hours < 0 else '+'}{minutes // 60:02d}:{minutes % 60:02d}"


def warn_zone_longitude(site: Site, year: int | None = None) -> None:
    """Warn (:class:`~planner.errors.PeriplanWarning`, one line) when the site's longitude and
    time zone are more than :data:`ZONE_LONGITUDE_WARN_H` apart, as a longitude of the wrong
    sign makes them (83 deg with America/New_York puts darkness at midday)."""
    gap_h = zone_longitude_gap_h(site.timezone, site.longitude_deg, year)
    if gap_h > ZONE_LONGITUDE_WARN_H:
        offsets = " or ".join(f"UTC{_hh_mm(h)}" for h in standard_offsets_h(site.timezone, year))
        warnings.warn(
            f"{site.source}, key longitude_deg: {site.longitude_deg:g} deg (east positive) is "
            f"{gap_h:.1f} h of local mean time away from {site.timezone} (standard time {offsets}); "
            "check the sign of the longitude (west is negative) and the time zone",
            PeriplanWarning, stacklevel=3)


def parse_site(text: str, source: str = "<site>") -> Site:
    """Validated :class:`Site` from TOML text; ``source`` names the file in messages."""
    from ..errors import PeriplanError
    from ..timescales.clock import zone

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputErrors([InputError(f"not valid TOML: {exc}", file=source)]) from None
    errors: list[InputError] = []
    for key in data:
        if key not in KNOWN_KEYS:
            close = difflib.get_close_matches(key, KNOWN_KEYS, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; known keys: {', '.join(KNOWN_KEYS)}"
            errors.append(InputError(f"unknown key{hint}", file=source, column=key))
    for key in REQUIRED_KEYS:
        if key not in data:
            errors.append(InputError("missing required key", file=source, column=key))

    name = data.get("name")
    if "name" in data and (not isinstance(name, str) or not name.strip()):
        errors.append(InputError(f"{name!r} is not a name; expected a non-empty string", file=source,
                                 column="name", value=name))
    lat = _number(data, "latitude_deg", source, errors, lo=-90, hi=90,
                  expected="a latitude in degrees, -90 <= latitude_deg <= 90 (north positive)")
    lon = _number(data, "longitude_deg", source, errors, lo=-180, hi=360,
                  expected="a longitude in degrees, east positive, -180..360")
    if lon is not None and lon > 180:
        lon -= 360.0
    elev = _number(data, "elevation_m", source, errors, lo=-500, hi=10000,
                   expected="metres above the ellipsoid, -500..10000")
    tz = data.get("timezone")
    if "timezone" in data:
        if not isinstance(tz, str):
            errors.append(InputError(f"{tz!r} is not a time-zone name; expected an IANA name such as "
                                     "Europe/Madrid", file=source, column="timezone", value=tz))
        else:
            try:
                zone(tz)
            except PeriplanError as exc:
                errors.append(InputError(str(exc), file=source, column="timezone", value=tz))

    kw = {}
    kw["min_altitude_deg"] = _number(data, "min_altitude_deg", source, errors, DEFAULT_MIN_ALTITUDE_DEG,
                                     *MIN_ALTITUDE_RANGE_DEG, expected="degrees, -5 <= min_altitude_deg <= 90")
    kw["max_airmass"] = _number(data, "max_airmass", source, errors, None, 1.0, 38.0,
                                expected="an airmass, 1 <= max_airmass <= 38")
    kw["max_altitude_deg"] = _number(data, "max_altitude_deg", source, errors, None, -5, 90,
                                     expected="degrees, min_altitude_deg < max_altitude_deg <= 90")
    if kw["max_altitude_deg"] is not None and kw["max_altitude_deg"] <= kw["min_altitude_deg"]:
        errors.append(InputError(f"{kw['max_altitude_deg']:g} is not above min_altitude_deg = "
                                 f"{kw['min_altitude_deg']:g}; nothing could be observed", file=source,
                                 column="max_altitude_deg", value=kw["max_altitude_deg"]))
    if "horizon" in data:
        kw["horizon_az_deg"], kw["horizon_alt_deg"] = _horizon(data["horizon"], source, errors)
    for key in ("min_hour_angle_h", "max_hour_angle_h"):
        kw[key] = _number(data, key, source, errors, None, -12, 12, expected="hours, -12..12")
    for key in ("min_declination_deg", "max_declination_deg"):
        kw[key] = _number(data, key, source, errors, None, -90, 90, expected="degrees, -90..90")
    for lo_key, hi_key in (("min_hour_angle_h", "max_hour_angle_h"), ("min_declination_deg", "max_declination_deg")):
        if kw[lo_key] is not None and kw[hi_key] is not None and kw[lo_key] >= kw[hi_key]:
            errors.append(InputError(f"{kw[lo_key]:g} is not below {hi_key} = {kw[hi_key]:g}; the lower "
                                     "limit must be smaller", file=source, column=lo_key, value=kw[lo_key]))

    darkness = data.get("darkness", "astronomical")
    if isinstance(darkness, str) and darkness.lower() in DARKNESS_SUN_ALT_DEG:
        kw["darkness_sun_alt_deg"] = DARKNESS_SUN_ALT_DEG[darkness.lower()]
    elif isinstance(darkness, (int, float)) and not isinstance(darkness, bool):
        kw["darkness_sun_alt_deg"] = _number(data, "darkness", source, errors,
                                             DARKNESS_SUN_ALT_DEG["astronomical"], -90, 0,
                                             expected="a Sun altitude in degrees, -90..0")
    else:
        errors.append(InputError(f"{darkness!r} is not a darkness; expected civil, nautical, "
                                 "astronomical or a Sun altitude in degrees (e.g. -15)",
                                 file=source, column="darkness", value=darkness))
    kw["moon_min_sep_deg"] = _number(data, "moon_min_separation_deg", source, errors, DEFAULT_MOON_MIN_SEP_DEG,
                                     0, 180, expected="degrees, 0..180")
    kw["moon_sep_growth_deg"] = _number(data, "moon_separation_growth_deg", source, errors, 0.0, 0, 180,
                                        expected="degrees, 0..180")
    kw["sun_min_sep_deg"] = _number(data, "sun_min_separation_deg", source, errors, DEFAULT_SUN_MIN_SEP_DEG,
                                    0, 180, expected="degrees, 0..180")
    if errors:
        order = {k: i for i, k in enumerate(KNOWN_KEYS)}
        errors.sort(key=lambda err: order.get(err.column, -1))
        raise InputErrors(errors)
    site = Site(name=name.strip(), latitude_deg=lat, longitude_deg=lon, elevation_m=elev, timezone=tz,
                source=source, **kw)
    warn_zone_longitude(site)
    return site
