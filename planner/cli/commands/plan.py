"""``periplan plan``: the week's schedule, nightly lists, charts and calendar for a catalogue and site."""

from __future__ import annotations

import argparse
import sys

from ...errors import PeriplanError
from . import require_nonnegative

EXAMPLES = """\
examples:
  periplan plan targets.csv --site site.toml --start 2026-12-07 --nights 7 --out plan-week50
  periplan plan targets.csv --site site.toml --out tonight --nights 1 --overhead-min 5
  periplan plan targets.csv --site site.toml --start 2026-12-07 --week-rule best --out week --force
  periplan plan targets.csv --site site.toml --nights 14 --seconds-per-night 10 --out fortnight

Writes into --out: schedule.csv, night-DATE.txt and .html (printable lists), altitude-DATE.png,
week.png, rv-TARGET.png, plan.ics, summary.txt, unscheduled.csv (every request left out, and
why), schedule-info.json (proven optimal, or the gap to the solver's bound), log-template.csv
(to fill in at the telescope) and plan-files.txt (the list of the plan's own files: --force
replaces exactly these and never deletes any other file). Never point a telescope
at or near the Sun; the observatory's own safety rules and local regulations come first.
"""


def add_plan_options(p, need_inputs: bool = True):
    """Options shared by ``plan`` and ``demo``."""
    if need_inputs:
        p.add_argument("catalog", metavar="CATALOG",
                       help="catalogue of targets and elements: CSV, or an ECSV, VOTable, FITS or Parquet "
                            "table (by extension)")
        p.add_argument("--site", required=True, metavar="SITE", action="append",
                       help="site file (TOML); give it again for a campaign of several sites or telescopes "
                            "(each block goes to one site, each event to the site that serves it best)")
    p.add_argument("--start", metavar="YYYY-MM-DD",
                   help="local date of the first night's evening (default: the night under way until its "
                        "darkness ends, then the coming night; blocks of a night under way that began "
                        "before now are counted in a note)")
    p.add_argument("--nights", type=int, default=7, metavar="N", help="number of nights (default 7)")
    p.add_argument("--out", metavar="DIR", default=None if need_inputs else "periplan-demo",
                   required=need_inputs, help="folder for the plan's files" +
                   ("" if need_inputs else " (default periplan-demo)"))
    p.add_argument("--force", action="store_true",
                   help="replace the plan already in DIR (the files in its plan-files.txt; no other file is touched)")
    p.add_argument("--baseline-h", type=float, default=None, metavar="H",
                   help="baseline wanted either side of each event, hours (default 1)")
    p.add_argument("--k-sigma", type=float, default=None, metavar="K",
                   help="widen each window by K times its 1-sigma timing uncertainty (default 2)")
    p.add_argument("--overhead-min", type=float, default=None, metavar="MIN",
                   help="setup and slew time between blocks, minutes (default 10)")
    p.add_argument("--week-rule", choices=("every", "best", "first"), default=None,
                   help="a target's event on several nights: observe every night's instance (default), once "
                        "in the week on its best night, or once at the first night that can take it; a "
                        "target's week_rule column overrides this")
    p.add_argument("--repeats", choices=("every", "first", "best"), default=None,
                   help="old name of --week-rule, kept for this release (will be removed)")
    if need_inputs:
        p.add_argument("--log", metavar="LOG",
                       help="observation log (CSV, see README): logged-done events drop out, partial ones keep "
                            "the parts not yet covered, monitor gaps count from the last visit, phase_bins "
                            "targets get visits in their empty bins")
    p.add_argument("--seconds-per-night", type=float, default=None, metavar="S",
                   help="time limit of the solver, seconds per night of the plan (default 4); the best plan "
                        "found by then is used and its gap to the solver's bound reported")


def register(sub):
    p = sub.add_parser(
        "plan", help="plan the nights: schedule, printable lists, charts, calendar",
        description="Predict the events of every target, turn them into the observations they need, find "
                    "where they can be observed from the site(s) in the nights asked for, choose the week's "
                    "best non-overlapping blocks with an exact solver and write the schedule, printable "
                    "nightly lists, charts, a week page, an iCalendar file and every request left out "
                    "with its reason.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    add_plan_options(p)
    p.set_defaults(run=run)
    return p


def settings_from(args):
    """PlanSettings from parsed options; PeriplanError for values outside their range."""
    import dataclasses

    from ...pipeline import PlanSettings

    base = PlanSettings()
    if args.nights < 1:
        raise PeriplanError(f"--nights must be at least 1; got {args.nights}")
    require_nonnegative(args, "baseline_h", "k_sigma", "overhead_min")
    if args.week_rule and args.repeats and args.week_rule != args.repeats:
        raise PeriplanError(f"--week-rule {args.week_rule} and --repeats {args.repeats} disagree; give --week-rule only")
    if args.repeats and not args.week_rule:
        print("periplan: note: --repeats is now --week-rule; the old name works for this release only",
              file=sys.stderr)
    rule = args.week_rule or args.repeats or base.schedule.repeats
    changes = {"repeats": rule}
    if args.overhead_min is not None:
        changes["overhead_min"] = args.overhead_min
    if args.seconds_per_night is not None:
        if not args.seconds_per_night > 0:
            raise PeriplanError(f"--seconds-per-night must be a positive number of seconds; got {args.seconds_per_night:g}")
        changes["time_limit_s_per_night"] = args.seconds_per_night
    sched = dataclasses.replace(base.schedule, **changes)
    return PlanSettings(baseline_h=base.baseline_h if args.baseline_h is None else args.baseline_h,
                        k_sigma=base.k_sigma if args.k_sigma is None else args.k_sigma, schedule=sched)


def run_plan(catalog, site_path, args) -> int:
    """Load, plan, write, print the summary: the body of ``plan`` and ``demo``."""
    from ...inputs import catalogue
    from ...inputs.site import read_site
    from ...outputs import plan_folder, sheets
    from ...outputs.wording import CAUTION_LINES, count
    from ...pipeline import STAGES, first_night_for, make_plan
    from .. import spans
    from ..progress import ProgressBar

    settings = settings_from(args)
    if args.start is not None:
        spans.parse_date(args.start)
    try:
        plan_folder.check_out_dir(args.out, args.force)  # before any work: nothing is overwritten
    except plan_folder.OutputExists as exc:
        raise PeriplanError(f"--out {exc}; add --force to replace it or choose another folder") from None
    except PeriplanError as exc:
        raise PeriplanError(f"--out {exc}") from None
    site_paths = site_path if isinstance(site_path, list) else [site_path]
    sites = [read_site(p) for p in site_paths]
    site = sites[0]
    targets = catalogue.read_catalogue(catalog)
    log = None
    if getattr(args, "log", None):
        from ...inputs.observation_log import read_log

        log = read_log(args.log, targets)
    now = spans.now()
    first = first_night_for(args.start, site, now=now)
    if len(sites) > 1:
        return _run_campaign(targets, sites, first, settings, log, args)
    bar = ProgressBar(len(STAGES) + 1)
    plan = make_plan(targets, site, first, args.nights, settings, progress=bar, log=log)
    summary = sheets.week_summary_text(plan.schedule, plan.nights, tz=site.timezone, report=plan.report)
    bar("writing files")
    paths = plan_folder.write_plan(plan, args.out, force=args.force, summary_text=summary)
    bar.done()
    _warn([plan], catalog, [f"{args.out}/unobservable.csv"], log, getattr(args, "log", None))
    if args.start is None:
        note = past_blocks_note(plan.schedule, first, now, site.timezone)
        if note:
            print(f"periplan: note: {note}", file=sys.stderr)
    sys.stdout.write(summary)  # says once, itself, when nothing could be scheduled
    used = plan.schedule["night"].nunique() if len(plan.schedule) else 0
    nights = count(len(plan.nights), "night") if used == len(plan.nights) else f"{used} of {count(len(plan.nights), 'night')}"
    print(f"\n{count(len(plan.schedule), 'block')} on {nights} at {site.name}; "
          f"{count(len(paths), 'file')} in {args.out}/")
    print(CAUTION_LINES)
    return 0


def _run_campaign(targets, sites, first, settings, log, args) -> int:
    """``plan`` with several sites: one joint choice, a plan folder per site, one schedule and calendar."""
    from ...outputs import plan_folder, sheets
    from ...outputs.file_names import unique_file_parts
    from ...outputs.wording import CAUTION_LINES, count
    from ...pipeline import STAGES, make_campaign
    from ..progress import ProgressBar

    bar = ProgressBar(len(STAGES) * len(sites) + 1)
    plans = make_campaign(targets, sites, first, args.nights, settings, progress=bar, log=log)
    summary = "".join(f"== {p.site.name} ==\n" + sheets.week_summary_text(p.schedule, p.nights, tz=p.site.timezone)
                      for p in plans)
    summary += f"Choice of blocks for all sites: {plans[0].report.describe()}.\n"
    bar("writing files")
    try:
        paths = plan_folder.write_campaign(plans, args.out, force=args.force, summary_text=summary)
    except plan_folder.OutputExists as exc:
        raise PeriplanError(f"--out {exc}; add --force to replace it or choose another folder") from None
    bar.done()
    parts = unique_file_parts([p.site.name for p in plans])
    _warn(plans, args.catalog, [f"{args.out}/{parts[p.site.name]}/unobservable.csv" for p in plans], log, args.log)
    sys.stdout.write(summary)
    n = sum(len(p.schedule) for p in plans)
    print(f"\n{count(n, 'block')} at {count(len(sites), 'site')}; {count(len(paths), 'file')} in {args.out}/")
    print(CAUTION_LINES)
    return 0


def _warn(plans, catalog, unobservable_files, log=None, log_path=None) -> None:
    """On stderr: each site's targets that never rise there (named with the file listing them),
    then the run's notes (targets without a timing uncertainty, targets without an event, logged
    visits and logged events that count for nothing)."""
    from ...outputs.explain import no_uncertainty_note
    from ...outputs.tables import never_rising_lines

    for plan, listed_in in zip(plans, unobservable_files):
        for line in never_rising_lines(plan.never_rising, plan.site.name, listed_in):
            print(f"periplan: warning: {line}", file=sys.stderr)
    for note in (no_uncertainty_note(plans[0].events), no_event_note(plans, catalog),
                 unused_visits_note(log, plans[0].targets, log_path),
                 foreign_events_note(log, plans[0].targets, log_path)):
        if note:
            print(f"periplan: note: {note}", file=sys.stderr)


def no_event_note(plans, catalog) -> str | None:
    """The line naming the targets that rise at a site but have no event in the planned nights (a
    long period's periastron months away), which are otherwise in no file of the plan; None if none."""
    import numpy as np

    from ...outputs.wording import first_few

    targets = plans[0].targets
    quiet = np.array([len(e) > 0 for e in targets["events"]], bool)
    for plan in plans:
        quiet[plan.events["target_index"].to_numpy(int)] = False
    rises = np.zeros(len(targets), bool)
    for plan in plans:
        rises |= ~np.isin(np.arange(len(targets)), plan.never_rising["target_index"].to_numpy(int))
    quiet &= rises
    names = targets["name"].to_numpy(object)[quiet]
    if not len(names):
        return None
    shown = first_few(names)
    which = "target has" if len(names) == 1 else "targets have"
    return (f"{len(names)} {which} no event in these nights ({shown}); "
            f"'periplan events {catalog} --start {plans[0].nights['night'].iloc[0]} --days 365' shows when the "
            "next ones come")


def unused_visits_note(log, targets, log_path) -> str | None:
    """The line naming the log's ``visit`` rows (done or partial) of targets that ask for nothing a
    visit serves (phase bins, wanted phases, nightly visits), which the plan therefore ignores: an
    RV point at an extremum is logged under its event's name; None if there are none."""
    import os

    import numpy as np

    from ...outputs.wording import first_few
    from ...scheduling.log_requests import USED

    if log is None or log.empty:
        return None
    served = ((targets["phase_bins"].to_numpy(float) > 0) | np.array([len(p) > 0 for p in targets["rv_phases"]])
              | np.isfinite(targets["visit_h"].to_numpy(float)))
    idle = log[(log["purpose"] == "visit") & log["outcome"].isin(USED)]
    idle = idle[~served[idle["target_index"].to_numpy(int)]]
    if idle.empty:
        return None
    rows = first_few(idle["row"].astype(int))
    names = first_few(dict.fromkeys(idle["target"]))
    return (f"{os.path.basename(log_path)}: row{'s' if len(idle) > 1 else ''} {rows}: a visit of {names} counts "
            "for nothing in the plan (no phase_bins, rv_phases or visit_h asks for one); log an RV point at "
            "an extremum with purpose rv_max or rv_min, or an event's series under the event's name")


def foreign_events_note(log, targets, log_path) -> str | None:
    """The line naming the log's event rows (done or partial) whose purpose is none of their
    target's events (an occultation logged for a target whose catalogue asks for none), which the
    plan therefore ignores; None if there are none."""
    import os

    from ...orbits.geometry import names_event
    from ...outputs.wording import first_few
    from ...scheduling.log_requests import USED

    if log is None or log.empty:
        return None
    rows = log[~log["purpose"].isin(["visit", "free"]) & log["outcome"].isin(USED)]
    events, labels = targets["events"].to_numpy(object), targets["label"].to_numpy(object)
    foreign = rows[[not any(names_event(p, ev, labels[ti]) for ev in events[ti])
                    for p, ti in zip(rows["purpose"], rows["target_index"].to_numpy(int))]]
    if foreign.empty:
        return None
    first = foreign.iloc[0]
    own = ", ".join(events[int(first["target_index"])]) or "none"
    return (f"{os.path.basename(log_path)}: row{'s' if len(foreign) > 1 else ''} {first_few(foreign['row'].astype(int))}: "
            f"{first['purpose']} is not an event of {first['target']} (its events: {own}), so the row counts for "
            "nothing in the plan; log it under one of the target's events, or add the event to its events column")


def past_blocks_note(schedule, first_night, now, tz: str) -> str | None:
    """A note on the blocks of ``first_night`` that begin before ``now``, or None when there are none."""
    from ...outputs.wording import count
    from ...timescales.clock import datetime_to_jd_utc, zone

    if schedule.empty:
        return None
    first = schedule[schedule["night"].astype(str) == str(first_night)]
    past = first[first["start_jd_utc"].to_numpy(float) < datetime_to_jd_utc(now)]
    if past.empty:
        return None
    clock = now.astimezone(zone(tz)).strftime("%H:%M")
    return (f"the night of {first_night} is under way: {count(len(past), 'block')} of its "
            f"{len(first)} began before now ({clock} local time)")


def run(args) -> int:
    return run_plan(args.catalog, args.site, args)
