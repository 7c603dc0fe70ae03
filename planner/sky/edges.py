"""Edges of observable intervals: the altitude-limit crossing in closed form, bisection otherwise.

Also :func:`rows_that_may_clear`, the targets that can be above the altitude limit at all within
a stretch of Earth rotation, so the grid mask skips the others.

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


def rows_that_may_clear(cos_h0, ra_c, theta_rad):
    """Indices of targets that can be above the altitude limit at some time of ``theta_rad``.

    ``cos_h0`` (N,) is the cosine of the hour angle at which each target crosses the limit (above
    1: never clears it; below -1: always above), ``ra_c`` (N,) CIRS right ascensions (rad),
    ``theta_rad`` (T,) the local Earth rotation angle (ERA + longitude) at the sample times, in
    time order. A target whose hour angle stays outside [-H0, H0] over the whole stretch from the
    first to the last time cannot be above the limit at any sample in it. A stretch of a full turn
    or more keeps every target that ever clears the limit.
    """
    theta = np.unwrap(np.asarray(theta_rad, float))
    span = theta[-1] - theta[0] if theta.size else 0.0
    clears = ~(cos_h0 >= 1.0)  # NaN (a pole) kept
    if not (0.0 <= span < 2.0 * np.pi - 1e-6) or np.any(np.diff(theta) < 0):
        return np.flatnonzero(clears)
    h0 = np.arccos(np.clip(cos_h0, -1.0, 1.0)) + 1e-9
    # shift so that the visible hour angles are [0, 2 H0]; the stretch starts at `start`
    start = np.mod(theta[0] - ra_c + h0, 2.0 * np.pi)
    inside = (start <= 2.0 * h0) | (start + span >= 2.0 * np.pi)
    return np.flatnonzero(clears & (inside | (cos_h0 <= -1.0)))
