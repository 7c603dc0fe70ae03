"""The three CSV readers of the catalogue give the same tables and the same messages.

:mod:`planner.inputs.csv_records` reads a file with pyarrow's CSV reader when it is plain (numbers
as numbers), else line by line with pyarrow compute, else with Python's csv module over the whole
text. The csv module is the reference: it implements RFC 4180 (Shafranovich 2005, "Common Format
and MIME Type for Comma-Separated Values (CSV) Files", sec. 2: rule 6, a quoted field may hold
line breaks; rule 7, a quote inside a quoted field is written twice), and the rows of messages
count as a spreadsheet does (the header is row 1, a record with line breaks in a quoted cell is
one row, comment and blank lines are rows). Each file below is read by every reader that takes
it, and the fast readers must take the files they are meant for.

Elements of HAT-P-2 b: Pal et al. 2010, MNRAS 401, 2665 (abstract): P = 5.6334729 d,
e = 0.5171, omega = 185.22 deg, Tc = 2454387.49375 BJD; coordinates 16:20:36.36 +41:02:53.1
(from memory).
"""

import codecs
import csv
import io
import warnings

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.errors import PeriplanError
from planner.inputs import catalogue, csv_records

HEADER = ["name", "ra", "dec", "period_d", "e", "omega_deg", "tc", "notes"]
HATP2 = ["HAT-P-2 b", "16:20:36.36", "+41:02:53.1", "5.6334729", "0.5171", "185.22", "2454387.49375"]
TYPED, LINES, CSV_MODULE = "typed arrow CSV", "line splitter", "csv module"
READERS = (TYPED, LINES, CSV_MODULE)


def rows_text(rows, delimiter=",", terminator="\n", quoting=csv.QUOTE_MINIMAL):
    """CSV text written by Python's csv module."""
    buf = io.StringIO()
    csv.writer(buf, delimiter=delimiter, lineterminator=terminator, quoting=quoting).writerows(rows)
    return buf.getvalue()


def targets(n, notes="", first=0):
    """n rows of HAT-P-2 b's elements under names of their own."""
    return [[f"Row-{i}"] + HATP2[1:] + [notes] for i in range(first, first + n)]


def read(data, reader):
    """(reader that took the file, outcome): the table, or the messages, with the warnings."""
    taken = []
    originals = {TYPED: csv_records.typed_records, LINES: csv_records.line_records,
                 CSV_MODULE: csv_records.csv_records}

    def watch(name):
        def wrapped(*args):
            if READERS.index(name) < READERS.index(reader):
                return None  # a faster reader, not used this time
            out = originals[name](*args)
            if out is not None:
                taken.append(name)
            return out
        return wrapped

    with pytest.MonkeyPatch.context() as mp:
        for name in READERS:
            mp.setattr(csv_records, {TYPED: "typed_records", LINES: "line_records",
                                     CSV_MODULE: "csv_records"}[name], watch(name))
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                outcome = catalogue.parse_catalogue(data, source="cat.csv")
            except PeriplanError as exc:
                outcome = [str(e) for e in getattr(exc, "errors", [exc])]
    return (taken[0] if taken else None), (outcome, [str(w.message) for w in caught])


def assert_same(a, b):
    (x, wx), (y, wy) = a, b
    assert wx == wy
    if isinstance(x, list) or isinstance(y, list):
        assert x == y
    else:
        pd.testing.assert_frame_equal(x, y, check_exact=True)


def check_readers_agree(data, fastest):
    """Every reader from ``fastest`` on reads ``data`` as the csv module does; ``fastest`` takes it."""
    reference = read(data, CSV_MODULE)
    for reader in READERS[READERS.index(fastest):]:
        taken, outcome = read(data, reader)
        if reader == fastest or reader == CSV_MODULE:
            assert taken == reader or (taken is None and isinstance(outcome[0], list)), (reader, taken)
        assert_same(outcome, reference[1])
    return reference[1][0]


BAD = ["Bad-1", "10", "20", "-3.50", "0.1", "30", "2460000.5", ""]  # a period that is not positive
CASES = {
    # file -> (the text or bytes, the fastest reader that must take it)
    "plain": (rows_text([HEADER] + targets(5) + [BAD]), TYPED),
    "crlf": (rows_text([HEADER] + targets(3) + [BAD], terminator="\r\n"), TYPED),
    "semicolons and a decimal comma": (rows_text([HEADER] + targets(2) + [["Bad-2", "10", "20", "3,25", "0.1", "30",
                                                                          "2460000.5", ""]], delimiter=";"), TYPED),
    "tabs": (rows_text([HEADER] + targets(2) + [BAD], delimiter="\t"), TYPED),
    "byte-order mark": (codecs.BOM_UTF8 + rows_text([HEADER] + targets(2) + [BAD]).encode(), TYPED),
    "utf-16": (rows_text([HEADER] + targets(2) + [BAD]).encode("utf-16"), TYPED),
    "empty lines": ("\n".join(rows_text([HEADER] + targets(2)).splitlines() + ["", ""] + [",".join(BAD), ""]), TYPED),
    "delimiters only": (rows_text([HEADER] + targets(2) + [[""] * 8, BAD]), TYPED),
    "delimiters and spaces only": (rows_text([HEADER] + targets(2) + [[" "] * 8, BAD]), LINES),
    "numbers that are not": (rows_text([HEADER] + targets(2) + [["N-1", "10", "20", "nan", "0.1", "30", "2460000.5", ""],
                                                                ["N-2", "inf", "20", "3", "1e5", " 30 ", "x", ""],
                                                                ["N-3", "10", "20", "1_000", "-0", "30", "", ""]]),
                             TYPED),
    "carried columns": (rows_text([HEADER[:-1] + ["vmag", "spt", "x"]] + [r[:-1] + ["8.7", "F8", ""] for r in targets(2)]
                                  + [["B", "10", "20", "3", "0.1", "30", "2460000.5", "", "K2", "007"]]), TYPED),
    "angles": (rows_text([HEADER] + targets(1) + [["A-1", "12 30 00", "-0 30 00", "3", "0.1", "30", "2460000.5", ""],
                                                  ["A-2", "24:00:00", "+95:00:00", "3", "0.1", "30", "2460000.5", ""],
                                                  ["A-3", "12:7x:00", "\u00a041.5", "3", "0.1", "30", "2460000.5", ""],
                                                  ["A-4", "-12:30:00", "41", "3", "0.1", "30", "2460000.5", ""]]), TYPED),
    "duplicate names": (rows_text([HEADER] + targets(3) + [targets(1)[0]]), TYPED),
    "a few quoted cells": (rows_text([HEADER] + targets(120) + targets(1, "a, b\n\n# c, \"d\"", first=120)
                                     + targets(60, first=121) + targets(1, "e;f", first=181) + [BAD]), TYPED),
    "a few quoted numbers": (rows_text([HEADER] + targets(120)) + 'Q-1,10,20,"3.5",0.1,30,"2460000.5",\n'
                             + 'Q-2,10,20,"-2",0.1,30,2460000.5,"x\ny"\n' + rows_text(targets(60, first=120)), TYPED),
    "whitespace lines": (rows_text([HEADER] + targets(2)) + "   \n\t\n" + rows_text([BAD]), LINES),
    "comments": ("# a comment with a \"quote\" and , commas\n" + rows_text([HEADER] + targets(2, "#1 on the list"))
                 + "  # an indented one\n" + rows_text([BAD]), LINES),
    "quoted line breaks": (rows_text([HEADER] + targets(2, "seen in 2019\nnext season:\n# check the secondary")
                                     + targets(1, "two\r\nlines", first=2) + [BAD]), LINES),
    "quoted delimiters and quotes": (rows_text([HEADER] + targets(2, 'a, "b"; c') + [BAD]), LINES),
    "every cell quoted": (rows_text([HEADER] + targets(2) + [BAD], quoting=csv.QUOTE_ALL), LINES),
    "a literal quote": (rows_text([HEADER] + targets(1)) + 'Q-1,10,20,3,0.1,30,2460000.5,a 5" scope\n'
                        + rows_text([BAD]), LINES),
    "short and long rows": (rows_text([HEADER] + [r[:7] for r in targets(2)] + [BAD + ["extra"]]), LINES),
    "a header after blank lines": ("\n,,,\n" + rows_text([HEADER] + targets(1) + [BAD]), LINES),
    "a quote never closed": (rows_text([HEADER] + targets(1)) + 'U-1,10,20,3,0.1,30,2460000.5,"open\n'
                             + rows_text(targets(1)), CSV_MODULE),
    "text after a closing quote": (rows_text([HEADER]) + 'T-1,10,20,3,0.1,30,2460000.5,"a"b\n', CSV_MODULE),
    "carriage returns alone": (rows_text([HEADER] + targets(2) + [BAD], terminator="\r"), CSV_MODULE),
}


@pytest.mark.parametrize("case", list(CASES))
def test_each_reader_reads_the_file_as_the_csv_module_does(case):
    data, fastest = CASES[case]
    check_readers_agree(data, fastest)


def test_rows_in_messages_count_as_a_spreadsheet_does():
    # the rows the csv module counts (records, comment lines), which every reader reports
    text = CASES["quoted line breaks"][0]
    records = list(csv.reader(io.StringIO(text, newline="")))
    assert len(records) == 5 and records[-1][0] == "Bad-1"  # header, 3 targets, Bad-1: row 5
    outcome = check_readers_agree(text, LINES)
    assert outcome == ["cat.csv, row 5, column period_d: -3.50 must be positive"]
    text = CASES["comments"][0]  # comment 1, header 2, two targets, comment 5, Bad-1 6
    assert check_readers_agree(text, LINES) == ["cat.csv, row 6, column period_d: -3.50 must be positive"]
    text = CASES["empty lines"][0]  # header 1, targets 2-3, empty 4-5, Bad-1 6
    assert check_readers_agree(text, TYPED) == ["cat.csv, row 6, column period_d: -3.50 must be positive"]


def test_the_typed_reader_keeps_the_cells_text_for_messages():
    outcome = check_readers_agree(CASES["numbers that are not"][0], TYPED)
    assert outcome == ["cat.csv, row 4, column period_d: 'nan' is not a number",
                       "cat.csv, row 5, column ra: 'inf' is not a right ascension (not a finite number); expected "
                       "degrees 0-360 or hh:mm:ss.s",
                       "cat.csv, row 5, column e: 100000 is not a bound orbit; eccentricity must satisfy 0 <= e < 1",
                       "cat.csv, row 5, column tc: 'x' is not a number",
                       "cat.csv, row 6, column period_d: '1_000' is not a number",
                       "cat.csv, row 6, column tc: missing epoch; give tp (periastron), tc (primary conjunction) "
                       "or t0 (linear ephemeris)"]


cell = st.one_of(
    st.sampled_from(["", " ", "5.6334729", "0.5171", "-3", "nan", "3,25", "12:30:00", "+41 02 53", "BJD_TDB",
                     "hjd_utc", "#1", 'a "b"', "x\ny", "p;q", "t\tu", "\u00a07", "2454387.49375", "1e400"]),
    st.text(alphabet=st.characters(codec="utf-8", exclude_categories=["Cs"]), max_size=6),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
)
extra_line = st.sampled_from(["", "   ", "# comment, with \"quote\"", ",,,", "\t"])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rows=st.lists(st.lists(cell, min_size=5, max_size=9), max_size=6),
       delimiter=st.sampled_from([",", ";", "\t"]), terminator=st.sampled_from(["\n", "\r\n"]),
       quoting=st.sampled_from([csv.QUOTE_MINIMAL, csv.QUOTE_ALL]),
       extras=st.lists(st.tuples(st.integers(0, 7), extra_line), max_size=3))
def test_random_files_read_alike(rows, delimiter, terminator, quoting, extras):
    header = ["name", "ra", "dec", "period_d", "tc", "time_system", "notes", "vmag"]
    named = [[f"R{i}"] + r[1:] for i, r in enumerate(rows)]
    lines = rows_text([header] + named, delimiter, terminator, quoting).split(terminator)
    for at, line in extras:
        lines.insert(min(at + 1, len(lines)), line.replace(",", delimiter))
    data = terminator.join(lines)
    reference = read(data, CSV_MODULE)[1]
    for reader in (TYPED, LINES):
        assert_same(read(data, reader)[1], reference)
