"""Edges of observable intervals: the altitude-limit crossing in closed form, bisection otherwise.

Used by :func:`planner.sky.windows.observable_intervals`. Most interval edges are the moments a
target passes the site's altitude limit; with the CIRS place fixed for the night and the Earth
rotation angle linear in time, that moment follows from the hour angle of the limit altitude,
cos H0 = (sin h0 - sin phi sin delta) / (cos phi cos delta), without a search. Each such moment
is checked against the full constraint margin, and the edges that fail the check go to the one
zero-crossing search of :mod:`planner.sky.crossings`. Speed: bench/bench_visibility.py.
"""

from __future__ import annotations

import numpy as np

from . import positions
from .crossings import DEFAULT_TOLERANCE_D, find_crossings

#: Sidereal rate of the Earth rotation angle, radians per (UT1) day (IAU 2000 ERA definition);
#: UT1 - UTC drifts by milliseconds a day, 1e-8 of a 5-minute step, so it serves per UTC day too.
_ERA_RATE_RAD_PER_D = 2.0 * np.pi * 1.00273781191135448


def edge_crossings(site, tracks, func, grid, n_per_grid, above, ra_c, dec_c):
    """(rows, jd, rising) of the changes of the mask ``above`` (R, T), refined.

    Row r of ``above`` is sampled at the times ``grid[r // n_per_grid]`` (``grid`` (J, T): one
    row of times per night, shared by the ``n_per_grid`` targets of that night).

    Same result as :func:`~planner.sky.crossings.find_crossings` on ``func`` (a bracket of
    :data:`DEFAULT_TOLERANCE_D` or less around each crossing, sorted by row then time), with a
    shortcut for the usual edge, the altitude limit: the time at which the target's hour angle
    reaches the hour angle of the limit altitude, in closed form (the CIRS place is fixed for the
    night, the Earth rotation angle linear over one step), is accepted when ``func`` changes sign
    across a quarter-tolerance either side of it. Edges set by anything else (the Moon, the Sun,
    a horizon profile, hour-angle limits) fail that check and go to the bisection.
    ``ra_c``/``dec_c`` (R,) are the CIRS places (rad) of the rows.
    """
    rows, cols = np.nonzero(above[:, 1:] != above[:, :-1])
    rising = ~above[rows, cols]
    lo, hi = grid[rows // n_per_grid, cols], grid[rows // n_per_grid, cols + 1]
    jd = np.full(rows.size, np.nan)
    if rows.size:
        lat = np.radians(site.latitude_deg)
        h0 = site.min_altitude_deg
        if site.max_airmass is not None:
            h0 = max(h0, positions.altitude_for_airmass_deg(site.max_airmass))
        d = dec_c[rows]
        with np.errstate(divide="ignore", invalid="ignore"):
            cos_h0 = (np.sin(np.radians(h0)) - np.sin(lat) * np.sin(d)) / (np.cos(lat) * np.cos(d))
            h_limit = np.arccos(cos_h0)  # NaN where the target never or always clears h0
        ha_lo = tracks.era_rad(lo) + np.radians(site.longitude_deg) - ra_c[rows]
        target_ha = np.where(rising, -h_limit, h_limit)  # rising in the east
        t = lo + np.mod(target_ha - ha_lo, 2.0 * np.pi) / _ERA_RATE_RAD_PER_D
        quarter = DEFAULT_TOLERANCE_D / 4.0
        cand = np.flatnonzero(np.isfinite(t) & (t - quarter >= lo) & (t + quarter <= hi))
        if cand.size:
            f = func(np.concatenate([t[cand] - quarter, t[cand] + quarter]), np.concatenate([rows[cand], rows[cand]]))
            before, after = f[:cand.size] > 0, f[cand.size:] > 0
            good = cand[(before != after) & (after == rising[cand])]
            jd[good] = t[good]
    rest = np.flatnonzero(np.isnan(jd))
    if rest.size:
        sub_rows = rows[rest]
        _, sub_jd, _ = find_crossings(lambda x, k: func(x, sub_rows[k]), np.stack([lo[rest], hi[rest]], axis=1),
                                      np.where(rising[rest, None], [-1.0, 1.0], [1.0, -1.0]))
        jd[rest] = sub_jd
    return rows, jd, rising
