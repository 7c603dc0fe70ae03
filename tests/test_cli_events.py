"""``periplan events`` end to end: output columns, time zones, and one-line errors with exit 2."""

import io
import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from astropy.time import Time

from conftest import REPO, SAMPLE_TARGETS
from planner import cli


def run(args, capsys):
    code = cli.main(args)
    out, err = capsys.readouterr()
    return code, out, err


def test_csv_columns_sorted_and_times_consistent(capsys):
    code, out, _ = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "30",
                        "--tz", "Europe/Madrid", "--format", "csv"], capsys)
    assert code == 0
    table = pd.read_csv(io.StringIO(out))
    for col in ("target", "event", "bjd_tdb", "utc", "local", "sigma_min"):
        assert col in table.columns
    assert table.utc.str.endswith("Z").all()
    t = Time(list(table.utc.str.rstrip("Z")), format="isot", scale="utc")
    # sorted by BJD_TDB: in UTC two targets' light times (each within +-499 s, Eastman et al. 2010)
    # can reorder events closer than 998 s
    assert np.all(np.diff(t.jd) >= -998 / 86400)
    # local midnight start: 2026-12-07 00:00 CET = 2026-12-06 23:00 UTC; 30 days later
    assert t.min() >= Time("2026-12-06T23:00:00", scale="utc")
    assert t.max() < Time("2027-01-05T23:00:00", scale="utc")
    # every local time is the UTC time plus one hour in winter (CET, tz database)
    local = pd.to_datetime(table.local, utc=True)
    utc = pd.to_datetime(table.utc, utc=True)
    assert (local == utc).all()
    assert table.local.str.endswith("+01:00").all()
    assert set(table.event) <= {"periastron", "apastron", "primary_conjunction", "secondary_conjunction",
                                "rv_max", "rv_min", "periodic"}


def test_json_and_kinds_filter(capsys):
    code, out, _ = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "120",
                        "--kinds", "periastron", "--format", "json"], capsys)
    assert code == 0
    rows = json.loads(out)
    assert rows and {r["event"] for r in rows} == {"periastron"}
    assert all(r["sigma_min"] > 0 for r in rows)


@pytest.mark.parametrize("args, message", [
    (["--start", "2026-13-01"], "--start '2026-13-01' is not a date; expected YYYY-MM-DD"),
    (["--start", "2026-12-01", "--tz", "Mars/Olympus"], "unknown time zone 'Mars/Olympus'"),
    (["--start", "2026-12-01", "--days", "0"], "--days must be positive"),
])
def test_bad_arguments_give_one_line_and_exit_2(args, message, capsys):
    code, out, err = run(["events", str(SAMPLE_TARGETS)] + args, capsys)
    assert code == 2 and out == ""
    assert err.strip().startswith("periplan: error:") and message in err
    assert len(err.strip().splitlines()) == 1


def test_bad_catalogue_reports_every_row_without_traceback(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("name,ra,dec,period_d,e,omega_deg,tc\nA,10,20,3,1.5,10,2460000\nB,10,20,0,0.1,10,2460000\n")
    proc = subprocess.run([sys.executable, "-m", "planner", "events", str(bad), "--start", "2026-12-07"],
                          capture_output=True, text=True, cwd=REPO)
    assert proc.returncode == 2 and proc.stdout == ""
    assert "Traceback" not in proc.stderr
    assert proc.stderr.splitlines() == [
        "periplan: error: bad.csv, row 2, column e: 1.5 is not a bound orbit; eccentricity must satisfy 0 <= e < 1",
        "periplan: error: bad.csv, row 3, column period_d: 0 must be positive",
    ]


def test_missing_file(capsys):
    code, _, err = run(["events", "no-such.csv", "--start", "2026-12-07"], capsys)
    assert code == 2 and "no-such.csv: no such catalogue file" in err


def _one_target_catalogue(tmp_path, dec=None):
    """The demo catalogue's first target alone (declination replaced when ``dec`` is given)."""
    lines = SAMPLE_TARGETS.read_text(encoding="utf-8").splitlines()
    header = next(i for i, ln in enumerate(lines) if ln.startswith("name,"))
    row = lines[header + 1].split(",")
    if dec is not None:
        row[2] = dec
    path = tmp_path / "one.csv"
    path.write_text("\n".join([lines[header], ",".join(row)]) + "\n", encoding="utf-8")
    return path


def test_summary_line_counts_with_plurals_and_the_catalogue(tmp_path, capsys):
    one = _one_target_catalogue(tmp_path)
    # one day holds no event of a 111-day orbit here: "0 events of 1 target", not "of 0 targets"
    code, out, err = run(["events", str(one), "--start", "2026-12-07", "--days", "1"], capsys)
    assert code == 0 and "0 events of 1 target from" in err
    code, out, err = run(["events", str(one), "--start", "2026-12-07", "--days", "400"], capsys)
    assert code == 0 and " events of 1 target from" in err and "targets" not in err
    code, out, err = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "1",
                          "--kinds", "periastron", "--format", "csv"], capsys)
    shown = pd.read_csv(io.StringIO(out))
    assert code == 0 and len(shown) == 1  # the one line below is printed with the table format only
    code, out, err = run(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "1",
                          "--kinds", "periastron"], capsys)
    assert code == 0 and "1 event of 1 of 7 targets from" in err


def test_visible_filter_does_not_claim_hidden_events_are_listed(tmp_path, capsys):
    # -70 deg never rises above 30 deg at latitude 37.6 N (culmination 90 - 37.6 - 70 < 0)
    south = _one_target_catalogue(tmp_path, dec="-70:00:00")
    site = str(REPO / "sample_targets" / "site.toml")
    code, out, err = run(["events", str(south), "--start", "2026-12-07", "--days", "400", "--site", site,
                          "--visible", "0.5"], capsys)
    assert code == 0
    warning = [ln for ln in err.splitlines() if "never rises" in ln]
    assert len(warning) == 1 and "left out by --visible 0.5" in warning[0]
    assert "listed with observable_fraction 0" not in err
    code, out, err = run(["events", str(south), "--start", "2026-12-07", "--days", "400", "--site", site], capsys)
    assert code == 0 and "listed with observable_fraction 0" in err


def test_without_start_the_span_begins_today_at_local_midnight(monkeypatch, capsys):
    # 23:30 UTC on 2026-12-07 is 00:30 on the 8th in Madrid: the span starts at Madrid's midnight
    # of the 8th (23:00 UTC of the 7th) with --tz, at 00:00 UTC of the 7th without
    import datetime as dt

    from planner.cli import spans

    monkeypatch.setattr(spans, "now", lambda: dt.datetime(2026, 12, 7, 23, 30, tzinfo=dt.timezone.utc))
    for extra, first in ((["--tz", "Europe/Madrid"], "2026-12-07T23:00Z"), ([], "2026-12-07T00:00Z")):
        code, _, err = run(["events", str(SAMPLE_TARGETS), "--days", "2", *extra], capsys)
        assert code == 0, err
        assert f"from {first} to " in err
