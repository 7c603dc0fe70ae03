"""The catalogue reader against pandas.read_csv on the same 100,000-row files, in the same run.

Run: ``python bench/bench_catalogue.py [--rows 100000] [--runs 7]``. Files are written to a
temporary folder: the random catalogue of ``bench_events.py`` (13 columns, decimal coordinates, a
third of the epochs HJD_UTC; its epochs within 500 days, and again spread over 25 years as in
catalogues of published ephemerides, across five leap seconds), the demo catalogue's 30 columns
(sample_targets/targets.csv, its rows repeated under new names: sexagesimal coordinates,
free-text notes, every kind of target).
Each file is read by ``planner.read_catalogue`` (validated target table, epochs in BJD_TDB) and by
``pandas.read_csv`` (default options), alternating, and the medians of the runs are compared; the
goal is at most 3x pandas. The reader used (typed arrow CSV, line splitter or the csv module) is
printed too, and a last file, the demo rows with a quoted note holding a line break every 1,000
rows, times the csv-module path.
"""

from __future__ import annotations

import argparse
import csv
import io
import pathlib
import statistics
import sys
import tempfile
import time
import warnings

HERE = pathlib.Path(__file__).resolve().parent
GOAL_RATIO = 3.0


def demo_catalogue(n: int, line_break_every: int = 0) -> str:
    """The demo catalogue's rows repeated to ``n`` rows, each under a name of its own."""
    text = (HERE.parent / "sample_targets" / "targets.csv").read_text(encoding="utf-8")
    rows = list(csv.reader(line for line in io.StringIO(text) if not line.startswith("#")))
    header, body = rows[0], rows[1:]
    notes = header.index("notes")
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(header)
    for i in range(n):
        row = list(body[i % len(body)])
        row[0] = f"{row[0]} #{i}"
        if line_break_every and i % line_break_every == 0:
            row[notes] = f"{row[notes]}\nsecond line of the note"
        writer.writerow(row)
    return out.getvalue()


def reader_used(path) -> str:
    """Which of the CSV readers takes the file (see planner.inputs.csv_records)."""
    from planner.inputs import catalogue, csv_records

    data = path.read_bytes()
    lines = csv_records.Lines.of(data)
    if lines is None:
        return "csv module"
    if csv_records.typed_records(lines, lambda h: h.strip().lower() in catalogue.NUMBER_COLUMNS) is not None:
        return "typed arrow CSV"
    return "line splitter" if csv_records.line_records(lines) is not None else "csv module"


def median_times(path, runs: int):
    import pandas as pd

    import planner

    ours, theirs = [], []
    planner.read_catalogue(path)  # imports and caches warmed up on both sides
    pd.read_csv(path)
    for _ in range(runs):
        t0 = time.perf_counter()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            table = planner.read_catalogue(path)
        t1 = time.perf_counter()
        frame = pd.read_csv(path)
        t2 = time.perf_counter()
        ours.append(t1 - t0)
        theirs.append(t2 - t1)
    assert len(table) == len(frame)
    return statistics.median(ours), statistics.median(theirs)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=100_000)
    parser.add_argument("--runs", type=int, default=7)
    args = parser.parse_args(argv)
    sys.path.insert(0, str(HERE))
    from bench_events import random_catalogue

    files = {
        "random (13 columns)": random_catalogue(args.rows),
        "random, epochs over 25 yr": random_catalogue(args.rows, epoch_span_d=9000.0),
        "demo columns (30)": demo_catalogue(args.rows),
        "demo, quoted line breaks": demo_catalogue(args.rows, line_break_every=1000),
    }
    print(f"{args.rows} rows, medians of {args.runs} runs, alternating with pandas.read_csv")
    with tempfile.TemporaryDirectory() as tmp:
        for label, text in files.items():
            path = pathlib.Path(tmp) / "catalogue.csv"
            path.write_text(text, encoding="utf-8")
            ours, theirs = median_times(path, args.runs)
            ratio = ours / theirs
            verdict = "meets" if ratio <= GOAL_RATIO else "misses"
            print(f"  {label:26s} read_catalogue {ours * 1000:7.1f} ms  pandas.read_csv {theirs * 1000:6.1f} ms  "
                  f"ratio {ratio:5.2f}x ({verdict} the {GOAL_RATIO:g}x goal; {reader_used(path)})")


if __name__ == "__main__":
    main()
