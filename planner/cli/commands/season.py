"""``periplan season``: when each target's key events can be observed from a site, month by month."""

from __future__ import annotations

import argparse
import os
import sys

from ...errors import PeriplanError
from ...orbits import geometry
from ...outputs.tables import FORMATS, render
from . import event_word, require_nonnegative

EXAMPLES = """\
examples:
  periplan season sample_targets/targets.csv --site sample_targets/site.toml --start 2027-01-01 --months 6
  periplan season targets.csv --site site.toml --start 2027-04-01 --months 6 --chart season.png
  periplan season targets.csv --site site.toml --start 2027-04-01 --months 3 --kinds periastron --format csv

Lists every event the catalogue asks for whose window is at least partly observable (dark, inside
the site's limits) in the nights of the months asked for, with the observable fraction of each
window. --chart draws them all in one PNG: targets down the side, dates across. Never point a
telescope at or near the Sun; the observatory's own safety rules and local regulations come first.
"""


def register(sub):
    p = sub.add_parser(
        "season", help="when each target's key events are observable in the coming months",
        description="For each target of the catalogue, every predicted event (its catalogue 'events') in the "
                    "nights of the coming months whose window can be observed from the site, with the "
                    "observable fraction of the window, as a table and, with --chart, one chart.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("catalog", metavar="CATALOG",
                   help="catalogue of targets and elements: CSV, or an ECSV, VOTable, FITS or Parquet table "
                        "(by extension)")
    p.add_argument("--site", required=True, metavar="SITE", help="site file (TOML)")
    p.add_argument("--start", metavar="YYYY-MM-DD",
                   help="local date of the first night's evening (default: the night plan would begin with)")
    p.add_argument("--months", type=int, default=6, metavar="N", help="number of months (default 6)")
    p.add_argument("--kinds", nargs="+", metavar="EVENT", type=event_word,
                   help=f"only these events: {', '.join(geometry.ALL_EVENTS)}; also the words "
                        f"{', '.join(geometry.EVENT_ALIASES)} and maximum, minimum, as for events")
    p.add_argument("--min-fraction", type=float, default=None, metavar="F",
                   help="list only events whose window is observable at least to this fraction (0..1; "
                        "default: any part; 0 lists every event)")
    p.add_argument("--baseline-h", type=float, default=None, metavar="H",
                   help="baseline wanted either side of each event, hours (default 1)")
    p.add_argument("--k-sigma", type=float, default=None, metavar="K",
                   help="widen each window by K times its 1-sigma timing uncertainty (default 2)")
    p.add_argument("--chart", metavar="FILE.png", help="also draw the season chart into this PNG file")
    p.add_argument("--force", action="store_true", help="replace an existing --chart file")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default table)")
    p.set_defaults(run=run)
    return p


def _check_chart_path(path, force):
    if not path.lower().endswith(".png"):
        raise PeriplanError(f"--chart {path}: expected a file name ending in .png")
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise PeriplanError(f"--chart {path}: folder {os.path.dirname(path) or '.'} does not exist")
    if os.path.isdir(path):
        raise PeriplanError(f"--chart {path}: is a folder; expected a PNG file name")
    if os.path.exists(path) and not force:
        raise PeriplanError(f"--chart {path}: already exists; add --force to replace it")


def run(args) -> int:
    from ...inputs import catalogue
    from ...inputs.site import read_site
    from ...outputs.season_chart import write_season_chart
    from ...sky import season, windows
    from ...pipeline import first_night_for
    from ...timescales import clock
    from ..spans import now, parse_date

    if not 1 <= args.months <= season.MAX_MONTHS:
        raise PeriplanError(f"--months must be a whole number from 1 to {season.MAX_MONTHS}; got {args.months}")
    if args.min_fraction is not None and not 0.0 <= args.min_fraction <= 1.0:
        raise PeriplanError(f"--min-fraction must be a fraction between 0 and 1; got {args.min_fraction:g}")
    require_nonnegative(args, "baseline_h", "k_sigma")
    start = parse_date(args.start) if args.start is not None else None
    if args.chart:
        _check_chart_path(args.chart, args.force)  # before any work: nothing is overwritten
    site = read_site(args.site)
    first = first_night_for(start, site, now=now())
    targets = catalogue.read_catalogue(args.catalog)
    n_nights = season.season_nights(first, args.months)
    table = season.season_events(
        targets, site, first, n_nights, kinds=args.kinds,
        baseline_h=windows.DEFAULT_BASELINE_H if args.baseline_h is None else args.baseline_h,
        k_sigma=windows.DEFAULT_K_SIGMA if args.k_sigma is None else args.k_sigma)
    frac = table["observable_fraction"].to_numpy(float)
    keep = frac >= args.min_fraction if args.min_fraction is not None else frac > 0
    shown = table[keep].reset_index(drop=True)
    jd = shown["jd_utc"].to_numpy(float)
    out = shown[["target", "event", "label", "night"]].copy()
    out["utc"] = clock.jd_utc_to_iso_z(jd)
    out["local"] = clock.jd_utc_to_local_iso(jd, site.timezone)
    out["bjd_tdb"] = shown["bjd_tdb"].to_numpy(float)
    out["sigma_min"] = shown["sigma_d"].to_numpy(float) * 1440.0
    out["alt_deg"] = shown["alt_deg"].to_numpy(float)
    out["observable_h"] = shown["observable_h"].to_numpy(float)
    out["observable_fraction"] = shown["observable_fraction"].to_numpy(float)
    if args.chart:
        start_jd = clock.date_to_jd_utc(first)
        end_jd = clock.date_to_jd_utc(season.add_months(first, args.months)) + 1.0
        write_season_chart(args.chart, table, start_jd, end_jd,
                           title=f"{site.name}: key events from {first} for {args.months} months",
                           min_fraction=args.min_fraction or 0.0)
    sys.stdout.write(render(out, args.format, {"bjd_tdb": ".6f", "sigma_min": ".2f", "alt_deg": ".1f",
                                               "observable_h": ".2f", "observable_fraction": ".2f"}))
    if args.format == "table":
        sys.stdout.flush()
        print(f"{len(out)} observable events of {out['target'].nunique() if len(out) else 0} targets in "
              f"{n_nights} nights from {first} at {site.name}"
              + (f"; chart in {args.chart}" if args.chart else ""), file=sys.stderr)
    return 0
