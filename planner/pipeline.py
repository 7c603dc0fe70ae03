"""The whole pipeline in one call: target table + site + nights -> :class:`Plan`.

:func:`make_plan` runs the stages in order (nights, events and the instances of wanted orbital
phases (:mod:`planner.scheduling.phase_requests`), observable intervals, event visibility,
observing requests, schedule) and returns every intermediate table, so the command line, the notebook
and the tests see the same thing. It reads and writes no files; :mod:`planner.plan_files` writes
a plan out. Times are UTC Julian dates (``*_jd_utc``) except the events' ``bjd_tdb``.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import logging
import time

import numpy as np
import pandas as pd

from . import numerics
from .errors import PeriplanError
from .orbits.events import predict_events
from .scheduling.requests import RequestSettings, build_requests, request_reach_d, request_windows
from .scheduling.losses import unscheduled
from .scheduling.phase_requests import wanted_phase_events
from .scheduling.schedule import ScheduleOptions, plan_week_report
from .sky import night as night_mod
from .sky import positions, windows
from .timescales.epochs import utc_to_tdb_jd

logger = logging.getLogger(__name__)

#: Stages reported to a progress callback, in order.
STAGES = ("nights", "events", "intervals", "visibility", "requests", "schedule")
#: Events are predicted this many days beyond the nights' edges, so that a window reaching into
#: the week from an event just outside it (a long transit, a wide timing uncertainty) is seen;
#: a target observed in RV looks further by the reach of its RV windows
#: (:func:`planner.scheduling.requests.request_reach_d`).
EVENT_MARGIN_D = 1.0


@dataclasses.dataclass(frozen=True)
class PlanSettings:
    """What the observer asks for beyond the site file.

    ``baseline_h``: out-of-event time wanted either side of each event; ``k_sigma``: windows are
    widened by this many 1-sigma timing uncertainties either side; ``schedule``: the
    scheduler's options (overhead, repeat rule, score weights).
    """

    baseline_h: float = windows.DEFAULT_BASELINE_H
    k_sigma: float = windows.DEFAULT_K_SIGMA
    schedule: ScheduleOptions = ScheduleOptions()


@dataclasses.dataclass
class Plan:
    """Everything a week's plan is made of (tables as in the modules that make them)."""

    site: object
    targets: pd.DataFrame
    nights: pd.DataFrame
    events: pd.DataFrame        # planner.windows.event_visibility output, events in the nights only
    intervals: pd.DataFrame     # planner.windows.observable_intervals
    requests: pd.DataFrame      # planner.scheduling.requests.build_requests
    schedule: pd.DataFrame      # planner.scheduling.schedule.plan_week
    never_rising: pd.DataFrame  # planner.sky.windows.never_rising
    tracks: object              # planner.sky.positions.SkyTracks of the Sun and Moon
    settings: PlanSettings
    candidates: pd.DataFrame = dataclasses.field(default_factory=pd.DataFrame)   # every block chosen from
    unscheduled: pd.DataFrame = dataclasses.field(default_factory=pd.DataFrame)  # planner.scheduling.losses
    report: object = None       # planner.scheduling.solver.SolveReport: optimal, or the gap to the bound
    log: pd.DataFrame | None = None  # the observation log the plan was made with (planner.inputs.observation_log)
    stage_seconds: dict = dataclasses.field(default_factory=dict)  # wall seconds of each of STAGES

    def altitude_deg(self, target_index, jd_utc):
        """Airless altitude (deg) of targets (row numbers) at UTC Julian dates, broadcast."""
        return windows.target_altitudes(self.targets, self.site, target_index, jd_utc)

    def moon_sep_deg(self, target_index, jd_utc):
        """Topocentric Moon-target separation (deg) of targets at UTC Julian dates, broadcast."""
        return moon_separation_deg(self.targets, self.tracks, target_index, jd_utc)


def moon_separation_deg(targets, tracks, target_index, jd_utc):
    """Moon-target separation (deg), broadcast over ``target_index`` and ``jd_utc``.

    The target's apparent (CIRS) place is taken once, at the middle of the times: it moves by
    well under an arcsecond in a week, against the Moon's half-degree disc.
    """
    ti, jd = np.broadcast_arrays(np.asarray(target_index, dtype=int), np.asarray(jd_utc, dtype=float))
    if ti.size == 0:
        return np.zeros(ti.shape)
    mid_tdb = float(utc_to_tdb_jd(np.array([np.nanmean(jd)]))[0])
    uniq, inverse = np.unique(ti, return_inverse=True)
    ra, dec = positions.cirs_place(targets["ra_deg"].to_numpy(float)[uniq],
                                    targets["dec_deg"].to_numpy(float)[uniq], mid_tdb)
    vec = numerics.unit_vectors(ra, dec)[inverse.reshape(ti.shape)]
    return positions.separation_deg(vec, tracks.moon_vector(jd))


def _in_nights(visible: pd.DataFrame, nights: pd.DataFrame, window_start, window_end) -> pd.DataFrame:
    """The events whose window (``window_start``, ``window_end``: UTC JD per row, the wider of the
    visibility window and the request's) reaches into the nights; one whose moment falls outside
    them (a long transit, a wide timing uncertainty, an RV extremum just before the first night
    whose phase window runs on into it) is labelled with the night its window reaches."""
    lo, hi = float(nights["noon_jd_utc"].min()), float(nights["next_noon_jd_utc"].max())
    w0, w1 = np.asarray(window_start, float), np.asarray(window_end, float)
    reaches = (w1 > lo) & (w0 < hi)
    keep = visible["night"].notna().to_numpy() | reaches
    out = visible[keep].reset_index(drop=True)
    w0, w1 = w0[keep], w1[keep]
    outside = out["night"].isna().to_numpy()
    if outside.any():
        inside = np.clip(np.where(out["jd_utc"].to_numpy(float)[outside] < lo, w1[outside], w0[outside]), lo, hi - 1e-9)
        labels = nights["night"].to_numpy(object)[night_mod.night_of(inside, nights)]
        out.loc[outside, "night"] = labels
    return out


def first_night_for(start, site, now: dt.datetime | None = None) -> dt.date:
    """The first night's label: ``start`` as a date, or by default the night still to observe.

    Nights are labelled by the local date of their evening and run from noon to noon. Without
    ``start`` the first night is the night under way (at 2 a.m., the one labelled with
    yesterday's date) until the end of its darkness (the site's darkness; sunrise on a night
    without darkness), and from then on the coming night: run at 05:50, after dawn, a plan
    starts with the evening ahead, not with a night that is over. ``site`` is a
    :class:`~planner.inputs.site.Site`; ``now`` (an aware datetime) is for tests and defaults
    to the present moment.
    """
    if start is not None:
        return start if isinstance(start, dt.date) else dt.date.fromisoformat(str(start))
    from .timescales.clock import datetime_to_jd_utc, zone

    now = now or dt.datetime.now(dt.timezone.utc)
    under_way = (now.astimezone(zone(site.timezone)) - dt.timedelta(hours=12)).date()
    night = night_mod.night_table(site, under_way, 1).iloc[0]
    ends = [night[c] for c in ("dark_end_jd_utc", "sunrise_jd_utc") if np.isfinite(night[c])]
    if ends and datetime_to_jd_utc(now) >= ends[0]:
        return under_way + dt.timedelta(days=1)
    return under_way


def make_plan(targets: pd.DataFrame, site, first_night, n_nights: int,
              settings: PlanSettings = PlanSettings(), progress=None, log: pd.DataFrame | None = None) -> Plan:
    """The week's :class:`Plan` for ``n_nights`` nights from ``first_night`` (a date label).

    ``targets`` from :func:`planner.catalogue.read_catalogue`, ``site`` from
    :func:`planner.site.read_site`. ``progress``, when given, is called with each name of
    :data:`STAGES` as that stage starts. ``log``, an observation log
    (:func:`planner.inputs.observation_log.read_log`), takes out what was observed and adapts the
    rest (:mod:`planner.scheduling.log_requests`). The same inputs give the same plan when the solver
    proves it optimal (``report``); one stopped by the time limit may differ from run to run
    (:mod:`planner.scheduling.schedule`).
    """
    timer = _StageTimer(progress)
    plan = _prepare(targets, site, first_night, n_nights, settings, timer)
    plan.log = log
    _stage(timer, "schedule")
    plan.schedule, plan.candidates, plan.report = plan_week_report(
        plan.events, plan.intervals, targets, plan.nights, altitude_deg=plan.altitude_deg,
        moon_sep_deg=plan.moon_sep_deg, options=settings.schedule, requests=plan.requests, log=log,
        tz=site.timezone)
    plan.unscheduled = _losses(plan, plan.schedule)
    plan.stage_seconds = timer.done()
    return plan


class _StageTimer:
    """A progress callback that passes each stage on and keeps the wall seconds each took."""

    def __init__(self, progress):
        self.progress, self.seconds, self._open = progress, {}, None

    def __call__(self, name):
        self.done()
        self._open = (name, time.perf_counter())
        if self.progress is not None:
            self.progress(name)

    def done(self) -> dict:
        if self._open is not None:
            name, t0 = self._open
            self.seconds[name] = round(self.seconds.get(name, 0.0) + time.perf_counter() - t0, 3)
            self._open = None
        return dict(self.seconds)


def make_campaign(targets: pd.DataFrame, sites, first_night, n_nights: int,
                  settings: PlanSettings = PlanSettings(), progress=None, log: pd.DataFrame | None = None) -> list:
    """One :class:`Plan` per site, their blocks chosen together (one model of every telescope).

    Each event instance goes to the site that serves it best, once, unless its target asks for
    more sites (a catalogue column ``sites``: the most sites that may observe one instance).
    Every plan holds its site's blocks; their ``report`` is the joint solve's. Sites must have
    different names.
    """
    from .scheduling.choose import choose_blocks
    from .scheduling.options import airmass_points_at
    from .scheduling.schedule import assemble, week_candidates

    names = [s.name for s in sites]
    if len(set(names)) < len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise PeriplanError(f"two sites are both named {dup!r}; give each site file its own name")
    if len(sites) == 1:
        return [make_plan(targets, sites[0], first_night, n_nights, settings, progress, log)]
    plans, weeks = [], []
    for site in sites:
        plan = _prepare(targets, site, first_night, n_nights, settings, progress)
        plan.log = log
        week = week_candidates(plan.events, plan.intervals, targets, plan.nights, plan.altitude_deg, plan.moon_sep_deg,
                               settings.schedule, plan.requests, log=log)
        week.cands["site"] = site.name
        week.monitors["site"] = site.name
        plans.append(plan)
        weeks.append(week)
    _stage(progress, "schedule")
    cands = pd.concat([w.cands for w in weeks], ignore_index=True)
    monitors = pd.concat([w.monitors.assign(_row=np.arange(len(w.monitors))) for w in weeks], ignore_index=True)
    order = list(plans[0].nights["night"].astype(str))
    options = settings.schedule
    points = airmass_points_at({p.site.name: p.altitude_deg for p in plans}, options.weights)
    blocks, visits, report = choose_blocks(cands, monitors, targets, order, options.overhead_min / 1440.0,
                                           options.repeats,
                                           options.time_limit_s_per_night * max(len(order), 1) * len(sites), points)
    for plan, week in zip(plans, weeks):
        mine = visits[visits["site"] == plan.site.name]
        local = week.monitors.loc[mine["_row"].to_numpy()] if len(mine) else week.monitors.iloc[:0]
        plan.schedule = assemble(blocks[blocks["site"] == plan.site.name].reset_index(drop=True), local, week,
                                 plan.nights, plan.altitude_deg, options,
                                 plan.site.timezone).assign(site=plan.site.name)
        plan.candidates, plan.report = week.everything(), report
    every = pd.concat([p.schedule for p in plans], ignore_index=True)
    for plan in plans:
        plan.unscheduled = _losses(plan, every)
    return plans


def _stage(progress, name):
    logger.info("stage: %s", name)
    if progress is not None:
        progress(name)


def _losses(plan, schedule):
    """The plan's unscheduled requests; ``schedule`` holds every site's blocks (served elsewhere = served)."""
    options = plan.settings.schedule
    return unscheduled(plan.events, plan.candidates, schedule, plan.targets, plan.site, plan.nights, plan.tracks,
                       plan.never_rising, options.overhead_min / 1440.0, options.repeats, plan.log)


def _prepare(targets, site, first_night, n_nights, settings, progress) -> Plan:
    """A :class:`Plan` up to its requests (nights, events, intervals, visibility, requests)."""
    from astropy.time import Time

    _stage(progress, "nights")
    # Sun and Moon tracks reach past the nights by the event margin (plus the light time), so that
    # events just outside the week can still be placed
    tracks = night_mod.tracks_for_nights(site, first_night, n_nights, margin_d=EVENT_MARGIN_D + 0.05)
    nights = night_mod.night_table(site, first_night, n_nights, tracks=tracks)

    _stage(progress, "events")
    span = Time([nights["noon_jd_utc"].min(), nights["next_noon_jd_utc"].max()], format="jd", scale="utc").tdb.jd
    events = predict_events(targets, span[0] - EVENT_MARGIN_D, span[1] + EVENT_MARGIN_D,
                            reach_d=request_reach_d(targets))
    phases = wanted_phase_events(targets, span[0] - EVENT_MARGIN_D, span[1] + EVENT_MARGIN_D)

    _stage(progress, "intervals")
    intervals = windows.observable_intervals(targets, site, nights, tracks=tracks)

    _stage(progress, "visibility")
    visible = windows.event_visibility(events, targets, site, nights, baseline_h=settings.baseline_h,
                                       k_sigma=settings.k_sigma, tracks=tracks, intervals=intervals)
    if len(phases):  # a wanted phase's window is its tolerance (its "duration") and k sigma: no baseline
        seen = windows.event_visibility(phases, targets, site, nights, baseline_h=0.0, k_sigma=settings.k_sigma,
                                        tracks=tracks, intervals=intervals)
        visible = pd.concat([visible, seen], ignore_index=True)
        visible = visible.iloc[np.lexsort((visible["target_index"].to_numpy(int),
                                           visible["bjd_tdb"].to_numpy(float)))].reset_index(drop=True)
    request_settings = RequestSettings(settings.baseline_h, settings.k_sigma, settings.schedule.min_block_min)
    w0, w1 = request_windows(visible, targets, request_settings)
    visible = _in_nights(visible, nights, np.fmin(w0, visible["window_start_jd_utc"].to_numpy(float)),
                         np.fmax(w1, visible["window_end_jd_utc"].to_numpy(float)))

    plan = Plan(site=site, targets=targets, nights=nights, events=visible, intervals=intervals,
                requests=pd.DataFrame(), schedule=pd.DataFrame(), never_rising=windows.never_rising(targets, site),
                tracks=tracks, settings=settings)
    _stage(progress, "requests")
    plan.requests = build_requests(visible, targets, intervals, plan.altitude_deg, request_settings,
                                   settings.schedule.weights, moon_sep_deg=plan.moon_sep_deg, nights=nights)
    return plan
