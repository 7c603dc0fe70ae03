"""``periplan coverage``: what an observation log has covered of each orbit, and what remains."""

from __future__ import annotations

import argparse
import os
import sys

from ...errors import PeriplanError
from ...outputs.tables import FORMATS, render

EXAMPLES = """\
examples:
  periplan coverage targets.csv --log observed.csv
  periplan coverage targets.csv --log observed.csv --bins 20 --format csv > coverage.csv
  periplan coverage targets.csv --log observed.csv --site site.toml --start 2026-12-07 --nights 14
  periplan coverage targets.csv --log observed.csv --charts coverage-charts
"""


def register(sub):
    p = sub.add_parser(
        "coverage", help="phase coverage of each orbit from an observation log, and the gaps left",
        description="Per target: the fraction of the orbit's phase bins (mean anomaly) holding at least one "
                    "logged exposure or series, the RV range sampled against K, the largest uncovered phase "
                    "gap, the events observed with the parts covered, and the last visit. With --site, the "
                    "coming nights whose observable time reaches into the gap. Only rows whose outcome is done "
                    "or partial count.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("catalog", metavar="CATALOG", help="catalogue CSV file of targets and elements")
    p.add_argument("--log", required=True, metavar="LOG", help="observation log (CSV; see README)")
    p.add_argument("--bins", type=int, default=10, metavar="N", help="phase bins per orbit (default 10)")
    p.add_argument("--site", metavar="SITE", help="site file (TOML): list the coming nights that reach each gap")
    p.add_argument("--start", metavar="YYYY-MM-DD", help="with --site: first night (default: the coming night)")
    p.add_argument("--nights", type=int, default=14, metavar="N", help="with --site: nights to look ahead (default 14)")
    p.add_argument("--charts", metavar="DIR", help="write one coverage chart per target (PNG) into DIR")
    p.add_argument("--force", action="store_true", help="with --charts: replace charts already in DIR")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default table)")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ...inputs import catalogue
    from ...inputs.observation_log import read_log
    from ...scheduling.coverage import coverage_table, nights_into_gap, reference_epoch
    from ...timescales import clock

    if args.bins < 1:
        raise PeriplanError(f"--bins must be at least 1; got {args.bins}")
    if args.nights < 1:
        raise PeriplanError(f"--nights must be at least 1; got {args.nights}")
    if args.start and not args.site:
        raise PeriplanError("--start needs --site (the nights are the site's)")
    targets = catalogue.read_catalogue(args.catalog)
    log = read_log(args.log, targets)
    table = coverage_table(log, targets, args.bins)
    if args.site:
        nights = _nights(args, targets, table, nights_into_gap)
        table["nights_into_gap"] = nights if args.format != "table" else [_short(n) for n in nights]
    chart_paths = _charts(args, targets, log, reference_epoch(targets)) if args.charts else []
    shown = table.drop(columns="last_visit_jd_utc")
    shown.insert(len(shown.columns), "last_visit_utc", clock.jd_utc_to_iso_z(table["last_visit_jd_utc"].to_numpy(float)))
    sys.stdout.write(render(shown, args.format, {
        "phase_coverage": ".2f", "gap_start_phase": ".2f", "gap_end_phase": ".2f", "gap_width": ".2f",
        "rv_sampled_min_ms": ".1f", "rv_sampled_max_ms": ".1f", "rv_range_fraction": ".2f"}))
    if args.format == "table":
        sys.stdout.flush()
        n_obs = int(log["outcome"].isin(["done", "partial"]).sum())
        print(f"{n_obs} observation{'s' * (n_obs != 1)} of {len(targets)} target{'s' * (len(targets) != 1)} "
              f"in {os.path.basename(args.log)}; {args.bins} phase bins per orbit"
              + (f"; {len(chart_paths)} charts in {args.charts}/" if chart_paths else ""), file=sys.stderr)
    return 0


def _short(labels: str) -> str:
    """'2026-12-07 +12 more' for a long ';' list of nights (the terminal table stays readable)."""
    parts = [x for x in labels.split(";") if x]
    return labels if len(parts) <= 2 else f"{parts[0]} +{len(parts) - 1} more"


def _nights(args, targets, table, nights_into_gap):
    from ...inputs.site import read_site
    from ...pipeline import first_night_for
    from ...sky.night import night_table, tracks_for_nights
    from ...sky.windows import observable_intervals
    from ..spans import parse_date

    site = read_site(args.site)
    first = parse_date(args.start) if args.start else first_night_for(None, site.timezone)
    tracks = tracks_for_nights(site, first, args.nights)
    nights = night_table(site, first, args.nights, tracks=tracks)
    intervals = observable_intervals(targets, site, nights, tracks=tracks)
    return nights_into_gap(table, targets, intervals)


def _charts(args, targets, log, phase0):
    from ...outputs.coverage_chart import write_coverage_chart
    from ...outputs.plan_folder import safe_file_name

    os.makedirs(args.charts, exist_ok=True)
    paths = [os.path.join(args.charts, f"coverage-{safe_file_name(str(name))}.png") for name in targets["name"]]
    existing = [p for p in paths if os.path.exists(p)]
    if existing and not args.force:
        raise PeriplanError(f"--charts {args.charts}: already holds {os.path.basename(existing[0])}; add --force to "
                            "replace the charts or choose another folder")
    used = log[log["outcome"].isin(["done", "partial"])]
    for ti, (path, (_, target)) in enumerate(zip(paths, targets.iterrows())):
        write_coverage_chart(path, target, used[used["target_index"] == ti], float(phase0[ti]), args.bins)
    return paths
