"""Events without an uncertainty say so, score a stated neutral timing value, and one note per run.

References: first-order propagation of a linear ephemeris T_n = T_0 + n P with independent
errors, sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 (Bevington & Robinson, *Data Reduction and Error
Analysis for the Physical Sciences*, 3rd ed. 2003, eq. 3.14, from memory); 1 d = 24 h = 1440 min.
The neutral value 0.5 is our stated policy (planner.scheduling.score.NEUTRAL_TIMING_QUALITY),
not a published number.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from icalendar import Calendar

from conftest import REPO
from planner import cli
from planner.inputs.catalogue import parse_catalogue
from planner.orbits.events import predict_events
from planner.outputs import explain
from planner.scheduling import score

SITE = REPO / "sample_targets" / "site.toml"

CATALOGUE = """\
name,ra,dec,period_d,period_err_d,t0,t0_err_d,label,priority
Sinfecha V1,05:21:16.9,+09:41:07,0.8512,,2460999.43125,,maximum,3
Brumal V2,05:30:02.0,+11:02:10,2.5003,0.00005,2455000.1200,0.0020,maximum,1
"""


def test_sigma_text_uses_the_unit_that_reads():
    assert explain.sigma_text(0.0) == "no uncertainty given"
    assert explain.sigma_text(np.nan) == ""
    assert explain.sigma_text(4.2 / 1440) == "+- 4.2 min (1 sigma)"   # 4.2 min
    assert explain.sigma_text(150 / 1440) == "+- 2.5 h (1 sigma)"     # 150 min = 2.5 h
    assert explain.sigma_text(60 / 24) == "+- 2.5 d (1 sigma)"        # 60 h = 2.5 d


def test_an_old_ephemeris_shows_its_sigma_in_hours_as_propagated():
    targets = parse_catalogue(CATALOGUE)
    ev = predict_events(targets, 2461382.0, 2461385.0)
    b = ev[ev["target"] == "Brumal V2"].iloc[0]
    n = b["cycle"]
    # Bevington & Robinson 2003, eq. 3.14: sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2
    expected_d = np.hypot(0.0020, n * 0.00005)
    assert abs(b["sigma_d"] - expected_d) <= 1e-9
    assert 2.0 / 24 < expected_d < 2.0  # between 2 h and 2 d: shown in hours
    assert explain.sigma_text(b["sigma_d"]) == f"+- {expected_d * 24:.1f} h (1 sigma)"
    a = ev[ev["target"] == "Sinfecha V1"]
    assert (a["sigma_d"] == 0.0).all()  # no error columns: no uncertainty


def test_no_uncertainty_scores_the_neutral_value_not_full_points():
    w = 4.0 / 24
    parts = score.score_components(priority=[1.0, 1.0], period_d=[2.0, 2.0], observable_fraction=[1.0, 1.0],
                                   airmass=[1.2, 1.2], moon_sep_deg=[90.0, 90.0], moon_illumination=[0.5, 0.5],
                                   sigma_d=[0.0, 1e-9], window_d=[w, w])
    assert parts["pts_timing"].iloc[0] == score.DEFAULT_WEIGHTS.timing * score.NEUTRAL_TIMING_QUALITY
    assert parts["pts_timing"].iloc[1] > parts["pts_timing"].iloc[0]


def test_plan_says_no_uncertainty_given_on_every_output_and_notes_it_once(tmp_path, capsys):
    cat = tmp_path / "targets.csv"
    cat.write_text(CATALOGUE)
    out = tmp_path / "plan"
    code = cli.main(["plan", str(cat), "--site", str(SITE), "--start", "2026-12-07", "--nights", "3",
                     "--out", str(out)])
    captured = capsys.readouterr()
    assert code == 0
    notes = [ln for ln in captured.err.splitlines() if "no timing uncertainty" in ln]
    assert len(notes) == 1 and "Sinfecha V1" in notes[0] and "Brumal V2" not in notes[0]
    assert "neutral timing value 0.5" in notes[0]
    sched = pd.read_csv(out / "schedule.csv")
    mine = sched[sched["target"] == "Sinfecha V1"]
    assert len(mine) > 0  # the test needs a scheduled block of the target without errors
    assert mine["event_sigma_min"].isna().all()
    assert np.allclose(mine["pts_timing"], 5.0)  # 10 points x the neutral 0.5
    sheets_text = "".join(p.read_text() for p in sorted(out.glob("night-*.txt")))
    assert "+- 0.0 min" not in sheets_text
    assert "no uncertainty given" in sheets_text
    assert "timing: no uncertainty given, neutral value 0.5 (5.0)" in sheets_text
    cal = Calendar.from_ical((out / "plan.ics").read_bytes())
    descs = [str(c["description"]) for c in cal.walk("VEVENT") if str(c["summary"]).startswith("Sinfecha V1")]
    assert descs and all("(no uncertainty given)" in d and "+- 0.0 min" not in d for d in descs)


def test_events_command_leaves_the_sigma_empty_and_notes_it_once(tmp_path, capsys):
    import io

    cat = tmp_path / "targets.csv"
    cat.write_text(CATALOGUE)
    assert cli.main(["events", str(cat), "--start", "2026-12-07", "--days", "3", "--format", "csv"]) == 0
    captured = capsys.readouterr()
    table = pd.read_csv(io.StringIO(captured.out))
    assert table.loc[table["target"] == "Sinfecha V1", "sigma_min"].isna().all()
    other = table.loc[table["target"] == "Brumal V2", "sigma_min"]
    assert len(other) and (other > 60).all()  # hours of uncertainty, in minutes: a number, not empty
    notes = [ln for ln in captured.err.splitlines() if "no timing uncertainty" in ln]
    assert len(notes) == 1 and "(Sinfecha V1)" in notes[0]
