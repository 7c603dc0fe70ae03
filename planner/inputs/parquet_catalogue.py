"""Parquet catalogues: the same columns as a CSV catalogue, read with pyarrow, checked the same way.

:func:`read_catalogue_file` is the loader the survey-scale commands use: a Parquet file (by its
``PAR1`` magic bytes or a ``.parquet`` suffix) goes through :func:`read_parquet_catalogue`,
anything else through :func:`planner.inputs.catalogue.read_catalogue`.

A Parquet file carries types; each column must have one the catalogue can use: numbers
(integer, floating, decimal) or text for the numeric columns, text or numbers for the text
columns (a numeric ``name`` such as an HD number becomes its decimal text). Every cell is then
turned into the text a CSV file would hold (floats by ``repr``, which reads back to the same
double) and validated by the CSV loader, so every message is the same one, with the same file,
row and column: rows count as in a spreadsheet, the header being row 1 and the first record row
2. A column of a type that cannot hold the value (a timestamp, a list, a boolean ...) is refused
at the row of its first value.
"""

from __future__ import annotations

import csv
import io
import os

from ..errors import InputError, InputErrors
from . import catalogue
from .textfile import read_bytes

PARQUET_MAGIC = b"PAR1"


def is_parquet(path) -> bool:
    """True when ``path`` ends in ``.parquet`` or starts with Parquet's magic bytes."""
    name = os.fspath(path)
    if name.lower().endswith(".parquet"):
        return True
    try:
        with open(name, "rb") as fh:
            return fh.read(4) == PARQUET_MAGIC
    except OSError:
        return False


def read_catalogue_file(path):
    """Validated target table from a catalogue file of any form (:func:`planner.read_catalogue`)."""
    return catalogue.read_catalogue(path)


def fingerprint(path) -> dict:
    """{file, bytes, sha256} of the catalogue at ``path``, for the record of a run."""
    import hashlib

    digest = hashlib.sha256()
    size = 0
    with open(os.fspath(path), "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
            size += len(block)
    return {"file": os.path.basename(os.fspath(path)), "bytes": size, "sha256": digest.hexdigest()}


def _kind(arrow_type) -> str:
    import pyarrow.types as pt

    if pt.is_integer(arrow_type) or pt.is_floating(arrow_type) or pt.is_decimal(arrow_type):
        return "number"
    if pt.is_string(arrow_type) or pt.is_large_string(arrow_type):
        return "text"
    if pt.is_null(arrow_type):
        return "empty"
    return "other"


def _cell_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return "" if value != value else repr(value)
    return str(value)


def read_parquet_catalogue(path):
    """Validated target table from the Parquet file at ``path`` (same columns as a CSV one)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    raw, source = read_bytes(path, "catalogue")  # the file's errors (missing, a folder) as for CSV
    try:
        table = pq.read_table(pa.BufferReader(raw))
    except (pa.ArrowInvalid, OSError) as exc:
        raise InputErrors([InputError(f"not a readable Parquet file ({str(exc).splitlines()[0]}); "
                                      "expected a Parquet or CSV catalogue", file=source)]) from None
    errors = []
    columns = []
    for field in table.schema:
        kind = _kind(field.type)
        column = table.column(field.name)
        if kind == "other":
            valid = column.is_valid().to_pylist()
            first = valid.index(True) if True in valid else 0
            errors.append(InputError(
                f"Parquet type {field.type} cannot hold this column; expected "
                f"{'a number' if field.name.lower() in catalogue.NUMERIC_COLUMNS else 'text or a number'} "
                "(store it as a number or as text)", file=source, row=first + 2, column=field.name.lower()))
            continue
        cells = [_cell_text(v) for v in column.to_pylist()]
        for i, text in enumerate(cells):
            if "\n" in text or "\r" in text:
                errors.append(InputError("line break inside a cell; catalogue cells hold one line",
                                         file=source, row=i + 2, column=field.name.lower()))
        columns.append((field.name, cells))
    if errors:
        raise InputErrors(errors)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n", quoting=csv.QUOTE_ALL)  # a leading "#" is no comment
    writer.writerow([name for name, _ in columns])
    writer.writerows(zip(*(cells for _, cells in columns)))
    return catalogue.parse_catalogue(buffer.getvalue(), source=source)
