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
import math
import re

import numpy as np
import pandas as pd

from ..timescales import epochs
from ..errors import InputError, InputErrors
from .textfile import decode_text, read_bytes
from ..orbits.geometry import ALL_EVENTS, ORBIT_EVENTS, PERIODIC_EVENT

NUMERIC_COLUMNS = (
    "period_d", "period_err_d", "e", "e_err", "omega_deg", "omega_err_deg", "tp", "tc", "t0",
    "tp_err_d", "tc_err_d", "t0_err_d", "time_offset_d", "k_ms", "gamma_ms", "priority",
    "duration_h", "a_rstar", "inc_deg", "b", "rp_rstar", "a_au", "mass1_msun", "mass2_msun",
    "visit_h", "visit_gap_h",
)
TEXT_COLUMNS = ("name", "ra", "dec", "time_system", "omega_of", "events", "label", "notes")
KNOWN_COLUMNS = TEXT_COLUMNS + NUMERIC_COLUMNS
EPOCH_COLUMNS = ("tp", "tc", "t0")

#: Smallest full Julian date accepted as an epoch (JD 2000000 is 763 AD); anything below it is
#: taken to be a reduced date that needs ``time_offset_d``.
MIN_FULL_JD = 2_000_000.0
MAX_FULL_JD = 3_000_000.0

#: Default events of an orbit, by whether it is eccentric (circular orbits have no periastron).
DEFAULT_EVENTS_ECCENTRIC = ORBIT_EVENTS
DEFAULT_EVENTS_CIRCULAR = ("primary_conjunction", "secondary_conjunction", "rv_max", "rv_min")

OUTPUT_COLUMNS = (
    "name", "ra_deg", "dec_deg", "ephemeris", "period_d", "period_err_d", "e", "e_err",
    "omega_deg", "omega_err_deg", "epoch_kind", "epoch_bjd_tdb", "epoch_err_d", "tp_bjd_tdb",
    "time_system", "k_ms", "gamma_ms", "priority", "events", "duration_h", "a_rstar", "inc_deg",
    "rp_rstar", "label", "visit_h", "visit_gap_h",
)

_SEXAGESIMAL = re.compile(r"^\s*([+-]?)\s*(\d+)[:\s]+(\d+)(?:[:\s]+(\d+(?:\.\d*)?))?\s*$")


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
    result = _validate(frame, source, errors)
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


def parse_angle(text: str, hours: bool) -> float:
    """Angle in degrees from decimal degrees or sexagesimal text; ``hours`` for right ascension.

    Raises ValueError with the reason when the text is not a valid angle.
    """
    m = _SEXAGESIMAL.match(text)
    if m:
        sign, a, b, c = m.groups()
        a, b, c = int(a), int(b), float(c or 0.0)
        if b >= 60 or c >= 60:
            raise ValueError("minutes and seconds must be below 60")
        value = a + b / 60.0 + c / 3600.0
        if hours:
            if sign:
                raise ValueError("a right ascension in hours has no sign")
            if value >= 24:
                raise ValueError("hours must be below 24")
            return 15.0 * value
        return -value if sign == "-" else value
    value = float(text)  # raises ValueError
    if not math.isfinite(value):
        raise ValueError("not a finite number")
    return value


def _numeric(frame, column, source, errors, default=np.nan, positive=False, nonnegative=False):
    """Column as floats; bad cells become NaN and an InputError each."""
    if column not in frame:
        return np.full(len(frame), default, dtype=float)
    text = frame[column].astype(str)
    values = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float, copy=True)
    bad_number = (text != "").to_numpy() & ~np.isfinite(values)
    for row, v in zip(frame.index[bad_number], text[bad_number]):
        errors.append(InputError(f"{v!r} is not a number", file=source, row=row, column=column, value=v))
    values[bad_number] = np.nan
    if positive:
        bad = values <= 0
        for row, v in zip(frame.index[bad], text[bad]):
            errors.append(InputError(f"{v} must be positive", file=source, row=row, column=column, value=v))
        values[bad] = np.nan
    if nonnegative:
        bad = values < 0
        for row, v in zip(frame.index[bad], text[bad]):
            errors.append(InputError(f"{v} must not be negative (it is a 1-sigma uncertainty)",
                                     file=source, row=row, column=column, value=v))
        values[bad] = np.nan
    return np.where(np.isnan(values), default, values) if not np.isnan(default) else values


def _validate(frame: pd.DataFrame, source: str, errors: list) -> pd.DataFrame:
    n = len(frame)
    rows = frame.index.to_numpy()
    err = lambda row, col, msg, value=None: errors.append(  # noqa: E731
        InputError(msg, file=source, row=int(row), column=col, value=value))

    names = frame["name"].astype(str).to_numpy()
    for row, nm in zip(rows, names):
        if not nm:
            err(row, "name", "empty target name")
    dup = pd.Series(names).duplicated(keep="first").to_numpy() & (names != "")
    first_row = {}
    for row, nm in zip(rows, names):
        first_row.setdefault(nm, row)
    for row, nm in zip(rows[dup], names[dup]):
        err(row, "name", f"duplicate target name {nm!r} (first at row {first_row[nm]}); names must be unique", nm)

    ra = np.full(n, np.nan)
    dec = np.full(n, np.nan)
    for i, (row, text) in enumerate(zip(rows, frame["ra"].astype(str))):
        try:
            ra[i] = parse_angle(text, hours=":" in text or " " in text.strip())
        except ValueError as exc:
            reason = str(exc) if "could not convert" not in str(exc) else "not a number"
            err(row, "ra", f"{text!r} is not a right ascension ({reason}); expected degrees 0-360 or hh:mm:ss.s", text)
            continue
        if not 0.0 <= ra[i] < 360.0:
            err(row, "ra", f"{text} is outside 0 <= ra < 360 deg", text)
            ra[i] = np.nan
    for i, (row, text) in enumerate(zip(rows, frame["dec"].astype(str))):
        try:
            dec[i] = parse_angle(text, hours=False)
        except ValueError as exc:
            reason = str(exc) if "could not convert" not in str(exc) else "not a number"
            err(row, "dec", f"{text!r} is not a declination ({reason}); expected degrees or +dd:mm:ss", text)
            continue
        if not -90.0 <= dec[i] <= 90.0:
            hint = " (are ra and dec swapped?)" if -90 <= ra[i] <= 90 else ""
            err(row, "dec", f"{text} is outside -90..+90 deg{hint}", text)
            dec[i] = np.nan

    period = _numeric(frame, "period_d", source, errors, positive=True)
    a_au = _numeric(frame, "a_au", source, errors, positive=True)
    m1 = _numeric(frame, "mass1_msun", source, errors, positive=True)
    m2 = _numeric(frame, "mass2_msun", source, errors, default=0.0, nonnegative=True)
    from_kepler = np.isnan(period) & np.isfinite(a_au) & np.isfinite(m1)
    if from_kepler.any():
        import astropy.units as u

        from ..orbits.kepler import period_from_kepler_third_law

        period[from_kepler] = period_from_kepler_third_law(
            a_au[from_kepler] * u.au, (m1[from_kepler] + m2[from_kepler]) * u.M_sun).value
    period_text = frame["period_d"].astype(str) if "period_d" in frame else pd.Series([""] * n, index=frame.index)
    for row in rows[np.isnan(period) & (period_text == "").to_numpy()]:
        err(row, "period_d", "missing period; give period_d (days) or a_au with mass1_msun")

    e = _numeric(frame, "e", source, errors)
    bad_e = ~np.isnan(e) & ~((e >= 0) & (e < 1))
    for row, v in zip(rows[bad_e], e[bad_e]):
        err(row, "e", f"{v:g} is not a bound orbit; eccentricity must satisfy 0 <= e < 1", v)
    omega = _numeric(frame, "omega_deg", source, errors)
    e_text = frame["e"].astype(str).to_numpy() if "e" in frame else np.full(n, "")
    w_text = frame["omega_deg"].astype(str).to_numpy() if "omega_deg" in frame else np.full(n, "")
    linear = (e_text == "") & (w_text == "")
    need_omega = ~linear & (w_text == "") & ~(e == 0)
    for row in rows[need_omega & ~bad_e & ~np.isnan(e)]:
        err(row, "omega_deg", "missing argument of periastron; it is required when e > 0")
    for row in rows[(e_text == "") & (w_text != "")]:
        err(row, "e", "missing eccentricity (omega_deg is given); leave both empty for a linear ephemeris")
    e = np.where(bad_e, np.nan, e)

    omega_of = frame["omega_of"].astype(str).str.lower().to_numpy() if "omega_of" in frame else np.full(n, "")
    bad_of = ~np.isin(omega_of, ["", "primary", "companion"])
    for row, v in zip(rows[bad_of], omega_of[bad_of]):
        err(row, "omega_of", f"{v!r} is not allowed; expected 'primary' or 'companion'", v)
    omega = np.where(omega_of == "companion", omega + 180.0, omega)
    omega = np.where(np.isnan(omega) & (e == 0), 90.0, omega)  # circular: Tp = Tc convention
    omega = np.mod(omega, 360.0)

    # epoch: exactly one of tp / tc / t0 per row
    present = {c: (frame[c].astype(str) != "").to_numpy() if c in frame else np.zeros(n, bool)
               for c in EPOCH_COLUMNS}
    count = sum(present.values())
    epoch_kind = np.full(n, "", dtype=object)
    for c in EPOCH_COLUMNS:
        epoch_kind[present[c]] = c
    for row in rows[count == 0]:
        err(row, "tp" if "tp" in frame else ("tc" if "tc" in frame else "t0"),
            "missing epoch; give tp (periastron), tc (primary conjunction) or t0 (linear ephemeris)")
    for row in rows[count > 1]:
        err(row, "tc", "more than one epoch given (tp, tc, t0); give exactly one")
    t0_on_orbit = present["t0"] & ~linear
    for row in rows[t0_on_orbit]:
        err(row, "t0", "t0 is the epoch of a linear ephemeris; for an orbit with e and omega use tp or tc")
    tp_on_linear = present["tp"] & linear
    for row in rows[tp_on_linear]:
        err(row, "tp", "tp (periastron) needs e and omega_deg; for a linear ephemeris use t0 or tc")

    epoch = np.full(n, np.nan)
    epoch_err = np.zeros(n)
    for c in EPOCH_COLUMNS:
        vals = _numeric(frame, c, source, errors)
        errs = _numeric(frame, f"{c}_err_d", source, errors, default=0.0, nonnegative=True)
        epoch = np.where(present[c] & (count == 1), vals, epoch)
        epoch_err = np.where(present[c] & (count == 1), errs, epoch_err)
    offset_given = (frame["time_offset_d"].astype(str) != "").to_numpy() if "time_offset_d" in frame else np.zeros(n, bool)
    offset = _numeric(frame, "time_offset_d", source, errors, default=0.0)
    full = epoch + offset
    looks_reduced = np.isfinite(epoch) & ~offset_given & (epoch < MIN_FULL_JD)
    for row, kind, v in zip(rows[looks_reduced], epoch_kind[looks_reduced], epoch[looks_reduced]):
        err(row, kind, f"{v:g} looks like a reduced Julian date; give the offset in column time_offset_d "
            "(e.g. 2400000, 2450000 or 2400000.5 for MJD)", v)
    out_of_range = np.isfinite(full) & ~looks_reduced & ((full < MIN_FULL_JD) | (full > MAX_FULL_JD))
    for row, kind, v in zip(rows[out_of_range], epoch_kind[out_of_range], full[out_of_range]):
        err(row, kind, f"epoch {v:.6f} (after time_offset_d) is not a plausible Julian date "
            f"({MIN_FULL_JD:.0f}-{MAX_FULL_JD:.0f})", v)
    full = np.where(looks_reduced | out_of_range, np.nan, full)

    system = frame["time_system"].astype(str).str.upper().to_numpy() if "time_system" in frame else np.full(n, "")
    system = np.where(system == "", "BJD_TDB", system)
    bad_sys = ~np.isin(system, epochs.TIME_SYSTEMS)
    for row, v in zip(rows[bad_sys], system[bad_sys]):
        err(row, "time_system", f"unknown time system {v!r}; expected one of {', '.join(epochs.TIME_SYSTEMS)}", v)

    epoch_bjd = np.full(n, np.nan)
    ok_coords = np.isfinite(ra) & np.isfinite(dec) & np.isfinite(full) & ~bad_sys
    for s in epochs.TIME_SYSTEMS:
        sel = ok_coords & (system == s)
        if sel.any():
            epoch_bjd[sel] = epochs.to_bjd_tdb(full[sel], s, ra[sel], dec[sel])

    period_err = _numeric(frame, "period_err_d", source, errors, default=0.0, nonnegative=True)
    e_err = _numeric(frame, "e_err", source, errors, default=0.0, nonnegative=True)
    omega_err = _numeric(frame, "omega_err_deg", source, errors, default=0.0, nonnegative=True)
    k_ms = _numeric(frame, "k_ms", source, errors, nonnegative=True)
    gamma = _numeric(frame, "gamma_ms", source, errors, default=0.0)
    priority = _numeric(frame, "priority", source, errors, default=1.0, positive=True)
    duration = _numeric(frame, "duration_h", source, errors, positive=True)
    a_rstar = _numeric(frame, "a_rstar", source, errors, positive=True)
    for row in rows[np.isfinite(a_rstar) & (a_rstar <= 1)]:
        err(row, "a_rstar", "a/R* must exceed 1 (the companion would orbit inside the star)")
    inc = _numeric(frame, "inc_deg", source, errors)
    for row, v in zip(rows[np.isfinite(inc) & ((inc < 0) | (inc > 180))], inc[np.isfinite(inc) & ((inc < 0) | (inc > 180))]):
        err(row, "inc_deg", f"{v:g} is outside 0..180 deg", v)
    impact = _numeric(frame, "b", source, errors, nonnegative=True)
    rp = _numeric(frame, "rp_rstar", source, errors, positive=True)
    visit_h = _numeric(frame, "visit_h", source, errors, positive=True)
    visit_gap_h = _numeric(frame, "visit_gap_h", source, errors, default=0.0, nonnegative=True)
    both_geom = np.isfinite(inc) & np.isfinite(impact)
    for row in rows[both_geom]:
        err(row, "b", "give either inc_deg or b, not both")
    from ..orbits.geometry import inclination_from_impact

    with np.errstate(invalid="ignore"):
        inc_from_b = np.degrees(inclination_from_impact(impact, a_rstar, np.nan_to_num(e), np.radians(omega)))
    inc = np.where(np.isnan(inc) & np.isfinite(impact) & np.isfinite(a_rstar), inc_from_b, inc)

    events = _events_column(frame, rows, linear, e, source, errors)
    labels = frame["label"].astype(str).to_numpy() if "label" in frame else np.full(n, "")
    labels = np.where(labels == "", np.where(linear, "periodic", ""), labels)

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
        "tp_bjd_tdb": tp, "time_system": system, "k_ms": k_ms, "gamma_ms": gamma,
        "priority": priority, "events": events, "duration_h": duration, "a_rstar": a_rstar,
        "inc_deg": inc, "rp_rstar": rp, "label": labels, "visit_h": visit_h, "visit_gap_h": visit_gap_h,
    }, columns=list(OUTPUT_COLUMNS))


def _events_column(frame, rows, linear, e, source, errors):
    text = frame["events"].astype(str).to_numpy() if "events" in frame else np.full(len(frame), "")
    out = []
    for row, t, lin, ecc in zip(rows, text, linear, e):
        if lin:
            default = (PERIODIC_EVENT,)
        elif ecc == 0:
            default = DEFAULT_EVENTS_CIRCULAR
        else:
            default = DEFAULT_EVENTS_ECCENTRIC
        if not t:
            out.append(default)
            continue
        wanted = tuple(dict.fromkeys(w.strip().lower() for w in t.split(";") if w.strip()))
        unknown = [w for w in wanted if w not in ALL_EVENTS]
        if unknown:
            errors.append(InputError(
                f"unknown event {unknown[0]!r}; expected a semicolon list of {', '.join(ALL_EVENTS)}",
                file=source, row=int(row), column="events", value=t))
        elif lin and set(wanted) - {PERIODIC_EVENT}:
            errors.append(InputError(
                "a linear ephemeris (no e, omega_deg) has only the event 'periodic'",
                file=source, row=int(row), column="events", value=t))
        elif not lin and PERIODIC_EVENT in wanted:
            errors.append(InputError(
                "'periodic' is the event of a linear ephemeris; this row has orbital elements",
                file=source, row=int(row), column="events", value=t))
        out.append(wanted)
    return out
