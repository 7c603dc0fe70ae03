"""The observation log reader: both time forms, strict one-line errors, rows counted as the file's lines.

References: ISO 8601 UTC -> Julian date by astropy ``Time`` (its own parser), and BJD_TDB of a UTC
time by astropy's ``Time.light_travel_time`` for a geocentric observer (the quantity
planner.timescales.epochs computes, tested against astropy in tests/test_timescales.py).
"""

import astropy.units as u
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

from planner import cli
from planner.errors import InputErrors
from planner.inputs.catalogue import parse_catalogue
from planner.inputs.observation_log import parse_log

#: Two float64 JD near 2.46e6 resolve 40 us; the light time is interpolated to < 1e-4 s.
TIME_TOL_D = 1e-3 / 86400.0

CATALOGUE = """name,ra,dec,period_d,e,omega_deg,tc,k_ms
Star A,04:12:33.8,+21:47:10,10.0,0.3,40,2460900.5,50
Star B,150.0,-10.0,3.0,0,,2460901.25,20
"""


@pytest.fixture
def targets():
    return parse_catalogue(CATALOGUE, "cat.csv")


def test_iso_and_bjd_times_agree_with_astropy(targets):
    log = parse_log("target,start,end,purpose,outcome\n"
                    "Star A,2026-12-09T21:14:00Z,2026-12-10T00:14:00+01:00,periastron,done\n"
                    "Star A,2461384.385,,visit,done\n", targets, "log.csv")
    ref = Time("2026-12-09T21:14:00", scale="utc")
    assert abs(log["start_jd_utc"][0] - ref.jd) <= TIME_TOL_D
    assert abs(log["end_jd_utc"][0] - (ref.jd + 2 / 24.0)) <= TIME_TOL_D  # 00:14+01:00 is 23:14Z
    star = SkyCoord(targets.ra_deg[0] * u.deg, targets.dec_deg[0] * u.deg)
    geo = EarthLocation.from_geocentric(0, 0, 0, unit=u.m)
    t = Time(ref.jd, format="jd", scale="utc", location=geo)
    expected_bjd = (t.tdb + t.light_travel_time(star)).jd
    assert abs(log["start_bjd_tdb"][0] - expected_bjd) <= TIME_TOL_D
    assert log["single"].tolist() == [False, True]
    assert log["start_bjd_tdb"][1] == 2461384.385 and log["end_bjd_tdb"][1] == 2461384.385
    back = Time(log["start_jd_utc"][1], format="jd", scale="utc", location=geo)
    assert abs((back.tdb + back.light_travel_time(star)).jd - 2461384.385) <= 1e-7  # round trip


def test_quoted_line_breaks_keep_the_file_rows(targets):
    text = ("# observing log\ntarget,start,end,purpose,outcome,notes\n"
            'Star A,2026-12-09T21:14:00Z,,visit,done,"a note\ntyped in\na spreadsheet"\n'
            "Star A,2026-12-09T21:14:00Z,,visit,maybe,\n")
    with pytest.raises(InputErrors) as err:
        parse_log(text, targets, "log.csv")
    assert str(err.value) == "log.csv, row 6, column outcome: 'maybe' is not an outcome; expected done, partial or lost (or planned)"


def test_every_bad_row_is_reported_with_its_column(targets):
    text = ("target,start,end,purpose,cycle,outcome\n"
            "Star C,2026-12-09T21:14:00Z,,visit,,done\n"
            "Star A,2026-12-09T21:14:00Z,2026-12-09T20:00:00Z,transit,,done\n"
            "Star A,2026-12-09T21:14:00,,visit,,done\n"
            "Star B,1890000.5,,rv_max,x,lost\n"
            "Star B,2026-12-09T21:14:00Z,,dance,,done\n")
    with pytest.raises(InputErrors) as err:
        parse_log(text, targets, "log.csv")
    lines = str(err.value).splitlines()
    assert lines[0].startswith("log.csv, row 2, column target: 'Star C' is not a target of the catalogue")
    assert lines[1] == "log.csv, row 3, column end: ends before it starts; swap start and end or correct the date"
    assert lines[2].startswith("log.csv, row 4, column start: '2026-12-09T21:14:00' is a clock time without a zone")
    assert lines[3].startswith("log.csv, row 5, column start: '1890000.5' is outside 1950-2100")
    assert lines[4].startswith("log.csv, row 5, column cycle: 'x' is not a whole number")
    assert lines[5].startswith("log.csv, row 6, column purpose: 'dance' is not a purpose")
    assert len(lines) == 6


def test_unknown_column_has_a_suggestion(targets):
    with pytest.raises(InputErrors, match=r"row 1, column outcom: unknown column 'outcom'; did you mean 'outcome'"):
        parse_log("target,start,purpose,outcom\n", targets, "log.csv")


def test_bad_log_exits_2_with_one_line_and_writes_nothing(tmp_path, capsys):
    cat = tmp_path / "cat.csv"
    cat.write_text(CATALOGUE)
    log = tmp_path / "log.csv"
    log.write_text("target,start,end,purpose,outcome\nStar A,2026-12-09T21:14:00Z,,visit,clouds\n")
    charts = tmp_path / "charts"
    code = cli.main(["coverage", str(cat), "--log", str(log), "--charts", str(charts)])
    err = capsys.readouterr().err
    assert code == 2
    assert err.strip() == "periplan: error: log.csv, row 2, column outcome: 'clouds' is not an outcome; expected done, partial or lost (or planned)"
    assert not charts.exists()


def test_the_plans_template_reads_back_as_planned_rows(tmp_path, targets):
    from planner.outputs.log_template import write_log_template

    schedule = pd.DataFrame({"target": ["Star A", "Star B"], "start_jd_utc": [2461384.40, 2461384.55],
                             "end_jd_utc": [2461384.50, 2461384.57], "event": ["periastron", "visit"],
                             "kind": ["fixed", "flexible"], "cycle": [12.0, np.nan]})
    path = write_log_template(tmp_path / "log-template.csv", schedule)
    log = parse_log(open(path).read(), targets, "log-template.csv")
    assert log["outcome"].tolist() == ["planned", "planned"]
    assert log["purpose"].tolist() == ["periastron", "visit"] and log["cycle"][0] == 12
    # to the second: the template writes whole seconds
    assert np.all(np.abs(log["start_jd_utc"] - schedule["start_jd_utc"]) <= 0.5 / 86400 + TIME_TOL_D)


def test_the_plan_names_logged_visits_that_serve_no_request():
    # A `visit` serves phase bins, wanted phases (rv_phases) or nightly visits (visit_h) only
    # (README, observation log); Star A asks for none of them, Star B for phase 0.25.
    from planner.cli.commands.plan import unused_visits_note

    targets = parse_catalogue(CATALOGUE.replace(",k_ms\n", ",k_ms,rv_phases\n").replace(",50\n", ",50,\n")
                              .replace(",20\n", ",20,0.25\n"), "cat.csv")
    log = parse_log("target,start,end,purpose,outcome\n"
                    "Star A,2461384.385,,visit,done\n"
                    "Star B,2461384.385,,visit,done\n"
                    "Star A,2461385.385,,visit,lost\n"
                    "Star A,2461386.385,,visit,partial\n", targets, "log.csv")
    note = unused_visits_note(log, targets, "obs/log.csv")
    assert note.startswith("log.csv: rows 2, 5: a visit of Star A counts for nothing in the plan")
    assert "purpose rv_max or rv_min" in note
    assert unused_visits_note(log[log["target"] == "Star B"], targets, "log.csv") is None


def test_the_plan_names_logged_events_that_are_none_of_their_targets_events(targets):
    # Star A (e = 0.3, K, no eclipse information) has periastron, apastron and the RV extremes as
    # events (README, default events); an occultation logged for it counts for nothing, a
    # periastron does, and so does 'transit' for a linear ephemeris given as tc
    from planner.cli.commands.plan import foreign_events_note

    log = parse_log("target,start,end,purpose,outcome\n"
                    "Star A,2461384.385,2461384.5,occultation,done\n"
                    "Star A,2461385.385,2461385.5,periastron,done\n"
                    "Star A,2461386.385,2461386.5,occultation,lost\n", targets, "log.csv")
    note = foreign_events_note(log, targets, "obs/log.csv")
    assert note == ("log.csv: row 2: secondary_conjunction is not an event of Star A (its events: periastron, "
                    "apastron, rv_max, rv_min), so the row counts for nothing in the plan; log it under one of "
                    "the target's events, or add the event to its events column")
    assert foreign_events_note(log.iloc[[1]], targets, "log.csv") is None
    linear = parse_catalogue("name,ra,dec,period_d,tc,duration_h\nLin,10,20,3.1,2461300.1,2.0\n", "cat.csv")
    transit = parse_log("target,start,end,purpose,outcome\nLin,2461384.385,2461384.5,transit,done\n", linear,
                        "log.csv")
    assert foreign_events_note(transit, linear, "log.csv") is None
