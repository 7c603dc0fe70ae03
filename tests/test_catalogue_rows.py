"""Catalogue files as spreadsheets save them: quoted cells with line breaks, comments, byte-order
marks, ';' and tab delimiters, and columns periplan does not read (kept and carried).

References: RFC 4180 (Shafranovich 2005, "Common Format and MIME Type for Comma-Separated Values
(CSV) Files"), sec. 2 rule 6: a field holding a line break is enclosed in double quotes, and the
record goes on after it; Python's csv module, which reads that rule; the Unicode Standard (15.0,
sec. 23.8): U+FEFF at the start of a file is a byte-order mark, not text. Elements of HAT-P-2 b:
Pal et al. 2010, MNRAS 401, 2665 (abstract): P = 5.6334729 d, e = 0.5171, omega = 185.22 deg,
Tc = 2454387.49375 BJD; coordinates 16:20:36.36 +41:02:53.1 (from memory).
"""

import codecs
import csv
import io

import numpy as np
import pandas as pd
import pytest

from planner import cli
from planner.errors import InputErrors
from planner.inputs import catalogue
from planner.outputs import sheets

HEADER = ["name", "ra", "dec", "period_d", "e", "omega_deg", "tc", "notes"]
HATP2 = ["HAT-P-2 b", "16:20:36.36", "+41:02:53.1", "5.6334729", "0.5171", "185.22", "2454387.49375"]


def csv_text(rows, delimiter=","):
    """CSV text written by Python's csv module (the reference writer of RFC 4180 quoting)."""
    buf = io.StringIO()
    csv.writer(buf, delimiter=delimiter, lineterminator="\r\n").writerows(rows)
    return buf.getvalue()


def messages(data, source="cat.csv"):
    with pytest.raises(InputErrors) as info:
        catalogue.parse_catalogue(data, source=source)
    return [str(e) for e in info.value.errors]


def test_quoted_cell_with_line_breaks_is_one_row(tmp_path, capsys):
    # a note typed in a spreadsheet cell with two line breaks: one record per RFC 4180 rule 6
    note = "seen in 2019\nnext season: check the\nsecondary"
    bad = ["Bad-2", "10", "20", "3.0", "1.02", "30", "2460000.5", ""]
    text = csv_text([HEADER, HATP2 + [note], bad])
    assert len(list(csv.reader(io.StringIO(text, newline="")))) == 3  # the reference reader: 3 records
    # spreadsheet rows: header 1, HAT-P-2 b 2 (its cell holds the line breaks), Bad-2 3
    assert messages(text) == ["cat.csv, row 3, column e: 1.02 is not a bound orbit; eccentricity must "
                              "satisfy 0 <= e < 1"]
    good = catalogue.parse_catalogue(csv_text([HEADER, HATP2 + [note]]), source="cat.csv")
    assert good["notes"].tolist() == [note]  # carried whole, line breaks and all
    assert good["period_d"].tolist() == [5.6334729]
    # through the command line: one line, exit 2, no traceback
    path = tmp_path / "noted.csv"
    path.write_text(text, newline="")
    code = cli.main(["events", str(path), "--start", "2026-12-07", "--days", "3"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.startswith("periplan: error: noted.csv, row 3, column e:")
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_comment_rows_are_dropped_after_parsing_and_still_count():
    text = ("# catalogue of week 50, a \"quoted\" word and an odd quote \" in a comment\n"
            + csv_text([HEADER, HATP2 + ["#1 on the list"]])
            + "# a comment between rows, with , commas\n"
            + csv_text([["Bad-5", "10", "20", "-3", "0.1", "30", "2460000.5", ""]]))
    # rows: comment 1, header 2, HAT-P-2 b 3, comment 4, Bad-5 5
    assert messages(text) == ["cat.csv, row 5, column period_d: -3 must be positive"]
    good = catalogue.parse_catalogue(text.rsplit("# a comment", 1)[0], source="cat.csv")
    assert good["notes"].tolist() == ["#1 on the list"]  # a '#' inside a cell is text


def test_byte_order_marks_are_dropped():
    text = csv_text([HEADER[:-1], HATP2])
    utf8 = codecs.BOM_UTF8 + text.encode("utf-8")
    utf16 = text.encode("utf-16")  # Python writes the byte-order mark of its byte order first
    assert utf16[:2] in (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)
    for data in (utf8, utf16):
        t = catalogue.parse_catalogue(data, source="cat.csv")
        assert t["name"].tolist() == ["HAT-P-2 b"] and t["period_d"].tolist() == [5.6334729]


@pytest.mark.parametrize("delimiter", [";", "\t"])
def test_semicolon_and_tab_delimited_files_are_read(delimiter):
    reference = catalogue.parse_catalogue(csv_text([HEADER[:-1], HATP2]), source="cat.csv")
    other = catalogue.parse_catalogue(csv_text([HEADER[:-1], HATP2], delimiter=delimiter), source="cat.csv")
    pd.testing.assert_frame_equal(other, reference)
    assert other["omega_deg"].tolist() == [185.22] and other["e"].tolist() == [0.5171]


def test_decimal_comma_is_refused_with_a_message_that_says_so():
    row = HATP2[:3] + ["5,6334729"] + HATP2[4:]
    assert messages(csv_text([HEADER[:-1], row], delimiter=";")) == [
        "cat.csv, row 2, column period_d: '5,6334729' is not a number (a decimal comma? write numbers with a "
        "decimal point)"]


def test_unknown_columns_are_kept_and_carried():
    header = HEADER[:-1] + ["Vmag", "spectral_type", "x_observer", "notes"]
    t = catalogue.parse_catalogue(csv_text([header, HATP2 + ["8.7", "F8", "", "bright"],
                                            ["Other", "10", "20", "3", "0.1", "30", "2460000.5", "", "K2", "me", ""]]),
                                  source="cat.csv")
    assert list(t.columns) == list(catalogue.OUTPUT_COLUMNS) + ["Vmag", "spectral_type", "x_observer", "notes"]
    assert t["Vmag"].dtype == float and t["Vmag"].iloc[0] == 8.7 and np.isnan(t["Vmag"].iloc[1])
    assert t["spectral_type"].tolist() == ["F8", "K2"] and t["x_observer"].tolist() == ["", "me"]


@pytest.mark.parametrize("column, suggestion", [("perod_d", "period_d"), ("omega_dg", "omega_deg"),
                                                ("tc_er_d", "tc_err_d"), ("Time_sytem", "time_system")])
def test_name_one_edit_from_a_known_column_is_an_error(column, suggestion):
    header = HEADER[:-1] + [column]
    msgs = messages(csv_text([header, HATP2 + ["1"]]))
    assert msgs == [f"cat.csv, row 1, column {column}: unknown column {column!r}; did you mean {suggestion!r}? "
                    "(columns periplan does not read are kept; rename this one if it is not a typing error)"]


def test_name_without_its_unit_and_reserved_names_are_errors():
    msgs = messages(csv_text([HEADER[:3] + ["period", "e", "omega_deg", "tc", "ra_deg"], HATP2 + ["245.15"]]))
    assert msgs[0].startswith("cat.csv, row 1, column period: column 'period' needs its unit: did you mean "
                              "'period_d'?")
    assert msgs[1].startswith("cat.csv, row 1, column ra_deg: column 'ra_deg' is a name periplan gives to a "
                              "column it computes")
    assert msgs[2].startswith("cat.csv, row 1, column period_d: missing column 'period_d'")


def test_magnitude_column_shown_on_the_nightly_sheets(tmp_path):
    from test_sheets import NIGHT, block

    targets = catalogue.parse_catalogue(csv_text([HEADER[:-1] + ["vmag"], HATP2 + ["8.7"]]), source="cat.csv")
    assert sheets.magnitude_texts(targets).tolist() == ["vmag 8.7"]
    schedule = pd.DataFrame([block(0.3, 0.4, "HAT-P-2 b")])
    paths = sheets.write_night_sheets(tmp_path, schedule, pd.DataFrame([NIGHT]), targets=targets)
    for path in paths:
        text = open(path, encoding="utf-8").read()
        assert "HAT-P-2 b (vmag 8.7): primary conjunction" in text
