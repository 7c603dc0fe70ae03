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


def read_records(text, source: str) -> Records:
    """The records of CSV ``text`` (str, or UTF-8 bytes without a byte-order mark).

    :func:`line_records` when it can read the file, else :func:`csv_records`; ``source`` names the
    file in messages (:class:`~planner.errors.InputErrors` for text that is not CSV).
    """
    data = text
    if isinstance(text, str):
        try:
            data = text.encode("utf-8")
        except UnicodeEncodeError:  # lone surrogates: only the csv module reads them
            return csv_records(text, source)
    records = line_records(data)
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


def line_records(data: bytes) -> Records | None:
    """The records of CSV ``data`` (UTF-8 bytes) when every record is one line, else None.

    The lines are split on ``\\n`` (``\\r\\n`` taken as one line end); each line not a comment is
    split at the delimiter, its quoted fields unquoted, and stripped, all with pyarrow compute.
    Lines whose quotes are not whole quoted fields go one by one to the csv module, which must read
    each as one complete record; a line that holds the start of a quoted cell running on (or any
    csv error) sends the whole file to :func:`csv_records`. Rows are line numbers.
    """
    if not data or b"\x00" in data or len(data) >= 2**31:
        return None
    returns = data.count(b"\r")
    if returns and returns != data.count(b"\r\n"):
        return None  # a carriage return that does not end a line: csv's own reading of it
    buf = np.frombuffer(data, dtype=np.uint8)
    ends = np.flatnonzero(buf == 10) + 1
    if len(ends) == 0 or ends[-1] != len(data):
        ends = np.append(ends, len(data))
    offsets = np.concatenate([[0], ends]).astype(np.int32)
    if int(np.diff(offsets).max()) > csv.field_size_limit():
        return None
    lines = pa.StringArray.from_buffers(len(ends), pa.py_buffer(offsets), pa.py_buffer(data))
    body = pc.utf8_rtrim(lines, characters="\r\n")
    comment = pc.starts_with(pc.utf8_ltrim(body, characters=WHITESPACE), "#").to_numpy(zero_copy_only=False)
    delimiter = delimiter_of(_first_lines(data))
    idx = np.flatnonzero(~comment)
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
    fields = _strip(fields, data)
    filled = np.add.reduceat(pc.binary_length(fields).to_numpy().astype(np.int64), starts[:-1])
    blank = filled == 0
    slow = {}
    for k in np.flatnonzero(complex_lines):
        try:
            records = list(csv.reader([text[int(k)].as_py()], delimiter=delimiter, strict=True))
        except csv.Error:
            return None
        if len(records) != 1:
            return None
        slow[int(k)] = records[0]
        blank[k] = not "".join(records[0]).strip()
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
    return Records(header, columns, idx[body_k].astype(np.int64) + 1, widths, int(idx[head]) + 1, delimiter)


#: ``str.strip``'s characters among ASCII (less the line ends), as bytes.
_ASCII_SPACE = b" \t\x0b\x0c\x1c\x1d\x1e\x1f"


def _strip(fields, data: bytes):
    """``fields`` stripped as ``str.strip`` does, with the cheapest kernel that is exact for ``data``."""
    if data.isascii():
        if not any(c in data for c in _ASCII_SPACE):
            return fields
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
