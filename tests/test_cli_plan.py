"""``periplan plan`` and ``periplan demo`` end to end: files, their agreement, safety of outputs."""

import filecmp
import io
import os
import socket

import numpy as np
import pandas as pd
import pytest
from astropy.time import Time

from conftest import REPO, SAMPLE_TARGETS
from planner import cli
from planner.outputs import plan_folder

SITE = REPO / "sample_targets" / "site.toml"
START = "2026-12-07"


def run(args, capsys):
    code = cli.main(args)
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("plan") / "week"
    assert cli.main(["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--start", START, "--nights", "7",
                     "--out", str(out)]) == 0
    return out


def test_demo_data_in_the_package_is_the_sample_scenario():
    assert filecmp.cmp(SAMPLE_TARGETS, REPO / "planner" / "data" / "demo_targets.csv", shallow=False)
    assert filecmp.cmp(SITE, REPO / "planner" / "data" / "demo_site.toml", shallow=False)


def test_files_written(demo_dir):
    names = set(os.listdir(demo_dir))
    nights = [f"2026-12-{d:02d}" for d in range(7, 14)]
    expected = {"schedule.csv", "plan.ics", "week.png", "summary.txt"}
    expected |= {f"night-{n}.{ext}" for n in nights for ext in ("txt", "html")}
    assert expected <= names
    assert not [n for n in names if n.startswith(".periplan-")]  # no staging left behind
    for n in names:
        assert (demo_dir / n).stat().st_size > 0
    png = (demo_dir / "week.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"


def test_schedule_blocks_do_not_overlap_and_hold_their_events(demo_dir):
    sched = pd.read_csv(demo_dir / "schedule.csv")
    for col in ("night", "start_utc", "end_utc", "start_local", "end_local", "target", "event", "event_utc",
                "score", "request", "covers", "not_covered", "t1_utc", "t4_utc", "alt_low_deg", "alt_event_deg",
                "airmass", "moon_sep_deg", "notes"):
        assert col in sched.columns
    start = Time(list(sched.start_utc.str.rstrip("Z")), scale="utc").jd
    end = Time(list(sched.end_utc.str.rstrip("Z")), scale="utc").jd
    overhead_d = 10 / 1440  # the default setup/slew time
    for night, rows in sched.assign(s=start, e=end).groupby("night"):
        rows = rows.sort_values("s")
        assert np.all(rows.s.to_numpy()[1:] >= rows.e.to_numpy()[:-1] + overhead_d - 1.5 / 86400)
    # a series block that says it covers the mid-event holds the event moment
    mid = sched[(sched.request == "series") & sched.covers.fillna("").str.contains("mid|T1-T4")]
    ev = Time(list(mid.event_utc.str.rstrip("Z")), scale="utc").jd
    assert len(mid) and np.all((ev >= start[mid.index] - 1 / 86400) & (ev <= end[mid.index] + 1 / 86400))
    # an RV visit is a short block
    visits = sched[sched.request.isin(["rv_visit", "rv_sequence"])]
    assert len(visits) and np.all((end - start)[visits.index] * 24 <= 1.0 + 1e-6)
    # the altitude limit of the site (30 deg) holds through every block
    assert (sched["alt_low_deg"] >= 30 - 0.05).all()


def test_event_times_agree_with_periplan_events(demo_dir, capsys):
    import datetime as dt

    import planner
    from planner.pipeline import EVENT_MARGIN_D
    from planner.scheduling.requests import request_reach_d

    sched = pd.read_csv(demo_dir / "schedule.csv")
    # a block may serve an event before the nights whose RV window runs on into them (a
    # periastron swing of a mildly eccentric orbit lasts days): list the events from as far back
    reach_days = int(np.ceil(EVENT_MARGIN_D + request_reach_d(planner.read_catalogue(SAMPLE_TARGETS)).max()))
    first = (dt.date.fromisoformat(START) - dt.timedelta(days=reach_days)).isoformat()
    code, out, _ = run(["events", str(SAMPLE_TARGETS), "--start", first, "--days", str(8 + reach_days),
                        "--format", "csv"], capsys)
    events = pd.read_csv(io.StringIO(out))
    # a wanted orbital phase is a request, not an event of `periplan events`
    # (tests/test_phase_requests.py checks its times)
    fixed = sched[(sched.kind == "fixed") & ~sched.event.str.startswith("phase_")]
    assert len(fixed) < (sched.kind == "fixed").sum()  # the demo's Lantisca-4 asks for phase 0.25
    merged = fixed.merge(events, left_on=["target", "event", "event_utc"], right_on=["target", "event", "utc"])
    assert len(merged) == len(fixed)


def test_calendar_has_one_event_per_block(demo_dir):
    import icalendar

    cal = icalendar.Calendar.from_ical((demo_dir / "plan.ics").read_bytes())
    vevents = [c for c in cal.walk() if c.name == "VEVENT"]
    sched = pd.read_csv(demo_dir / "schedule.csv")
    assert len(vevents) == len(sched)
    starts = sorted(v.decoded("dtstart").strftime("%Y-%m-%dT%H:%M:%SZ") for v in vevents)
    assert starts == sorted(sched.start_utc)


def test_sheets_carry_the_caution(demo_dir):
    for name in os.listdir(demo_dir):
        if name.startswith("night-"):
            text = (demo_dir / name).read_text()
            assert "Never point the telescope at or near the Sun" in text
            assert "local regulations" in text


def test_existing_plan_is_not_overwritten_without_force(demo_dir, capsys):
    before = {n: (demo_dir / n).stat().st_mtime_ns for n in os.listdir(demo_dir)}
    code, out, err = run(["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--start", START, "--nights", "2",
                          "--out", str(demo_dir)], capsys)
    assert code == 2 and "already holds a plan" in err and "--force" in err
    assert before == {n: (demo_dir / n).stat().st_mtime_ns for n in os.listdir(demo_dir)}


def test_force_replaces_and_interrupted_run_keeps_previous(tmp_path, monkeypatch, capsys):
    out = tmp_path / "p"
    args = ["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--start", START, "--nights", "2", "--out", str(out)]
    assert run(args, capsys)[0] == 0
    original = (out / "schedule.csv").read_bytes()
    def interrupted(*a, **k):  # Ctrl-C while the charts are being drawn
        raise KeyboardInterrupt

    monkeypatch.setattr(plan_folder, "_draw", interrupted)
    code, _, err = run(args + ["--force", "--nights", "3"], capsys)
    assert code == 130 and "nothing was written" in err
    assert (out / "schedule.csv").read_bytes() == original
    assert not [n for n in os.listdir(out) if n.startswith(".periplan-")]
    monkeypatch.undo()
    assert run(args + ["--force", "--nights", "3"], capsys)[0] == 0
    assert (out / "schedule.csv").read_bytes() != original


def test_bad_site_stops_before_writing(tmp_path, capsys):
    site = tmp_path / "bad.toml"
    site.write_text('name = "X"\nlatitude_deg = 95\nlongitude_deg = 0\nelevation_m = 0\ntimezone = "UTC"\n')
    out = tmp_path / "never"
    code, _, err = run(["plan", str(SAMPLE_TARGETS), "--site", str(site), "--out", str(out)], capsys)
    assert code == 2 and "bad.toml" in err and "latitude_deg" in err
    assert not out.exists()


def test_week_without_darkness_says_so(tmp_path, capsys):
    # 78.2 N in mid-June: the Sun never sets (polar day), so there is no dark time at all.
    site = tmp_path / "arctic.toml"
    site.write_text('name = "High Arctic test site"\nlatitude_deg = 78.2\nlongitude_deg = 15.6\n'
                    'elevation_m = 10\ntimezone = "Arctic/Longyearbyen"\n')
    out = tmp_path / "summer"
    code, stdout, _ = run(["plan", str(SAMPLE_TARGETS), "--site", str(site), "--start", "2027-06-15",
                           "--nights", "3", "--out", str(out)], capsys)
    assert code == 0
    # said once for the plan (and once per night with its darkness), not twice
    assert sum("othing could be scheduled" in ln or "othing can be scheduled" in ln for ln in stdout.splitlines()) == 1
    assert stdout.count("no astronomical darkness") == 3
    assert len(pd.read_csv(out / "schedule.csv")) == 0


def test_whole_flow_runs_offline(tmp_path, monkeypatch, capsys):
    # Any attempt to open a network connection fails the test.
    def refuse(*args, **kwargs):
        raise AssertionError(f"network access attempted: {args}")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    code, out, err = run(["demo", "--start", START, "--nights", "2", "--out", str(tmp_path / "d")], capsys)
    assert code == 0, err
    assert "files in" in out
    # the terminal summary reads in a 100-column terminal and closes with the safety caution
    assert max(len(ln) for ln in out.splitlines() if "files in" not in ln) <= 100  # that one names the folder
    assert out.rstrip().endswith("the observatory's own safety rules and local regulations come first.")
    assert "Never point the telescope at or near the Sun" in out


def test_charts_drawn_in_parallel_equal_sequential(tmp_path):
    from planner import pipeline
    from planner.inputs import catalogue, site

    targets = catalogue.read_catalogue(SAMPLE_TARGETS)
    week = pipeline.make_plan(targets, site.read_site(SITE), START, 3)
    a = plan_folder.write_plan(week, tmp_path / "one", workers=1)
    b = plan_folder.write_plan(week, tmp_path / "two", workers=2)
    assert [os.path.basename(p) for p in a] == [os.path.basename(p) for p in b]
    for pa, pb in zip(a, b):
        if not pa.endswith(".ics"):  # the calendar carries the time it was written (DTSTAMP)
            assert filecmp.cmp(pa, pb, shallow=False), pa


def _dawn(site, evening_utc, which):
    """astroplan's end of the site's darkness after ``evening_utc`` (an aware UTC datetime)."""
    import datetime as dt

    from astroplan import Observer

    observer = Observer(location=site.earth_location(), pressure=0)  # pressure 0: airless geometry
    find = {-18.0: observer.twilight_morning_astronomical, -12.0: observer.twilight_morning_nautical}[which]
    return find(Time(evening_utc), which="next").to_datetime(timezone=dt.timezone.utc)


#: Distance of the test moments from the reference dawn: well beyond the 30 s by which our night
#: times and astroplan's may differ (tests/test_night.py).
DAWN_MARGIN_MIN = 3


@pytest.mark.parametrize("darkness, sun_alt_deg", [("astronomical", -18.0), ("nautical", -12.0)])
def test_default_first_night_moves_on_at_the_end_of_darkness(darkness, sun_alt_deg):
    import datetime as dt

    from planner.inputs.site import parse_site
    from planner.pipeline import first_night_for

    text = SITE.read_text().replace('darkness = "astronomical"', f'darkness = "{darkness}"')
    site = parse_site(text, "site.toml")
    assert site.darkness_sun_alt_deg == sun_alt_deg
    # reference: astroplan's morning twilight of the night of 2026-12-07 at the demo site
    dawn = _dawn(site, dt.datetime(2026, 12, 7, 20, 0, tzinfo=dt.timezone.utc), sun_alt_deg)
    margin = dt.timedelta(minutes=DAWN_MARGIN_MIN)
    assert first_night_for(None, site, dawn - margin) == dt.date(2026, 12, 7)
    assert first_night_for(None, site, dawn + margin) == dt.date(2026, 12, 8)
    # Europe/Madrid is UTC+01:00 in December (IANA tz database): 02:00 local is still the night
    # of the 7th, 20:00 local the night of the 8th
    madrid = dt.timezone(dt.timedelta(hours=1))
    assert first_night_for(None, site, dt.datetime(2026, 12, 8, 2, 0, tzinfo=madrid)) == dt.date(2026, 12, 7)
    assert first_night_for(None, site, dt.datetime(2026, 12, 8, 20, 0, tzinfo=madrid)) == dt.date(2026, 12, 8)
    assert first_night_for("2026-12-01", site) == dt.date(2026, 12, 1)


def test_night_under_way_says_how_many_blocks_are_past(tmp_path, monkeypatch, capsys):
    import datetime as dt

    from planner.cli import spans

    now = dt.datetime(2026, 12, 8, 1, 0, tzinfo=dt.timezone.utc)  # 02:00 in Madrid (UTC+01:00)
    monkeypatch.setattr(spans, "now", lambda: now)
    out = tmp_path / "tonight"
    code, _, err = run(["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--nights", "1", "--out", str(out)],
                       capsys)
    assert code == 0, err
    sched = pd.read_csv(out / "schedule.csv")
    assert set(sched.night) == {"2026-12-07"}
    began = Time(list(sched.start_utc.str.rstrip("Z")), scale="utc") < Time(now)
    assert 0 < began.sum() < len(sched)  # some blocks of this plan lie before 02:00, some after
    block = "block" if began.sum() == 1 else "blocks"
    assert (f"periplan: note: the night of 2026-12-07 is under way: {began.sum()} {block} of its {len(sched)} "
            "began before now (02:00 local time)") in err


def test_one_night_plan_counts_in_the_singular(tmp_path, capsys):
    code, out, err = run(["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--start", START, "--nights", "1",
                          "--out", str(tmp_path / "one")], capsys)
    assert code == 0, err
    assert "1 nights" not in out and "on 1 night at" in out
    last = [ln for ln in out.splitlines() if " at Altozano Ridge Observatory; " in ln]
    assert len(last) == 1 and " files in " in last[0]


def test_a_target_with_no_event_in_the_nights_is_named_once(tmp_path, capsys):
    # HD 80606 b: P = 111.4367 d, Tp = 2454424.857 BJD_TDB (Winn et al. 2009, ApJ 703, 2091; from
    # memory); its periastron passages are Tp + n P, so none falls in 2 nights from 2026-12-07
    # (checked here by that arithmetic). WASP-12 b (P = 1.09142 d, Hebb et al. 2009, from memory;
    # duration_h given) transits every night, so it has events and is not named.
    tp, period = 2454424.857, 111.4367
    start = Time(f"{START}T12:00:00", scale="utc").jd
    following = tp + np.ceil((start - tp) / period) * period
    assert following > start + 3
    cat = tmp_path / "two.csv"
    cat.write_text("name,ra,dec,period_d,e,omega_deg,tp,tc,duration_h,events,k_ms\n"
                   f"HD 80606 b,140.6608,50.6036,{period},0.9332,300.77,{tp},,,periastron,474\n"
                   "WASP-12 b,97.6366,29.6723,1.09142,0,,,2457010.512,3.0,,\n", encoding="utf-8")
    code, out, err = run(["plan", str(cat), "--site", str(SITE), "--start", START, "--nights", "2",
                          "--out", str(tmp_path / "p")], capsys)
    assert code == 0, err
    notes = [ln for ln in err.splitlines() if "no event in these nights" in ln]
    assert len(notes) == 1
    assert "1 target has no event in these nights (HD 80606 b)" in notes[0]
    assert "WASP-12 b" not in notes[0] and f"periplan events {cat} --start {START} --days 365" in notes[0]
