"""One validator per concern of a catalogue row: names, coordinates, period, e/omega, epoch,
time system, eclipse geometry, observing settings, events and wanted orbital phases.

Each validator takes a :class:`Cells` view of the raw table (text cells, one row per target,
indexed by file row) and returns plain numpy columns in the engine's units; every problem becomes
an :class:`~planner.errors.InputError` naming file, row, column and value, collected in
``cells.errors`` so that one run reports every bad row. :func:`planner.inputs.catalogue.parse_catalogue`
calls them in order and assembles the target table.
"""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from .. import numerics
from ..errors import InputError
from ..orbits.geometry import (EVENT_WORDS, LINEAR_TC_LABEL, ORBIT_EVENTS, PERIODIC_EVENT, PERIODIC_KINDS,
                               canonical_event, periodic_kind)
from ..timescales import epochs
from .csv_records import NumberCells

EPOCH_COLUMNS = ("tp", "tc", "t0")
#: Smallest full Julian date accepted as an epoch (JD 2000000 is 763 AD); anything below it is
#: taken to be a reduced date that needs ``time_offset_d``.
MIN_FULL_JD = 2_000_000.0
MAX_FULL_JD = 3_000_000.0

_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d+,\d+\s*$")
_SEXAGESIMAL = re.compile(r"^\s*([+-]?)\s*(\d+)[:\s]+(\d+)(?:[:\s]+(\d+(?:\.\d*)?))?\s*$")


#: Numbers that the arrow cast reads exactly as Python's ``float`` (both round correctly); cells
#: of other forms go to :func:`pandas.to_numeric`, one by one.
_DECIMAL = r"^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$"


@dataclasses.dataclass
class Cells:
    """The raw catalogue (one entry per record) with its source name and error list.

    ``columns`` maps an engine column to its cells: text (a pyarrow string array, stripped,
    ``""`` when empty; a numpy array of str is converted) or floats (a numpy array, NaN when
    empty) for numeric columns of a table read with its types. ``rows`` is each record's row as
    messages show it. ``names`` maps an engine column to the column name the user gave
    (``period`` for ``period_d``), ``notes`` to a remark added to its messages (a unit
    conversion); messages name the user's column.

    Every accessor works on whole columns (pyarrow compute, numpy); text is made into Python
    strings only for the distinct values of a column (:meth:`codes`) and for the cells named in
    messages (:meth:`text_at`).
    """

    columns: dict
    rows: np.ndarray
    source: str
    errors: list
    names: dict = dataclasses.field(default_factory=dict)
    notes: dict = dataclasses.field(default_factory=dict)

    def __post_init__(self):
        self.rows = np.asarray(self.rows, dtype=np.int64)
        self.columns = {k: _as_cells(v) for k, v in self.columns.items()}
        self._cache = {}

    @property
    def n(self) -> int:
        return len(self.rows)

    def has(self, column) -> bool:
        return column in self.columns

    def has_any(self, columns) -> bool:
        """True when the catalogue has at least one of ``columns`` (a validator of absent columns
        returns its defaults without looking at 10^5 empty cells)."""
        return any(c in self.columns for c in columns)

    def err(self, row, column, message, value=None) -> None:
        self.errors.append(InputError(message + self.notes.get(column, ""), file=self.source, row=int(row),
                                      column=self.names.get(column, column), value=value))

    def _is_float(self, column) -> bool:
        return isinstance(self.columns.get(column), (np.ndarray, NumberCells))

    def strings(self, column):
        """The column's cells as a pyarrow string array (floats as their shortest text, ``""`` for NaN)."""
        if column not in self.columns:
            return pa.array(np.full(self.n, "", dtype=object), type=pa.string())
        values = self.columns[column]
        if isinstance(values, (np.ndarray, NumberCells)):
            return pa.array(self.text(column), type=pa.string())
        return values

    def text(self, column) -> np.ndarray:
        """The column's text cells as str objects (``""`` for every row when the column is absent)."""
        return self.text_at(column, np.arange(self.n))

    def text_at(self, column, where) -> np.ndarray:
        """The text of the cells at ``where`` (a boolean mask or indices) as str objects."""
        where = np.flatnonzero(where) if np.asarray(where).dtype == bool else np.asarray(where, dtype=np.int64)
        if column not in self.columns:
            return np.full(len(where), "", dtype=object)
        values = self.columns[column]
        if isinstance(values, NumberCells):
            return np.array(values.text(where) + [None], dtype=object)[:-1]
        if isinstance(values, np.ndarray):
            return np.array(["" if np.isnan(v) else _float_text(v) for v in values[where]], dtype=object)
        return np.array(values.take(pa.array(where)).to_pylist() + [None], dtype=object)[:-1]

    def given(self, column) -> np.ndarray:
        """True where the column exists and its cell is not empty."""
        if column not in self.columns:
            return np.zeros(self.n, bool)
        key = ("given", column)
        if key not in self._cache:
            values = self.columns[column]
            if isinstance(values, NumberCells):
                self._cache[key] = values.given
            elif isinstance(values, np.ndarray):
                self._cache[key] = ~np.isnan(values)
            else:
                self._cache[key] = _nonempty(values)
        return self._cache[key]

    def codes(self, column, transform=None):
        """(codes, values): the column's distinct texts and each cell's index into them.

        ``transform`` (e.g. ``str.lower``) is applied to each distinct text first; ``values`` is
        a list of str, ``codes`` an int64 array with one entry per record.
        """
        key = ("codes", column, transform)
        if key in self._cache:
            return self._cache[key]
        if column not in self.columns:
            codes, values = np.zeros(self.n, np.int64), [""]
        elif isinstance(self.columns[column], np.ndarray):
            codes, uniques = pd.factorize(self.columns[column], use_na_sentinel=False)
            values = ["" if np.isnan(v) else _float_text(v) for v in uniques]
        else:
            encoded = pc.dictionary_encode(self.strings(column))
            codes, values = encoded.indices.to_numpy().astype(np.int64), encoded.dictionary.to_pylist()
        if transform is not None:
            values = [transform(v) for v in values]
        if len(set(values)) < len(values):  # merge texts that the transform made equal
            index = {}
            remap = np.array([index.setdefault(v, len(index)) for v in values], dtype=np.int64)
            codes, values = remap[codes], list(index)
        if not values:
            values = [""]
        self._cache[key] = (codes, values)
        return codes, values

    def coded(self, column, function, transform=None) -> Coded:
        """``function`` of each cell's text (after ``transform``) as :class:`Coded` text."""
        codes, values = self.codes(column, transform)
        return Coded(codes, [function(v) for v in values])

    def lookup(self, column, function, transform=None, dtype=None) -> np.ndarray:
        """``function`` of each cell's text (after ``transform``), evaluated once per distinct text."""
        codes, values = self.codes(column, transform)
        table = np.array([function(v) for v in values], dtype=dtype)
        return table[codes]

    def _numbers(self, column):
        key = ("numbers", column)
        if key not in self._cache:
            values = self.columns[column]
            if isinstance(values, NumberCells):
                values = values.values
            self._cache[key] = values if isinstance(values, np.ndarray) else _text_to_float(values)
        return self._cache[key]

    def numeric(self, column, default=np.nan, positive=False, nonnegative=False) -> np.ndarray:
        """Column as floats; bad cells become NaN (or ``default``) and an InputError each."""
        if column not in self.columns:
            return np.full(self.n, default, dtype=float)
        values = self._numbers(column).copy()
        bad_number = self.given(column) & ~np.isfinite(values)
        for row, v in zip(self.rows[bad_number], self.text_at(column, bad_number)):
            hint = " (a decimal comma? write numbers with a decimal point)" if _DECIMAL_COMMA.match(v) else ""
            self.err(row, column, f"{v!r} is not a number{hint}", v)
        values[bad_number] = np.nan
        if positive:
            bad = values <= 0
            for row, v in zip(self.rows[bad], self.text_at(column, bad)):
                self.err(row, column, f"{v} must be positive", v)
            values[bad] = np.nan
        if nonnegative:
            bad = values < 0
            for row, v in zip(self.rows[bad], self.text_at(column, bad)):
                self.err(row, column, f"{v} must not be negative (it is a 1-sigma uncertainty)", v)
            values[bad] = np.nan
        return np.where(np.isnan(values), default, values) if not np.isnan(default) else values


class Coded:
    """Text per row as an index into its few distinct values (a column the loader computes).

    Compares with a str (``kind == "tc"`` gives a boolean array), selects with a mask or indices
    (an array of str), and becomes a table column without a Python string per row.
    """

    def __init__(self, codes, values):
        values = list(values)
        index = {}
        remap = np.array([index.setdefault(v, len(index)) for v in values] or [0], dtype=np.int64)
        self.codes = remap[np.asarray(codes, dtype=np.int64)]
        self.values = tuple(index) or ("",)

    @classmethod
    def choose(cls, values, index):
        """Row i gets ``values[index[i]]``."""
        return cls(index, values)

    def __len__(self):
        return len(self.codes)

    def __eq__(self, text):
        return self.codes == self.values.index(text) if text in self.values else np.zeros(len(self.codes), bool)

    def __ne__(self, text):
        return ~(self == text)

    def isin(self, texts) -> np.ndarray:
        return np.isin(self.codes, [i for i, v in enumerate(self.values) if v in texts])

    def __getitem__(self, where):
        return np.array(self.values, dtype=object)[self.codes[where]]

    def array(self) -> np.ndarray:
        return self[slice(None)]

    def strings(self):
        """The column as a pyarrow large_string array."""
        return pc.take(pa.array(self.values, type=pa.large_string()), pa.array(self.codes))


def _as_cells(values):
    """A column as :class:`Cells` keeps it: float numpy arrays as they are, text as a pyarrow string array."""
    if isinstance(values, NumberCells):
        return values
    if isinstance(values, (pa.Array, pa.ChunkedArray)):
        values = values.combine_chunks() if isinstance(values, pa.ChunkedArray) else values
        return values if values.type == pa.string() else values.cast(pa.string())
    values = np.asarray(values)
    if values.dtype.kind == "f":
        return values.astype(float, copy=False)
    return pa.array(values.astype(object), type=pa.string())


def _nonempty(strings) -> np.ndarray:
    """True for the text cells that are not empty."""
    return pc.greater(pc.binary_length(strings), 0).to_numpy(zero_copy_only=False)


def _without(strings, keep: np.ndarray):
    """The text cells with the ones not in ``keep`` made null (no copy of the text)."""
    if strings.null_count:
        keep = keep & strings.is_valid().to_numpy(zero_copy_only=False)
    bitmap = pa.py_buffer(np.packbits(keep, bitorder="little"))
    return pa.Array.from_buffers(strings.type, len(strings), [bitmap] + strings.buffers()[1:],
                                 offset=0) if strings.offset == 0 else pc.if_else(
        pa.array(keep), strings, pa.scalar(None, strings.type))


def all_numbers(strings):
    """Floats (NaN for empty cells) of text cells that are all numbers or empty, at least one a
    number; else None. The same reading as :func:`_text_to_float`, stopping at the first cell
    that is not a number (a column of words is seen as such at its first word)."""
    given = _nonempty(strings)
    if not given.any():
        return None
    cells = _without(strings, given)
    try:
        out = pc.cast(cells, pa.float64()).to_numpy(zero_copy_only=False, writable=True)
        return None if np.isnan(out[given]).any() else out
    except pa.ArrowInvalid:
        pass
    decimal = pc.match_substring_regex(cells, _DECIMAL).fill_null(False).to_numpy(zero_copy_only=False)
    other = np.flatnonzero(~decimal & given)
    start, size = 0, 1
    while start < len(other):  # batches of 1, 2, 4, ... cells: a column of words stops at its first
        text = pd.Series(strings.take(pa.array(other[start:start + size])).to_pylist(), dtype=object)
        if pd.to_numeric(text, errors="coerce").isna().any():
            return None
        start, size = start + size, 2 * size
    out = _text_to_float(strings)
    return None if np.isnan(out[given]).any() else out


def _text_to_float(strings) -> np.ndarray:
    """Floats of text cells: NaN for empty cells and for text that is not a number (inf/nan as read).

    Decimal numbers (:data:`_DECIMAL`) are cast by arrow, which rounds correctly as Python's
    ``float`` does; any other non-empty cell (``inf``, ``1_000``, words) goes to
    :func:`pandas.to_numeric` (NaN when it is not a number).
    """
    given = _nonempty(strings)
    cells = _without(strings, given)
    try:
        return pc.cast(cells, pa.float64()).to_numpy(zero_copy_only=False, writable=True)
    except pa.ArrowInvalid:
        pass
    decimal = pc.match_substring_regex(cells, _DECIMAL).fill_null(False).to_numpy(zero_copy_only=False)
    try:
        out = pc.cast(_without(strings, decimal), pa.float64()).to_numpy(zero_copy_only=False, writable=True)
    except pa.ArrowInvalid:  # a form the cast refuses after all: every cell one by one
        out, decimal = np.full(len(strings), np.nan), np.zeros(len(strings), bool)
    other = np.flatnonzero(~decimal & given)
    if len(other):
        text = pd.Series(strings.take(pa.array(other)).to_pylist(), dtype=object)
        out[other] = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    return out


def _float_text(value: float) -> str:
    """Shortest text that reads back as ``value``, without a trailing ``.0`` (``12345``, ``5.63``)."""
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


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


def check_names(cells: Cells):
    """Target names (a pyarrow string array): not empty, unique in the file."""
    rows, names, given = cells.rows, cells.strings("name"), cells.given("name")
    for row in rows[~given]:
        cells.err(row, "name", "empty target name")
    encoded = pc.dictionary_encode(names)
    if len(encoded.dictionary) < cells.n:
        codes = encoded.indices.to_numpy().astype(np.int64)
        _, first = np.unique(codes, return_index=True)
        position = np.arange(cells.n)
        dup = (position != first[codes]) & given
        for row, nm, at in zip(rows[dup], cells.text_at("name", dup), first[codes[dup]]):
            cells.err(row, "name", f"duplicate target name {nm!r} (first at row {rows[at]}); names must be unique",
                      nm)
    return names


#: Sexagesimal angles of the plainest form (ASCII digits, ``:`` or spaces between the parts),
#: read by arrow; every other form goes through :func:`parse_angle` one cell at a time.
_PLAIN_SEXAGESIMAL = (r"^(?P<sign>[+-]?) *(?P<a>[0-9]{1,15})[: ]+(?P<b>[0-9]{1,15})"
                      r"(?:[: ]+(?P<c>[0-9]{1,15}(?:\.[0-9]{0,17})?))?$")


#: ... and the usual form of those, ``[+-]d:m`` or ``[+-]d:m:s``, split at its colons.
_COLON_SEXAGESIMAL = r"^[+-]?[0-9]{1,15}:[0-9]{1,15}(?::[0-9]{1,15}(?:\.[0-9]{0,17})?)?$"


def _plain_angles(strings, hours: bool):
    """(degrees, ok) of text cells of decimal or plain sexagesimal angles, as :func:`parse_angle`
    reads them; ``ok`` is False where a cell needs parse_angle itself (its other forms, its errors).
    ``hours``: a sexagesimal right ascension (hours, no sign, below 24)."""
    n = len(strings)
    first = next((t for t in strings[:100].to_pylist() if t), "")
    if re.match(_DECIMAL, first):  # a whole-column cast that fails costs as much as reading it
        try:  # a column of decimal degrees (what the cast reads, Python's float reads the same)
            out = pc.cast(strings, pa.float64()).to_numpy(zero_copy_only=False, writable=True)
            return out, np.isfinite(out)
        except pa.ArrowInvalid:
            pass
    decimal = pc.match_substring_regex(strings, _DECIMAL).to_numpy(zero_copy_only=False)
    out = np.full(n, np.nan)
    if decimal.any():
        out[decimal] = pc.cast(strings.filter(pa.array(decimal)), pa.float64()).to_numpy(zero_copy_only=False, writable=True)
    ok = decimal & np.isfinite(out)
    rest = np.flatnonzero(~decimal)
    if len(rest):
        texts = strings.take(pa.array(rest))
        colons = pc.match_substring_regex(texts, _COLON_SEXAGESIMAL).to_numpy(zero_copy_only=False)
        if colons.any():  # the usual form, split at its colons
            parts = pc.split_pattern(texts.filter(pa.array(colons)), ":")
            count = pc.list_value_length(parts).to_numpy()
            start = np.concatenate([[0], np.cumsum(count)[:-1]])
            numbers = pc.cast(pc.list_flatten(parts), pa.float64()).to_numpy(zero_copy_only=False)
            sign = pc.utf8_slice_codeunits(texts.filter(pa.array(colons)), 0, 1).to_numpy(zero_copy_only=False)
            sign = np.where(np.isin(sign, ["+", "-"]), sign, "")
            c = np.where(count == 3, numbers[np.minimum(start + 2, len(numbers) - 1)], 0.0)
            _place_sexagesimal(out, ok, rest[colons], sign, np.abs(numbers[start]), numbers[start + 1], c, hours)
        others = rest[~colons]
        if len(others):
            parts = pc.extract_regex(strings.take(pa.array(others)), _PLAIN_SEXAGESIMAL)
            matched = parts.is_valid().to_numpy(zero_copy_only=False)
            if matched.any():
                parts = parts.filter(pa.array(matched))
                c_text = parts.field("c")
                a, b, c = (pc.cast(x, pa.float64()).to_numpy(zero_copy_only=False)
                           for x in (parts.field("a"), parts.field("b"), pc.if_else(pc.equal(c_text, ""), "0", c_text)))
                _place_sexagesimal(out, ok, others[matched], parts.field("sign").to_numpy(zero_copy_only=False), a, b,
                                   c, hours)
    return out, ok


def _place_sexagesimal(out, ok, at, sign, a, b, c, hours: bool):
    """Angles (degrees) of sexagesimal parts a, b, c with their signs into ``out[at]``, as
    :func:`parse_angle` computes them; ``ok`` False where parse_angle refuses the angle."""
    value = a + b / 60.0 + c / 3600.0
    good = (b < 60) & (c < 60)
    if hours:
        good &= (sign == "") & (value < 24)
        value = 15.0 * value
    else:
        value = np.where(sign == "-", -value, value)
    out[at] = value
    ok[at] = good


def _angles(cells: Cells, column: str, is_ra: bool, expected: str) -> np.ndarray:
    what = "right ascension" if is_ra else "declination"
    if cells._is_float(column):
        out = cells._numbers(column).copy()
        ok = np.isfinite(out)
    elif cells.has(column):
        out, ok = _plain_angles(cells.columns[column], hours=is_ra)
    else:
        out, ok = np.full(cells.n, np.nan), np.zeros(cells.n, bool)
    out[~ok] = np.nan
    for i, text in zip(np.flatnonzero(~ok), cells.text_at(column, ~ok)):
        try:
            out[i] = parse_angle(text, hours=is_ra and (":" in text or " " in text.strip()))
        except ValueError as exc:
            reason = str(exc) if "could not convert" not in str(exc) else "not a number"
            cells.err(cells.rows[i], column, f"{text!r} is not a {what} ({reason}); expected {expected}", text)
    return out


def check_coordinates(cells: Cells):
    """(ra_deg, dec_deg): ICRS degrees from decimal degrees or sexagesimal text; NaN where bad."""
    ra = _angles(cells, "ra", True, "degrees 0-360 or hh:mm:ss.s")
    bad = np.isfinite(ra) & ~((ra >= 0.0) & (ra < 360.0))
    for row, text in zip(cells.rows[bad], cells.text_at("ra", bad)):
        cells.err(row, "ra", f"{text} is outside 0 <= ra < 360 deg", text)
    ra[bad] = np.nan
    dec = _angles(cells, "dec", False, "degrees or +dd:mm:ss")
    bad = np.isfinite(dec) & ~((dec >= -90.0) & (dec <= 90.0))
    for row, text, r in zip(cells.rows[bad], cells.text_at("dec", bad), ra[bad]):
        hint = " (are ra and dec swapped?)" if -90 <= r <= 90 else ""
        cells.err(row, "dec", f"{text} is outside -90..+90 deg{hint}", text)
    dec[bad] = np.nan
    return ra, dec


def check_period(cells: Cells):
    """(period_d, period_err_d): the period, or Kepler's third law from a_au and the masses."""
    period = cells.numeric("period_d", positive=True)
    a_au = cells.numeric("a_au", positive=True)
    m1 = cells.numeric("mass1_msun", positive=True)
    m2 = cells.numeric("mass2_msun", default=0.0, nonnegative=True)
    from_kepler = np.isnan(period) & np.isfinite(a_au) & np.isfinite(m1)
    if from_kepler.any():
        import astropy.units as u

        from ..orbits.kepler import period_from_kepler_third_law

        period[from_kepler] = period_from_kepler_third_law(
            a_au[from_kepler] * u.au, (m1[from_kepler] + m2[from_kepler]) * u.M_sun).value
    for row in cells.rows[np.isnan(period) & ~cells.given("period_d")]:
        cells.err(row, "period_d", "missing period; give period_d (days) or a_au with mass1_msun")
    return period, cells.numeric("period_err_d", default=0.0, nonnegative=True)


def check_shape(cells: Cells):
    """(e, e_err, omega_deg, omega_err_deg, linear): the orbit's shape, omega of the primary.

    ``linear`` marks rows without e and omega (a linear ephemeris). A companion's omega
    (``omega_of = companion``) gets 180 deg added; a circular orbit without omega gets 90 deg
    (so Tp = Tc); omega is reduced to 0..360 deg.
    """
    rows = cells.rows
    e = cells.numeric("e")
    bad_e = ~np.isnan(e) & ~((e >= 0) & (e < 1))
    for row, v in zip(rows[bad_e], e[bad_e]):
        cells.err(row, "e", f"{v:g} is not a bound orbit; eccentricity must satisfy 0 <= e < 1", v)
    omega = cells.numeric("omega_deg")
    e_given, w_given = cells.given("e"), cells.given("omega_deg")
    linear = ~e_given & ~w_given
    need_omega = ~linear & ~w_given & ~(e == 0)
    for row in rows[need_omega & ~bad_e & ~np.isnan(e)]:
        cells.err(row, "omega_deg", "missing argument of periastron; it is required when e > 0")
    for row in rows[~e_given & w_given]:
        cells.err(row, "e", "missing eccentricity (omega_deg is given); leave both empty for a linear ephemeris")
    e = np.where(bad_e, np.nan, e)

    codes, words = cells.codes("omega_of", str.lower)
    bad_of = np.isin(words, ["", "primary", "companion"], invert=True)[codes]
    for row, code in zip(rows[bad_of], codes[bad_of]):
        cells.err(row, "omega_of", f"{words[code]!r} is not allowed; expected 'primary' or 'companion'", words[code])
    omega = np.where(np.array(words, dtype=object)[codes] == "companion", omega + 180.0, omega)
    omega = np.where(np.isnan(omega) & (e == 0), 90.0, omega)  # circular: Tp = Tc convention
    omega = numerics.mod(omega, 360.0)
    e_err = cells.numeric("e_err", default=0.0, nonnegative=True)
    omega_err = cells.numeric("omega_err_deg", default=0.0, nonnegative=True)
    return e, e_err, omega, omega_err, linear


def check_epoch(cells: Cells, linear: np.ndarray):
    """(epoch_kind, full_jd, epoch_err_d): exactly one of tp / tc / t0, as a full Julian date.

    ``time_offset_d`` is added first; an epoch below :data:`MIN_FULL_JD` without it is refused as
    a reduced date, and one outside MIN_FULL_JD..MAX_FULL_JD as implausible (NaN in both cases).
    """
    rows, n = cells.rows, cells.n
    present = {c: cells.given(c) for c in EPOCH_COLUMNS}
    count = sum(present.values())
    kind = np.zeros(n, np.int64)  # index into ("",) + EPOCH_COLUMNS
    for i, c in enumerate(EPOCH_COLUMNS):
        kind[present[c]] = i + 1
    for row in rows[count == 0]:
        cells.err(row, "tp" if cells.has("tp") else ("tc" if cells.has("tc") else "t0"),
                  "missing epoch; give tp (periastron), tc (primary conjunction) or t0 (linear ephemeris)")
    # tp with tc is a row with two epochs: tc is kept here, tp goes to binary_checks.check_second_epoch
    two = present["tp"] & present["tc"] & ~present["t0"] & ~linear
    kind[two] = 1 + EPOCH_COLUMNS.index("tc")
    epoch_kind = Coded.choose(("",) + EPOCH_COLUMNS, kind)
    for row in rows[(count > 1) & ~two]:
        cells.err(row, "tc", "more than one epoch given (tp, tc, t0); give exactly one, or tc with tp")
    for row in rows[present["t0"] & ~linear]:
        cells.err(row, "t0", "t0 is the epoch of a linear ephemeris; for an orbit with e and omega use tp or tc")
    for row in rows[present["tp"] & linear]:
        cells.err(row, "tp", "tp (periastron) needs e and omega_deg; for a linear ephemeris use t0 or tc")

    epoch = np.full(n, np.nan)
    epoch_err = np.zeros(n)
    for c in EPOCH_COLUMNS:
        vals = cells.numeric(c)
        errs = cells.numeric(f"{c}_err_d", default=0.0, nonnegative=True)
        single = present[c] & ((count == 1) | (two & (c == "tc")))
        epoch = np.where(single, vals, epoch)
        epoch_err = np.where(single, errs, epoch_err)
    offset_given = cells.given("time_offset_d")
    full = epoch + cells.numeric("time_offset_d", default=0.0)
    looks_reduced = np.isfinite(epoch) & ~offset_given & (epoch < MIN_FULL_JD)
    for row, kind, v in zip(rows[looks_reduced], epoch_kind[looks_reduced], epoch[looks_reduced]):
        cells.err(row, kind, f"{v:g} looks like a reduced Julian date; give the offset in column time_offset_d "
                  "(e.g. 2400000, 2450000 or 2400000.5 for MJD)", v)
    out_of_range = np.isfinite(full) & ~looks_reduced & ((full < MIN_FULL_JD) | (full > MAX_FULL_JD))
    for row, kind, v in zip(rows[out_of_range], epoch_kind[out_of_range], full[out_of_range]):
        cells.err(row, kind, f"epoch {v:.6f} (after time_offset_d) is not a plausible Julian date "
                  f"({MIN_FULL_JD:.0f}-{MAX_FULL_JD:.0f})", v)
    return epoch_kind, np.where(looks_reduced | out_of_range, np.nan, full), epoch_err


def check_time_system(cells: Cells, full_jd, ra_deg, dec_deg):
    """(time_system, epoch_bjd_tdb): the stated system (default BJD_TDB), epochs in BJD_TDB.

    Converted in each target's direction by :func:`planner.timescales.epochs.to_bjd_tdb`; NaN
    where the epoch, the coordinates or the system is bad.
    """
    system = cells.coded("time_system", lambda v: v or "BJD_TDB", transform=str.upper)
    bad = cells.lookup("time_system", lambda v: (v or "BJD_TDB") not in epochs.TIME_SYSTEMS, transform=str.upper,
                       dtype=bool)
    for row, v in zip(cells.rows[bad], system[bad]):
        cells.err(row, "time_system", f"unknown time system {str(v)!r}; expected one of {', '.join(epochs.TIME_SYSTEMS)}", v)
    epoch_bjd = np.full(cells.n, np.nan)
    ok = np.isfinite(ra_deg) & np.isfinite(dec_deg) & np.isfinite(full_jd) & ~bad
    for s in epochs.TIME_SYSTEMS:
        sel = ok & (system == s)
        if sel.any():
            epoch_bjd[sel] = epochs.to_bjd_tdb(full_jd[sel], s, ra_deg[sel], dec_deg[sel])
    return system, epoch_bjd


def check_geometry(cells: Cells, e, omega_deg):
    """(duration_h, a_rstar, inc_deg, rp_rstar): eclipse geometry; ``b`` becomes an inclination."""
    rows = cells.rows
    duration = cells.numeric("duration_h", positive=True)
    a_rstar = cells.numeric("a_rstar", positive=True)
    for row in rows[np.isfinite(a_rstar) & (a_rstar <= 1)]:
        cells.err(row, "a_rstar", "a/R* must exceed 1 (the companion would orbit inside the star)")
    inc = cells.numeric("inc_deg")
    bad = np.isfinite(inc) & ((inc < 0) | (inc > 180))
    for row, v in zip(rows[bad], inc[bad]):
        cells.err(row, "inc_deg", f"{v:g} is outside 0..180 deg", v)
    impact = cells.numeric("b", nonnegative=True)
    rp = cells.numeric("rp_rstar", positive=True)
    for row in rows[np.isfinite(inc) & np.isfinite(impact)]:
        cells.err(row, "b", "give either inc_deg or b, not both")
    if not cells.has("b"):
        return duration, a_rstar, inc, rp
    from ..orbits.geometry import inclination_from_impact

    with np.errstate(invalid="ignore"):
        inc_from_b = np.degrees(inclination_from_impact(impact, a_rstar, np.nan_to_num(e), np.radians(omega_deg)))
    inc = np.where(np.isnan(inc) & np.isfinite(impact) & np.isfinite(a_rstar), inc_from_b, inc)
    return duration, a_rstar, inc, rp


def geometry_duration_h(targets) -> np.ndarray:
    """T1-T4 duration (hours) of the primary conjunction from each target's period, e, omega and
    eclipse geometry (a_rstar, inc_deg, rp_rstar; :func:`planner.orbits.contacts.contact_offsets_d`);
    NaN where the geometry is not complete or does not eclipse. Only rows with ``duration_h``
    are computed (the loader compares the two)."""
    from ..orbits.contacts import contact_offsets_d

    out = np.full(len(targets), np.nan)
    cols = [targets[c].to_numpy(float) for c in ("duration_h", "period_d", "a_rstar", "inc_deg", "rp_rstar")]
    sel = np.flatnonzero(np.all(np.isfinite(np.stack(cols)), axis=0))
    if sel.size:
        e = np.nan_to_num(targets["e"].to_numpy(float)[sel])
        w = np.radians(np.nan_to_num(targets["omega_deg"].to_numpy(float)[sel], nan=90.0))
        off = contact_offsets_d(cols[1][sel], cols[2][sel], np.radians(cols[3][sel]), cols[4][sel], e, w)
        out[sel] = (off[:, 3] - off[:, 0]) * 24.0
    return out


def check_observing(cells: Cells) -> dict:
    """RV amplitude, systemic velocity, priority and flexible-visit settings, engine columns."""
    return {
        "k_ms": cells.numeric("k_ms", nonnegative=True),
        "gamma_ms": cells.numeric("gamma_ms", default=0.0),
        "priority": cells.numeric("priority", default=1.0, positive=True),
        "visit_h": cells.numeric("visit_h", positive=True),
        "visit_gap_h": cells.numeric("visit_gap_h", default=0.0, nonnegative=True),
        "mag": cells.numeric("mag"),  # brightness for the sheets only, in the observer's band
    }


#: Eccentricity from which an orbit's periastron (and apastron) is a default event [common
#: practice, no source: below it the RV curve departs from a sine by less than about 5 % of K
#: and its fastest swing is within about 10 % of a circular orbit's (1 + 2e to first order), so
#: no moment of the orbit is worth a block of its own; such a target's periastron can still be
#: named in its ``events`` cell].
NEAR_CIRCULAR_E = 0.05


#: Radius ratio below which an eclipsing companion is taken for a planet, whose occultation is
#: not a default event [our policy; common practice, no source: a planet's occultation depth in
#: the optical is of order 10^-4 (a hot Jupiter's) or far less, out of reach of the small and
#: mid-size telescopes periplan plans for; a stellar companion's secondary eclipse is a standard
#: target of eclipse timing, and a star of 0.2 solar radii is a late M dwarf].
PLANET_RADIUS_RATIO = 0.2


def default_events(linear, e, rv, eclipse, planet=False) -> tuple:
    """Events of a target whose ``events`` cell is empty: what its elements make worth observing.

    A linear ephemeris has its ``periodic`` event. An orbit gets periastron when eccentric
    (e >= :data:`NEAR_CIRCULAR_E`), unless
    its only use is photometric (eclipse information and no RV amplitude: a transit timer's
    periastron passage shows nothing in the light curve, except for the rare heartbeat stars,
    which can name it); RV maximum and minimum only with an RV amplitude (``rv``: k_ms given);
    apastron only for an eccentric RV target without eclipse information (nothing photometric
    happens there); the two conjunctions only with eclipse information (``eclipse``: a duration,
    or a/R*, inclination and radius ratio), the secondary not for a ``planet`` (a radius ratio
    below :data:`PLANET_RADIUS_RATIO`: its occultation is too shallow). Anything else is observed
    only when the ``events`` column asks for it.
    """
    if linear:
        return (PERIODIC_EVENT,)
    eccentric = bool(e >= NEAR_CIRCULAR_E)
    wanted = {
        "periastron": eccentric and (rv or not eclipse),
        "apastron": eccentric and rv and not eclipse,
        "primary_conjunction": eclipse,
        "secondary_conjunction": eclipse and not planet,
        "rv_max": rv,
        "rv_min": rv,
    }
    return tuple(ev for ev in ORBIT_EVENTS if wanted[ev])


def check_events(cells: Cells, linear, e, rv=None, eclipse=None, epoch_kind=None, planet=None):
    """(events, labels, counts): each row's tuple of wanted event names, the label of its event,
    and how many events the tuple holds.

    Words of the ``events`` column may be the usual aliases (``transit``, ``primary_eclipse``,
    ``occultation``, ``secondary_eclipse``; :data:`planner.orbits.geometry.EVENT_ALIASES`); a
    linear ephemeris may say ``maximum`` or ``minimum`` (then its label, when empty, says so).
    An empty cell gets :func:`default_events` (``rv``: rows with k_ms, ``eclipse``: rows with a
    duration or eclipse geometry, ``planet``: rows whose radius ratio makes the companion a
    planet; all False when not given). A linear ephemeris is labelled
    ``periodic`` unless ``label`` or the events column says otherwise, or :data:`LINEAR_TC_LABEL`
    when its ``epoch_kind`` (``tp``/``tc``/``t0`` per row, optional) is ``tc``.
    """
    n = cells.n
    rv = np.zeros(n, bool) if rv is None else np.asarray(rv, bool)
    eclipse = np.zeros(n, bool) if eclipse is None else np.asarray(eclipse, bool)
    linear = np.asarray(linear, bool)
    codes, texts = cells.codes("events")
    parsed = [_parse_events(t) for t in texts]  # most rows repeat a few lists
    unknown = np.array([bool(p[0]) for p in parsed])[codes]
    n_kinds = np.array([len(p[1]) for p in parsed], dtype=np.int64)[codes]
    other = np.array([bool(set(p[2]) - {PERIODIC_EVENT}) for p in parsed])[codes]
    periodic = np.array([PERIODIC_EVENT in p[2] for p in parsed])[codes]
    label_codes, label_texts = cells.codes("label")
    labelled = np.array([t != "" for t in label_texts])[label_codes]
    given = np.array([t != "" for t in texts])[codes]
    open_ = given.copy()  # rows not yet given an error, in the order of the checks below
    problems = []
    for kind, mask in (("unknown", unknown), ("linear", linear & other), ("orbit", ~linear & periodic)):
        hit = open_ & mask
        problems.append((kind, hit))
        open_ &= ~hit
    clash = (n_kinds > 1) | ((n_kinds == 1) & labelled)
    if (open_ & clash & (n_kinds == 1)).any():  # a label that names the other periodic kind
        pairs = open_ & clash & (n_kinds == 1)
        keys = codes[pairs] * len(label_texts) + label_codes[pairs]
        uniq, inverse = np.unique(keys, return_inverse=True)
        differs = np.array([periodic_kind(label_texts[k % len(label_texts)])
                            not in ("", *parsed[k // len(label_texts)][1]) for k in uniq])
        clash[pairs] = differs[inverse.ravel()]
    hit = open_ & clash
    problems.append(("label", hit))
    open_ &= ~hit
    for kind, hit in problems:
        for row, code, lc in zip(cells.rows[hit], codes[hit], label_codes[hit]):
            t, kinds = texts[code], parsed[code][1]
            if kind == "unknown":
                cells.err(row, "events", f"unknown event {parsed[code][0][0]!r}; expected a semicolon list of "
                          f"{', '.join(EVENT_WORDS)}", t)
            elif kind == "linear":
                cells.err(row, "events", "a linear ephemeris (no e, omega_deg) has only the event 'periodic' "
                          "(or 'maximum' / 'minimum'); for a binary's primary and secondary eclipses give "
                          "e = 0 and the epoch as tc", t)
            elif kind == "orbit":
                cells.err(row, "events", f"{'/'.join(sorted(kinds)) or 'periodic'!r} is the event of a linear "
                          "ephemeris; this row has orbital elements", t)
            else:
                cells.err(row, "events", f"the events column says {' and '.join(sorted(kinds))} but the label says "
                          f"{label_texts[lc]!r}; a linear ephemeris has one event", t)
    # the events of each row: its column's, or the defaults of its kind of target
    choices = [p[2] for p in parsed]
    eccentric = np.asarray(e) >= NEAR_CIRCULAR_E
    planet = np.zeros(n, bool) if planet is None else np.asarray(planet, bool)
    default_key = (planet * 16 + linear.astype(np.int64) * 8 + eccentric * 4 + rv * 2 + eclipse).astype(np.int64)
    for key in range(32):
        choices.append(default_events(bool(key & 8), NEAR_CIRCULAR_E if key & 4 else 0.0, bool(key & 2),
                                      bool(key & 1), bool(key & 16)))
    table = np.empty(len(choices), dtype=object)
    for i, choice in enumerate(choices):
        table[i] = choice
    index = np.where(given, codes, len(parsed) + default_key)
    events = table[index]
    counts = np.array([len(c) for c in choices], dtype=np.int64)[index]
    # the label: the column's, else the kind the events column names, else "periodic" for a linear ephemeris
    names = list(label_texts) + list(PERIODIC_KINDS) + ["periodic", LINEAR_TC_LABEL, ""]
    single = np.array([next(iter(p[1])) if len(p[1]) == 1 else PERIODIC_KINDS[0] for p in parsed])[codes]
    kind_code = len(label_texts) + np.searchsorted(np.array(PERIODIC_KINDS), single)
    named = open_ & (n_kinds == 1) & ~labelled
    from_tc = np.zeros(n, bool) if epoch_kind is None else np.asarray(epoch_kind == "tc", bool)
    unnamed = np.where(linear, np.where(from_tc, len(names) - 2, len(names) - 3), len(names) - 1)
    label = np.where(labelled, label_codes, np.where(named, kind_code, unnamed))
    return events, Coded(label, names), counts


def _report(cells: Cells, column, codes, texts, problems) -> None:
    """One error per row whose distinct text (``codes`` into ``texts``) has a problem (a message, or None)."""
    bad = np.array([p is not None for p in problems], dtype=bool)[codes]
    for row, code in zip(cells.rows[bad], codes[bad]):
        cells.err(row, column, problems[code], texts[code])


def _parse_events(text):
    """(unknown words, periodic kinds, wanted event names) of an ``events`` cell."""
    words = [w.strip() for w in text.split(";") if w.strip()]
    names = [canonical_event(w) for w in words]
    return ([w for w, nm in zip(words, names) if nm is None], {nm for nm in names if nm in PERIODIC_KINDS},
            tuple(dict.fromkeys(PERIODIC_EVENT if nm in PERIODIC_KINDS else nm for nm in names)))


#: Words of the ``observe`` column: what the observer does for a target.
OBSERVE_WORDS = ("photometry", "rv")
#: Request defaults: an RV visit counts near an extremum while the RV is within this fraction of K
#: of it; a periastron passage asks for this many RV visits at least this many hours apart
#: [common practice of RV follow-up, our choice; no single source].
DEFAULT_RV_FRACTION_K = 0.1
DEFAULT_RV_VISITS = 3
DEFAULT_RV_GAP_H = 1.0
_YES, _NO = ("yes", "true", "1", "y"), ("no", "false", "0", "n", "")


def check_requests(cells: Cells, linear, duration_h, a_rstar, k_ms) -> dict:
    """Request columns: ``observe``, ``rv_fraction_k``, ``rv_visits``, ``rv_gap_h``, ``full_coverage``.

    ``observe`` is ``photometry``, ``rv`` or both (``both``, or the two separated by ``;``;
    returned in that order);
    by default photometry where eclipse geometry, a duration or only a linear ephemeris is given,
    rv where ``k_ms`` is given, both when both (and when neither). ``rv_fraction_k`` must lie in
    (0, 1], ``rv_visits`` be a whole number >= 1, ``rv_gap_h`` >= 0, ``full_coverage`` yes/no.
    """
    rows = cells.rows
    photometric = np.asarray(linear, bool) | np.isfinite(duration_h) | np.isfinite(a_rstar)
    spectroscopic = np.isfinite(k_ms)
    codes, texts = cells.codes("observe")
    chosen, problem = [], []  # per distinct cell: the words in their order (None: the default), the error
    for text in texts:
        words = [w for w in (w.strip().lower() for w in text.split(";")) if w]
        words = [v for w in words for v in (OBSERVE_WORDS if w == "both" else (w,))]  # both: photometry;rv
        unknown = [w for w in words if w not in OBSERVE_WORDS]
        chosen.append(";".join(w for w in OBSERVE_WORDS if w in words) if words and not unknown else None)
        problem.append(f"unknown observation {unknown[0]!r}; expected photometry, rv or both ('photometry;rv')"
                       if unknown else None)
    _report(cells, "observe", codes, texts, problem)
    named = np.array([c is not None for c in chosen])[codes]
    defaults = ("photometry", "rv", "photometry;rv")
    default_code = np.where(photometric & ~spectroscopic, 0, np.where(spectroscopic & ~photometric, 1, 2))
    observe = Coded(np.where(named, codes + len(defaults), default_code), defaults + tuple(c or "" for c in chosen))
    fraction = cells.numeric("rv_fraction_k", default=DEFAULT_RV_FRACTION_K)
    bad_fraction = ~((fraction > 0) & (fraction <= 1))
    for row, v in zip(rows[bad_fraction], cells.text_at("rv_fraction_k", bad_fraction)):
        cells.err(row, "rv_fraction_k", f"{v} is outside 0 < fraction <= 1 (a fraction of K)", v)
    visits = cells.numeric("rv_visits", default=float(DEFAULT_RV_VISITS))
    bad_visits = ~((visits >= 1) & (np.mod(visits, 1.0) == 0))
    for row, v in zip(rows[bad_visits], cells.text_at("rv_visits", bad_visits)):
        cells.err(row, "rv_visits", f"{v} is not a whole number of visits >= 1", v)
    gap = cells.numeric("rv_gap_h", default=DEFAULT_RV_GAP_H, nonnegative=True)
    codes, texts = cells.codes("full_coverage")
    _report(cells, "full_coverage", codes, texts,
            [None if t.strip().lower() in _YES + _NO else f"{t!r} is not yes or no" for t in texts])
    full = np.array([t.strip().lower() in _YES for t in texts], dtype=bool)[codes]
    return {
        "observe": observe,
        "rv_fraction_k": np.where(bad_fraction, DEFAULT_RV_FRACTION_K, fraction),
        "rv_visits": np.where(bad_visits, DEFAULT_RV_VISITS, visits).astype(np.int64),
        "rv_gap_h": np.where(np.isnan(gap), DEFAULT_RV_GAP_H, gap),
        "full_coverage": np.asarray(full, dtype=bool),
    }


#: Half-width (in phase, orbits) of the window of a wanted phase when ``rv_phase_tol`` is not
#: given: 0.02 of an orbit, +-7.2 deg of mean anomaly [our choice: about the width over which an
#: RV point still samples "that" phase of a well-sampled curve; no published standard].
DEFAULT_RV_PHASE_TOL = 0.02


def check_wanted_phases(cells: Cells, linear) -> dict:
    """``rv_phases`` (a tuple of floats per row, empty when none) and ``rv_phase_tol`` (orbits).

    ``rv_phases`` is a ``;``-list of mean-anomaly phases after periastron, each 0 <= phase < 1
    (phase = M / 360 deg); ``rv_phase_tol`` the half-width of each phase's window, 0 < tol < 0.5
    (default :data:`DEFAULT_RV_PHASE_TOL`). A linear ephemeris (``linear``: no e, omega_deg) has no
    periastron and so no such phase: refused. A phase given twice is refused too.
    """
    if not cells.has_any(("rv_phases", "rv_phase_tol")):
        return {"rv_phases": np.asarray([(), None], dtype=object)[:-1][np.zeros(cells.n, np.int64)],
                "rv_phase_tol": np.full(cells.n, DEFAULT_RV_PHASE_TOL)}
    rows = cells.rows
    tol = cells.numeric("rv_phase_tol", default=DEFAULT_RV_PHASE_TOL)
    bad_tol = ~((tol > 0) & (tol < 0.5))
    for row, v in zip(rows[bad_tol], cells.text_at("rv_phase_tol", bad_tol)):
        cells.err(row, "rv_phase_tol", f"{v} is outside 0 < tolerance < 0.5 (the half-width of each wanted "
                  "phase's window, in orbits)", v)
    codes, texts = cells.codes("rv_phases")
    parsed, problem = [], []  # per distinct cell: its phases, its first problem
    for text in texts:
        phases, why = [], None
        for item in (w.strip() for w in text.split(";") if w.strip()):
            try:
                value = float(item)
            except ValueError:
                value = math.nan
            if not math.isfinite(value):
                hint = " (a decimal comma? write numbers with a decimal point)" if _DECIMAL_COMMA.match(item) else ""
                why = why or (f"{item!r} is not an orbital phase{hint}; expected a ;-list of numbers "
                              "0 <= phase < 1 such as 0.25;0.75")
            elif not 0.0 <= value < 1.0:
                why = why or f"{item} is outside 0 <= phase < 1 (mean anomaly / 360 deg after periastron)"
            elif value in phases:
                why = why or f"phase {item} is listed twice"
            else:
                phases.append(value)
        parsed.append(tuple(phases))
        problem.append(why)
    _report(cells, "rv_phases", codes, texts, problem)
    wanted = np.asarray(parsed + [None], dtype=object)[:-1][codes]
    listed = np.array([bool(t.strip()) and p is None for t, p in zip(texts, problem)])[codes]
    linear_wanted = np.asarray(linear, bool) & listed
    for row, text in zip(rows[linear_wanted], cells.text_at("rv_phases", linear_wanted)):
        cells.err(row, "rv_phases", "wanted orbital phases need an orbit with a periastron (e, omega_deg and "
                  "tp or tc); this row is a linear ephemeris", text)
    for row in np.flatnonzero(linear_wanted):
        wanted[row] = ()
    return {"rv_phases": wanted,
            "rv_phase_tol": np.where(bad_tol, DEFAULT_RV_PHASE_TOL, tol)}
