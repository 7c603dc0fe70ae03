"""Survey-scale events: chunks, Parquet files, Dask, equal to the one-table path row by row.

The reference of every comparison here is the one-table (in-memory) path of the same engine: the
``events`` command's own CSV output, or :func:`planner.survey.events_table` on the whole
catalogue. The catalogue is the demo one (invented targets) made larger by copies under new
invented names with shifted coordinates; none of its values is an expected value.
"""

import io
import json
import os

import distributed  # noqa: F401  (a declared dependency: this file fails, never skips, without it)
import pandas as pd
import pytest

from conftest import REPO, SAMPLE_TARGETS
import planner
from planner import cli, survey
from planner.cli.progress import ProgressBar
from planner.inputs import catalogue
from planner.inputs.site import read_site

SITE = REPO / "sample_targets" / "site.toml"
FORMATS = {"bjd_tdb": ".6f", "sigma_min": ".2f", "duration_h": ".2f", "alt_deg": ".1f", "moon_sep_deg": ".1f",
           "observable_fraction": ".2f"}


def larger_catalogue(copies=6):
    """The demo catalogue repeated ``copies`` times (new names, RA shifted by 40 deg a copy), as CSV text."""
    raw = pd.read_csv(SAMPLE_TARGETS, dtype=str, keep_default_na=False, comment="#")
    t = catalogue.read_catalogue(SAMPLE_TARGETS)
    parts = []
    for k in range(copies):
        part = raw.copy()
        part["name"] = part["name"] + f" copy {k}"
        part["ra"] = [f"{(r + 40.0 * k) % 360.0!r}" for r in t["ra_deg"]]
        part["dec"] = [f"{d!r}" for d in t["dec_deg"]]
        parts.append(part)
    return pd.concat(parts, ignore_index=True)


@pytest.fixture(scope="module")
def big_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("survey") / "survey.csv"
    larger_catalogue().to_csv(path, index=False)
    return path


def one_table_job(site=True):
    from planner.cli import spans

    start, end = spans.span_utc("2026-12-07", 20, "Europe/Madrid")
    return survey.make_job(start, end, site=read_site(SITE) if site else None, tz="Europe/Madrid")


@pytest.mark.parametrize("chunk_rows", [1, 5, 7, 1000])
def test_chunks_equal_the_one_table_path(big_csv, chunk_rows):
    targets = catalogue.read_catalogue(big_csv)
    job = one_table_job()
    whole = survey.events_table(targets, job)
    assert len(whole) > 500 and whole["observable_fraction"].max() > 0
    chunked = survey.collect(targets, job, chunk_rows=chunk_rows)
    pd.testing.assert_frame_equal(chunked, whole)


def run(args, capsys):
    code = cli.main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def read_chunks(folder):
    meta = json.loads((folder / "run.json").read_text())
    frames = [pd.read_parquet(folder / c["file"]) for c in meta["chunks"]]
    return meta, survey.merge_chunks(frames)


def test_cli_parquet_run_equals_cli_csv_row_for_row(big_csv, tmp_path, capsys):
    common = ["events", big_csv, "--start", "2026-12-07", "--days", "20", "--site", SITE]
    code, out, _ = run(common + ["--format", "csv"], capsys)
    assert code == 0
    code, _, err = run(common + ["--format", "parquet", "--out", tmp_path / "run", "--chunk-rows", "4"], capsys)
    assert code == 0, err
    meta, table = read_chunks(tmp_path / "run")
    n_targets = meta["elements_source"]["targets"]
    assert meta["complete"] is True and meta["chunk_rows"] == 4 and len(meta["chunks"]) == -(-n_targets // 4) and len(meta["elements_source"]["sha256"]) == 64
    assert meta["site"]["name"] and meta["columns"]["bjd_tdb"] == "d (BJD_TDB)"
    assert sum(c["rows"] for c in meta["chunks"]) == len(table)
    from planner.outputs.tables import render

    assert render(table, "csv", FORMATS) == out


def test_dask_local_cluster_of_two_workers_equals_single_process(big_csv):
    targets = catalogue.read_catalogue(big_csv)
    job = one_table_job()
    single = survey.collect(targets, job, chunk_rows=5)
    client = survey.connect("local:2")
    try:
        assert len(client.scheduler_info()["workers"]) == 2
        on_dask = survey.collect(targets, job, chunk_rows=5, client=client)
    finally:
        survey.close(client)
    pd.testing.assert_frame_equal(on_dask, single)


def test_unreachable_scheduler_is_one_line_and_exit_2(big_csv, tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(survey, "CONNECT_TIMEOUT_S", 2)
    out_dir = tmp_path / "never"
    code, out, err = run(["events", big_csv, "--start", "2026-12-07", "--days", "5", "--format", "parquet",
                          "--out", out_dir, "--dask", "tcp://127.0.0.1:9"], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("periplan: error: --dask cannot reach the Dask scheduler")
    assert "Traceback" not in err and not out_dir.exists()


def test_interrupted_run_leaves_complete_chunks_and_force_replaces_them(big_csv, tmp_path, capsys, monkeypatch):
    out_dir = tmp_path / "run"
    args = ["events", big_csv, "--start", "2026-12-07", "--days", "10", "--format", "parquet", "--out", out_dir,
            "--chunk-rows", "6"]
    real = survey.events_table
    calls = []

    def interrupted(targets, job):
        calls.append(1)
        if len(calls) == 3:
            raise KeyboardInterrupt
        return real(targets, job)

    monkeypatch.setattr(survey, "events_table", interrupted)
    code, _, err = run(args, capsys)
    n_chunks = -(-len(planner.read_catalogue(big_csv)) // 6)
    assert code == 130 and f"interrupted after 2 of {n_chunks} chunks" in err
    names = sorted(os.listdir(out_dir))
    assert names == ["events-00000.parquet", "events-00001.parquet", "run.json"]  # no partial files
    assert json.loads((out_dir / "run.json").read_text())["complete"] is False
    for name in names[:2]:
        assert len(pd.read_parquet(out_dir / name)) > 0
    monkeypatch.setattr(survey, "events_table", real)
    code, _, err = run(args, capsys)
    assert code == 2 and "add --force" in err
    code, _, err = run(args + ["--force"], capsys)
    assert code == 0
    meta, table = read_chunks(out_dir)
    assert meta["complete"] is True and len(meta["chunks"]) == n_chunks
    assert len(os.listdir(out_dir)) == n_chunks + 1  # the chunks and run.json
    code, out, _ = run(args[:6] + ["--format", "csv"], capsys)
    assert render_csv(table) == out


def render_csv(table):
    from planner.outputs.tables import render

    return render(table, "csv", FORMATS)


def test_parquet_catalogue_gives_the_csv_catalogue(tmp_path):
    # pandas' own CSV reader makes the typed columns (floats, text) a Parquet export would have
    raw = pd.read_csv(SAMPLE_TARGETS, comment="#")
    path = tmp_path / "targets.parquet"
    raw.to_parquet(path, index=False)
    from planner.inputs.parquet_catalogue import read_catalogue_file

    pd.testing.assert_frame_equal(read_catalogue_file(path), catalogue.read_catalogue(SAMPLE_TARGETS))


def test_parquet_catalogue_with_wrong_types_reports_row_and_column(tmp_path, capsys):
    raw = pd.read_csv(SAMPLE_TARGETS, comment="#")
    raw["e"] = raw["e"].astype(object)
    raw.loc[2, "e"] = "abc"  # text in a numeric column: third record, spreadsheet row 4
    raw["e"] = raw["e"].astype(str).replace("nan", "")
    raw["tc"] = pd.Timestamp("2026-01-01")  # a type that cannot hold an epoch
    path = tmp_path / "typed.parquet"
    raw.to_parquet(path, index=False)
    csv_path = tmp_path / "typed.csv"
    raw.drop(columns=["tc"]).to_csv(csv_path, index=False)
    code, _, err = run(["events", path, "--start", "2026-12-07", "--days", "5"], capsys)
    assert code == 2 and "Traceback" not in err
    assert "periplan: error: typed.parquet, row 2, column tc: Parquet type timestamp" in err
    raw = raw.drop(columns=["tc"])
    raw.to_parquet(path, index=False)
    code, _, err_parquet = run(["events", path, "--start", "2026-12-07", "--days", "5"], capsys)
    code_csv, _, err_csv = run(["events", csv_path, "--start", "2026-12-07", "--days", "5"], capsys)
    assert code == code_csv == 2
    assert "typed.parquet, row 4, column e:" in err_parquet
    assert err_parquet.replace("typed.parquet", "typed.csv") == err_csv


def test_progress_bar_counts_chunks_rate_and_time_left():
    stream = io.StringIO()
    now = [0.0]
    bar = ProgressBar(10, stream=stream, enabled=True, unit="chunks", clock=lambda: now[0])
    for _ in range(4):
        now[0] += 2.0
        bar("chunk")
    last = stream.getvalue().split("\r")[-1]
    assert "4/10 chunks" in last and "0.5 chunks/s" in last and "12 s left" in last
    bar.done()
    assert stream.getvalue().endswith("\r")


def test_progress_bar_silent_when_not_a_terminal():
    stream = io.StringIO()  # isatty() is False
    now = [0.0]
    bar = ProgressBar(3, stream=stream, unit="chunks", clock=lambda: now[0])
    for _ in range(3):
        now[0] += 10.0
        bar("chunk")
    bar.done()
    assert stream.getvalue() == ""


def test_streamed_run_warns_of_targets_that_never_rise_like_the_one_table_run(tmp_path, capsys):
    # dec -85 deg never climbs above -37 deg at latitude 37.6 N (90 - 37.6 - 85 = -32.6 deg max
    # altitude): geometry of the meridian, no outside value needed
    raw = pd.read_csv(SAMPLE_TARGETS, comment="#", dtype=str, keep_default_na=False)
    raw.loc[0, "dec"] = "-85.0"
    path = tmp_path / "south.csv"
    raw.to_csv(path, index=False)
    common = ["events", path, "--start", "2026-12-07", "--days", "5", "--site", SITE]
    code, _, err_table = run(common + ["--format", "csv"], capsys)
    code_s, _, err_stream = run(common + ["--format", "parquet", "--out", tmp_path / "run"], capsys)
    assert code == code_s == 0
    warning = [ln for ln in err_table.splitlines() if "never rises" in ln]
    assert len(warning) == 1 and warning == [ln for ln in err_stream.splitlines() if "never rises" in ln]


def test_cli_dask_local_run_prints_what_the_one_table_run_prints(capsys):
    # the command line path on a local cluster: same CSV, and Dask's own start/stop log stays quiet
    common = ["events", SAMPLE_TARGETS, "--start", "2026-12-07", "--days", "10", "--format", "csv"]
    code, out, _ = run(common, capsys)
    code_d, out_d, err_d = run(common + ["--dask", "local:2", "--chunk-rows", "2"], capsys)
    assert code == code_d == 0
    assert out_d == out
    assert err_d == ""


def test_unreadable_parquet_catalogue_is_one_line_and_exit_2(tmp_path, capsys):
    path = tmp_path / "broken.parquet"
    path.write_bytes(b"PAR1 this is not really a Parquet file")
    code, out, err = run(["events", path, "--start", "2026-12-07", "--days", "5"], capsys)
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("periplan: error: broken.parquet: not a readable Parquet file")


def test_chunked_terminal_table_prints_what_the_one_table_run_prints(capsys):
    common = ["events", SAMPLE_TARGETS, "--start", "2026-12-07", "--days", "10"]
    one = run(common, capsys)
    chunked = run(common + ["--chunk-rows", "2"], capsys)
    assert one[0] == chunked[0] == 0
    assert chunked[1] == one[1] and chunked[2] == one[2]
