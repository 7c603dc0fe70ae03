"""Catalogue loader: parsing, conversions to the engine's conventions, and one-line errors."""

import pathlib
import warnings

import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import Angle

from planner.inputs import catalogue
from planner.timescales import epochs
from planner.errors import InputErrors

HEADER = "name,ra,dec,period_d,e,omega_deg,tc,time_system,time_offset_d\n"


def errors_of(text):
    with pytest.raises(InputErrors) as info:
        catalogue.parse_catalogue(text, source="cat.csv")
    return [str(e) for e in info.value.errors]


@pytest.mark.parametrize("text, hours", [("04:12:33.8", True), ("23 59 59.99", True), ("+21:47:10", False),
                                         ("-00:30:00", False), ("-89:59:59.9", False), ("12:00", True)])
def test_sexagesimal_matches_astropy_angle(text, hours):
    ours = catalogue.parse_angle(text, hours=hours)
    ref = Angle(text, unit="hourangle" if hours else "deg").to_value("deg")
    assert abs(ours - ref) <= 1e-12


def test_demo_catalogue_loads_with_conventions():
    from conftest import SAMPLE_TARGETS

    t = catalogue.read_catalogue(SAMPLE_TARGETS)
    assert len(t) == 7 and t.name.is_unique
    row = t.set_index("name")
    # omega_of = companion: the primary's omega is the catalogue's + 180 deg
    assert abs(row.loc["Tessel-3", "omega_deg"] - (70.4 + 180)) <= 1e-12
    # circular orbit without omega: omega = 90 deg so that Tp = Tc (design notes)
    assert row.loc["Corrie-2 b", "omega_deg"] == 90.0
    assert abs(row.loc["Corrie-2 b", "tp_bjd_tdb"] - row.loc["Corrie-2 b", "epoch_bjd_tdb"]) <= 1e-9
    assert row.loc["Nube V5", "ephemeris"] == "linear" and row.loc["Nube V5", "events"] == ("periodic",)
    # HJD_UTC with an MJD-style offset is converted in the target's direction
    expected = epochs.to_bjd_tdb(60812.5193 + 2400000.5, "HJD_UTC", row.loc["Tessel-3", "ra_deg"],
                                     row.loc["Tessel-3", "dec_deg"])
    assert abs(row.loc["Tessel-3", "epoch_bjd_tdb"] - expected) <= 1e-9


def test_time_offset_and_time_systems():
    text = HEADER + ("A,10,20,3.0,0,,60000.25,JD_UTC,2400000.5\n"
                     "B,10,20,3.0,0,,2460000.75,BJD_TDB,\n")
    t = catalogue.parse_catalogue(text, source="cat.csv")
    expected_a = epochs.to_bjd_tdb(2460000.75, "JD_UTC", 10, 20)
    assert abs(t.epoch_bjd_tdb[0] - expected_a) <= 1e-9
    assert t.epoch_bjd_tdb[1] == 2460000.75
    # JD(UTC) -> BJD(TDB): 69.184 s of TT - UTC plus at most ~500 s of light time
    assert abs((t.epoch_bjd_tdb[0] - 2460000.75) * 86400) <= 69.2 + 500


def test_every_bad_row_reported_with_file_row_column():
    text = HEADER + (
        "good,10,20,3.0,0.1,30,2460000.1,,\n"
        "ecc,10,20,3.0,1.02,30,2460000.1,,\n"
        "per,10,20,-3,0.1,30,2460000.1,,\n"
        "noepoch,10,20,3.0,0.1,30,,,\n"
        "sys,10,20,3.0,0.1,30,2460000.1,TAI,\n"
        "coord,25:61:00,20,3.0,0.1,30,2460000.1,,\n"
        "reduced,10,20,3.0,0.1,30,60000.1,,\n"
        "swap,20,100,3.0,0.1,30,2460000.1,,\n"
    )
    msgs = errors_of(text)
    assert msgs == [
        "cat.csv, row 3, column e: 1.02 is not a bound orbit; eccentricity must satisfy 0 <= e < 1",
        "cat.csv, row 4, column period_d: -3 must be positive",
        "cat.csv, row 5, column tc: missing epoch; give tp (periastron), tc (primary conjunction) or t0 (linear ephemeris)",
        "cat.csv, row 6, column time_system: unknown time system 'TAI'; expected one of BJD_TDB, HJD_UTC, JD_UTC",
        "cat.csv, row 7, column ra: '25:61:00' is not a right ascension (minutes and seconds must be below 60); "
        "expected degrees 0-360 or hh:mm:ss.s",
        "cat.csv, row 8, column tc: 60000.1 looks like a reduced Julian date; give the offset in column "
        "time_offset_d (e.g. 2400000, 2450000 or 2400000.5 for MJD)",
        "cat.csv, row 9, column dec: 100 is outside -90..+90 deg (are ra and dec swapped?)",
    ]


def test_header_problems():
    msgs = errors_of("name,ra,dec,perod_d,tc\nA,1,2,3,2460000\n")
    assert any("unknown column 'perod_d'; did you mean 'period_d'?" in m for m in msgs)
    assert any("missing column 'period_d'" in m for m in msgs)
    assert errors_of("") == ["cat.csv: empty catalogue; expected a header row such as "
                             "'name,ra,dec,period_d,e,omega_deg,tp' and one row per target"]
    assert "not a text file" in errors_of(b"\x00\x01\x02")[0]


def test_duplicate_names_and_omega_rules():
    text = HEADER + "A,10,20,3,0.2,,2460000.1,,\nA,10,20,3,0.2,10,2460000.1,,\nB,10,20,3,,40,2460000.1,,\n"
    msgs = errors_of(text)
    assert "row 2, column omega_deg: missing argument of periastron; it is required when e > 0" in msgs[0]
    assert "row 3, column name: duplicate target name 'A' (first at row 2)" in msgs[1]
    assert "row 4, column e: missing eccentricity" in msgs[2]


def test_events_column_validated():
    text = "name,ra,dec,period_d,e,omega_deg,tc,events\nA,1,2,3,0.1,10,2460000,periastron;ingress\n"
    assert "unknown event 'ingress'" in errors_of(text)[0]
    t = catalogue.parse_catalogue("name,ra,dec,period_d,e,omega_deg,tc,events\n"
                                  "A,1,2,3,0.1,10,2460000, RV_MAX ; periastron\n", source="c")
    assert t.events[0] == ("rv_max", "periastron")
    assert np.isfinite(t.tp_bjd_tdb[0]) and t.tp_bjd_tdb[0] <= t.epoch_bjd_tdb[0]


def test_duration_that_disagrees_with_the_geometry_is_warned_about():
    # A consistent pair: PyAstronomy's pyasl.transitDuration (exact=True, the circular-orbit
    # T14 = (P/pi) arcsin(sqrt((1 + k)^2 - b^2) / (a sin i))) for a/R* and k made with its own
    # constants, as in test_orbit.py; the same row with a duration 20 % longer is warned about.
    from PyAstronomy import constants, pyasl

    const = constants.PyAConstants()
    const.setSystem("SI")
    a_au, rp_rj, rs_rsun, inc, p = 0.05, 1.2, 1.1, 87.0, 3.5
    t14_h = 24 * pyasl.transitDuration(a_au, rp_rj, rs_rsun, inc, p, exact=True)
    a_rstar = a_au * const.AU / (rs_rsun * const.RSun)
    k = rp_rj * const.RJ / (rs_rsun * const.RSun)
    head = "name,ra,dec,period_d,e,omega_deg,tc,duration_h,a_rstar,inc_deg,rp_rstar\n"
    row = "Wagtail b,10,20,{p},0,90,2461000.5,{d},{a},{i},{k}\n"
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        catalogue.parse_catalogue(head + row.format(p=p, d=t14_h, a=a_rstar, i=inc, k=k), source="ok.csv")
    with pytest.warns(UserWarning, match=r"bad.csv: row 3: duration_h differs .* \(row 3: 3.25\d* h against "
                      rf"{t14_h:.2f} h\)"):
        catalogue.parse_catalogue(head + row.format(p=p, d=t14_h, a=a_rstar, i=inc, k=k).replace("Wagtail", "Pipit")
                                  + row.format(p=p, d=1.2 * t14_h, a=a_rstar, i=inc, k=k), source="bad.csv")


def test_optional_columns_given_empty_read_as_absent_ones():
    # The validators return their defaults at once when none of their columns is in the file;
    # the same columns present with every cell empty go through the full checks and must give
    # the same target table.
    from planner.inputs import binary_checks, campaign_checks

    text = (pathlib.Path(__file__).parent.parent / "sample_targets" / "targets.csv").read_text()
    lines = [line for line in text.splitlines() if not line.startswith("#")]
    header = lines[0].split(",")
    optional = [c for c in (binary_checks.SHAPE_COLUMNS + binary_checks.APSIDAL_COLUMNS
                            + binary_checks.THIRD_BODY_COLUMNS + campaign_checks.CAMPAIGN_COLUMNS
                            + ("period_kind", "rv_phases", "rv_phase_tol", "b")) if c not in header]
    assert len(optional) >= 15
    padded = "\n".join([lines[0] + "," + ",".join(optional)] + [row + "," * len(optional) for row in lines[1:]])
    plain = catalogue.parse_catalogue("\n".join(lines) + "\n", source="plain.csv")
    full = catalogue.parse_catalogue(padded + "\n", source="padded.csv")
    pd.testing.assert_frame_equal(plain, full)
