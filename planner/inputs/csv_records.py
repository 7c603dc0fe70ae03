"""CSV text -> a catalogue's records: the header, one text column per header field, each record's row.

Rows are counted as a spreadsheet shows them: the header is row 1 when it is the file's first
line, every record is one row (a quoted cell with line breaks inside is still one row), and
comment lines (a ``#`` where a record would begin) and blank records count as rows but are
dropped. The delimiter is the one of ``,``, ``;`` or tab that the first non-comment line holds
most (``,`` on a tie or when it holds none). Cells are stripped of whitespace (Python's
``str.strip``); a record shorter than the header is padded with ``""``, a longer one keeps its
field count in :attr:`Records.widths` for the caller's message and is cut to the header's width.

Two readers give the same records (``tests/test_catalogue_readers.py`` checks it):

- :func:`line_records`, for files in which no record spans lines: each line is one record, so its
  row is its line number. Lines are split into fields with pyarrow compute; a line with quotes is
  taken whole when each of its fields is either unquoted or quoted as a whole (``"say ""hi"" now"``),
  and otherwise read alone by Python's csv module. It gives up (returns None) for anything it
  cannot prove it reads as the csv module would: a quote left open at the end of a line (a cell
  with line breaks, or a malformed one), a csv error, a lone carriage return, NUL characters, a
  line longer than the csv module's field limit, a file without records.
- :func:`csv_records`, Python's csv module over the whole text (RFC 4180 quoting, strict), with
  its errors as one-line messages naming the row.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import re

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from ..errors import InputError, InputErrors

#: The characters ``str.strip()`` removes (those for which ``str.isspace()`` is true), for the
#: arrow kernels that strip cells the same way.
WHITESPACE = ("\t\n\x0b\x0c\r\x1c\x1d\x1e\x1f \x85\xa0\u1680\u2000\u2001\u2002\u2003\u2004\u2005\u2006"
              "\u2007\u2008\u2009\u200a\u2028\u2029\u202f\u205f\u3000")
DELIMITERS = (",", ";", "\t")
#: A field quoted as a whole: what the csv module reads as the text between the quotes, ``""``
#: as one quote (RFC 4180 sec. 2 rules 5 and 7).
_QUOTED_FIELD = r'^"(?:[^"]|"")*"$'


@dataclasses.dataclass
class Records:
    """The records of a CSV file; ``columns[i]`` holds field i of every record (stripped text).

    ``rows``: each record's row as messages show it; ``widths``: each record's field count before
    padding or cutting; ``header_row``: the header's row.
    """

    header: list
    columns: list
    rows: np.ndarray
    widths: np.ndarray
    header_row: int
    delimiter: str


def read_records(text, source: str, numeric=None) -> Records:
    """The records of CSV ``text`` (str, or UTF-8 bytes without a byte-order mark).

    :func:`typed_records`, else :func:`line_records`, else :func:`csv_records`: the first that can
    read the file; ``numeric(name)`` says which header names are numeric columns (read as numbers
    by the first reader); ``source`` names the file in messages (:class:`~planner.errors.InputErrors`
    for text that is not CSV).
    """
    data = text
    if isinstance(text, str):
        try:
            data = text.encode("utf-8")
        except UnicodeEncodeError:  # lone surrogates: only the csv module reads them
            return csv_records(text, source)
    lines = Lines.of(data)
    if lines is not None:
        records = typed_records(lines, numeric) if numeric is not None else None
        if records is None:
            records = line_records(lines)
        if records is not None:
            return records
    return csv_records(text if isinstance(text, str) else data.decode("utf-8"), source)


def delimiter_of(lines) -> str:
    """``,``, ``;`` or tab: the one the first non-comment line holds most often (``,`` on a tie)."""
    for line in lines:
        if line.strip() and not line.lstrip().startswith("#"):
            counts = {d: line.count(d) for d in DELIMITERS}
            best = max(counts, key=lambda d: (counts[d], d == ","))
            return best if counts[best] else ","
    return ","


def csv_records(text: str, source: str) -> Records:
    """The records of CSV text read whole by Python's csv module (strict RFC 4180 quoting).

    A quoted cell may hold line breaks. A line that starts with ``#`` where a record would begin
    is a comment and is dropped before the reader sees it (a quote inside a comment cannot swallow
    the lines after it); a ``#`` inside a quoted cell is text.
    """
    state = {"row": 0, "at_start": True}

    def lines():
        for line in io.StringIO(text, newline=""):
            if state["at_start"] and line.lstrip().startswith("#"):
                state["row"] += 1
                continue
            state["at_start"] = False
            yield line

    delimiter = delimiter_of(io.StringIO(text, newline=""))
    records, numbers = [], []
    try:
        for record in csv.reader(lines(), delimiter=delimiter, strict=True):
            state["row"] += 1
            state["at_start"] = True
            if "".join(record).strip():
                records.append(record)
                numbers.append(state["row"])
    except csv.Error as exc:
        reason = str(exc)
        if "unexpected end of data" in reason:
            reason = 'a quote (") opened in this row is never closed; the rest of the file would be one cell'
        elif "expected after" in reason:
            reason = ('text follows a closing quote ("); inside a quoted cell write a quote twice (""), '
                      "or do not quote the cell")
        raise InputErrors([InputError(f"not readable as CSV: {reason}", file=source, row=state["row"] + 1)]) from None
    if not records:
        raise InputErrors([InputError(
            "empty catalogue; expected a header row such as 'name,ra,dec,period_d,e,omega_deg,tp' "
            "and one row per target", file=source)])
    header = [h.strip() for h in records[0]]
    width = len(header)
    body = records[1:]
    columns = [pa.array([r[i].strip() if i < len(r) else "" for r in body], type=pa.string()) for i in range(width)]
    return Records(header, columns, np.array(numbers[1:], dtype=np.int64),
                   np.array([len(r) for r in body], dtype=np.int64), numbers[0], delimiter)


class Lines:
    """A file's lines as a pyarrow string array with their line ends (``lines``) or without
    (``body``), and what the readers need to know of them; made only for files that may have one
    record per line (:meth:`of`)."""

    def __init__(self, data: bytes, lines, lengths, comment, delimiter: str, spaces: str):
        self.data, self.lines, self.lengths, self.comment = data, lines, lengths, comment
        self.delimiter, self.spaces = delimiter, spaces
        self._body = None

    @property
    def body(self):
        """The lines without their line ends."""
        if self._body is None:
            self._body = pc.utf8_rtrim(self.lines, characters="\r\n")
        return self._body

    def line(self, i: int) -> str:
        """Line ``i`` without its line end."""
        return self.lines[i].as_py().rstrip("\r\n")

    @classmethod
    def of(cls, data: bytes):
        """The lines of ``data``, or None when a record could span lines in a way the line readers
        do not follow: NUL characters, a carriage return that does not end a line, a line longer
        than the csv module's field limit, no data at all."""
        if not data or b"\x00" in data or len(data) >= 2**31:
            return None
        if b"\r" in data and data.count(b"\r") != data.count(b"\r\n"):
            return None  # a carriage return that does not end a line: csv's own reading of it
        buf = np.frombuffer(data, dtype=np.uint8)
        ends = np.flatnonzero(buf == 10) + 1
        if len(ends) == 0 or ends[-1] != len(data):
            ends = np.append(ends, len(data))
        offsets = np.concatenate([[0], ends]).astype(np.int32)
        sizes = np.diff(offsets)
        if int(sizes.max()) > csv.field_size_limit():
            return None
        lines = pa.StringArray.from_buffers(len(ends), pa.py_buffer(offsets), pa.py_buffer(data))
        newline = buf[ends - 1] == 10
        lengths = sizes - newline - (newline & (sizes > 1) & (buf[np.maximum(ends - 2, 0)] == 13))
        return cls(data, lines, lengths, _comments(lines, buf[offsets[:-1]]), delimiter_of(_first_lines(data)),
                   _spaces(data))


@dataclasses.dataclass
class NumberCells:
    """A column read as numbers: ``values`` (NaN where empty), ``given`` (False where empty), and
    ``text(indices)``, the cells' stripped text as the other readers give it, for messages."""

    values: np.ndarray
    given: np.ndarray
    text: object


#: The typed reader takes a file when at most this share of its lines hold a quote (each is read
#: by the csv module too, to check the reading and to place records that span lines).
_QUOTED_LINES_SHARE = 0.02


def typed_records(lines: Lines, numeric) -> Records | None:
    """The records of plain CSV files, numeric columns read as numbers by pyarrow's CSV reader.

    Taken when the first line is the header, no line is a comment, few lines hold a quote
    (:data:`_QUOTED_LINES_SHARE`) and every other line is empty (skipped) or has the header's
    number of fields. The lines with quotes are read by the csv module as well (from that line
    on, so that records with line breaks in a quoted cell count as one row), and pyarrow's reading
    of those records must equal it. A column whose header name ``numeric(name)`` accepts is read
    as float64 when its first cell reads as a number (the cast of :func:`line_records`' text: the
    same numbers); a cell that does not read makes it a text column after all (at most a few
    retries); anything else returns None. Records whose cells are all empty are dropped, as by the
    other readers.
    """
    import pyarrow.csv as pcsv

    data, delimiter, n = lines.data, lines.delimiter, len(lines.lines)
    if n < 2:
        return None
    inside, spans = np.zeros(n, bool), {}  # lines inside records that span lines; csv's records
    if b'"' in data:
        quoted = np.flatnonzero(pc.match_substring(lines.lines, '"').to_numpy(zero_copy_only=False))
        if len(quoted) > _QUOTED_LINES_SHARE * n or quoted[0] == 0:
            return None
        for line in quoted.tolist():
            if not inside[line]:
                record, used = _csv_record(lines.lines, line, delimiter)
                if record is None:
                    return None
                spans[line] = record
                inside[line + 1:line + used] = True
    if (lines.comment & ~inside).any():
        return None
    header = [h.strip() for h in lines.line(0).split(delimiter)]
    width = len(header)
    data_lines = np.flatnonzero((lines.lengths > 0) & ~inside)[1:]
    if not "".join(header) or len(data_lines) == 0 or width < 2 or lines.comment[0]:
        return None
    first = int(data_lines[0])
    first = spans[first] if first in spans else lines.line(first).split(delimiter)
    if len(first) != width:
        return None
    as_number = [bool(numeric(h)) and _reads_as_number(c.strip()) for h, c in zip(header, first)]
    names = [f"f{i}" for i in range(width)]
    for _ in range(4):
        types = {nm: pa.float64() if num else pa.string() for nm, num in zip(names, as_number)}
        try:
            table = pcsv.read_csv(
                pa.BufferReader(data),
                read_options=pcsv.ReadOptions(column_names=names, skip_rows=1),
                parse_options=pcsv.ParseOptions(delimiter=delimiter, quote_char='"' if spans else False,
                                                double_quote=True, escape_char=False,
                                                newlines_in_values=bool(inside.any()), ignore_empty_lines=True),
                convert_options=pcsv.ConvertOptions(column_types=types, null_values=[""], strings_can_be_null=False,
                                                    quoted_strings_can_be_null=False))
            break
        except pa.ArrowInvalid as exc:
            column = re.match(r"In CSV column #(\d+): CSV conversion error to double", str(exc))
            if column is None or not as_number[int(column.group(1))]:
                return None
            as_number[int(column.group(1))] = False
    else:
        return None
    if table.num_rows != len(data_lines):
        return None
    columns, empty = [], np.ones(len(data_lines), bool)
    for i, num in enumerate(as_number):
        cells = table.column(i).combine_chunks()
        if num:
            given = cells.is_valid().to_numpy(zero_copy_only=False)
            columns.append(NumberCells(cells.to_numpy(zero_copy_only=False, writable=True), given,
                                       _field_text(lines, i, spans)))
        else:
            cells = _strip(cells, lines.spaces)
            given = pc.greater(pc.binary_length(cells), 0).to_numpy(zero_copy_only=False)
            columns.append(cells)
        empty &= ~given
    if spans and not _same_as_csv(columns, data_lines, spans):
        return None
    rows = np.arange(1, n + 1) - np.cumsum(inside)  # a record's row, as a spreadsheet counts
    rows = rows[data_lines]
    if empty.any():  # blank records (delimiters and spaces only) count as rows and are dropped
        keep = np.flatnonzero(~empty)
        rows, data_lines = rows[keep], data_lines[keep]
        columns = [_take(c, keep) for c in columns]
    for c in columns:
        if isinstance(c, NumberCells):
            c.text.lines = data_lines
    return Records(header, columns, rows.astype(np.int64), np.full(len(rows), width, np.int64), 1, delimiter)


def _same_as_csv(columns, data_lines, spans) -> bool:
    """True when pyarrow read each record that holds a quote as the csv module did."""
    at = np.flatnonzero(np.isin(data_lines, list(spans)))
    for i, column in enumerate(columns):
        texts = [spans[int(data_lines[k])][i].strip() for k in at]
        if isinstance(column, NumberCells):
            given = np.array([bool(t) for t in texts])
            if not np.array_equal(given, column.given[at]):
                return False
            try:
                read = pc.cast(pa.array([t or None for t in texts], type=pa.string()), pa.float64()).to_numpy(
                    zero_copy_only=False)
            except pa.ArrowInvalid:
                return False
            got = column.values[at]
            if not np.all((read == got) | (np.isnan(read) & np.isnan(got))):
                return False
        elif column.take(pa.array(at)).to_pylist() != texts:
            return False
    return True


def _reads_as_number(text: str) -> bool:
    """True when the cast that reads numbers reads ``text`` (an empty cell reads as a missing one)."""
    if not text:
        return True
    try:
        pc.cast(pa.array([text]), pa.float64())
        return True
    except pa.ArrowInvalid:
        return False


class _field_text:
    """Field ``i``, stripped, of the records at given indices (``lines``: each record's first line)."""

    def __init__(self, lines: Lines, i, spans):
        self.source, self.i, self.spans, self.lines = lines, i, spans, None

    def __call__(self, indices):
        at = self.lines[np.asarray(indices, dtype=np.int64)]
        return [(self.spans[line] if line in self.spans else self.source.line(line).split(self.source.delimiter))[
            self.i].strip() for line in at.tolist()]


def _take(column, keep):
    if isinstance(column, NumberCells):
        return NumberCells(column.values[keep], column.given[keep], column.text)
    return column.take(pa.array(keep))


def line_records(lines: Lines) -> Records | None:
    """The records of CSV text read line by line, else None.

    The lines are split on ``\n`` (``\r\n`` taken as one line end); each line not a comment is
    split at the delimiter, its quoted fields unquoted, and stripped, all with pyarrow compute.
    A line whose quotes are not whole quoted fields starts a record that the csv module reads,
    from that line on until the record ends (a quoted cell may hold line breaks: the record's row
    is the line it starts on, and each line it spans beyond the first takes one from the rows of
    the records after it, as in :func:`csv_records`). A csv error sends the whole file to
    :func:`csv_records`, which reports it.
    """
    data, body, delimiter = lines.data, lines.body, lines.delimiter
    idx = np.flatnonzero(~lines.comment)
    if len(idx) == 0:
        return None
    text = body.take(pa.array(idx)) if len(idx) < len(body) else body
    parts = pc.split_pattern(text, delimiter)
    counts = pc.list_value_length(parts).to_numpy().astype(np.int64)
    starts = np.concatenate([[0], np.cumsum(counts)])
    fields = pc.list_flatten(parts)
    complex_lines = np.zeros(len(idx), bool)
    if b'"' in data:
        fields, complex_lines = _unquote(fields, starts)
    fields = _strip(fields, lines.spaces)
    filled = np.add.reduceat(pc.binary_length(fields).to_numpy().astype(np.int64), starts[:-1])
    blank = filled == 0
    slow, inside = {}, np.zeros(len(body), bool)  # records read by the csv module; lines inside them
    for k in np.flatnonzero(complex_lines):
        line = int(idx[k])
        if inside[line]:
            continue
        record, used = _csv_record(lines.lines, line, delimiter)
        if record is None:
            return None
        inside[line + 1:line + used] = True
        slow[int(k)] = record
        blank[k] = not "".join(record).strip()
    if inside.any():
        blank |= inside[idx]
        complex_lines &= ~inside[idx]
    kept = np.flatnonzero(~blank)
    if len(kept) == 0:
        return None
    head = int(kept[0])
    if head in slow:
        header = [h.strip() for h in slow[head]]
    else:
        header = fields.slice(starts[head], counts[head]).to_pylist()
    width = len(header)
    body_k = kept[1:]
    plain = body_k[~complex_lines[body_k]]
    columns = []
    short = bool((counts[plain] < width).any())
    for i in range(width):
        at = starts[plain] + i
        if short:
            has = counts[plain] > i
            columns.append(fields.take(pa.array(np.where(has, at, 0), mask=~has)).fill_null(""))
        else:
            columns.append(fields.take(pa.array(at)))
    widths = counts[body_k].copy()
    quoted = body_k[complex_lines[body_k]]
    if len(quoted):
        records = [slow[int(k)] for k in quoted]
        widths[complex_lines[body_k]] = [len(r) for r in records]
        order = np.argsort(np.concatenate([plain, quoted]), kind="stable")
        columns = [pa.concat_arrays([col, pa.array([r[i].strip() if i < len(r) else "" for r in records],
                                                   type=pa.string())]).take(pa.array(order))
                   for i, col in enumerate(columns)]
    rows = np.arange(1, len(body) + 1) - np.cumsum(inside)  # a record's row, as a spreadsheet counts
    return Records(header, columns, rows[idx[body_k]].astype(np.int64), widths, int(rows[idx[head]]), delimiter)


def _csv_record(raw_lines, start: int, delimiter: str):
    """(record, lines it spans) read by the csv module from line ``start`` on; (None, 0) on a csv error."""
    used = [0]

    def feed():
        for j in range(start, len(raw_lines)):
            used[0] += 1
            yield raw_lines[j].as_py()

    try:
        record = next(csv.reader(feed(), delimiter=delimiter, strict=True))
    except (csv.Error, StopIteration):
        return None, 0
    return record, used[0]


def _comments(lines, first_bytes) -> np.ndarray:
    """True for the lines whose first character after whitespace is ``#`` (``line.lstrip()``)."""
    comment = first_bytes == ord("#")
    unsure = np.flatnonzero(np.isin(first_bytes, np.frombuffer(_ASCII_SPACE, np.uint8)) | (first_bytes >= 0x80))
    if len(unsure):
        lines = lines.take(pa.array(unsure))
        comment[unsure] = pc.starts_with(pc.utf8_ltrim(lines, characters=WHITESPACE), "#").to_numpy(
            zero_copy_only=False)
    return comment


#: ``str.strip``'s characters among ASCII (less the line ends), as bytes.
_ASCII_SPACE = b" \t\x0b\x0c\x1c\x1d\x1e\x1f"


def _spaces(data: bytes) -> str:
    """Which strip ``data``'s cells need: ``"none"`` (ASCII without whitespace), ``"ascii"`` or ``"unicode"``."""
    if not data.isascii():
        return "unicode"
    return "ascii" if any(data.find(bytes([c])) >= 0 for c in _ASCII_SPACE) else "none"


def _strip(fields, spaces: str):
    """``fields`` stripped as ``str.strip`` does, with the cheapest kernel that is exact (:func:`_spaces`)."""
    if spaces == "none":
        return fields
    if spaces == "ascii":
        return pc.ascii_trim(fields, characters=" \t\x0b\x0c\x1c\x1d\x1e\x1f\r\n")
    return pc.utf8_trim(fields, characters=WHITESPACE)


def _first_lines(data: bytes):
    """The file's lines as text, lazily (the delimiter is found in the first few)."""
    start = 0
    while start < len(data):
        end = data.find(b"\n", start)
        end = len(data) if end < 0 else end + 1
        yield data[start:end].decode("utf-8")
        start = end


def _unquote(fields, starts):
    """(fields with whole quoted fields unquoted, lines that need the csv module).

    A field that is quoted as a whole (:data:`_QUOTED_FIELD`) becomes the text between its quotes
    with ``""`` read as ``"``; a line with any other quote (a quote inside an unquoted field, a
    quoted cell that holds the delimiter or runs on to the next line, text after a closing quote)
    is marked for the csv module.
    """
    has_quote = pc.match_substring(fields, '"').to_numpy(zero_copy_only=False)
    if not has_quote.any():
        return fields, np.zeros(len(starts) - 1, bool)
    whole = pc.match_substring_regex(fields, _QUOTED_FIELD).to_numpy(zero_copy_only=False)
    odd = (has_quote & ~whole).astype(np.int64)
    complex_lines = np.add.reduceat(odd, starts[:-1]) > 0 if len(odd) else np.zeros(len(starts) - 1, bool)
    complex_lines[np.diff(starts) == 0] = False
    inner = pc.replace_substring(pc.utf8_slice_codeunits(fields, 1, -1), '""', '"')
    return pc.if_else(pa.array(whole), inner, fields), complex_lines
