"""Every label names the darkness the site asked for (civil, nautical, astronomical or a number).

References: the ends of civil, nautical and astronomical twilight at Sun-centre altitudes -6,
-12 and -18 deg (USNO, Almanac for Computers 1990: zenith distances 96, 102 and 108 deg); the
Sun's airless altitude from astropy (``get_body("sun")`` in ``AltAz`` with pressure 0), against
which the times printed beside the labels are checked.
"""

from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pandas as pd
import pytest

from planner import cli
from planner.inputs.site import Site
from planner.outputs import charts, sheets
from planner.scheduling import schedule
from planner.scheduling.blocks import ScheduleOptions
from planner.sky.night import darkness_name, night_table

#: Printed clock times are truncated to the minute; 5 s either side leaves room for the few
#: seconds by which two Sun ephemerides can differ at a crossing (tests/test_night.py).
CLOCK_SLACK_S = 5.0


def backyard(darkness_sun_alt_deg):
    """A site at 52 N: in late June the Sun gets to about -14.6 deg (90 - 52 - 23.4)."""
    return Site(name="Hollin Lane backyard", latitude_deg=52.0, longitude_deg=-1.5, elevation_m=90.0,
                timezone="Europe/London", darkness_sun_alt_deg=darkness_sun_alt_deg)


def sun_alt_deg(site, jd_utc):
    import astropy.units as u
    from astropy.coordinates import AltAz, get_body
    from astropy.time import Time

    t = Time(np.atleast_1d(jd_utc), format="jd", scale="utc")
    frame = AltAz(obstime=t, location=site.earth_location(), pressure=0 * u.hPa)
    return get_body("sun", t).transform_to(frame).alt.deg


def test_darkness_names_follow_the_twilight_definitions():
    # USNO, Almanac for Computers 1990: civil -6, nautical -12, astronomical -18 deg
    assert darkness_name(-6.0) == "civil darkness"
    assert darkness_name(-12.0) == "nautical darkness"
    assert darkness_name(-18.0) == "astronomical darkness"
    assert darkness_name(-15.0) == "darkness (Sun below -15 deg)"
    assert darkness_name(np.nan) == "darkness"


def test_nautical_site_sheet_says_nautical_at_the_astropy_crossing_times():
    site = backyard(-12.0)
    night = night_table(site, dt.date(2026, 6, 21), 1).iloc[0]
    text = sheets.night_sheet_text(night, pd.DataFrame(columns=list(schedule.SCHEDULE_COLUMNS)), site.timezone)
    assert "astronomical" not in text.lower() and "18 deg" not in text
    for label, evening in (("Nautical darkness begins", True), ("Nautical darkness ends", False)):
        line = next(ln for ln in text.splitlines() if ln.startswith(label))
        hh, mm = map(int, re.search(r"(\d\d):(\d\d)", line[len(label):]).groups())
        # the printed UTC minute holds the -12 deg crossing of astropy's Sun
        day = night["dark_start_jd_utc"] if evening else night["dark_end_jd_utc"]
        minute = np.floor(day - 0.5) + 0.5 + (hh * 60 + mm) / 1440.0
        if minute > day + 0.5:
            minute -= 1.0
        lo, hi = sun_alt_deg(site, [minute - CLOCK_SLACK_S / 86400, minute + (60 + CLOCK_SLACK_S) / 86400]) + 12.0
        assert (lo > 0 > hi) if evening else (lo < 0 < hi)
    html = sheets.night_sheet_html(night, pd.DataFrame(columns=list(schedule.SCHEDULE_COLUMNS)), site.timezone)
    assert "Nautical darkness begins" in html and "astronomical" not in html.lower()


@pytest.mark.parametrize("alt, name, limit", [(-18.0, "astronomical darkness", "18"),
                                               (-15.0, "darkness (Sun below -15 deg)", "15")])
def test_night_without_the_asked_darkness_names_it(alt, name, limit):
    site = backyard(alt)
    night = night_table(site, dt.date(2026, 6, 21), 1).iloc[0]
    # astropy: the Sun's lowest point this night lies between -12 and the asked altitude
    grid = np.linspace(night["sunset_jd_utc"], night["sunrise_jd_utc"], 400)
    lowest = sun_alt_deg(site, grid).min()
    assert alt < lowest < -12.0
    empty = pd.DataFrame(columns=list(schedule.SCHEDULE_COLUMNS))
    text = sheets.night_sheet_text(night, empty, site.timezone)
    assert f"No {name} this night" in text
    assert f"The Sun stays less than {limit} deg below the horizon." in text
    summary = sheets.week_summary_text(empty, pd.DataFrame([night]), site.timezone)
    assert f"no {name}" in summary
    week = charts.week_figure(empty, pd.DataFrame([night]), tz=site.timezone)
    assert f"no {name}" in [t.get_text() for t in week.axes[0].texts]


def test_chart_legend_and_block_notes_name_the_sites_darkness():
    site = backyard(-12.0)
    night = night_table(site, dt.date(2026, 3, 10), 1).iloc[0]
    t = np.linspace(night["sunset_jd_utc"], night["sunrise_jd_utc"], 50)
    fig = charts.night_figure(night, t, np.full((1, t.size), 45.0), ["Tarn-3"], pd.DataFrame(
        columns=list(schedule.SCHEDULE_COLUMNS)), 30.0, tz=site.timezone)
    dark = [p for p in fig.axes[0].patches if p.get_gid() == "dark"]
    assert [p.get_label() for p in dark] == ["nautical darkness"]
    no_dark = night.copy()
    no_dark["dark_start_jd_utc"] = no_dark["dark_end_jd_utc"] = np.nan
    row = {c: np.nan for c in schedule.SCHEDULE_COLUMNS}
    row.update(kind="fixed", start_jd_utc=night["sunset_jd_utc"] + 0.1, end_jd_utc=night["sunset_jd_utc"] + 0.15,
               observable_fraction=1.0)
    notes = schedule._notes(pd.Series(row), np.array([40.0, 41.0, 42.0]), no_dark, ScheduleOptions())
    assert "no nautical darkness this night" in notes and "astronomical" not in notes


def test_nights_command_names_the_darkness(tmp_path, capsys):
    path = tmp_path / "site.toml"
    path.write_text('name = "Hollin Lane backyard"\nlatitude_deg = 52.0\nlongitude_deg = -1.5\n'
                    'elevation_m = 90\ntimezone = "Europe/London"\ndarkness = "nautical"\n')
    assert cli.main(["nights", "--site", str(path), "--start", "2026-06-21", "--days", "1"]) == 0
    err = capsys.readouterr().err
    assert "dark = nautical darkness, Sun's centre below -12 deg" in err
