"""Which of the site's limits stops a target at given moments, for explaining what was not planned.

:func:`limiting_constraint` names, per (target, time), the first limit that fails, in the order
an observer checks them: the Sun (no darkness), declination, altitude (minimum altitude or the
airmass limit), the maximum altitude, the horizon profile, hour angle, the Moon, the Sun's distance. The limits are the
ones :mod:`planner.sky.windows` folds into its margin (same site fields, same formulas), so a
moment is observable exactly when the code is ``""``.
"""

from __future__ import annotations

import numpy as np

from .. import numerics
from . import positions
from .windows import altitude_limit_deg

#: Reason codes and their words, in the order limits are checked.
REASONS = {
    "no_darkness": "in daylight or twilight (the Sun above the site's darkness limit)",
    "declination": "outside the mount's declination limits",
    "altitude": "below the minimum altitude (or above the airmass limit)",
    "zenith": "above the mount's maximum altitude (its blind spot around the zenith)",
    "horizon": "behind the site's horizon profile",
    "hour_angle": "outside the mount's hour-angle limits",
    "moon": "too close to the Moon",
    "sun": "too close to the Sun",
}


def limiting_constraint(targets, site, target_index, jd_utc, tracks) -> np.ndarray:
    """Reason code (object array, the broadcast shape) of the first failing limit; ``""`` if none.

    ``target_index`` (rows of ``targets``) and ``jd_utc`` (UTC Julian dates inside ``tracks``, a
    :class:`~planner.sky.positions.SkyTracks` of the site) broadcast together.
    """
    codes = limit_codes(targets, site, target_index, jd_utc, tracks)
    return np.asarray(tuple(REASONS) + ("",), dtype=object)[codes]


def limit_codes(targets, site, target_index, jd_utc, tracks) -> np.ndarray:
    """:func:`limiting_constraint` as integers: the position of the code in :data:`REASONS`, -1
    where no limit fails (an int8 array, the broadcast shape)."""
    ti, jd = np.broadcast_arrays(np.asarray(target_index, dtype=int), np.asarray(jd_utc, dtype=float))
    shape = ti.shape
    ti, jd = ti.ravel(), jd.ravel()
    out = np.full(ti.shape, -1, dtype=np.int8)
    if ti.size == 0:
        return out.reshape(shape)
    dec = targets["dec_deg"].to_numpy(float)[ti]
    era = tracks.era_rad(jd)
    sun_v = tracks.sun_vector(jd, era)
    sun_alt = tracks.vector_altaz_deg(sun_v, era)[0]
    # one apparent place per target and day, however many of its moments are asked for (the
    # same values as each moment its own place, to the bit: positions.altaz_of)
    pos, cirs = positions.altaz_of(targets["ra_deg"].to_numpy(float), targets["dec_deg"].to_numpy(float), ti, jd,
                                   site.latitude_deg, site.longitude_deg, with_places=True)
    place = numerics.unit_vectors(*cirs)
    moon_sep = positions.separation_deg(place, tracks.moon_vector(jd, era))
    sun_sep = positions.separation_deg(place, sun_v)
    alt_floor = np.full(ti.shape, float(site.min_altitude_deg))
    if site.max_airmass is not None:
        alt_floor = np.maximum(alt_floor, positions.altitude_for_airmass_deg(site.max_airmass))
    dec_bad = np.zeros(ti.shape, bool)
    if site.min_declination_deg is not None:
        dec_bad |= dec < site.min_declination_deg
    if site.max_declination_deg is not None:
        dec_bad |= dec > site.max_declination_deg
    ha_bad = np.zeros(ti.shape, bool)
    if site.min_hour_angle_h is not None:
        ha_bad |= pos.ha_h <= site.min_hour_angle_h
    if site.max_hour_angle_h is not None:
        ha_bad |= pos.ha_h >= site.max_hour_angle_h
    checks = {
        "no_darkness": ~(sun_alt < site.darkness_sun_alt_deg),
        "declination": dec_bad,
        "altitude": ~(pos.alt_deg > alt_floor),
        "zenith": (pos.alt_deg > site.max_altitude_deg if site.max_altitude_deg is not None
                   else np.zeros(ti.shape, bool)),
        "horizon": ~(pos.alt_deg > altitude_limit_deg(site, pos.az_deg)),
        "hour_angle": ha_bad,
        "moon": moon_sep < site.moon_min_sep_at_deg(tracks.moon_illumination(jd)),
        "sun": sun_sep < site.sun_min_sep_deg,
    }
    for k, code in reversed(list(enumerate(REASONS))):  # the earliest check wins: written last
        out[checks[code]] = k
    return out.reshape(shape)
