"""Reference for bench_plan.py: astroplan's observability table for a catalogue and a site.

Run as its own process (imports included): ``python bench/astroplan_week.py CATALOG SITE START
NIGHTS``. Uses the same constraints as the periplan run of the benchmark: minimum altitude,
astronomical darkness and a Moon separation, on a 5-minute grid over the nights. Prints the
number of targets ever observable. Not part of the package.
"""

from __future__ import annotations

import sys
import tomllib


def main(argv):
    catalog, site_path, start, nights = argv[0], argv[1], argv[2], int(argv[3])
    import astropy.units as u
    import pandas as pd
    from astroplan import (AltitudeConstraint, AtNightConstraint, FixedTarget, MoonSeparationConstraint,
                           Observer, observability_table)
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    site = tomllib.load(open(site_path, "rb"))
    cat = pd.read_csv(catalog, comment="#")
    coords = SkyCoord(cat["ra"].to_numpy() * u.deg, cat["dec"].to_numpy() * u.deg)
    targets = [FixedTarget(coord=c, name=n) for c, n in zip(coords, cat["name"])]
    observer = Observer(location=EarthLocation.from_geodetic(site["longitude_deg"] * u.deg,
                                                             site["latitude_deg"] * u.deg,
                                                             site["elevation_m"] * u.m),
                        timezone=site["timezone"])
    constraints = [AltitudeConstraint(min=site["min_altitude_deg"] * u.deg),
                   AtNightConstraint.twilight_astronomical(),
                   MoonSeparationConstraint(min=site["moon_min_separation_deg"] * u.deg)]
    t0 = Time(f"{start}T12:00:00") - site["longitude_deg"] / 360 * u.day
    table = observability_table(constraints, observer, targets, time_range=[t0, t0 + nights * u.day],
                                time_grid_resolution=5 * u.min)
    print(int(table["ever observable"].sum()))


if __name__ == "__main__":
    main(sys.argv[1:])
