"""Catalogue loader: a CSV file of published elements -> a validated table of targets.

This is the only module that reads catalogue files. :func:`read_catalogue` takes a path,
:func:`parse_catalogue` the text; both return a :class:`pandas.DataFrame` with one row per target
and the engine's columns (units in the names, every epoch in BJD_TDB, omega of the primary):

``name, ra_deg, dec_deg, ephemeris, period_d, period_err_d, e, e_err, omega_deg,
omega_err_deg, epoch_kind, epoch_bjd_tdb, epoch_err_d, tp_bjd_tdb, time_system, k_ms, gamma_ms,
priority, events, duration_h, a_rstar, inc_deg, rp_rstar, label, visit_h, visit_gap_h``

``ephemeris`` is ``"orbit"`` (Keplerian elements) or ``"linear"`` (only T0 and P: the target's
event is ``periodic``). ``epoch_kind`` is ``tp``, ``tc`` or ``t0``. ``events`` is a tuple of event
names. Every problem found in the file is collected and raised together as
:class:`~planner.errors.InputErrors`, each naming file, row (the header is row 1), column, value
and what was expected.

Input columns (header names, case-insensitive; order free):

=================  ====================================================================
``name``           target name, unique in the file
``ra``, ``dec``    ICRS; decimal degrees, or sexagesimal ``hh:mm:ss.s`` / ``+dd:mm:ss``
``period_d``       orbital period in days (or give ``a_au``, ``mass1_msun``, ``mass2_msun``)
``e``              eccentricity, 0 <= e < 1; leave ``e`` and ``omega_deg`` empty for a
                   linear ephemeris (pulsation maxima, eclipses of a circular binary)
``omega_deg``      argument of periastron in degrees (of the primary unless ``omega_of``)
``tp`` / ``tc``    epoch of periastron / of primary conjunction (``t0`` for a linear ephemeris)
``time_system``    BJD_TDB (default), HJD_UTC or JD_UTC
``time_offset_d``  added to the epoch, for reduced dates such as JD - 2450000
``*_err*``         1-sigma uncertainties: ``period_err_d``, ``tp_err_d``/``tc_err_d``/``t0_err_d``,
                   ``e_err``, ``omega_err_deg``
``omega_of``       ``primary`` (default) or ``companion`` (then omega + 180 deg is used)
``k_ms``, ``gamma_ms``  RV semi-amplitude and systemic velocity, m/s
``priority``       positive number, larger is more important (default 1)
``events``         semicolon list of wanted events (default: all that the elements define)
``duration_h``     event duration in hours (transit/eclipse), used when no geometry is given
``a_rstar``, ``inc_deg`` or ``b``, ``rp_rstar``  eclipse geometry (a/R*, inclination or impact
                   parameter at primary conjunction, radius ratio)
``label``          the catalogue's own name for the event of a linear ephemeris
``visit_h``, ``visit_gap_h``  block length and minimum spacing (hours) of flexible visits
``notes``, ``x_*`` ignored (free text for the user)
=================  ====================================================================
"""

from __future__ import annotations

import csv
import difflib
import io

import numpy as np
import pandas as pd

from ..errors import InputError, InputErrors
from . import catalogue_checks as checks
from .catalogue_checks import EPOCH_COLUMNS, parse_angle
from .textfile import decode_text, read_bytes

__all__ = ["KNOWN_COLUMNS", "OUTPUT_COLUMNS", "parse_angle", "parse_catalogue", "read_catalogue"]

NUMERIC_COLUMNS = (
    "period_d", "period_err_d", "e", "e_err", "omega_deg", "omega_err_deg", "tp", "tc", "t0",
    "tp_err_d", "tc_err_d", "t0_err_d", "time_offset_d", "k_ms", "gamma_ms", "priority",
    "duration_h", "a_rstar", "inc_deg", "b", "rp_rstar", "a_au", "mass1_msun", "mass2_msun",
    "visit_h", "visit_gap_h", "mag",
)
TEXT_COLUMNS = ("name", "ra", "dec", "time_system", "omega_of", "events", "label", "notes")
KNOWN_COLUMNS = TEXT_COLUMNS + NUMERIC_COLUMNS

OUTPUT_COLUMNS = (
    "name", "ra_deg", "dec_deg", "ephemeris", "period_d", "period_err_d", "e", "e_err",
    "omega_deg", "omega_err_deg", "epoch_kind", "epoch_bjd_tdb", "epoch_err_d", "tp_bjd_tdb",
    "time_system", "k_ms", "gamma_ms", "priority", "events", "duration_h", "a_rstar", "inc_deg",
    "rp_rstar", "label", "visit_h", "visit_gap_h", "mag",
)


def read_catalogue(path) -> pd.DataFrame:
    """Validated target table (see module docstring) from the CSV file at ``path``."""
    raw, source = read_bytes(path, "catalogue")
    return parse_catalogue(raw, source=source)


def parse_catalogue(data, source: str = "<catalogue>") -> pd.DataFrame:
    """Validated target table from CSV text or bytes; ``source`` names the file in messages."""
    if isinstance(data, bytes):
        data = decode_text(data, source, "a CSV catalogue with a header row")
    header, rows, line_numbers = _split_rows(data, source)
    columns = _check_header(header, source)
    table = {c: [] for c in columns}
    errors: list[InputError] = []
    for line, row in zip(line_numbers, rows):
        if len(row) > len(columns):
            errors.append(InputError(
                f"{len(row)} fields but the header has {len(columns)}; check for an unquoted comma",
                file=source, row=line))
        row = row + [""] * (len(columns) - len(row))
        for c, v in zip(columns, row):
            table[c].append(v.strip())
    frame = pd.DataFrame(table, dtype=object)
    frame.index = pd.Index(line_numbers, name="row")
    result = _validate(checks.Cells(frame, source, errors))
    if errors:
        errors.sort(key=lambda err: (err.row or 0, columns.index(err.column) if err.column in columns else -1))
        raise InputErrors(errors)
    return result


def _split_rows(text: str, source: str):
    lines = text.splitlines()
    numbered = [(i + 1, ln) for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")]
    if not numbered:
        raise InputErrors([InputError(
            "empty catalogue; expected a header row such as 'name,ra,dec,period_d,e,omega_deg,tp' "
            "and one row per target", file=source)])
    parsed = list(csv.reader(io.StringIO("\n".join(ln for _, ln in numbered))))
    header = [h.strip().lower() for h in parsed[0]]
    return header, parsed[1:], [n for n, _ in numbered[1:]]


def _check_header(header, source):
    errors = []
    seen = set()
    for h in header:
        if h in seen:
            errors.append(InputError(f"column {h!r} appears twice in the header", file=source, row=1, column=h))
        seen.add(h)
        if h not in KNOWN_COLUMNS and not h.startswith("x_"):
            hint = difflib.get_close_matches(h, KNOWN_COLUMNS, n=1)
            fix = f"did you mean {hint[0]!r}? " if hint else ""
            errors.append(InputError(
                f"unknown column {h!r}; {fix}columns periplan ignores must be named 'notes' or start with 'x_'",
                file=source, row=1, column=h or "(empty)"))
    for required in ("name", "ra", "dec"):
        if required not in seen:
            errors.append(InputError(f"missing required column {required!r}", file=source, row=1, column=required))
    if "period_d" not in seen and "a_au" not in seen:
        errors.append(InputError("missing column 'period_d' (or 'a_au' with 'mass1_msun' for Kepler's third law)",
                                 file=source, row=1, column="period_d"))
    if not seen.intersection(EPOCH_COLUMNS):
        errors.append(InputError("missing epoch column: one of 'tp' (periastron), 'tc' (primary conjunction) "
                                 "or 't0' (linear ephemeris)", file=source, row=1, column="tp"))
    if errors:
        raise InputErrors(errors)
    return header


def _validate(cells: checks.Cells) -> pd.DataFrame:
    """The target table (:data:`OUTPUT_COLUMNS`) from the raw cells, one validator per concern."""
    names = checks.check_names(cells)
    ra, dec = checks.check_coordinates(cells)
    period, period_err = checks.check_period(cells)
    e, e_err, omega, omega_err, linear = checks.check_shape(cells)
    epoch_kind, full_jd, epoch_err = checks.check_epoch(cells, linear)
    system, epoch_bjd = checks.check_time_system(cells, full_jd, ra, dec)
    observing = checks.check_observing(cells)
    duration, a_rstar, inc, rp = checks.check_geometry(cells, e, omega)
    events, labels = checks.check_events(cells, linear, e)

    tp = np.where(epoch_kind == "tc", np.nan, epoch_bjd)
    orbit_tc = (epoch_kind == "tc") & ~linear & np.isfinite(e) & np.isfinite(omega)
    if orbit_tc.any():
        from ..orbits.geometry import tp_from_tc

        tp[orbit_tc] = tp_from_tc(epoch_bjd[orbit_tc], period[orbit_tc], e[orbit_tc], np.radians(omega[orbit_tc]))
    tp[linear] = np.nan

    return pd.DataFrame({
        "name": names, "ra_deg": ra, "dec_deg": dec,
        "ephemeris": np.where(linear, "linear", "orbit"),
        "period_d": period, "period_err_d": period_err,
        "e": np.where(linear, np.nan, e), "e_err": e_err,
        "omega_deg": np.where(linear, np.nan, omega), "omega_err_deg": omega_err,
        "epoch_kind": epoch_kind.astype(str), "epoch_bjd_tdb": epoch_bjd, "epoch_err_d": epoch_err,
        "tp_bjd_tdb": tp, "time_system": system, "events": events, "duration_h": duration,
        "a_rstar": a_rstar, "inc_deg": inc, "rp_rstar": rp, "label": labels, **observing,
    }, columns=list(OUTPUT_COLUMNS))
