"""Where each scheduled block's target stands: azimuth and hour angle at the start, the lowest
altitude over the block and the time the target crosses the meridian.

What the observer needs beside each block at the telescope: where to point first (azimuth,
hour angle), how low the target gets while it is observed, and when it culminates (a German
mount flips there). Pure functions of the target table, the site and the block times (UTC
Julian dates); positions come from :func:`planner.sky.positions.altaz_at` (airless, azimuth
north through east, hour angle in hours, positive west).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from . import positions

#: Ratio of the Earth rotation angle's rate to the UT1 day: ERA = 2 pi (0.7790572732640 +
#: 1.00273781191135448 Tu) (IERS Conventions 2010, eq. 5.15). An hour angle grows by this many
#: hours per hour of time.
ERA_RATE = 1.00273781191135448
#: Sample step (days) for the lowest altitude inside a block: 2 minutes. Altitude changes by at
#: most 0.5 deg in 2 min (15 deg/h at the celestial equator), and the minimum of a smooth curve
#: between samples is closer still to a sampled value; block ends are always sampled exactly.
LOW_STEP_D = 2.0 / 1440.0

BLOCK_SKY_COLUMNS = ("az_start_deg", "ha_start_h", "lowest_alt_deg", "meridian_jd_utc")


def meridian_transit_jd_utc(ha_h, jd_utc):
    """UTC Julian date of the upper meridian transit nearest ``jd_utc``, from the hour angle there.

    ``ha_h`` (-12..12 h, positive west) at ``jd_utc``: the transit is ``ha_h / ERA_RATE`` hours
    earlier (the target's apparent right ascension moves well under a second of time in a
    night, so it is held fixed). Broadcast shapes.
    """
    return np.asarray(jd_utc, float) - np.asarray(ha_h, float) / ERA_RATE / 24.0


def block_sky(targets: pd.DataFrame, site, target_index, start_jd_utc, end_jd_utc) -> pd.DataFrame:
    """One row per block (:data:`BLOCK_SKY_COLUMNS`) for blocks given as 1-D arrays.

    ``target_index``: rows of ``targets``; ``start_jd_utc``/``end_jd_utc``: the block edges.
    ``meridian_jd_utc`` is the upper transit nearest the block's middle (it may fall outside
    the block); ``lowest_alt_deg`` the lowest airless altitude between start and end.
    """
    ti = np.asarray(target_index, dtype=int).ravel()
    t0 = np.asarray(start_jd_utc, float).ravel()
    t1 = np.asarray(end_jd_utc, float).ravel()
    n = ti.size
    if n == 0:
        return pd.DataFrame({c: np.array([], float) for c in BLOCK_SKY_COLUMNS})
    ra = targets["ra_deg"].to_numpy(float)[ti]
    dec = targets["dec_deg"].to_numpy(float)[ti]
    n_steps = int(np.ceil(np.nanmax(t1 - t0) / LOW_STEP_D)) + 1 if np.isfinite(t1 - t0).any() else 1
    frac = np.linspace(0.0, 1.0, max(n_steps, 2))
    times = t0[:, None] + (t1 - t0)[:, None] * frac[None, :]
    mid = 0.5 * (t0 + t1)
    grid = np.concatenate([times, mid[:, None]], axis=1)
    pos = positions.altaz_at(ra[:, None], dec[:, None], grid, site.latitude_deg, site.longitude_deg)
    return pd.DataFrame({
        "az_start_deg": pos.az_deg[:, 0],
        "ha_start_h": pos.ha_h[:, 0],
        "lowest_alt_deg": np.nanmin(pos.alt_deg[:, :-1], axis=1),
        "meridian_jd_utc": meridian_transit_jd_utc(pos.ha_h[:, -1], mid),
    })
