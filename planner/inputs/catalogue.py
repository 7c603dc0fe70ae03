"""Catalogue loader: a catalogue of published elements -> a validated table of targets.

This is the only module that reads catalogue files. :func:`read_catalogue` takes a path (a CSV
file, or an ECSV, VOTable or FITS table read by :mod:`planner.inputs.catalogue_tables`), a pandas
DataFrame or an astropy Table; :func:`parse_catalogue` CSV text. Every form goes through
:func:`load_columns` (one header check, the validators of :mod:`catalogue_checks`, the same
messages) and gives a :class:`pandas.DataFrame` with one row per target and the engine's columns
(units in the names, every epoch in BJD_TDB, omega of the primary):

``name, ra_deg, dec_deg, ephemeris, period_d, period_err_d, e, e_err, omega_deg,
omega_err_deg, epoch_kind, epoch_bjd_tdb, epoch_err_d, tp_bjd_tdb, time_system, k_ms, gamma_ms,
priority, events, duration_h, a_rstar, inc_deg, rp_rstar, label, visit_h, visit_gap_h, events_given,
observe, rv_fraction_k, rv_visits, rv_gap_h, full_coverage, week_rule, phase_bins, sites,
campaign_events, rv_phases, rv_phase_tol`` (and the binary columns of
:mod:`planner.inputs.binary_checks` when given)

then the catalogue's columns that periplan does not read, under their own names (floats when
every cell is a number, else text), for the writers to show (a magnitude on the nightly sheets).

``ephemeris`` is ``"orbit"`` (Keplerian elements) or ``"linear"`` (only T0 and P: the target's
event is ``periodic``). ``epoch_kind`` is ``tp``, ``tc`` or ``t0``. ``events`` is a tuple of event
names: the ``events`` column's (aliases resolved), or the target's defaults
(:func:`~planner.inputs.catalogue_checks.default_events`) where ``events_given`` is False.
Every problem found is collected and raised together as :class:`~planner.errors.InputErrors`,
each naming file, row, column, value and what was expected. Rows of a CSV file are counted as a
spreadsheet shows them (the header is row 1, a quoted cell with line breaks is one row, comment
and blank lines count); rows of tables as :mod:`catalogue_tables` says.

A header name one edit away from a column periplan reads (``perod_d``) is refused with "did you
mean"; a name without its unit (``period``) is refused unless a table gives its unit; other
names are carried unread.

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
``events``         semicolon list of wanted events; the usual words are aliases (``transit``,
                   ``primary_eclipse``, ``occultation``, ``secondary_eclipse``), and a linear
                   ephemeris may say ``maximum`` or ``minimum`` (default: what the columns
                   make worth observing, :func:`~planner.inputs.catalogue_checks.default_events`)
``duration_h``     event duration in hours (transit/eclipse), used when no geometry is given
``a_rstar``, ``inc_deg`` or ``b``, ``rp_rstar``  eclipse geometry (a/R*, inclination or impact
                   parameter at primary conjunction, radius ratio)
``label``          the catalogue's own name for the event of a linear ephemeris
``visit_h``, ``visit_gap_h``  block length and minimum spacing (hours) of flexible visits
                   (``visit_h`` is also the length of an RV visit; default 0.5 h)
``observe``        ``photometry``, ``rv``, or ``both`` (also ``photometry;rv``): what the observer does
``rv_fraction_k``  an RV visit counts while the RV is within this fraction of K of the
                   extremum (0 < f <= 1, default 0.1)
``rv_visits``, ``rv_gap_h``  RV visits wanted over a periastron passage (default 3), and their
                   least spacing (hours, default 1)
``full_coverage``  ``yes``: a series counts only when it covers T1 to T4 with both baselines
``rv_phases``      orbital phases wanted for an RV point, ``;``-separated, each 0 <= phase < 1:
                   mean anomaly / 360 deg after periastron (``0.25;0.75``); each becomes an RV
                   visit inside its window (:mod:`planner.scheduling.phase_requests`)
``rv_phase_tol``   half-width of each wanted phase's window, in orbits (0 < tol < 0.5,
                   default 0.02)
``notes``, others  carried unread (free text, magnitudes, anything of the user's)
=================  ====================================================================

Eccentric binaries (validated in :mod:`planner.inputs.binary_checks`): ``omega_dot_deg_cycle``
or ``omega_dot_deg_yr`` (with ``omega_dot_err_*``) and ``period_kind`` (``sidereal``/``anomalistic``);
a second epoch (``tp`` beside ``tc``, or ``tsec``/``tsec_err_d``, a secondary conjunction);
``ecosw``/``esinw`` or ``secosw``/``sesinw`` with ``_err`` instead of e/omega_deg; a third body
``p3_d``, ``t3``, ``e3``, ``omega3_deg`` and ``ltte_amp_d`` or ``a12sini_au``. They become the
engine columns :data:`BINARY_COLUMNS` (rates in deg/day, epochs in BJD_TDB, NaN or ``""`` when
absent; ``epoch_tension_sigma`` is the disagreement of two epochs in combined sigma).
"""

from __future__ import annotations

import difflib
import warnings

import numpy as np
import pandas as pd
import pyarrow as pa

from ..errors import InputError, InputErrors
from . import binary_checks
from . import catalogue_checks as checks
from .campaign_checks import check_campaign
from .catalogue_checks import EPOCH_COLUMNS, parse_angle
from .csv_records import read_records
from .textfile import read_bytes, utf8_bytes

__all__ = ["KNOWN_COLUMNS", "OUTPUT_COLUMNS", "load_columns", "parse_angle", "parse_catalogue", "read_catalogue"]

#: Engine columns of eccentric binaries (see the "Eccentric binaries" table above).
BINARY_COLUMNS = (
    "shape_kind", "shape_x", "shape_y", "shape_x_err", "shape_y_err", "omega_dot_deg_d",
    "omega_dot_err_deg_d", "period_kind", "epoch2_kind", "epoch2_bjd_tdb", "epoch2_err_d",
    "epoch_tension_sigma", "p3_d", "t3_bjd_tdb", "e3", "omega3_deg", "ltte_amp_d",
)
NUMERIC_COLUMNS = (
    "period_d", "period_err_d", "e", "e_err", "omega_deg", "omega_err_deg", "tp", "tc", "t0",
    "tp_err_d", "tc_err_d", "t0_err_d", "time_offset_d", "k_ms", "gamma_ms", "priority",
    "duration_h", "a_rstar", "inc_deg", "b", "rp_rstar", "a_au", "mass1_msun", "mass2_msun",
    "visit_h", "visit_gap_h", "rv_fraction_k", "rv_visits", "rv_gap_h", "phase_bins", "sites",
    "rv_phase_tol",
) + binary_checks.NUMERIC_COLUMNS
TEXT_COLUMNS = ("name", "ra", "dec", "time_system", "omega_of", "events", "label", "notes", "observe",
                "full_coverage", "week_rule", "campaign_events", "rv_phases") + binary_checks.TEXT_COLUMNS
KNOWN_COLUMNS = TEXT_COLUMNS + NUMERIC_COLUMNS
#: Columns a CSV reader may read as numbers (coordinates are numbers unless sexagesimal).
NUMBER_COLUMNS = frozenset(NUMERIC_COLUMNS + ("ra", "dec"))

OUTPUT_COLUMNS = (
    "name", "ra_deg", "dec_deg", "ephemeris", "period_d", "period_err_d", "e", "e_err",
    "omega_deg", "omega_err_deg", "epoch_kind", "epoch_bjd_tdb", "epoch_err_d", "tp_bjd_tdb",
    "time_system", "k_ms", "gamma_ms", "priority", "events", "duration_h", "a_rstar", "inc_deg",
    "rp_rstar", "label", "visit_h", "visit_gap_h", "events_given", "observe", "rv_fraction_k", "rv_visits",
    "rv_gap_h", "full_coverage", "week_rule", "phase_bins", "sites", "campaign_events", "rv_phases", "rv_phase_tol",
) + BINARY_COLUMNS


def read_catalogue(catalogue, name: str | None = None) -> pd.DataFrame:
    """Validated target table (see module docstring) from a catalogue in any form.

    ``catalogue`` is a path to a CSV file, or to an ECSV, VOTable, FITS or Parquet table (chosen
    by the extension, :data:`planner.inputs.catalogue_tables.TABLE_FORMATS`; Parquet by
    :func:`planner.inputs.parquet_catalogue.is_parquet`), a pandas DataFrame or an astropy Table. Every form goes through the same checks and messages; ``name`` is what the
    messages call a DataFrame or Table (default ``DataFrame`` / ``Table``).
    """
    if isinstance(catalogue, pd.DataFrame):
        from .catalogue_tables import load_frame

        return load_frame(catalogue, name or "DataFrame")
    from .catalogue_tables import is_table, load_table, read_table_file, table_format

    if is_table(catalogue):
        return load_table(catalogue, name or "Table", first_row=0)
    fmt = table_format(catalogue)
    if fmt is not None:
        return read_table_file(catalogue, fmt)
    from .parquet_catalogue import is_parquet, read_parquet_catalogue

    if is_parquet(catalogue):
        return read_parquet_catalogue(catalogue)
    raw, source = read_bytes(catalogue, "catalogue")
    return parse_catalogue(raw, source=source)


def parse_catalogue(data, source: str = "<catalogue>") -> pd.DataFrame:
    """Validated target table from CSV text or bytes; ``source`` names the file in messages.

    The delimiter is the one of ``,``, ``;`` or tab that the header row uses most. Rows are
    numbered as a spreadsheet shows them: the header is row 1, every record is one row (a quoted
    cell with line breaks inside is still one row), comment and blank lines count as rows
    (:mod:`planner.inputs.csv_records`).
    """
    if isinstance(data, bytes):
        data = utf8_bytes(data, source, "a CSV catalogue with a header row")
    records = read_records(data, source, numeric=lambda h: h.strip().lower() in NUMBER_COLUMNS)
    errors: list[InputError] = []
    width = len(records.header)
    sep = {",": "comma", ";": "semicolon", "\t": "tab"}[records.delimiter]
    for row_number, count in zip(records.rows[records.widths > width], records.widths[records.widths > width]):
        errors.append(InputError(f"{count} fields but the header has {width}; check for an unquoted {sep}",
                                 file=source, row=int(row_number)))
    return load_columns(records.header, records.columns, records.rows, source, header_row=records.header_row,
                        errors=errors)


def load_columns(header, values, rows, source, header_row=None, units=None, errors=None) -> pd.DataFrame:
    """Validated target table from a catalogue's columns as read (the one path of every format).

    ``header``: the column names as given; ``values``: one array per column (text cells, ``""``
    when empty, or floats with NaN for empty cells); ``rows``: the row number of each record, as
    messages show it; ``header_row``: the row of the header (1 in a CSV file, None for a table
    whose header is not a row); ``units``: per column an astropy unit or None (tables with unit
    metadata), converted to the unit of the engine column. Columns periplan does not use are
    carried after :data:`OUTPUT_COLUMNS` under their own names (text, or floats when every cell
    is a number).
    """
    errors = [] if errors is None else errors
    units = list(units) if units is not None else [None] * len(header)
    engine = _check_header(header, source, header_row, [u is not None for u in units])
    frame_cols, names, notes, extras = {}, {}, {}, {}
    for h, eng, v, unit in zip(header, engine, values, units):
        if eng is None:
            extras[h] = v
            continue
        if unit is not None:
            from .catalogue_tables import to_engine_unit

            v, notes[eng] = to_engine_unit(v, unit, eng, h, source, errors)
        frame_cols[eng] = v
        names[eng] = h
    result, n_events = _validate(checks.Cells(frame_cols, rows, source, errors, names=names,
                                    notes={k: v for k, v in notes.items() if v}))
    if errors:
        order = {h: i for i, h in enumerate(header)}
        errors.sort(key=lambda err: (err.row or 0, order.get(err.column, -1)))
        raise InputErrors(errors)
    for h, v in extras.items():
        result[h] = _extra_column(v)
    rows = np.asarray(rows)
    _warn_rows(source, rows[n_events == 0], "no event to predict (a circular or nearly circular orbit without "
               "k_ms, eclipse geometry or duration_h); name the wanted events in column events")
    duration, from_geometry = result["duration_h"].to_numpy(float), checks.geometry_duration_h(result)
    with np.errstate(invalid="ignore"):
        differ = np.abs(duration - from_geometry) > np.maximum(DURATION_TOLERANCE * duration, 10.0 / 60.0)
    if differ.any():
        first = int(np.flatnonzero(differ)[0])
        _warn_rows(source, rows[differ], "duration_h differs by more than 5% from the T1-T4 duration that a_rstar, "
                   f"inc_deg or b and rp_rstar give (row {rows[first]}: {duration[first]:g} h against "
                   f"{from_geometry[first]:.2f} h); the geometry is used for the contacts: check both, or leave one "
                   "of them empty")
    return result


#: Share by which a catalogue's duration_h may differ from its geometry's T1-T4 before a warning
#: (published T14 and a/R*, b, Rp/R* of one solution agree far better; common practice, no source).
DURATION_TOLERANCE = 0.05


def _warn_rows(source, rows, message):
    """One warning naming the rows (the first five, and how many more) of a catalogue that ``message`` is about."""
    rows = [int(r) for r in rows]
    if rows:
        shown = ", ".join(map(str, rows[:5])) + (f" and {len(rows) - 5} more" if len(rows) > 5 else "")
        warnings.warn(f"{source}: row{'s' if len(rows) > 1 else ''} {shown}: {message}", stacklevel=3)


def _extra_column(values):
    """A column periplan does not use, as carried on the target table: floats when every cell is a number."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "f":
        return values
    cells = checks.Cells({"x": values}, np.arange(len(values)), "", [])
    numbers = checks.all_numbers(cells.strings("x"))
    return numbers if numbers is not None else _str_column(cells.strings("x"))


def _frame(columns: dict) -> pd.DataFrame:
    """A DataFrame holding the arrays as they are, one block per column (pandas would otherwise
    copy 85 columns into consolidated blocks: 15 ms at 10^5 rows); an array given for two
    columns is copied for the second, so that no two columns share memory."""
    seen = set()
    for name, values in columns.items():
        if isinstance(values, np.ndarray):
            base = id(values if values.base is None else values.base)
            if base in seen:
                columns[name] = values.copy()
            seen.add(base)
    return pd.DataFrame(columns, copy=False)


#: Engine columns of text (the default pandas text dtype on the target table).
TEXT_OUTPUT_COLUMNS = ("name", "ephemeris", "epoch_kind", "time_system", "label", "observe", "week_rule",
                       "shape_kind", "period_kind", "epoch2_kind")


def _str_column(strings):
    """A pandas column of the default text dtype from text: pyarrow, :class:`Coded` or an array of str."""
    if isinstance(strings, checks.Coded):
        strings = strings.strings()
    elif not isinstance(strings, pa.Array):
        strings = pa.array(np.asarray(strings, dtype=object), type=pa.large_string())
    return pd.array(strings.cast(pa.large_string()), dtype="str")


#: Columns named for their unit (``period_d``) by the name without it (``period``): a table
#: may use the short name with a unit in its metadata; without a unit the name is refused.
UNIT_SUFFIXES = ("_d", "_deg", "_h", "_ms", "_au", "_msun")
SHORT_NAMES = {c[: c.rindex("_")]: c for c in NUMERIC_COLUMNS if c.endswith(UNIT_SUFFIXES)}
#: Engine columns of the target table that are not input columns (an input column of that name
#: would be overwritten).
RESERVED = tuple(c for c in OUTPUT_COLUMNS if c not in KNOWN_COLUMNS)
#: Input columns that periplan reads for nothing (kept and carried like any unknown column).
CARRIED = ("notes",)


def _one_edit_away(a: str, b: str) -> bool:
    """True when ``a`` and ``b`` differ by exactly one inserted, deleted or replaced character."""
    if a == b or abs(len(a) - len(b)) > 1:
        return False
    if len(a) > len(b):
        a, b = b, a
    i = 0
    while i < len(a) and a[i] == b[i]:
        i += 1
    return a[i + (len(a) == len(b)):] == b[i + 1:]


def _check_header(header, source, header_row=1, has_unit=None):
    """Engine column name of each header name, None for a column that is carried unread.

    Raises :class:`InputErrors` for a name given twice, a name one edit away from a column periplan
    reads (``perod_d``: "did you mean"), a short name without its unit, a reserved name, and for
    missing required columns.
    """
    has_unit = has_unit or [False] * len(header)
    errors = []

    def problem(message, column):
        errors.append(InputError(message, file=source, row=header_row, column=column if header_row else None))

    engine, seen, extras = [], {}, []
    for h, unit in zip(header, has_unit):
        key = h.strip().lower()
        name = None
        if key in KNOWN_COLUMNS and key not in CARRIED:
            name = key
        elif key in SHORT_NAMES and unit:
            name = SHORT_NAMES[key]
        elif key in SHORT_NAMES:
            problem(f"column {h!r} needs its unit: did you mean {SHORT_NAMES[key]!r}? (units in column names: "
                    "_d days, _deg degrees, _h hours, _ms m/s, _au au, _msun solar masses)", h)
        elif key in RESERVED:
            problem(f"column {h!r} is a name periplan gives to a column it computes; rename it (for example "
                    f"'x_{key}')", h)
        elif not key:
            problem("a column has no name; name it or delete it", "(empty)")
        else:
            near = [c for c in KNOWN_COLUMNS if c not in CARRIED and len(key) >= 3 and _one_edit_away(key, c)]
            if near:
                problem(f"unknown column {h!r}; did you mean {near[0]!r}? (columns periplan does not read are "
                        "kept; rename this one if it is not a typing error)", h)
            else:
                extras.append(key)
        what = name or (key if key in extras else None)
        if what is not None:
            if what in seen:
                problem(f"column {h!r} appears twice in the header" if seen[what].strip().lower() == key
                        else f"columns {seen[what]!r} and {h!r} both give {what}", h)
            seen.setdefault(what, h)
        engine.append(name)
    given = {n for n in engine if n}

    def hint(wanted):
        close = difflib.get_close_matches(wanted, extras, n=1, cutoff=0.6)
        return f" (is {close[0]!r} meant to be it?)" if close else ""

    for required in ("name", "ra", "dec"):
        if required not in given:
            problem(f"missing required column {required!r}{hint(required)}", required)
    if "period_d" not in given and "a_au" not in given:
        problem(f"missing column 'period_d' (or 'a_au' with 'mass1_msun' for Kepler's third law){hint('period_d')}",
                "period_d")
    if not given.intersection(EPOCH_COLUMNS):
        problem("missing epoch column: one of 'tp' (periastron), 'tc' (primary conjunction) or 't0' (linear "
                f"ephemeris){hint('epoch')}", "tp")
    if errors:
        raise InputErrors(errors)
    return engine


def _validate(cells: checks.Cells):
    """(target table (:data:`OUTPUT_COLUMNS`), events per row) from the raw cells, one validator per concern."""
    names = checks.check_names(cells)
    ra, dec = checks.check_coordinates(cells)
    period, period_err = checks.check_period(cells)
    e, e_err, omega, omega_err, linear = checks.check_shape(cells)
    shape = binary_checks.check_shape_alternatives(cells, cells.given("e"), cells.given("omega_deg"))
    alt = shape[0] != ""
    e, omega, linear = np.where(alt, shape[5], e), np.where(alt, shape[6], omega), linear & ~alt
    epoch_kind, full_jd, epoch_err = checks.check_epoch(cells, linear)
    system, epoch_bjd = checks.check_time_system(cells, full_jd, ra, dec)
    omega_dot, omega_dot_err, period_kind = binary_checks.check_apsidal(cells, period, linear, e)
    kind2, epoch2, epoch2_err = binary_checks.check_second_epoch(cells, epoch_kind, epoch_err, linear, ra, dec,
                                                                 system)
    third = binary_checks.check_third_body(cells, ra, dec, system)
    observing = checks.check_observing(cells)
    duration, a_rstar, inc, rp = checks.check_geometry(cells, e, omega)
    eclipse = np.isfinite(duration) | (np.isfinite(a_rstar) & np.isfinite(inc) & np.isfinite(rp))
    events, labels, n_events = checks.check_events(cells, linear, e, rv=np.isfinite(observing["k_ms"]) & (observing["k_ms"] > 0),
                                         eclipse=eclipse, epoch_kind=epoch_kind,
                                         planet=rp < checks.PLANET_RADIUS_RATIO)
    requests = checks.check_requests(cells, linear, duration, a_rstar, observing["k_ms"])
    campaign = check_campaign(cells)
    phases = checks.check_wanted_phases(cells, linear)

    tp = np.where(epoch_kind == "tc", np.nan, epoch_bjd)
    orbit_tc = (epoch_kind == "tc") & ~linear & np.isfinite(e) & np.isfinite(omega)
    if orbit_tc.any():
        from ..orbits.geometry import tp_from_tc

        tp[orbit_tc] = tp_from_tc(epoch_bjd[orbit_tc], period[orbit_tc], e[orbit_tc], np.radians(omega[orbit_tc]))
    tp[linear] = np.nan

    binary = {
        "shape_kind": shape[0], "shape_x": shape[1], "shape_y": shape[2], "shape_x_err": shape[3],
        "shape_y_err": shape[4], "omega_dot_deg_d": omega_dot, "omega_dot_err_deg_d": omega_dot_err,
        "period_kind": period_kind, "epoch2_kind": kind2, "epoch2_bjd_tdb": epoch2, "epoch2_err_d": epoch2_err,
        "epoch_tension_sigma": np.full(len(names), np.nan),
        **dict(zip(("p3_d", "t3_bjd_tdb", "e3", "omega3_deg", "ltte_amp_d"), third)),
    }
    columns = {
        "name": names, "ra_deg": ra, "dec_deg": dec,
        "ephemeris": checks.Coded.choose(("orbit", "linear"), linear),
        "period_d": period, "period_err_d": period_err,
        "e": np.where(linear, np.nan, e), "e_err": e_err,
        "omega_deg": np.where(linear, np.nan, omega), "omega_err_deg": omega_err,
        "epoch_kind": epoch_kind, "epoch_bjd_tdb": epoch_bjd, "epoch_err_d": epoch_err,
        "tp_bjd_tdb": tp, "time_system": system, "events": events, "duration_h": duration,
        "a_rstar": a_rstar, "inc_deg": inc, "rp_rstar": rp, "label": labels, **observing, **binary,
        "events_given": cells.given("events"), **requests, **campaign, **phases,
    }
    table = _frame({c: _str_column(columns[c]) if c in TEXT_OUTPUT_COLUMNS else columns[c] for c in OUTPUT_COLUMNS})
    if (kind2 != "").any() and not cells.errors:
        from ..orbits.binary_events import epoch_offset

        offset_d, sigma_d = epoch_offset(table)
        table["epoch_tension_sigma"] = np.abs(offset_d) / sigma_d
        binary_checks.check_epoch_agreement(cells, offset_d, sigma_d, kind2)
    return table, n_events
