"""Catalogues as typed tables: ECSV, VOTable and FITS files, pandas DataFrames and astropy Tables.

Files are read by :mod:`astropy.table` (the format chosen by the file's extension,
:data:`TABLE_FORMATS`); each table becomes the columns of
:func:`planner.inputs.catalogue.load_columns`, so every format goes through the same header
check, validators and messages as a CSV file. Numbers stay numbers (floats, NaN for a masked or
missing cell), text stays text (``""`` for a masked cell).

Units: a column with a unit in the table's metadata is converted to the unit of the engine column
(:data:`ENGINE_UNITS`: a period in hours becomes days, an angle in radians degrees, a
semi-amplitude in km/s m/s); the unit in the metadata wins over the one the column's name
implies, and a column may then use the short name (``period`` for ``period_d``). A unit of the
wrong kind (a period in metres) is an error naming the column. Columns without a unit are taken
in the engine's unit, as in a CSV file.

Rows in messages: in ECSV, VOTable and FITS files the first data row is row 1 (header lines,
metadata and FITS headers are not counted); in an astropy Table the row index (``table[row]``,
from 0); in a DataFrame its index label (``frame.loc[row]``) when the index is unique integers,
else the position (``frame.iloc[row]``, from 0).
"""

from __future__ import annotations

import os

import numpy as np
import pandas as pd

from ..errors import InputError, InputErrors
from .catalogue import load_columns
from .textfile import read_bytes

#: File extension (lower case) -> astropy.table format name.
TABLE_FORMATS = {
    ".ecsv": "ascii.ecsv", ".vot": "votable", ".votable": "votable", ".xml": "votable",
    ".fits": "fits", ".fit": "fits", ".fts": "fits", ".fits.gz": "fits", ".fit.gz": "fits",
}
_FORMAT_NAMES = {"ascii.ecsv": "ECSV", "votable": "VOTable", "fits": "FITS"}

#: Unit of each engine column that a table's unit is converted to ("" = dimensionless).
ENGINE_UNITS = {
    "ra": "deg", "dec": "deg",
    "period_d": "d", "period_err_d": "d", "tp": "d", "tc": "d", "t0": "d", "tp_err_d": "d", "tc_err_d": "d",
    "t0_err_d": "d", "time_offset_d": "d",
    "omega_deg": "deg", "omega_err_deg": "deg", "inc_deg": "deg",
    "e": "", "e_err": "", "b": "", "a_rstar": "", "rp_rstar": "", "priority": "", "rv_phase_tol": "",
    "k_ms": "m / s", "gamma_ms": "m / s",
    "duration_h": "h", "visit_h": "h", "visit_gap_h": "h",
    "a_au": "AU", "mass1_msun": "solMass", "mass2_msun": "solMass",
}
_EXAMPLES = {"d": "d, h or min", "deg": "deg or rad", "m / s": "m/s or km/s", "h": "h, min or d",
             "AU": "AU or km", "solMass": "solMass or kg", "": "no unit"}


def table_format(path) -> str | None:
    """The astropy.table format of a catalogue file by its extension, None for CSV (or unknown)."""
    name = os.fspath(path).lower()
    return next((fmt for ext, fmt in sorted(TABLE_FORMATS.items(), key=lambda kv: -len(kv[0]))
                 if name.endswith(ext)), None)


def is_table(obj) -> bool:
    """True for an astropy Table (checked without importing astropy.table)."""
    return any(c.__module__.startswith("astropy.table") and c.__name__ == "Table" for c in type(obj).__mro__)


def read_table_file(path, fmt: str) -> pd.DataFrame:
    """Validated target table from the ECSV, VOTable or FITS file at ``path`` (``fmt``: astropy format)."""
    _, source = read_bytes(path, "catalogue")  # the same messages for a missing file or a folder
    from astropy.table import Table

    what = _FORMAT_NAMES.get(fmt, fmt)
    try:
        table = Table.read(os.fspath(path), format=fmt)
    except Exception as exc:  # astropy raises many kinds; the user needs the reason in one line
        reason = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise InputErrors([InputError(f"not a readable {what} table ({reason}); expected a {what} table with "
                                      "one row per target", file=source)]) from None
    return load_table(table, source, first_row=1)


def load_table(table, source: str, first_row: int = 0) -> pd.DataFrame:
    """Validated target table from an astropy Table; rows are numbered from ``first_row``."""
    errors: list[InputError] = []
    header, values, units = [], [], []
    for name in table.colnames:
        col = table[name]
        header.append(str(name))
        values.append(_column_values(col, str(name), source, errors))
        unit = getattr(col, "unit", None)
        units.append(None if unit is None else unit)
    if errors:
        raise InputErrors(errors)
    rows = np.arange(first_row, first_row + len(table), dtype=np.int64)
    return load_columns(header, values, rows, source, header_row=None, units=units)


def load_frame(frame: pd.DataFrame, source: str) -> pd.DataFrame:
    """Validated target table from a pandas DataFrame (no units: every column in the engine's unit)."""
    errors: list[InputError] = []
    header, values = [], []
    for name in frame.columns:
        col = frame[name]
        header.append(str(name))
        if pd.api.types.is_numeric_dtype(col.dtype) and not pd.api.types.is_bool_dtype(col.dtype):
            values.append(col.to_numpy(dtype=float, na_value=np.nan))
        else:
            values.append(_text(col.to_numpy(object), pd.isna(col).to_numpy()))
    index = frame.index
    if pd.api.types.is_integer_dtype(index.dtype) and index.is_unique:
        rows = index.to_numpy(np.int64)
    else:
        rows = np.arange(len(frame), dtype=np.int64)
    return load_columns(header, values, rows, source, header_row=None, units=None, errors=errors)


def _text(values: np.ndarray, missing: np.ndarray) -> np.ndarray:
    """Text cells (stripped; ``""`` where missing); bytes are decoded as UTF-8."""
    out = np.empty(len(values), dtype=object)
    for i, (v, gone) in enumerate(zip(values, missing)):
        if gone:
            out[i] = ""
        elif isinstance(v, bytes):
            out[i] = v.decode("utf-8", errors="replace").strip()
        else:
            out[i] = str(v).strip()
    return out


def _column_values(col, name: str, source: str, errors: list) -> np.ndarray:
    """Floats (NaN where masked) for a numeric column (a Quantity of a QTable too), text otherwise."""
    import astropy.units as u
    from astropy.table import Column

    if isinstance(col, u.Quantity) and col.ndim == 1:  # a QTable column (masked or not)
        mask = np.asarray(getattr(col, "mask", np.zeros(len(col), bool)), bool)
        out = np.array(getattr(col, "unmasked", col).value, dtype=float)
        out[mask] = np.nan
        return out
    if not isinstance(col, Column):
        errors.append(InputError(f"column {name!r} holds {type(col).__name__} objects; give it as plain numbers "
                                 "(Julian dates for an epoch, with the system in column time_system) or text",
                                 file=source))
        return np.full(len(col), "", dtype=object)
    if col.ndim > 1:
        errors.append(InputError(f"column {name!r} holds {col.shape[1:]} values per row; expected one value per "
                                 "row", file=source))
        return np.full(len(col), "", dtype=object)
    mask = np.ma.getmaskarray(col)
    data = np.asarray(col)
    if data.dtype.kind in "fiu":
        out = data.astype(float)
        out[mask] = np.nan
        return out
    return _text(data.astype(object), mask)


def to_engine_unit(values: np.ndarray, unit, column: str, name: str, source: str, errors: list):
    """(values in the engine column's unit, note for messages); an error in ``errors`` for a wrong unit.

    ``column`` is the engine column, ``name`` the table's. Text columns keep their text (an angle
    as text is read as degrees, or sexagesimal, so its unit must be degrees).
    """
    import astropy.units as u

    target_text = ENGINE_UNITS.get(column)
    if target_text is None:
        return values, ""
    target = u.Unit(target_text) if target_text else u.dimensionless_unscaled
    try:
        factor = float(unit.to(target))
    except (u.UnitConversionError, u.UnitsError, ValueError, TypeError):
        kind = target.physical_type
        given = unit.physical_type if not isinstance(unit, u.UnrecognizedUnit) else "not a unit astropy knows"
        errors.append(InputError(f"column {name!r} has unit '{unit}' ({given}); {column} needs {kind} "
                                 f"({_EXAMPLES[target_text]})", file=source))
        return values, ""
    if values.dtype.kind != "f":
        if factor != 1.0:
            errors.append(InputError(f"column {name!r} holds text with unit '{unit}'; give its values as numbers "
                                     "(then the unit is converted) or as degrees", file=source))
        return values, ""
    if factor == 1.0:
        return values, ""
    return values * factor, f" (converted from {unit} in the table to {target_text or 'a plain number'})"
