"""``periplan events``: every predicted event of every target in a span of days."""

from __future__ import annotations

import argparse
import sys

import numpy as np

from ...orbits import geometry
from ...errors import PeriplanError
from . import event_word, require_nonnegative
from ...outputs.tables import FORMATS, render, with_visibility
from ...outputs.wording import count
from .. import streamed

#: Most days of nights added either side of the span for windows widened by large timing
#: uncertainties; beyond it the coverage of a window is counted only where nights are known.
MAX_WINDOW_PAD_D = 30

EXAMPLES = """\
examples:
  periplan events sample_targets/targets.csv --start 2026-12-07 --days 60
  periplan events targets.csv --start 2026-12-07 --days 7 --kinds periastron primary_conjunction
  periplan events targets.csv --start 2026-12-07 --days 30 --tz Europe/Madrid --format csv > events.csv
  periplan events sample_targets/targets.csv --start 2026-12-07 --days 14 --site sample_targets/site.toml --visible 0.8
  periplan events survey.parquet --start 2026-12-07 --days 30 --format parquet --out survey-dec --dask local:2
"""


def register(sub):
    p = sub.add_parser(
        "events", help="list predicted periastron passages, conjunctions, RV extremes",
        description="List every predicted event of every catalogue target in a span of days, sorted by "
                    "time, in BJD_TDB, UTC and (with --tz) local time, with the 1-sigma timing uncertainty.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("catalog", metavar="CATALOG",
                   help="catalogue of targets and elements: CSV, or an ECSV, VOTable, FITS or Parquet table "
                        "(by extension)")
    p.add_argument("--start", metavar="YYYY-MM-DD",
                   help="first day of the span (00:00 UTC, or local midnight with --tz or --site; default "
                        "today there)")
    p.add_argument("--days", type=float, default=7.0, metavar="N", help="length of the span in days (default 7)")
    p.add_argument("--kinds", nargs="+", metavar="EVENT", type=event_word,
                   help=f"only these events: {', '.join(geometry.ALL_EVENTS)}; also the words "
                        f"{', '.join(geometry.EVENT_ALIASES)} (for the conjunctions) and maximum, minimum "
                        "(periodic events whose label says so)")
    p.add_argument("--tz", metavar="ZONE", help="IANA time zone for local times, e.g. Europe/Madrid")
    p.add_argument("--site", metavar="SITE",
                   help="site file (TOML): adds the night, the airless altitude and Moon separation at the "
                        "event and the observable fraction of its window; local times in the site's zone")
    p.add_argument("--visible", type=float, metavar="FRACTION",
                   help="with --site: keep only events whose window is observable at least to this "
                        "fraction (0..1)")
    p.add_argument("--baseline-h", type=float, default=None, metavar="H",
                   help="with --site: baseline wanted either side of the event, hours (default 1)")
    p.add_argument("--k-sigma", type=float, default=None, metavar="K",
                   help="with --site: widen each window by K times the 1-sigma timing uncertainty "
                        "either side (default 2)")
    p.add_argument("--format", choices=FORMATS + (streamed.STREAM_FORMAT,), default="table",
                   help="output format (default table); parquet writes chunk files into --out DIR")
    streamed.add_options(p)
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from .. import spans
    from ...inputs.parquet_catalogue import read_catalogue_file
    from ...orbits.events import predict_events
    from ...orbits.events import seen_in_span
    from ...outputs.explain import no_uncertainty_note
    from ...outputs.tables import events_frame

    if args.days <= 0:
        raise PeriplanError(f"--days must be positive; got {args.days:g}")
    site_opts = [name for name, v in (("--visible", args.visible), ("--baseline-h", args.baseline_h),
                                      ("--k-sigma", args.k_sigma)) if v is not None]
    if site_opts and not args.site:
        raise PeriplanError(f"{', '.join(site_opts)} {'needs' if len(site_opts) == 1 else 'need'} "
                            "--site SITE (a site file)")
    if args.visible is not None and not 0.0 <= args.visible <= 1.0:
        raise PeriplanError(f"--visible must be a fraction between 0 and 1; got {args.visible:g}")
    require_nonnegative(args, "baseline_h", "k_sigma")
    streamed.check_options(args)
    site = None
    if args.site:
        from ...inputs.site import read_site

        site = read_site(args.site)
    tz = args.tz or (site.timezone if site else None)
    start_utc, end_utc = spans.span_utc(args.start or spans.today(tz), args.days, tz)
    targets = read_catalogue_file(args.catalog)
    formats = {"bjd_tdb": ".6f", "sigma_min": ".2f", "duration_h": ".2f"}
    if streamed.wanted(args):
        if site is not None:
            formats.update({"alt_deg": ".1f", "moon_sep_deg": ".1f", "observable_fraction": ".2f"})
        return streamed.run_streamed(args, targets, site, tz, start_utc, end_utc, formats)
    events = predict_events(targets, *spans.bjd_bounds(start_utc, end_utc), kinds=args.kinds)
    events, t_utc = seen_in_span(events, targets, start_utc, end_utc)
    table = events_frame(events, t_utc, tz)
    _note_corrections(table, events, targets)
    if site is not None:
        table = _with_visibility(table, events, t_utc, targets, site, start_utc, end_utc, args)
        formats.update({"alt_deg": ".1f", "moon_sep_deg": ".1f", "observable_fraction": ".2f"})
    sys.stdout.write(render(table, args.format, formats))
    if args.format == "table":
        sys.stdout.flush()  # the summary line on stderr comes after the table
        print(f"{events_of_targets(len(table), table['target'].nunique() if len(table) else 0, len(targets))} "
              f"from {start_utc.isot[:16]}Z to {end_utc.isot[:16]}Z", file=sys.stderr)
    note = no_uncertainty_note(events)
    if note:
        print(f"periplan: note: {note}", file=sys.stderr)
    return 0


def events_of_targets(n_events: int, n_with_events: int, n_targets: int) -> str:
    """``"12 events of 3 targets"``, ``"5 events of 2 of 6 targets"``, ``"0 events of 1 target"``."""
    of = count(n_targets, "target") if n_with_events in (0, n_targets) else f"{n_with_events} of {count(n_targets, 'target')}"
    return f"{count(n_events, 'event')} of {of}"


def _note_corrections(table, events, targets):
    """Add a ``corrections`` column when any target has one; warn of two epochs in tension."""
    from ...inputs.binary_checks import EPOCH_WARN_SIGMA
    from ...orbits.events import applied_corrections

    corrections = applied_corrections(targets)
    if "epoch_tension_sigma" in targets:
        for name, kind, s in zip(targets["name"], targets["epoch2_kind"], targets["epoch_tension_sigma"]):
            if np.isfinite(s) and s > EPOCH_WARN_SIGMA:
                print(f"periplan: warning: {name}: its two epochs disagree by {s:.1f} combined sigma (over "
                      f"{EPOCH_WARN_SIGMA:g}); each event uses the nearer epoch, check {kind} and the elements",
                      file=sys.stderr)
    if (corrections != "").any():
        table["corrections"] = corrections[events["target_index"].to_numpy()] if len(events) else []


def _with_visibility(table, events, t_utc, targets, site, start_utc, end_utc, args):
    """``table`` (rows of ``events``) with night, alt_deg, moon_sep_deg and observable_fraction added."""
    from ...outputs.tables import never_rising_lines
    from ...sky.night import nights_around
    from ...sky.windows import DEFAULT_BASELINE_H, DEFAULT_K_SIGMA, event_visibility, never_rising

    if args.visible is None or args.visible <= 0:
        fate = "events that cannot be seen are listed with observable_fraction 0"
    else:
        fate = f"events that cannot be seen are left out by --visible {args.visible:g}"
    for line in never_rising_lines(never_rising(targets, site), site.name):
        print(f"periplan: warning: {line}; {fate}", file=sys.stderr)
    baseline_h = DEFAULT_BASELINE_H if args.baseline_h is None else args.baseline_h
    k_sigma = DEFAULT_K_SIGMA if args.k_sigma is None else args.k_sigma
    # nights covering every window: the span, one night either side, plus the widest half-window
    half_d = (events["sigma_d"].to_numpy(float) * k_sigma).max() if len(events) else 0.0
    pad = 1 + int(min(np.ceil(np.nan_to_num(half_d) + 0.25), MAX_WINDOW_PAD_D))
    tracks, nights = nights_around(site, start_utc, end_utc, pad)
    vis = event_visibility(events, targets, site, nights, baseline_h=baseline_h, k_sigma=k_sigma, tracks=tracks,
                           jd_utc=t_utc.jd if len(events) else None)
    return with_visibility(table, vis, args.visible)
