"""``periplan events``: every predicted event of every target in a span of days."""

from __future__ import annotations

import argparse
import sys

from .. import orbit
from ..errors import PeriplanError
from ..output import FORMATS, render

EXAMPLES = """\
examples:
  periplan events sample_targets/targets.csv --start 2026-12-07 --days 60
  periplan events targets.csv --start 2026-12-07 --days 7 --kinds periastron primary_conjunction
  periplan events targets.csv --start 2026-12-07 --days 30 --tz Europe/Madrid --format csv > events.csv
"""


def register(sub):
    p = sub.add_parser(
        "events", help="list predicted periastron passages, conjunctions, RV extremes",
        description="List every predicted event of every catalogue target in a span of days, sorted by "
                    "time, in BJD_TDB, UTC and (with --tz) local time, with the 1-sigma timing uncertainty.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("catalog", metavar="CATALOG", help="catalogue CSV file of targets and elements")
    p.add_argument("--start", required=True, metavar="YYYY-MM-DD",
                   help="first day of the span (00:00 UTC, or local midnight with --tz)")
    p.add_argument("--days", type=float, default=7.0, metavar="N", help="length of the span in days (default 7)")
    p.add_argument("--kinds", nargs="+", metavar="EVENT", choices=orbit.ALL_EVENTS,
                   help=f"only these events: {', '.join(orbit.ALL_EVENTS)}")
    p.add_argument("--tz", metavar="ZONE", help="IANA time zone for local times, e.g. Europe/Madrid")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default table)")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from .. import catalogue, spans
    from ..events import predict_events
    from ..report import events_frame

    if args.days <= 0:
        raise PeriplanError(f"--days must be positive; got {args.days:g}")
    start_utc, end_utc = spans.span_utc(args.start, args.days, args.tz)
    targets = catalogue.read_catalogue(args.catalog)
    events = predict_events(targets, *spans.bjd_bounds(start_utc, end_utc), kinds=args.kinds)
    table = events_frame(events, targets, start_utc, end_utc, args.tz)
    sys.stdout.write(render(table, args.format, {"bjd_tdb": ".6f", "sigma_min": ".2f", "duration_h": ".2f"}))
    if args.format == "table":
        print(f"{len(table)} events of {table['target'].nunique() if len(table) else 0} targets "
              f"from {start_utc.isot[:16]}Z to {end_utc.isot[:16]}Z", file=sys.stderr)
    return 0
