"""Survey-scale event runs: a catalogue in chunks of targets, one process or a Dask cluster.

The events stage is a pure function of a table of targets (:func:`events_table`), so a large
catalogue is cut into chunks of ``chunk_rows`` consecutive targets and the function is mapped
over them: in this process one chunk after another (memory bounded by one chunk's events), or
on a Dask cluster (``dask.distributed``) partition by partition, at most two chunks per worker in
flight. Each finished chunk goes to a callback (the command line writes it as a Parquet file,
:mod:`planner.outputs.parquet_chunks`). Nothing in the engine changes for this.

The result does not depend on the chunking: every target's events depend on that target alone
(its Monte Carlo draw is seeded by its name), the Sun and Moon tracks and the nights are made
once per run for the whole span, and :func:`collect` puts the chunks back in the order of the
one-table run (by time, then catalogue order). tests/test_survey.py compares the two row by row.

Times: the span is given as astropy UTC ``Time``; the tables are those of the ``events``
command (:func:`planner.outputs.tables.events_frame`, plus the visibility columns with a site).
"""

from __future__ import annotations

import dataclasses
import numpy as np
import pandas as pd

from .errors import PeriplanError
from .orbits.events import predict_events, seen_in_span
from .outputs.tables import events_frame, with_visibility
from .sky import windows
from .timescales.epochs import bjd_bounds

#: Targets per chunk by default: about 20 MB of events for a month of short-period targets.
DEFAULT_CHUNK_ROWS = 5000
#: Nights added either side of the span (days) when a site is given, the same for every chunk
#: so that every chunk sees the same night table: one night plus the longest window padding
#: the one-table command allows (30 days).
NIGHT_PAD_D = 31

#: Seconds to wait for a Dask scheduler before giving up.
CONNECT_TIMEOUT_S = 10

#: Units of the columns of a streamed events table (for the run's metadata file).
COLUMN_UNITS = {
    "target": "name", "event": "event name", "label": "catalogue label", "cycle": "orbits since the epoch",
    "bjd_tdb": "d (BJD_TDB)", "utc": "ISO 8601 UTC", "local": "ISO 8601 with UTC offset",
    "sigma_min": "min (1 sigma)", "duration_h": "h", "night": "local date of the evening",
    "alt_deg": "deg (airless)", "moon_sep_deg": "deg", "observable_fraction": "fraction of the window",
}


@dataclasses.dataclass(frozen=True)
class EventsJob:
    """What every chunk is asked for: the span, the event kinds, the zone, and the site's night.

    ``start_utc``/``end_utc``: astropy Times. ``site`` (optional) adds visibility with
    ``baseline_h``, ``k_sigma`` and the ``visible`` cut; ``nights`` and ``tracks`` are then made
    once by :func:`make_job` for the whole span.
    """

    start_utc: object
    end_utc: object
    kinds: tuple | None = None
    tz: str | None = None
    site: object = None
    baseline_h: float = windows.DEFAULT_BASELINE_H
    k_sigma: float = windows.DEFAULT_K_SIGMA
    visible: float | None = None
    nights: pd.DataFrame | None = None
    tracks: object = None


def make_job(start_utc, end_utc, kinds=None, tz=None, site=None, baseline_h=None, k_sigma=None,
             visible=None) -> EventsJob:
    """An :class:`EventsJob`, with the site's nights and Sun/Moon tracks made once when given."""
    nights = tracks = None
    if site is not None:
        from .sky.night import nights_around

        tracks, nights = nights_around(site, start_utc, end_utc, NIGHT_PAD_D)
    return EventsJob(start_utc=start_utc, end_utc=end_utc, kinds=None if kinds is None else tuple(kinds),
                     tz=tz or (site.timezone if site is not None else None), site=site,
                     baseline_h=windows.DEFAULT_BASELINE_H if baseline_h is None else float(baseline_h),
                     k_sigma=windows.DEFAULT_K_SIGMA if k_sigma is None else float(k_sigma),
                     visible=visible, nights=nights, tracks=tracks)


def events_table(targets: pd.DataFrame, job: EventsJob) -> pd.DataFrame:
    """The events table of ``targets`` (any number of rows) for ``job``: the stage each chunk runs.

    Columns as the ``events`` command: target, event, label, cycle, bjd_tdb, utc, [local],
    sigma_min, duration_h, and with a site night, alt_deg, moon_sep_deg, observable_fraction
    (events below ``job.visible`` dropped). Sorted by time, then catalogue order.
    """
    targets = targets.reset_index(drop=True)
    events = predict_events(targets, *bjd_bounds(job.start_utc, job.end_utc), kinds=job.kinds)
    events, t_utc = seen_in_span(events, targets, job.start_utc, job.end_utc)
    table = events_frame(events, t_utc, job.tz)
    if job.site is None:
        return table
    vis = windows.event_visibility(events, targets, job.site, _nights_needed(events, job), baseline_h=job.baseline_h,
                                   k_sigma=job.k_sigma, tracks=job.tracks,
                                   jd_utc=t_utc.jd if len(events) else None)
    return with_visibility(table, vis, job.visible)


def _nights_needed(events, job):
    """The rows of ``job.nights`` that this chunk's event windows can reach.

    The span plus, either side, one night and the chunk's widest half-window (half the duration,
    or of the default length, plus the baseline and k sigma; rounded up to whole days, at most
    :data:`NIGHT_PAD_D` - 1). No window reaches a night outside these, so an event's visibility
    does not depend on the other events of its chunk, while a chunk of short-period, well-known
    targets does not pay for the intervals of a month of nights.
    """
    if len(events):
        duration_d = events["duration_d"].to_numpy(float)
        duration_d = np.where(np.isfinite(duration_d), duration_d, windows.DEFAULT_EVENT_LENGTH_H / 24.0)
        half = duration_d / 2.0 + job.baseline_h / 24.0 + job.k_sigma * events["sigma_d"].to_numpy(float)
        half_d = float(np.nan_to_num(half.max()))
    else:
        half_d = 0.0
    pad_d = 1 + int(min(np.ceil(half_d), NIGHT_PAD_D - 1))
    nights = job.nights
    keep = ((nights["next_noon_jd_utc"].to_numpy(float) >= job.start_utc.jd - pad_d)
            & (nights["noon_jd_utc"].to_numpy(float) <= job.end_utc.jd + pad_d))
    return nights[keep].reset_index(drop=True)


def chunk_bounds(n_targets: int, chunk_rows: int = DEFAULT_CHUNK_ROWS) -> list[tuple[int, int]]:
    """(first, end) row ranges of consecutive chunks of at most ``chunk_rows`` targets."""
    if chunk_rows < 1:
        raise PeriplanError(f"chunk size must be at least 1 target; got {chunk_rows}")
    return [(a, min(a + chunk_rows, n_targets)) for a in range(0, n_targets, chunk_rows)]


def run_chunks(targets: pd.DataFrame, job: EventsJob, on_chunk, chunk_rows: int = DEFAULT_CHUNK_ROWS,
               progress=None, client=None) -> int:
    """Run :func:`events_table` on every chunk; ``on_chunk(index, table)`` gets each as it is done.

    In this process chunks come in order; with a Dask ``client`` (see :func:`connect`) they come
    as they finish, at most two per worker in flight. ``progress(name)``, when given, is called
    once per finished chunk. Returns the number of chunks.
    """
    bounds = chunk_bounds(len(targets), chunk_rows)
    if client is None:
        for index, (a, b) in enumerate(bounds):
            on_chunk(index, events_table(targets.iloc[a:b], job))
            if progress is not None:
                progress(f"chunk {index + 1}")
        return len(bounds)
    return _run_on_dask(client, targets, job, bounds, on_chunk, progress)


def _chunk_task(index, targets, job):
    return index, events_table(targets, job)


def _run_on_dask(client, targets, job, bounds, on_chunk, progress):
    from distributed import as_completed

    n_workers = max(len(client.scheduler_info().get("workers", {})), 1)
    job_future = client.scatter(job, broadcast=True)
    pending = iter(enumerate(bounds))

    def submit(item):
        index, (a, b) = item
        return client.submit(_chunk_task, index, targets.iloc[a:b].reset_index(drop=True), job_future,
                             key=f"periplan-events-chunk-{index}-{id(job)}", pure=False)

    window = as_completed([submit(item) for item in _take(pending, 2 * n_workers)])
    for future in window:
        try:
            index, table = future.result()
        except ModuleNotFoundError as exc:  # a worker without periplan (or one of its packages)
            raise PeriplanError(f"a Dask worker cannot import {exc.name!r}; install periplan and its "
                                "dependencies on every worker") from None
        future.release()
        on_chunk(index, table)
        if progress is not None:
            progress(f"chunk {index + 1}")
        for item in _take(pending, 1):
            window.add(submit(item))
    return len(bounds)


def _take(iterator, n):
    out = []
    for item in iterator:
        out.append(item)
        if len(out) == n:
            break
    return out


def collect(targets: pd.DataFrame, job: EventsJob, chunk_rows: int = DEFAULT_CHUNK_ROWS, progress=None,
            client=None) -> pd.DataFrame:
    """All chunks' tables as one, in the order of the one-table run (by time, then catalogue order)."""
    parts = {}
    run_chunks(targets, job, lambda i, t: parts.__setitem__(i, t), chunk_rows, progress, client)
    return merge_chunks([parts[i] for i in sorted(parts)])


def merge_chunks(tables) -> pd.DataFrame:
    """Chunk tables (in chunk order) as one table sorted by ``bjd_tdb``, ties in chunk order."""
    tables = list(tables)
    if not tables:
        return pd.DataFrame()
    whole = pd.concat(tables, ignore_index=True)
    order = np.argsort(whole["bjd_tdb"].to_numpy(float), kind="stable")
    return whole.iloc[order].reset_index(drop=True)


def connect(spec: str):
    """A ``distributed.Client`` for ``spec``: ``local:N`` (a local cluster of N worker processes,
    one thread each) or a scheduler address such as ``tcp://10.0.0.5:8786``.

    An unreachable scheduler raises :class:`PeriplanError` after :data:`CONNECT_TIMEOUT_S`.
    """
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise PeriplanError("Dask is not installed; install periplan with its 'survey' extra "
                            "(pip install 'periplan[survey]')") from None
    spec = str(spec).strip()
    if spec.startswith("local:"):
        try:
            n = int(spec[len("local:"):])
        except ValueError:
            n = 0
        if n < 1:
            raise PeriplanError(f"{spec!r}: expected local:N with N a whole number of workers, at least 1")
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None,
                               scheduler_kwargs={"dashboard": False})
        return Client(cluster)
    try:
        return Client(spec, timeout=f"{CONNECT_TIMEOUT_S}s")
    except (OSError, TimeoutError, ValueError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise PeriplanError(f"cannot reach the Dask scheduler at {spec!r}: {reason}") from None


def close(client) -> None:
    """Close a client from :func:`connect` and the local cluster it started, if any."""
    cluster = getattr(client, "cluster", None)
    client.close()
    if cluster is not None:
        cluster.close()


def run_metadata(job: EventsJob, source: dict, n_targets: int, chunk_rows: int, columns) -> dict:
    """The metadata of a streamed run (``run.json``): source, span, site, units, chunking.

    ``source`` describes the catalogue file (:func:`planner.inputs.parquet_catalogue.fingerprint`).
    """
    site = job.site
    return {
        "complete": False,
        "elements_source": {**source, "targets": int(n_targets)},
        "span_utc": {"start": job.start_utc.isot + "Z", "end": job.end_utc.isot + "Z"},
        "kinds": list(job.kinds) if job.kinds else "all",
        "time_zone": job.tz,
        "site": None if site is None else {
            "name": site.name, "latitude_deg": site.latitude_deg, "longitude_deg": site.longitude_deg,
            "elevation_m": site.elevation_m, "timezone": site.timezone,
            "baseline_h": job.baseline_h, "k_sigma": job.k_sigma, "visible_at_least": job.visible},
        "chunk_rows": int(chunk_rows),
        "columns": {c: COLUMN_UNITS.get(c, "") for c in columns},
    }
