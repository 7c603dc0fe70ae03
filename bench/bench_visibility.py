"""Benchmark: observable masks of 1,000 targets x 7 nights on a 5-minute grid, against astroplan.

Constraints (both engines): airless altitude >= 30 deg, astronomical darkness (Sun's centre below
-18 deg), Moon separation >= 25 deg. Both are timed in the same run on the same grid, after a
small warm-up of each (imports, Earth-orientation tables); the ratio and the agreement of the
two masks are printed, then the peak memory of each (tracemalloc, in a second, untimed run).

Run:  python bench/bench_visibility.py [--targets 1000] [--nights 7] [--step-min 5]

Not a test: timings depend on the machine. The goal of the issue is a ratio of at least 50.
"""

from __future__ import annotations

import argparse
import time
import tracemalloc
import warnings

import numpy as np
import pandas as pd

from planner import Site, night_table
from planner.sky import windows
from planner.sky.night import tracks_for_nights
from planner.timescales import earth_orientation

SITE = Site(name="bench", latitude_deg=37.62, longitude_deg=-3.12, elevation_m=1650.0, timezone="Europe/Madrid",
            min_altitude_deg=30.0, moon_min_sep_deg=25.0, sun_min_sep_deg=0.0)
FIRST_NIGHT = "2026-12-18"  # waxing gibbous Moon: the Moon constraint matters
HAIR_DEG = 0.01


def targets_frame(n, seed=1):
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"name": [f"B{i:04d}" for i in range(n)], "ra_deg": rng.uniform(0, 360, n),
                         "dec_deg": np.degrees(np.arcsin(rng.uniform(-0.6, 1.0, n)))})


def time_grid(n_nights, step_min):
    nights = night_table(SITE, FIRST_NIGHT, n_nights)
    return nights.noon_jd_utc[0] + np.arange(0.0, float(n_nights), step_min / 1440.0)


def ours(targets, jd, n_nights):
    """Our engine from scratch on the grid: Sun/Moon tracks, then the mask."""
    tracks = tracks_for_nights(SITE, FIRST_NIGHT, n_nights)
    mask = windows.observable_mask(targets.ra_deg, targets.dec_deg, SITE, jd, tracks)
    return mask, tracks


def ours_intervals(targets, tracks, n_nights):
    """The interval form: night table, then intervals with edges refined to 0.05 s."""
    nights = night_table(SITE, FIRST_NIGHT, n_nights, tracks=tracks)
    return windows.observable_intervals(targets, SITE, nights, tracks)


def astroplan_mask(targets, jd):
    import astropy.units as u
    from astroplan import (AltitudeConstraint, AtNightConstraint, FixedTarget, MoonSeparationConstraint,
                           Observer)
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    obs = Observer(location=SITE.earth_location(), pressure=0 * u.hPa)
    t = Time(jd, format="jd", scale="utc")
    fixed = [FixedTarget(c) for c in SkyCoord(targets.ra_deg.to_numpy() * u.deg, targets.dec_deg.to_numpy() * u.deg)]
    constraints = [AltitudeConstraint(min=SITE.min_altitude_deg * u.deg),
                   AtNightConstraint(max_solar_altitude=SITE.darkness_sun_alt_deg * u.deg),
                   MoonSeparationConstraint(min=SITE.moon_min_sep_deg * u.deg)]
    mask = np.ones((len(targets), jd.size), bool)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for c in constraints:
            mask &= np.asarray(c(obs, fixed, times=t, grid_times_targets=True), dtype=bool)
    return mask


def near_threshold(targets, jd):
    """Samples within HAIR_DEG of a limit, by astropy's own numbers (for the agreement report)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord, get_body, get_sun
    from astropy.time import Time

    loc = SITE.earth_location()
    t = Time(jd, format="jd", scale="utc")
    c = SkyCoord(targets.ra_deg.to_numpy() * u.deg, targets.dec_deg.to_numpy() * u.deg)
    alt = c[:, None].transform_to(AltAz(obstime=t[None, :], location=loc, pressure=0 * u.hPa)).alt.deg
    sun = get_sun(t).transform_to(AltAz(obstime=t, location=loc, pressure=0 * u.hPa)).alt.deg
    moon = get_body("moon", t, location=loc)
    v1 = c[:, None].transform_to(moon.frame).cartesian.xyz.value
    v2 = moon.cartesian.xyz.value[:, None, :]
    cosang = np.sum(v1 * v2, axis=0) / np.linalg.norm(v1, axis=0) / np.linalg.norm(v2, axis=0)
    sep = np.degrees(np.arccos(np.clip(cosang, -1, 1)))
    return ((np.abs(alt - SITE.min_altitude_deg) < HAIR_DEG) | (np.abs(sun - SITE.darkness_sun_alt_deg) < HAIR_DEG)
            | (np.abs(sep - SITE.moon_min_sep_deg) < HAIR_DEG))


def peak_mib(func, *args):
    tracemalloc.start()
    func(*args)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 2**20


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--targets", type=int, default=1000)
    p.add_argument("--nights", type=int, default=7)
    p.add_argument("--step-min", type=float, default=5.0)
    args = p.parse_args()
    earth_orientation.configure()
    targets = targets_frame(args.targets)
    jd = time_grid(args.nights, args.step_min)
    # warm-up of both (imports, IERS tables, ephemeris code paths)
    ours(targets.iloc[:3], jd[:20], 1)
    astroplan_mask(targets.iloc[:3], jd[:20])

    t0 = time.perf_counter()
    mask, tracks = ours(targets, jd, args.nights)
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    iv = ours_intervals(targets, tracks, args.nights)
    t_iv = time.perf_counter() - t0
    t0 = time.perf_counter()
    ref = astroplan_mask(targets, jd)
    t_ref = time.perf_counter() - t0

    hair = near_threshold(targets, jd)
    differ = mask != ref
    print(f"grid: {args.targets} targets x {jd.size} times ({args.nights} nights, {args.step_min:g}-min step)")
    print(f"periplan mask (Sun/Moon tracks + mask):      {t_ours:8.3f} s")
    print(f"periplan night table + intervals (edges to 0.05 s): {t_iv:8.3f} s  ({len(iv)} intervals)")
    print(f"astroplan constraints:                       {t_ref:8.3f} s")
    print(f"speed ratio astroplan / periplan mask:       {t_ref / t_ours:8.1f}")
    print(f"speed ratio astroplan / periplan mask + intervals: {t_ref / (t_ours + t_iv):8.1f}")
    print(f"mask agreement: {1 - differ.mean():.6f} ({differ.sum()} of {differ.size} samples differ; "
          f"{(differ & ~hair).sum()} of them farther than {HAIR_DEG} deg from a limit; "
          f"{ref.sum()} observable samples)")
    print(f"peak traced memory, periplan mask: {peak_mib(ours, targets, jd, args.nights):7.1f} MiB")
    print(f"peak traced memory, intervals:     {peak_mib(ours_intervals, targets, tracks, args.nights):7.1f} MiB")
    print(f"peak traced memory, astroplan:     {peak_mib(astroplan_mask, targets, jd):7.1f} MiB")


if __name__ == "__main__":
    main()
