"""The streamed form of ``periplan events``: chunks of targets, Parquet files as they go, Dask.

:func:`check_options` runs before any work (so a bad option writes nothing);
:func:`run_streamed` connects to Dask when asked, prepares the output folder and writes each
chunk as it is done, then the run's metadata. Without ``--out`` (a ``--dask`` run printed as a
table, CSV or JSON) the chunks are put back together in the one-table order and rendered.
"""

from __future__ import annotations

import sys

from .. import __version__
from ..errors import PeriplanError

STREAM_FORMAT = "parquet"


def add_options(p) -> None:
    """The streaming options of the events command."""
    p.add_argument("--out", metavar="DIR",
                   help="with --format parquet: folder for one Parquet file per chunk of targets and run.json")
    p.add_argument("--force", action="store_true", help="replace the streamed run already in DIR")
    p.add_argument("--chunk-rows", type=int, default=None, metavar="N",
                   help="targets per chunk (default 5000); memory grows with N, not with the catalogue")
    p.add_argument("--dask", metavar="ADDRESS",
                   help="run the chunks on a Dask cluster: a scheduler address (tcp://host:8786) or "
                        "local:N for N local worker processes")


def wanted(args) -> bool:
    """True when the run is to be chunked (Parquet output, a Dask cluster or a chunk size)."""
    return args.format == STREAM_FORMAT or bool(args.dask) or args.chunk_rows is not None


def check_options(args) -> None:
    """Refuse inconsistent streaming options before anything is read or written."""
    if args.format == STREAM_FORMAT and not args.out:
        raise PeriplanError("--format parquet needs --out DIR (a folder for the chunk files)")
    if args.out and args.format != STREAM_FORMAT:
        raise PeriplanError("--out DIR is for --format parquet; other formats go to standard output")
    if args.force and not args.out:
        raise PeriplanError("--force needs --out DIR")
    if args.chunk_rows is not None and args.chunk_rows < 1:
        raise PeriplanError(f"--chunk-rows must be at least 1; got {args.chunk_rows}")


def run_streamed(args, targets, site, tz, start_utc, end_utc, formats) -> int:
    """Run the events command chunk by chunk; see the module docstring."""
    from .. import survey
    from ..inputs.parquet_catalogue import fingerprint
    from ..outputs import parquet_chunks
    from ..outputs.tables import render
    from .progress import ProgressBar

    chunk_rows = args.chunk_rows or survey.DEFAULT_CHUNK_ROWS
    if site is not None:
        from ..outputs.tables import never_rising_lines
        from ..sky.windows import never_rising

        for line in never_rising_lines(never_rising(targets, site), site.name):
            print(f"periplan: warning: {line}; events that cannot be seen are listed with "
                  "observable_fraction 0", file=sys.stderr)
    job = survey.make_job(start_utc, end_utc, kinds=args.kinds, tz=tz, site=site, baseline_h=args.baseline_h,
                          k_sigma=args.k_sigma, visible=args.visible)
    client = None
    if args.dask:
        import contextlib
        import logging

        with contextlib.suppress(ImportError):  # survey.connect says what to install
            import distributed  # noqa: F401  (its import sets its loggers to INFO; lowered below)
        # Dask's own loggers say INFO about every start and stop; keep them for --verbose
        for name in ("distributed", "dask"):
            logging.getLogger(name).setLevel(logging.INFO if getattr(args, "verbose", False) else logging.ERROR)
        try:
            client = survey.connect(args.dask)
        except PeriplanError as exc:
            raise PeriplanError(f"--dask {exc}") from None
    n_chunks = len(survey.chunk_bounds(len(targets), chunk_rows))
    bar = ProgressBar(n_chunks, unit="chunks")
    done = []
    try:
        if not args.out:
            table = survey.collect(targets, job, chunk_rows, progress=bar, client=client)
            bar.done()
            sys.stdout.write(render(table, args.format, formats))
            if args.format == "table":  # the one-table run's summary line, after the table
                sys.stdout.flush()
                print(f"{len(table)} events of {table['target'].nunique() if len(table) else 0} targets "
                      f"from {start_utc.isot[:16]}Z to {end_utc.isot[:16]}Z", file=sys.stderr)
            return 0
        try:
            parquet_chunks.prepare_folder(args.out, args.force)
        except parquet_chunks.ChunkFolderExists as exc:
            raise PeriplanError(f"--out {exc}; add --force to replace it or choose another folder") from None
        columns = []
        meta = None

        def write(index, table):
            nonlocal meta
            name = parquet_chunks.write_chunk(args.out, index, table)
            done.append({"index": index, "file": name, "rows": len(table)})
            if meta is None:
                columns.extend(table.columns)
                meta = survey.run_metadata(job, fingerprint(args.catalog), len(targets), chunk_rows, columns)
                meta["made_by"] = f"periplan {__version__}"
                parquet_chunks.write_metadata(args.out, meta)

        try:
            survey.run_chunks(targets, job, write, chunk_rows, progress=bar, client=client)
        except KeyboardInterrupt:
            bar.done()
            print(f"periplan: interrupted after {len(done)} of {n_chunks} chunks; {args.out} holds complete "
                  "chunk files only (run.json says complete: false); rerun with --force to replace them",
                  file=sys.stderr)
            return 130
        bar.done()
        if meta is None:  # a catalogue without targets: no chunk was written
            meta = survey.run_metadata(job, fingerprint(args.catalog), len(targets), chunk_rows, columns)
            meta["made_by"] = f"periplan {__version__}"
        meta.update(complete=True, chunks=sorted(done, key=lambda c: c["index"]),
                    rows=sum(c["rows"] for c in done))
        parquet_chunks.write_metadata(args.out, meta)
        print(f"{meta['rows']} events of {len(targets)} targets in {len(done)} chunk files in {args.out}",
              file=sys.stderr)
        return 0
    finally:
        if client is not None:
            survey.close(client)
