"""Catalogues as typed tables: ECSV, VOTable and FITS files, astropy Tables and pandas DataFrames
load with the same checks and messages as a CSV file, and units in the table's metadata are
converted to the engine's.

References: astropy.units (unit conversions: h -> d, rad -> deg, km/s -> m/s) and astropy.table
(the reader and writer of the three file formats: ECSV, Aldcroft et al., "ECSV: Enhanced
Character Separated Values", astropy APE 6, 2014; VOTable 1.4, IVOA Recommendation 2019; FITS 4.0,
IAU FITS Working Group 2016, binary tables). Elements of HAT-P-2 b: Pal et al. 2010, MNRAS 401,
2665 (abstract): P = 5.6334729 +- 0.0000061 d, e = 0.5171, omega = 185.22 deg,
Tc = 2454387.49375 BJD; coordinates 16:20:36.36 +41:02:53.1 and K about 1 km/s (from memory).
GJ 436 b: Maness et al. 2007, PASP 119, 90: P = 2.6439 d, e = 0.16; omega = 339 deg (from memory);
transit HJD 2454280.78149 (Deming et al. 2007, ApJ 667, L199).
"""

import astropy.units as u
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import Angle
from astropy.table import MaskedColumn, Table
from astropy.time import Time

import planner
from planner import cli
from planner.errors import InputErrors
from planner.inputs import catalogue

CSV = ("name,ra,dec,period_d,period_err_d,e,omega_deg,tc,time_system,k_ms,vmag\n"
       "HAT-P-2 b,16:20:36.36,+41:02:53.1,5.6334729,0.0000061,0.5171,185.22,2454387.49375,BJD_TDB,1000,8.7\n"
       "GJ 436 b,11:42:11.09,+26:42:23.7,2.6439,,0.16,339,2454280.78149,HJD_UTC,,10.7\n")
#: Engine columns compared between the forms (floats within TOL, the rest exactly).
FLOAT_TOL = {"ra_deg": 1e-9, "dec_deg": 1e-9, "period_d": 1e-12, "period_err_d": 1e-15, "omega_deg": 1e-9,
             "epoch_bjd_tdb": 1e-9, "tp_bjd_tdb": 1e-9, "k_ms": 1e-9, "e": 0.0, "vmag": 0.0}
FORMATS = {"ecsv": "ascii.ecsv", "vot": "votable", "fits": "fits"}


def table_in_other_units() -> Table:
    """The CSV's two targets as a typed table with units of its own (hours, radians, km/s)."""
    t = Table()
    t["name"] = ["HAT-P-2 b", "GJ 436 b"]
    t["ra"] = Angle(["16:20:36.36", "11:42:11.09"], unit="hourangle").to(u.deg)
    t["dec"] = Angle(["+41:02:53.1", "+26:42:23.7"], unit="deg").to(u.rad)
    t["period"] = ([5.6334729, 2.6439] * u.d).to(u.h)
    t["period_err"] = MaskedColumn(([0.0000061, 0.0] * u.d).to_value(u.min), mask=[False, True], unit="min")
    t["e"] = [0.5171, 0.16]
    t["omega"] = ([185.22, 339.0] * u.deg).to(u.rad)
    t["tc"] = [2454387.49375, 2454280.78149] * u.d
    t["time_system"] = ["BJD_TDB", "HJD_UTC"]
    t["k"] = MaskedColumn([1.0, 0.0], mask=[False, True], unit="km / s")
    t["vmag"] = [8.7, 10.7]
    return t


def assert_same_targets(got: pd.DataFrame, ref: pd.DataFrame):
    assert list(got.columns) == list(ref.columns)
    for col in ref.columns:
        if col in FLOAT_TOL:
            a, b = got[col].to_numpy(float), ref[col].to_numpy(float)
            assert np.array_equal(np.isnan(a), np.isnan(b)), col
            ok = ~np.isnan(b)
            assert np.all(np.abs(a[ok] - b[ok]) <= FLOAT_TOL[col]), (col, a, b)
        elif ref[col].dtype.kind == "f":
            np.testing.assert_array_equal(got[col].to_numpy(float), ref[col].to_numpy(float), err_msg=col)
        else:
            assert got[col].tolist() == ref[col].tolist(), col


@pytest.fixture()
def reference():
    return catalogue.parse_catalogue(CSV, source="cat.csv")


def test_units_in_the_metadata_are_converted(reference):
    t = planner.read_catalogue(table_in_other_units(), name="mine")
    # Pal et al. 2010's period back in days, omega back in degrees, K in m/s
    assert abs(t["period_d"][0] - 5.6334729) <= 1e-12
    assert abs(t["period_err_d"][0] - 0.0000061) <= 1e-15 and t["period_err_d"][1] == 0.0
    assert abs(t["omega_deg"][0] - 185.22) <= 1e-9 and abs(t["omega_deg"][1] - 339.0) <= 1e-9
    assert abs(t["k_ms"][0] - (1.0 * u.km / u.s).to_value(u.m / u.s)) <= 1e-9 and np.isnan(t["k_ms"][1])
    assert_same_targets(t, reference)


@pytest.mark.parametrize("ext", sorted(FORMATS))
def test_ecsv_votable_and_fits_files_load_like_the_csv(ext, tmp_path, reference):
    path = tmp_path / f"targets.{ext}"
    table_in_other_units().write(path, format=FORMATS[ext])
    assert_same_targets(planner.read_catalogue(path), reference)
    assert_same_targets(planner.read_catalogue(str(path)), reference)


def test_dataframe_and_table_objects_load_like_the_csv(reference):
    frame = pd.read_csv(pd.io.common.StringIO(CSV))  # pandas' own reader: numbers as floats, NaN for empty
    assert_same_targets(planner.read_catalogue(frame), reference)
    assert_same_targets(planner.read_catalogue(Table.from_pandas(frame)), reference)


def messages(obj, **kw):
    with pytest.raises(InputErrors) as info:
        planner.read_catalogue(obj, **kw)
    return [str(e) for e in info.value.errors]


def bad_table() -> Table:
    t = table_in_other_units()
    t.add_row(dict(name="Bad", ra=10.0, dec=0.3, period=72.0, e=1.02, omega=0.5, tc=2460000.5,
                   time_system="BJD_TDB", vmag=12.0))
    return t


@pytest.mark.parametrize("ext", sorted(FORMATS))
def test_same_messages_with_the_table_row(ext, tmp_path):
    with pytest.raises(InputErrors) as info:
        catalogue.parse_catalogue(CSV + "Bad,10,17.19,3,,1.02,28.6,2460000.5,BJD_TDB,,12\n", source="cat.csv")
    (csv_msg,) = [str(e) for e in info.value.errors]
    assert csv_msg.startswith("cat.csv, row 4, column e: ")  # the header is row 1 of a CSV file
    what = csv_msg.split("column e: ")[1]
    path = tmp_path / f"cat.{ext}"
    bad_table().write(path, format=FORMATS[ext])
    assert messages(path) == [f"cat.{ext}, row 3, column e: {what}"]  # the third data row of the table
    assert messages(bad_table()) == [f"Table, row 2, column e: {what}"]  # table[2]
    frame = bad_table().to_pandas()
    frame.index = [10, 20, 30]
    frame = frame.rename(columns={"period": "period_d", "omega": "omega_deg", "k": "k_ms", "period_err": "period_err_d"})
    assert messages(frame, name="frame") == [f"frame, row 30, column e: {what}"]  # frame.loc[30]


def test_message_names_the_table_column_and_its_conversion():
    t = bad_table()
    t["period"][2] = -72.0
    assert messages(t)[0] == ("Table, row 2, column period: -3 must be positive (converted from h in the table "
                              "to d)")


@pytest.mark.parametrize("column, unit, kind", [("period", "m", "length"), ("omega", "m / s", "speed"),
                                                ("k", "deg", "angle")])
def test_unit_of_the_wrong_kind_is_an_error_naming_the_column(column, unit, kind):
    t = table_in_other_units()
    t[column].unit = unit
    (msg,) = [m for m in messages(t) if f"column '{column}'" in m]
    assert msg.startswith(f"Table: column '{column}' has unit '{u.Unit(unit)}' ({kind}")
    t = table_in_other_units()
    t["e"].unit = u.deg
    assert messages(t) == ["Table: column 'e' has unit 'deg' (angle); e needs dimensionless (no unit)"]


def test_quantity_columns_of_a_qtable(reference):
    from astropy.table import QTable

    assert_same_targets(planner.read_catalogue(QTable(table_in_other_units())), reference)


def test_numeric_names_read_as_written():
    t = table_in_other_units()
    t["name"] = [436, 2]  # catalogue numbers as integers, as a FITS table may hold them
    assert planner.read_catalogue(t)["name"].tolist() == ["436", "2"]


def test_time_objects_and_unreadable_files_are_refused(tmp_path):
    t = table_in_other_units()
    t["tc"] = Time(t["tc"].value, format="jd", scale="tdb")
    assert messages(t) == ["Table: column 'tc' holds Time objects; give it as plain numbers (Julian dates for an "
                           "epoch, with the system in column time_system) or text"]
    junk = tmp_path / "junk.fits"
    junk.write_bytes(b"SIMPLE = nonsense")
    (msg,) = messages(junk)
    assert msg.startswith("junk.fits: not a readable FITS table (")
    assert messages(tmp_path / "absent.ecsv") == [f"{tmp_path / 'absent.ecsv'}: no such catalogue file"]


def test_command_line_reads_a_table_file_and_reports_one_line(tmp_path, capsys):
    good, bad = tmp_path / "good.ecsv", tmp_path / "bad.vot"
    table_in_other_units().write(good, format="ascii.ecsv")
    bad_table().write(bad, format="votable")
    assert cli.main(["events", str(good), "--start", "2026-12-07", "--days", "6", "--format", "csv"]) == 0
    out, _ = capsys.readouterr()
    assert "HAT-P-2 b" in out and "GJ 436 b" in out
    out_dir = tmp_path / "plan"
    assert cli.main(["plan", str(bad), "--site", str(cli_site()), "--start", "2026-12-07", "--nights", "1",
                     "--out", str(out_dir)]) == 2
    out, err = capsys.readouterr()
    assert out == "" and not out_dir.exists()
    assert err.splitlines() == ["periplan: error: bad.vot, row 3, column e: 1.02 is not a bound orbit; "
                                "eccentricity must satisfy 0 <= e < 1"]


def cli_site():
    from conftest import REPO

    return REPO / "sample_targets" / "site.toml"
