"""Observation log: a CSV file of what was observed -> a validated table of observations.

The only reader of log files. One row per observation (the header is row 1; lines starting with
``#`` are comments; rows are counted as the file's lines, a quoted cell with a line break inside
counting all its lines):

================  =====================================================================
``target``        a target name of the catalogue (required)
``start``         UTC as ISO 8601 with ``Z`` or an offset (``2026-12-09T21:14:00Z``,
                  ``2026-12-09T22:14+01:00``), or a number: BJD_TDB as a full Julian date
``end``           the same forms; empty for a single exposure (an RV point), which is then
                  a moment at ``start``
``purpose``       an event name (``periastron``, ``primary_conjunction`` ..., or the words
                  ``transit``, ``primary_eclipse``, ``occultation``, ``secondary_eclipse``),
                  ``visit`` (an RV or monitoring visit) or ``free``
``cycle``         the event's cycle as ``periplan events`` numbers it (whole orbits since the
                  catalogue epoch); empty: the cycle nearest the observation
``outcome``       ``done``, ``partial`` or ``lost``; ``planned`` (as the template of ``plan``
                  writes it) for a row not observed yet, which counts for nothing
``covers``        for a series, the parts observed, ``;``-separated from ``pre, T1, T2, mid,
                  T3, T4, post`` (``T1-T4`` for all four contacts); empty: from the times
``notes``, ``x_*`` free text, kept
================  =====================================================================

:func:`read_log` returns one row per observation with both time scales: ``start_jd_utc``,
``end_jd_utc`` (UTC Julian dates) and ``start_bjd_tdb``, ``end_bjd_tdb`` (barycentric, in the
target's direction), ``single`` (True for an exposure), ``target_index`` (row of the catalogue)
and the file row in ``row``. Every problem of the file is reported at once, one line each with
file, row and column.
"""

from __future__ import annotations

import csv
import datetime as dt
import difflib
import io

import numpy as np
import pandas as pd

from ..errors import InputError, InputErrors
from ..orbits.geometry import ALL_EVENTS
from ..timescales import epochs
from .textfile import decode_text, read_bytes

LOG_COLUMNS = ("target", "start", "end", "purpose", "cycle", "outcome", "covers", "notes")
REQUIRED = ("target", "start", "purpose", "outcome")
OUTCOMES = ("done", "partial", "lost", "planned")
PURPOSES = ALL_EVENTS + ("visit", "free")
#: The usual words for the conjunctions, taken as the event names.
EVENT_WORDS = {"transit": "primary_conjunction", "primary_eclipse": "primary_conjunction",
               "occultation": "secondary_conjunction", "secondary_eclipse": "secondary_conjunction"}
PARTS = ("pre", "T1", "T2", "mid", "T3", "T4", "post")
#: Observations must lie in 1950-2100 (JD 2433282.5-2488069.5): anything else is a typing slip.
SENSIBLE_JD = (2433282.5, 2488069.5)

TABLE_COLUMNS = ("row", "target", "target_index", "purpose", "cycle", "outcome", "covers", "single",
                 "start_jd_utc", "end_jd_utc", "start_bjd_tdb", "end_bjd_tdb", "notes")


def read_log(path, targets: pd.DataFrame) -> pd.DataFrame:
    """Validated observation table (:data:`TABLE_COLUMNS`) of the log file at ``path``.

    ``targets`` is the catalogue (:func:`planner.read_catalogue`): names are matched against it
    and its coordinates turn UTC into BJD_TDB and back.
    """
    raw, source = read_bytes(path, "observation log")
    return parse_log(decode_text(raw, source, "a CSV observation log with a header row"), targets, source)


def parse_log(text: str, targets: pd.DataFrame, source: str = "<log>") -> pd.DataFrame:
    """:func:`read_log` on the text of a log; ``source`` names the file in messages."""
    reader = csv.reader(io.StringIO(text))
    errors: list[InputError] = []
    header, cells, rows = None, [], []
    start_line = 1
    for record in reader:
        line, start_line = start_line, reader.line_num + 1
        if not record or not "".join(record).strip() or record[0].lstrip().startswith("#"):
            continue
        if header is None:
            header = [h.strip().lower() for h in record]
            header_row = line
            continue
        cells.append([c.strip() for c in record])
        rows.append(line)
    if header is None:
        raise InputErrors([InputError("empty log; expected a header row such as "
                                      "'target,start,end,purpose,cycle,outcome'", file=source)])
    _check_header(header, header_row, source)
    width = len(header)
    for line, rec in zip(rows, cells):
        if len(rec) > width:
            errors.append(InputError(f"{len(rec)} fields but the header has {width}; check for an unquoted comma",
                                     file=source, row=line))
    frame = pd.DataFrame([(rec + [""] * width)[:width] for rec in cells], columns=header, dtype=object)
    frame.index = pd.Index(rows, name="row")
    out = _validate(frame, targets, source, errors)
    if errors:
        raise InputErrors(sorted(errors, key=lambda e: (e.row or 0, LOG_COLUMNS.index(e.column)
                                                         if e.column in LOG_COLUMNS else 99)))
    return out


def _check_header(header, row, source):
    errors = []
    for h in header:
        if h not in LOG_COLUMNS and not h.startswith("x_"):
            hint = difflib.get_close_matches(h, LOG_COLUMNS, n=1)
            fix = f"did you mean {hint[0]!r}? " if hint else ""
            errors.append(InputError(f"unknown column {h!r}; {fix}expected {', '.join(LOG_COLUMNS)} "
                                     "(or columns starting with 'x_')", file=source, row=row, column=h or "(empty)"))
    if len(set(header)) < len(header):
        dup = next(h for h in header if header.count(h) > 1)
        errors.append(InputError(f"column {dup!r} appears twice", file=source, row=row, column=dup))
    for need in REQUIRED:
        if need not in header:
            errors.append(InputError(f"missing required column {need!r}", file=source, row=row, column=need))
    if errors:
        raise InputErrors(errors)


def _parse_time(text: str):
    """('bjd', value) for a number, ('utc', jd_utc) for an ISO 8601 string with a zone; ValueError else."""
    try:
        return "bjd", float(text)
    except ValueError:
        pass
    try:
        when = dt.datetime.fromisoformat(text.replace("Z", "+00:00").replace("z", "+00:00"))
    except ValueError:
        raise ValueError("not a time; expected ISO 8601 UTC such as 2026-12-09T21:14:00Z or a BJD_TDB "
                         "Julian date such as 2461384.385") from None
    if when.tzinfo is None:
        raise ValueError("a clock time without a zone; add Z for UTC or the offset, e.g. +01:00")
    from ..timescales.clock import datetime_to_jd_utc

    return "utc", datetime_to_jd_utc(when)


def _validate(frame, targets, source, errors):
    n = len(frame)
    rows = frame.index.to_numpy()

    def err(row, col, msg, value=None):
        errors.append(InputError(msg, file=source, row=int(row), column=col, value=value))

    def text(col):
        return frame[col].astype(str).to_numpy() if col in frame else np.full(n, "", dtype=object)

    names = list(targets["name"].astype(str))
    index_of = {nm: i for i, nm in enumerate(names)}
    target = text("target")
    ti = np.full(n, -1, dtype=np.int64)
    for k, (row, nm) in enumerate(zip(rows, target)):
        if nm in index_of:
            ti[k] = index_of[nm]
        else:
            hint = difflib.get_close_matches(nm, names, n=1)
            err(row, "target", f"{nm!r} is not a target of the catalogue" + (f"; did you mean {hint[0]!r}?" if hint else ""), nm)

    times = {}
    for col in ("start", "end"):
        kind = np.full(n, "", dtype=object)
        value = np.full(n, np.nan)
        for k, (row, t) in enumerate(zip(rows, text(col))):
            if not t:
                if col == "start":
                    err(row, col, "missing start time")
                continue
            try:
                kind[k], value[k] = _parse_time(t)
            except ValueError as exc:
                err(row, col, f"{t!r} is {exc}", t)
                continue
            if not SENSIBLE_JD[0] <= value[k] <= SENSIBLE_JD[1]:
                err(row, col, f"{t!r} is outside 1950-2100; expected a full Julian date (BJD_TDB) or an ISO date", t)
                kind[k], value[k] = "", np.nan
        times[col] = (kind, value)

    ok = ti >= 0
    ra = np.where(ok, targets["ra_deg"].to_numpy(float)[np.clip(ti, 0, None)], np.nan)
    dec = np.where(ok, targets["dec_deg"].to_numpy(float)[np.clip(ti, 0, None)], np.nan)
    jd_utc, bjd = {}, {}
    for col, (kind, value) in times.items():
        jd_utc[col] = np.where(kind == "utc", value, np.nan)
        bjd[col] = np.where(kind == "bjd", value, np.nan)
        as_utc = (kind == "utc") & ok
        if as_utc.any():
            bjd[col][as_utc] = epochs.to_bjd_tdb(value[as_utc], "JD_UTC", ra[as_utc], dec[as_utc])
        as_bjd = (kind == "bjd") & ok
        if as_bjd.any():
            t = epochs.bjd_tdb_to_utc(value[as_bjd], ra[as_bjd], dec[as_bjd])
            jd_utc[col][as_bjd] = t.jd1 + t.jd2
    single = np.isnan(bjd["end"]) & (text("end") == "")
    for row in rows[np.isfinite(bjd["end"]) & np.isfinite(bjd["start"]) & (bjd["end"] < bjd["start"])]:
        err(row, "end", "ends before it starts; swap start and end or correct the date")
    for col in ("end",):
        jd_utc[col] = np.where(single, jd_utc["start"], jd_utc[col])
        bjd[col] = np.where(single, bjd["start"], bjd[col])

    purpose = np.array([EVENT_WORDS.get(p.lower(), p.lower()) for p in text("purpose")], dtype=object)
    for row, p, raw in zip(rows, purpose, text("purpose")):
        if p not in PURPOSES:
            err(row, "purpose", f"{raw!r} is not a purpose; expected an event name ({', '.join(ALL_EVENTS)}, "
                "transit, occultation ...), 'visit' or 'free'", raw)
    outcome = np.array([o.lower() for o in text("outcome")], dtype=object)
    for row, o in zip(rows, outcome):
        if o not in OUTCOMES:
            err(row, "outcome", f"{o!r} is not an outcome; expected done, partial or lost (or planned)", o)
    cycle = np.full(n, np.nan)
    for k, (row, c) in enumerate(zip(rows, text("cycle"))):
        if not c:
            continue
        try:
            cycle[k] = int(c)
        except ValueError:
            err(row, "cycle", f"{c!r} is not a whole number of orbits", c)
    covers = []
    for row, c in zip(rows, text("covers")):
        parts = [p.strip() for p in c.replace("T1-T4", "T1;T2;T3;T4").split(";") if p.strip()]
        bad = [p for p in parts if p not in PARTS]
        if bad:
            err(row, "covers", f"{bad[0]!r} is not a part of a series; expected {', '.join(PARTS)} or T1-T4", c)
        covers.append(";".join(p for p in PARTS if p in parts))
    return pd.DataFrame({
        "row": rows.astype(np.int64), "target": target, "target_index": ti, "purpose": purpose,
        "cycle": cycle, "outcome": outcome, "covers": np.array(covers, dtype=object), "single": single,
        "start_jd_utc": jd_utc["start"], "end_jd_utc": jd_utc["end"],
        "start_bjd_tdb": bjd["start"], "end_bjd_tdb": bjd["end"], "notes": text("notes"),
    }, columns=list(TABLE_COLUMNS)).reset_index(drop=True)
