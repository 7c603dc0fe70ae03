"""Write a :class:`~planner.plan.Plan` to a folder: schedule, nightly lists, charts, calendar.

Files (all in ``out_dir``):

=============================  ===============================================================
``schedule.csv``               one row per block (:func:`planner.sheets.write_schedule_csv`)
``night-YYYY-MM-DD.txt/.html`` printable list of each night (:mod:`planner.sheets`)
``altitude-YYYY-MM-DD.png``    altitude of the night's scheduled targets (:mod:`planner.charts`)
``week.png``                   the week's blocks, one row per night
``rv-TARGET.png``              RV over orbital phase of each scheduled eccentric target with K
                               (TARGET from :func:`planner.outputs.file_names.unique_file_parts`)
``plan.ics``                   one calendar event per block (:mod:`planner.ical`)
``summary.txt``                the terminal summary
``unobservable.csv``           targets that never rise high enough at the site, with the reason
``unscheduled.csv``            every request not in the plan, with its reason in words and as a code
                               (:mod:`planner.scheduling.losses`)
``schedule-info.json``         how the schedule was chosen: the solver's status (proven optimal,
                               or the gap to its bound), total value, bound, seconds, settings
``log-template.csv``           the observation log pre-filled with the planned blocks, outcome
                               ``planned`` (:mod:`planner.outputs.log_template`)
``plan-files.txt``             the manifest: the names of the files above that this plan wrote
=============================  ===============================================================

Nothing is half-written: every file is first made in a hidden staging folder inside ``out_dir``
and moved into place only when all of them exist, each move an atomic rename; the files they
replace are kept aside (hard links, or copies where the file system has none) until the last
move, and put back if any step fails, so an error or an interruption leaves ``out_dir`` as it
was. Existing plan files are replaced only with ``force=True``; otherwise :class:`OutputExists`
is raised before anything is computed.

With ``force=True`` the folder ends up holding exactly the new plan's files beside whatever
else was there: the files named in the previous plan's manifest that the new plan does not write
are removed, and no other file is ever deleted (a folder without a manifest loses nothing but
the files the new plan writes over). The manifest lists only plain names of plan files; any other
line in it is ignored.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile

import numpy as np
import pandas as pd

from ..errors import PeriplanError
from ..sky import windows
from ..timescales import clock

#: Sample step (days) of the altitude curves in the night charts: 5 minutes.
CHART_STEP_D = 5.0 / 1440.0
#: The manifest: names of the files the plan in the folder wrote, one a line.
MANIFEST_NAME = "plan-files.txt"
FIXED_NAMES = ("schedule.csv", "plan.ics", "week.png", "summary.txt", "unobservable.csv", "unscheduled.csv",
               "schedule-info.json", "log-template.csv", "index.html", MANIFEST_NAME)
_PLAN_FILE = re.compile(r"^(night-\d{4}-\d{2}-\d{2}\.(txt|html)|altitude-\d{4}-\d{2}-\d{2}\.png|rv-.+\.png"
                        r"|target-.+\.html)$")
_MANIFEST_HEADER = ("# Files of the periplan plan in this folder. A forced re-run replaces exactly these;\n"
                    "# periplan never deletes a file that is not listed here.\n")


class OutputExists(PeriplanError):
    """The output folder already holds plan files and ``force`` was not given.

    ``folder`` is the folder, ``found`` the plan files in it; the command line adds its options.
    """

    def __init__(self, folder: str, found: list[str]):
        shown = ", ".join(found[:3]) + (", ..." if len(found) > 3 else "")
        super().__init__(f"{folder}: already holds a plan ({shown})")
        self.folder, self.found = folder, found


def safe_file_name(name: str) -> str:
    """A target name made safe for a file name (:func:`planner.outputs.file_names.file_part`)."""
    from .file_names import file_part

    return file_part(name)


def is_plan_file_name(name: str) -> bool:
    """True for a plain file name of the kind a plan writes (no folder part, not hidden)."""
    return (name == os.path.basename(name) and not name.startswith(".")
            and (name in FIXED_NAMES or bool(_PLAN_FILE.match(name))))


def manifest_names(out_dir) -> list[str]:
    """Plan files listed in the manifest of ``out_dir`` (empty when there is none or no folder)."""
    try:
        with open(os.path.join(os.fspath(out_dir), MANIFEST_NAME), encoding="utf-8") as fh:
            lines = fh.read().splitlines()
    except (OSError, UnicodeDecodeError):
        return []
    names = (ln.strip() for ln in lines if ln.strip() and not ln.startswith("#"))
    return sorted({n for n in names if is_plan_file_name(n) and n != MANIFEST_NAME})


def existing_plan_files(out_dir) -> list[str]:
    """Names of files in ``out_dir`` that a plan would write (empty when none or no folder)."""
    try:
        names = os.listdir(out_dir)
    except (FileNotFoundError, NotADirectoryError):
        return []
    listed = set(manifest_names(out_dir))
    return sorted(n for n in names if n in listed or is_plan_file_name(n))


def check_out_dir(out_dir, force: bool) -> None:
    """Raise :class:`OutputExists` (or PeriplanError) when ``out_dir`` cannot take a new plan."""
    out_dir = os.fspath(out_dir)
    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise PeriplanError(f"{out_dir}: exists and is not a folder")
    found = existing_plan_files(out_dir)
    if found and not force:
        raise OutputExists(out_dir, found)


def write_plan(plan, out_dir, force: bool = False, summary_text: str | None = None, progress=None,
               workers: int | None = None) -> list[str]:
    """Write every file of ``plan`` into ``out_dir`` (created if needed); returns their paths.

    ``progress``, when given, is called with the name of each file as it is made. Charts are
    drawn by up to ``workers`` processes (default: two where the machine has two cores and can
    fork, else one); the plan is the same either way. A file that cannot be written raises
    :class:`~planner.errors.PeriplanError` naming it, with ``out_dir`` left as it was. The
    returned paths end with the manifest's.
    """
    from . import ical, sheet_pointing, sheets
    from .log_template import write_log_template
    from .tables import render

    out_dir = os.fspath(out_dir)
    check_out_dir(out_dir, force)
    created = not os.path.isdir(out_dir)
    current = "the plan's files"
    try:
        os.makedirs(out_dir, exist_ok=True)
        tz = plan.site.timezone
        staging = tempfile.mkdtemp(prefix=".periplan-", dir=out_dir)
    except OSError as exc:
        if created:
            with contextlib.suppress(OSError):
                os.rmdir(out_dir)
        raise _write_error(out_dir, current, exc) from None
    made, done = [], False

    def path(name):
        if name in made:  # two files of one name would overwrite each other in the staging folder
            raise PeriplanError(f"{out_dir}: two plan files would both be named {name}")
        made.append(name)
        if progress is not None:
            progress(name)
        return os.path.join(staging, name)

    try:
        schedule, nights = plan.schedule, plan.nights
        jobs = chart_jobs(plan, path)  # the slow ones first, so both workers stay busy
        jobs += week_page_jobs(plan, path, made)
        jobs.append((sheets.write_schedule_csv, (path("schedule.csv"), schedule), {"tz": tz}))
        for label in nights["night"].astype(str):
            for ext in ("txt", "html"):
                path(f"night-{label}.{ext}")
        pointed = sheet_pointing.with_pointing_columns(schedule, plan.targets, plan.site)
        jobs.append((sheets.write_night_sheets, (staging, pointed, nights), {"tz": tz, "site_name": plan.site.name,
                                                                       "targets": plan.targets,
                                                                       "unscheduled": plan.unscheduled}))
        jobs.append((ical.write_ics, (path("plan.ics"), schedule), {"site_name": plan.site.name}))
        if len(plan.never_rising):
            text = render(plan.never_rising.drop(columns="target_index"), "csv",
                          {"culmination_alt_deg": ".2f", "limit_deg": ".2f"})
            jobs.append((_write_text, (path("unobservable.csv"), text), {}))
        if summary_text is not None:
            jobs.append((_write_text, (path("summary.txt"), summary_text), {}))
        jobs.append((_write_unscheduled_csv, (path("unscheduled.csv"), plan), {}))
        jobs.append((_write_text, (path("schedule-info.json"), schedule_info_json(plan)), {}))
        jobs.append((write_log_template, (path("log-template.csv"), schedule), {}))
        _draw(jobs, workers)
        current = MANIFEST_NAME
        _write_text(path(MANIFEST_NAME), _MANIFEST_HEADER + "".join(f"{n}\n" for n in made if n != MANIFEST_NAME))
        current = "the plan's files"
        stale = [n for n in manifest_names(out_dir) if n not in made] if force else []
        _commit(staging, out_dir, made, stale)
        done = True
        return [os.path.join(out_dir, name) for name in made]
    except OSError as exc:
        raise _write_error(out_dir, getattr(exc, "filename", None) or current, exc) from None
    finally:
        shutil.rmtree(staging, ignore_errors=True)
        if created and not done:
            with contextlib.suppress(OSError):
                os.rmdir(out_dir)  # the folder this call made, empty again: it did not exist before


def _write_error(out_dir, what, exc: OSError) -> PeriplanError:
    """One-line error for a file that could not be written, the folder left as it was."""
    what = os.path.basename(os.fspath(what)) or str(what)
    if what.startswith(".periplan-"):
        what = "a plan file"
    reason = exc.strerror or str(exc) or type(exc).__name__
    return PeriplanError(f"{out_dir}: could not write {what} ({reason}); the folder was left as it was")


def _keep_aside(src: str, dst: str) -> None:
    """A second name ``dst`` for the file ``src`` (a hard link, or a copy where links fail)."""
    try:
        os.link(src, dst, follow_symlinks=False)
    except OSError:
        shutil.copy2(src, dst)


def _commit(staging: str, out_dir: str, names: list[str], stale: list[str]) -> None:
    """Move ``names`` from ``staging`` into ``out_dir`` and remove ``stale`` there, all or nothing.

    Each file that is replaced or removed is first kept aside in a hidden folder; if any step
    fails, the files already moved go back to ``staging`` and the kept ones are restored, so
    ``out_dir`` is as it was. The manifest should come last in ``names``.
    """
    aside = tempfile.mkdtemp(prefix=".periplan-old-", dir=out_dir)
    kept, moved, removed = [], [], []
    try:
        for name in names:
            target = os.path.join(out_dir, name)
            if os.path.lexists(target):
                _keep_aside(target, os.path.join(aside, name))
                kept.append(name)
            os.replace(os.path.join(staging, name), target)
            moved.append(name)
        for name in stale:
            target = os.path.join(out_dir, name)
            if os.path.isfile(target) and not os.path.islink(target):
                os.replace(target, os.path.join(aside, name))
                removed.append(name)
    except BaseException:
        for name in reversed(removed):
            with contextlib.suppress(OSError):
                os.replace(os.path.join(aside, name), os.path.join(out_dir, name))
        for name in reversed(moved):
            with contextlib.suppress(OSError):
                if name in kept:
                    os.replace(os.path.join(aside, name), os.path.join(out_dir, name))
                else:
                    os.unlink(os.path.join(out_dir, name))
        raise
    finally:
        shutil.rmtree(aside, ignore_errors=True)


def chart_jobs(plan, path) -> list[tuple]:
    """The plan's charts as ``(writer, args, kwargs)`` jobs; ``path(name)`` gives each file's path.

    The astronomy (altitude curves) is done here, so a job only draws.
    """
    from . import charts
    from .target_style import plan_styles
    from .week_page import event_rows, file_part

    schedule, nights, tz = plan.schedule, plan.nights, plan.site.timezone
    styles = plan_styles(schedule["target"].astype(str)) if len(schedule) else {}  # one look in every chart
    jobs = [(charts.write_week_chart, (path("week.png"), schedule, nights),
             {"tz": tz, "title": f"{plan.site.name}: the week's plan", "styles": styles})]
    for _, night in nights.iterrows():
        blocks = schedule[schedule["night"].astype(str) == str(night["night"])]
        if blocks.empty:
            continue
        start = night["sunset_jd_utc"] if np.isfinite(night["sunset_jd_utc"]) else night["noon_jd_utc"]
        end = night["sunrise_jd_utc"] if np.isfinite(night["sunrise_jd_utc"]) else night["next_noon_jd_utc"]
        t = np.arange(start - 1.0 / 24, end + 1.0 / 24 + CHART_STEP_D / 2, CHART_STEP_D)
        order = list(dict.fromkeys(blocks["target_index"].astype(int)))
        pos = windows.target_positions(plan.targets, plan.site, np.array(order)[:, None], t[None, :])
        alt = pos.alt_deg
        names = [str(plan.targets["name"].iloc[i]) for i in order]
        jobs.append((charts.write_night_chart,
                     (path(f"altitude-{night['night']}.png"), night, t, alt, names, blocks,
                      plan.site.min_altitude_deg),
                     {"tz": tz, "title": f"{plan.site.name}, night of {night['night']}",
                      "moon_alt_deg": plan.tracks.moon_altaz_deg(t)[0], "styles": styles, "az_deg": pos.az_deg,
                      "ha_h": pos.ha_h, "site": plan.site}))
    for ti in sorted(set(schedule["target_index"].astype(int))) if len(schedule) else []:
        target = plan.targets.iloc[ti]
        if target["ephemeris"] == "orbit" and target["e"] > 0 and np.isfinite(target["k_ms"]):
            ev = plan.events.iloc[event_rows(plan).get(ti, [])]
            sigma = ev.groupby("event")["sigma_d"].median().to_dict() if len(ev) else {}
            jobs.append((charts.write_rv_chart, (path(f"rv-{file_part(plan, target['name'])}.png"), target,
                                                 schedule[schedule["target_index"] == ti]),
                         {"styles": styles, "event_sigma_d": sigma}))
    return jobs


def week_page_jobs(plan, path, made) -> list[tuple]:
    """``index.html`` and the target pages as one job (they link to the files in ``made``), so a
    worker process builds the pages while the other draws charts."""
    from . import week_page

    names = week_page.page_files(plan)
    staging = os.path.dirname(path(names[0]))
    for name in names[1:]:
        path(name)
    # ``made`` itself: the files named after this call (sheets, calendar) are in it when the job runs
    return [(week_page.write_week_pages, (staging, plan, made), {})]


def _write_text(path, text):
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write(text)


def _run_job(job):
    writer, args, kwargs = job
    writer(*args, **kwargs)


#: The jobs of the running :func:`_draw`: forked workers find them here, so a survey's tables
#: (a million unscheduled requests) are never pickled to reach them.
_PENDING: list = []


def _run_pending(k):
    _run_job(_PENDING[k])


def _draw(jobs, workers):
    """Run the writing jobs, on two forked processes when that can help (bench/bench_plan.py)."""
    import multiprocessing as mp

    if workers is None:
        workers = 2 if (os.cpu_count() or 1) >= 2 and "fork" in mp.get_all_start_methods() else 1
    if workers <= 1 or len(jobs) < 4:
        for job in jobs:
            _run_job(job)
        return
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    import matplotlib.backends.backend_agg  # noqa: F401  imported once here, not in each worker
    import matplotlib.figure  # noqa: F401

    _PENDING[:] = jobs  # before the pool forks its workers
    try:
        with ProcessPoolExecutor(max_workers=workers, mp_context=mp.get_context("fork")) as pool:
            for future in [pool.submit(_run_pending, k) for k in range(len(jobs))]:
                future.result()
    except BrokenProcessPool:
        raise PeriplanError("a plan file could not be made (its process stopped); nothing was written") from None
    finally:
        _PENDING.clear()


def _write_unscheduled_csv(path, plan):
    _write_text(path, unscheduled_csv(plan))


def unscheduled_csv(plan) -> str:
    """CSV text of the plan's unscheduled requests (header only when every request is served)."""
    from ..scheduling.losses import UNSCHEDULED_COLUMNS
    from .tables import render

    table = plan.unscheduled if len(plan.unscheduled) else pd.DataFrame({c: [] for c in UNSCHEDULED_COLUMNS})
    return render(table, "csv", {"priority": "g", "best_value": ".1f"})


def schedule_info_json(plan) -> str:
    """JSON text saying how the schedule was chosen (solver status, value, bound, gap, settings)."""
    import dataclasses
    import json

    r = plan.report
    options = plan.settings.schedule
    info = {
        "solver": "HiGHS (scipy.optimize.milp)",
        "status": r.status if r else "not solved", "proven_optimal": bool(r and r.optimal),
        "total_value": r.objective if r else 0.0, "bound": r.bound if r else 0.0,
        "relative_gap": r.gap if r else 0.0, "seconds": round(r.seconds, 3) if r else 0.0,
        "options": r.n_options if r else 0, "constraints": r.n_rows if r else 0,
        "time_limit_s": options.time_limit_s_per_night * max(len(plan.nights), 1),
        "week_rule": options.repeats, "overhead_min": options.overhead_min,
        "baseline_h": plan.settings.baseline_h, "k_sigma": plan.settings.k_sigma,
        "site": plan.site.name, "nights": [str(n) for n in plan.nights["night"]],
        "blocks": int(len(plan.schedule)), "unscheduled_requests": int(len(plan.unscheduled)),
        "score_weights": dataclasses.asdict(options.weights),
        "stage_seconds": plan.stage_seconds,
        "solved_by_night": [dict(run, start_utc=clock.jd_utc_to_iso_z([run["start_jd_utc"]])[0])
                            for run in (r.runs if r else ())],
    }
    return json.dumps(info, indent=1) + "\n"


#: Files of a campaign of several sites written beside the sites' own plan folders.
CAMPAIGN_NAMES = ("schedule.csv", "plan.ics", "summary.txt")


def write_campaign(plans, out_dir, force: bool = False, summary_text: str | None = None) -> list[str]:
    """Write a campaign of several sites: one plan folder per site, and beside them one
    ``schedule.csv`` (UTC times, with a ``site`` column), one ``plan.ics`` and ``summary.txt``.

    Each site's folder (named from the site's name, :func:`planner.outputs.file_names.unique_file_parts`)
    is a whole plan folder (:func:`write_plan`, its own manifest and all-or-nothing writes).
    Returns the paths written.
    """
    from . import ical, sheets
    from .atomic import atomic_write
    from .file_names import unique_file_parts

    out_dir = os.fspath(out_dir)
    parts = unique_file_parts([p.site.name for p in plans])
    found = [n for n in CAMPAIGN_NAMES if os.path.exists(os.path.join(out_dir, n))]
    found += [parts[p.site.name] + "/" for p in plans if existing_plan_files(os.path.join(out_dir, parts[p.site.name]))]
    if found and not force:
        raise OutputExists(out_dir, found)
    paths = []
    for plan in plans:
        paths += write_plan(plan, os.path.join(out_dir, parts[plan.site.name]), force=force)
    schedule = pd.concat([p.schedule for p in plans], ignore_index=True)
    if len(schedule):
        schedule = schedule.sort_values(["start_jd_utc", "site"], kind="stable").reset_index(drop=True)
    paths.append(sheets.write_schedule_csv(os.path.join(out_dir, "schedule.csv"), schedule, None))
    paths.append(ical.write_ics(os.path.join(out_dir, "plan.ics"), schedule))
    if summary_text is not None:
        with atomic_write(os.path.join(out_dir, "summary.txt")) as fh:
            fh.write(summary_text)
        paths.append(os.path.join(out_dir, "summary.txt"))
    return paths
