"""``periplan nights``: sunset, darkness, sunrise and the Moon for each night at a site."""

from __future__ import annotations

import argparse
import sys

from ...errors import PeriplanError
from ...outputs.tables import FORMATS, nights_frame, render
from ...outputs.wording import count

EXAMPLES = """\
examples:
  periplan nights --site sample_targets/site.toml --start 2026-12-07 --days 7
  periplan nights --site site.toml --days 1        (tonight, or the night under way)
  periplan nights --site site.toml --start 2027-06-01 --days 30 --format csv > nights.csv
"""


def register(sub):
    p = sub.add_parser(
        "nights", help="list sunset, dark time, sunrise and the Moon for each night at a site",
        description="One row per local night (labelled by the local date of its evening): sunset and "
                    "sunrise (Sun's centre at -0.833 deg), start and end of the site's darkness, in UTC "
                    "and local time, the hours of darkness, the Moon's illuminated fraction at the middle "
                    "of the dark time and the hours of dark time with the Moon up.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--site", required=True, metavar="SITE", help="site file (TOML), see sample_targets/site.toml")
    p.add_argument("--start", metavar="YYYY-MM-DD",
                   help="local date of the first evening (default: the night under way until its darkness "
                        "ends, then the coming night, as for plan)")
    p.add_argument("--days", type=int, default=7, metavar="N", help="number of nights (default 7)")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default table)")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ...inputs.site import read_site
    from ...pipeline import first_night_for
    from ...sky.night import darkness_name, night_table
    from ..spans import now, parse_date

    if args.days <= 0:
        raise PeriplanError(f"--days must be a positive number of nights; got {args.days}")
    start = parse_date(args.start) if args.start is not None else None
    site = read_site(args.site)
    first = first_night_for(start, site, now=now())
    nights = night_table(site, first, args.days)
    table = nights_frame(nights, site.timezone)
    sys.stdout.write(render(table, args.format, {"dark_h": ".2f", "moon_illumination": ".3f",
                                                 "moon_up_dark_h": ".2f"}))
    if args.format == "table":
        sys.stdout.flush()  # the summary line on stderr comes after the table
        dark = darkness_name(site.darkness_sun_alt_deg)
        print(f"{count(len(table), 'night')} at {site.name} ({site.timezone}); dark = {dark}, Sun's centre below "
              f"{site.darkness_sun_alt_deg:g} deg. Never point a telescope near the Sun; the observatory's "
              "own safety rules and local regulations come first.", file=sys.stderr)
    return 0
