"""``periplan nights`` and ``periplan events --site`` end to end; bad site files exit 2 in one line."""

import io
import subprocess
import sys

import pandas as pd
import pytest

from conftest import REPO, SAMPLE_TARGETS
from planner import cli

SAMPLE_SITE = REPO / "sample_targets" / "site.toml"

GOOD = """\
name = "Test"
latitude_deg = 37.62
longitude_deg = -3.12
elevation_m = 1650
timezone = "Europe/Madrid"
"""


def run(args, capsys):
    code = cli.main(args)
    out, err = capsys.readouterr()
    return code, out, err


def test_nights_csv_columns_and_dst_offsets(capsys):
    code, out, err = run(["nights", "--site", str(SAMPLE_SITE), "--start", "2026-10-23", "--days", "3",
                          "--format", "csv"], capsys)
    assert code == 0
    table = pd.read_csv(io.StringIO(out))
    expected = ["night", "sunset_utc", "dark_start_utc", "dark_end_utc", "sunrise_utc", "sunset_local",
                "dark_start_local", "dark_end_local", "sunrise_local", "moon_illumination"]
    assert set(expected) <= set(table.columns)
    assert list(table.columns[:9]) == expected[:9]
    assert list(table.night) == ["2026-10-23", "2026-10-24", "2026-10-25"]
    # local twins are the same instants (tz database via zoneinfo/pandas)
    for name in ("sunset", "dark_start", "dark_end", "sunrise"):
        assert (pd.to_datetime(table[f"{name}_utc"], utc=True)
                == pd.to_datetime(table[f"{name}_local"], utc=True)).all()
    # summer time ends 2026-10-25 03:00 CEST: the night of the 24th begins at +02:00, ends at +01:00
    row = table.set_index("night").loc["2026-10-24"]
    assert row.sunset_local.endswith("+02:00") and row.sunrise_local.endswith("+01:00")
    assert row.sunset_local.startswith("2026-10-24") and row.sunrise_local.startswith("2026-10-25")
    assert ((table.moon_illumination >= 0) & (table.moon_illumination <= 1)).all()


def test_nights_polar_summer_says_no_dark_time(tmp_path, capsys):
    site = tmp_path / "north.toml"
    site.write_text(GOOD.replace("37.62", "69.65").replace("-3.12", "18.96").replace("Europe/Madrid", "Europe/Oslo"))
    code, out, _ = run(["nights", "--site", str(site), "--start", "2026-06-20", "--days", "2", "--format", "json"],
                       capsys)
    assert code == 0
    import json

    rows = json.loads(out)
    assert [r["dark_kind"] for r in rows] == ["no dark time", "no dark time"]
    assert all(r["sunset_utc"] == "" and r["dark_start_utc"] == "" for r in rows)


@pytest.mark.parametrize("edit, key, fragment", [
    (("latitude_deg = 37.62", "latitude_deg = 95"), "latitude_deg", "-90 <= latitude_deg <= 90"),
    (('timezone = "Europe/Madrid"', 'timezone = "Europe/Atlantis"'), "timezone", "unknown time zone"),
    (("elevation_m = 1650", "elevation_m = 1650\nhorizon = [[0, 5], [90, 'x']]"), "horizon",
     "malformed horizon profile"),
    (("elevation_m = 1650", "elevation_m = 1650\nmin_altitude_deg = 91"), "min_altitude_deg",
     "-5 <= min_altitude_deg <= 90"),
    (("elevation_m = 1650\n", ""), "elevation_m", "missing required key"),
])
def test_bad_site_file_one_line_exit_2(tmp_path, capsys, edit, key, fragment):
    site = tmp_path / "bad.toml"
    site.write_text(GOOD.replace(*edit))
    code, out, err = run(["nights", "--site", str(site), "--start", "2026-10-23"], capsys)
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith(f"periplan: error: bad.toml, key {key}: ") and fragment in lines[0]


def test_bad_site_through_a_real_process_has_no_traceback(tmp_path):
    site = tmp_path / "bad.toml"
    site.write_text(GOOD.replace("37.62", "-91"))
    proc = subprocess.run([sys.executable, "-m", "planner", "nights", "--site", str(site), "--start", "2026-10-23"],
                          capture_output=True, text=True, cwd=REPO)
    assert proc.returncode == 2 and proc.stdout == "" and "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1


def test_missing_site_file(capsys):
    code, _, err = run(["nights", "--site", "no-such-site.toml", "--start", "2026-10-23"], capsys)
    assert code == 2 and "no-such-site.toml: no such site file" in err


def test_events_with_site_adds_visibility_and_filters(capsys):
    args = ["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "10", "--site", str(SAMPLE_SITE),
            "--format", "csv"]
    code, out, _ = run(args, capsys)
    assert code == 0
    table = pd.read_csv(io.StringIO(out))
    for col in ("night", "alt_deg", "observable_fraction", "moon_sep_deg", "local"):
        assert col in table.columns
    assert ((table.observable_fraction >= 0) & (table.observable_fraction <= 1)).all()
    # below the horizon at the event means the window's middle is lost, so not fully observable
    assert (table.observable_fraction[table.alt_deg < 0] < 1).all()
    code, out, _ = run(args + ["--visible", "0.8"], capsys)
    kept = pd.read_csv(io.StringIO(out))
    # the CSV shows the fraction to 2 decimals: an event at 0.7995 prints as 0.80 but is dropped
    assert code == 0 and (table.observable_fraction >= 0.805).sum() <= len(kept) <= (table.observable_fraction >= 0.795).sum()
    assert len(kept) > 0 and (kept.observable_fraction >= 0.8).all()


def test_events_without_site_are_unchanged(capsys):
    code, out, _ = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "5", "--format", "csv"],
                       capsys)
    assert code == 0
    assert "observable_fraction" not in pd.read_csv(io.StringIO(out)).columns


def test_target_that_never_rises_is_reported_not_dropped(tmp_path, capsys):
    cat = tmp_path / "cat.csv"
    cat.write_text("name,ra,dec,period_d,e,omega_deg,tc\n"
                   "Deep South,10:00:00,-70:00:00,2.5,0.1,10,2460000.5\n"
                   "Up North,10:00:00,+40:00:00,2.5,0.1,10,2460000.5\n")
    code, out, err = run(["events", str(cat), "--start", "2026-12-07", "--days", "5", "--site", str(SAMPLE_SITE),
                          "--format", "csv"], capsys)
    assert code == 0
    warnings = [ln for ln in err.splitlines() if "warning" in ln]
    assert len(warnings) == 1 and "Deep South" in warnings[0] and "never rises" in warnings[0]
    table = pd.read_csv(io.StringIO(out))
    south = table[table.target == "Deep South"]
    assert len(south) > 0 and (south.observable_fraction == 0).all()


@pytest.mark.parametrize("args, message", [
    (["--visible", "0.5"], "--visible needs --site"),
    (["--site", str(SAMPLE_SITE), "--visible", "1.5"], "--visible must be a fraction between 0 and 1"),
    (["--site", str(SAMPLE_SITE), "--k-sigma", "-1"], "--k-sigma must be zero or positive"),
])
def test_events_site_option_errors(args, message, capsys):
    code, out, err = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07"] + args, capsys)
    assert code == 2 and out == "" and message in err and len(err.strip().splitlines()) == 1


def test_one_night_is_counted_in_the_singular(capsys):
    code = cli.main(["nights", "--site", str(SAMPLE_SITE), "--start", "2026-12-07", "--days", "1"])
    _, err = capsys.readouterr()
    assert code == 0 and err.startswith("1 night at ") and "1 nights" not in err


def test_nights_without_start_begin_with_the_night_plan_would(monkeypatch, capsys):
    # the default first night is plan's (planner.pipeline.first_night_for, tested in
    # test_cli_plan): at 02:00 Madrid time on the 8th the night under way is the 7th's, after
    # that night's dawn the coming one
    import datetime as dt

    from planner.cli import spans

    for now, first in ((dt.datetime(2026, 12, 8, 1, 0, tzinfo=dt.timezone.utc), "2026-12-07"),
                       (dt.datetime(2026, 12, 8, 9, 0, tzinfo=dt.timezone.utc), "2026-12-08")):
        monkeypatch.setattr(spans, "now", lambda now=now: now)
        code, out, err = run(["nights", "--site", str(SAMPLE_SITE), "--days", "1", "--format", "csv"], capsys)
        assert code == 0, err
        assert pd.read_csv(io.StringIO(out))["night"].tolist() == [first]
