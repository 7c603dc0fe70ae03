"""``periplan nights``: sunset, darkness, sunrise and the Moon for each night at a site."""

from __future__ import annotations

import argparse
import sys

import numpy as np

from ..errors import PeriplanError
from ..output import FORMATS, render

EXAMPLES = """\
examples:
  periplan nights --site sample_targets/site.toml --start 2026-12-07 --days 7
  periplan nights --site site.toml --start 2027-06-01 --days 30 --format csv > nights.csv
"""

#: Time columns of the table, in order; each has a ``_utc`` and a ``_local`` twin.
TIME_COLUMNS = ("sunset", "dark_start", "dark_end", "sunrise")


def register(sub):
    p = sub.add_parser(
        "nights", help="list sunset, dark time, sunrise and the Moon for each night at a site",
        description="One row per local night (labelled by the local date of its evening): sunset and "
                    "sunrise (Sun's centre at -0.833 deg), start and end of the site's darkness, in UTC "
                    "and local time, the hours of darkness, the Moon's illuminated fraction at the middle "
                    "of the dark time and the hours of dark time with the Moon up.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--site", required=True, metavar="SITE", help="site file (TOML), see sample_targets/site.toml")
    p.add_argument("--start", required=True, metavar="YYYY-MM-DD", help="local date of the first evening")
    p.add_argument("--days", type=int, default=7, metavar="N", help="number of nights (default 7)")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default table)")
    p.set_defaults(run=run)
    return p


def iso_columns(jd_utc, tz: str):
    """(UTC strings ``...Z``, local strings with offset) for UTC Julian dates; '' where NaN."""
    from astropy.time import Time

    from ..timescales import utc_to_iso_z, utc_to_local_iso

    jd = np.asarray(jd_utc, dtype=float)
    utc = np.full(jd.shape, "", dtype=object)
    local = np.full(jd.shape, "", dtype=object)
    ok = np.isfinite(jd)
    if ok.any():
        t = Time(jd[ok], format="jd", scale="utc")
        utc[ok] = utc_to_iso_z(t)
        local[ok] = utc_to_local_iso(t, tz)
    return utc, local


def nights_frame(nights, tz: str):
    """Display table of a night table: ISO times in UTC and local time, hours, illumination."""
    import pandas as pd

    out = pd.DataFrame({"night": nights["night"].to_numpy(object)})
    locals_ = {}
    for name in TIME_COLUMNS:
        out[f"{name}_utc"], locals_[f"{name}_local"] = iso_columns(nights[f"{name}_jd_utc"], tz)
    for name, col in locals_.items():
        out[name] = col
    out["dark_kind"] = nights["dark_kind"].to_numpy(object)
    out["dark_h"] = nights["dark_h"].to_numpy(float)
    out["moon_illumination"] = nights["moon_illumination"].to_numpy(float)
    out["moon_up_dark_h"] = nights["moon_up_dark_h"].to_numpy(float)
    return out


def run(args) -> int:
    from ..night import night_table
    from ..site import read_site
    from ..spans import parse_date

    if args.days <= 0:
        raise PeriplanError(f"--days must be a positive number of nights; got {args.days}")
    first = parse_date(args.start)
    site = read_site(args.site)
    nights = night_table(site, first, args.days)
    table = nights_frame(nights, site.timezone)
    sys.stdout.write(render(table, args.format, {"dark_h": ".2f", "moon_illumination": ".3f",
                                                 "moon_up_dark_h": ".2f"}))
    if args.format == "table":
        sys.stdout.flush()  # the summary line on stderr comes after the table
        print(f"{len(table)} nights at {site.name} ({site.timezone}); dark = Sun's centre below "
              f"{site.darkness_sun_alt_deg:g} deg. Never point a telescope near the Sun; the observatory's "
              "own safety rules and local regulations come first.", file=sys.stderr)
    return 0
