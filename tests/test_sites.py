"""Several sites in one campaign: each event instance to one site (or as many as it asks for).

Invented targets and sites (the behaviour is what is checked, not numbers): an equatorial
eclipsing binary seen from a northern and a southern site, planned together.
"""

import datetime as dt

import pandas as pd
import pytest

import planner
from planner import cli

NORTH = '''name = "North test ridge"
latitude_deg = 45.76
longitude_deg = 4.84
elevation_m = 200
timezone = "Europe/Paris"
min_altitude_deg = 25
'''
SOUTH = '''name = "South test hill"
latitude_deg = -30.17
longitude_deg = -70.80
elevation_m = 2200
timezone = "America/Santiago"
min_altitude_deg = 25
'''
CATALOGUE = ("name,ra,dec,period_d,period_err_d,e,tc,tc_err_d,duration_h,priority,events,sites\n"
             "Equator EB,04:30:00,-05:00:00,1.23456,0.000002,0,2461388.6,0.0005,2.5,3,"
             "primary_conjunction;secondary_conjunction,{sites}\n")


@pytest.fixture
def files(tmp_path):
    (tmp_path / "north.toml").write_text(NORTH)
    (tmp_path / "south.toml").write_text(SOUTH)
    return tmp_path


def campaign(files, sites=1):
    (files / "cat.csv").write_text(CATALOGUE.format(sites=sites))
    targets = planner.read_catalogue(files / "cat.csv")
    both = [planner.read_site(files / "north.toml"), planner.read_site(files / "south.toml")]
    from planner.pipeline import make_campaign

    return make_campaign(targets, both, dt.date(2026, 12, 14), 7)


def instances(plan):
    s = plan.schedule
    return set(zip(s["event"], (s["event_jd_utc"] * 1440).round()))


def test_each_event_instance_goes_to_one_site(files):
    north, south = campaign(files)
    assert len(north.schedule) and len(south.schedule)  # both sites take part
    assert not instances(north) & instances(south)
    assert set(north.schedule["site"]) == {"North test ridge"} and set(south.schedule["site"]) == {"South test hill"}
    # an instance the other site serves is not listed as unscheduled here
    for plan, other in ((north, south), (south, north)):
        un = set(zip(plan.unscheduled["event"], plan.unscheduled["event_utc"]))
        served = {(e, u) for e, u in zip(other.schedule["event"],
                                         planner.display_frame(other.schedule, None)["event_utc"])}
        assert not un & served


def test_an_event_may_ask_for_two_sites(files):
    north, south = campaign(files, sites=2)
    one = campaign(files, sites=1)
    total = len(north.schedule) + len(south.schedule)
    assert total >= len(one[0].schedule) + len(one[1].schedule)
    # one primary eclipse falls in both sites' dark time: asked for two sites, both observe it
    assert len(instances(north) & instances(south)) >= 1


def test_cli_writes_a_folder_per_site_and_one_schedule_and_calendar(files, capsys):
    (files / "cat.csv").write_text(CATALOGUE.format(sites=1))
    out = files / "plan"
    code = cli.main(["plan", str(files / "cat.csv"), "--site", str(files / "north.toml"), "--site",
                     str(files / "south.toml"), "--start", "2026-12-14", "--nights", "3", "--out", str(out)])
    assert code == 0, capsys.readouterr().err
    sched = pd.read_csv(out / "schedule.csv")
    assert set(sched["site"]) <= {"North test ridge", "South test hill"} and len(sched)
    assert (out / "plan.ics").is_file() and (out / "summary.txt").is_file()
    for folder in ("North_test_ridge", "South_test_hill"):
        assert (out / folder / "night-2026-12-14.txt").is_file()
    import icalendar

    cal = icalendar.Calendar.from_ical((out / "plan.ics").read_bytes())
    assert len([c for c in cal.walk() if c.name == "VEVENT"]) == len(sched)
    assert cli.main(["plan", str(files / "cat.csv"), "--site", str(files / "north.toml"), "--site",
                     str(files / "south.toml"), "--start", "2026-12-14", "--nights", "3", "--out", str(out)]) == 2


def test_two_sites_of_one_name_and_a_missing_site_file_are_one_line_errors(files, capsys):
    (files / "cat.csv").write_text(CATALOGUE.format(sites=1))
    base = ["plan", str(files / "cat.csv"), "--start", "2026-12-14", "--out", str(files / "p")]
    assert cli.main(base + ["--site", str(files / "north.toml"), "--site", str(files / "north.toml")]) == 2
    assert capsys.readouterr().err.strip() == ("periplan: error: two sites are both named 'North test ridge'; "
                                               "give each site file its own name")
    assert cli.main(base + ["--site", str(files / "north.toml"), "--site", str(files / "nowhere.toml")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("periplan: error: ") and "nowhere.toml" in err and len(err.splitlines()) == 1
    assert not (files / "p").exists()


def test_a_campaign_warns_of_a_target_that_never_rises_at_one_site(files, capsys):
    # A star at declination -80 culminates at 90 - 45.76 - 80 = -35.76 deg at the northern site
    # (culmination altitude 90 - |latitude - declination|), below its 25 deg limit; at the
    # southern site it culminates at 90 - 49.83 = 40.17 deg. The warning names that site and the
    # file in the campaign's folder that lists it.
    cat = files / "cat.csv"
    cat.write_text(CATALOGUE.format(sites="") + "Polar EB,10:00:00,-80:00:00,2.5,0.00001,0,2461388.2,0.001,"
                   "2.0,2,primary_conjunction,\n")
    out = files / "camp"
    assert cli.main(["plan", str(cat), "--site", str(files / "north.toml"), "--site", str(files / "south.toml"),
                     "--start", "2026-12-07", "--nights", "2", "--out", str(out)]) == 0
    err = capsys.readouterr().err
    warnings = [ln for ln in err.splitlines() if "never rises" in ln]
    assert len(warnings) == 1
    assert warnings[0] == ("periplan: warning: Polar EB never rises high enough at North test ridge: "
                           "culminates at -35.8 deg, below the 25.0 deg altitude limit")  # the site named once
    listed = [p for p in out.glob("*/unobservable.csv")]
    assert len(listed) == 1 and "Polar EB" in listed[0].read_text()
