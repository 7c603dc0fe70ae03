"""Local-time axes of the charts follow the zone's rules at each tick, across daylight-saving changes.

Reference: the IANA time-zone database through Python's ``zoneinfo`` (Europe/Madrid: summer
time ends 2026-10-25 at 01:00 UTC, clocks 03:00 CEST -> 02:00 CET; America/Santiago: summer
time begins 2026-09-06 at 04:00 UTC, clocks 00:00 -> 01:00), each UTC instant converted by
``datetime.astimezone``.
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

from planner.inputs.site import Site
from planner.outputs import charts
from planner.scheduling import schedule
from planner.sky.night import night_table
from planner.timescales import clock

UNIX_EPOCH_JD = 2440587.5  # 1970-01-01 00:00 UTC (Meeus, Astronomical Algorithms, 2nd ed., ch. 7)
#: Tick positions are instants placed on quarter hours of UTC and drawn as floats: 1e-6 h (4 ms)
#: is rounding, far below a pixel.
TICK_TOL_H = 1e-6


def local(jd_utc, tz):
    seconds = round((float(jd_utc) - UNIX_EPOCH_JD) * 86400.0, 3)
    return dt.datetime.fromtimestamp(seconds, tz=dt.timezone.utc).astimezone(ZoneInfo(tz))


def site(lat, lon, tz):
    return Site(name="Altozano Ridge test", latitude_deg=lat, longitude_deg=lon, elevation_m=1650.0, timezone=tz)


@pytest.mark.parametrize("lat, lon, tz, label", [(37.62, -3.12, "Europe/Madrid", "2026-10-24"),
                                                 (-30.2, -70.8, "America/Santiago", "2026-09-05")])
def test_night_chart_local_ticks_match_zoneinfo_across_a_clock_change(lat, lon, tz, label):
    s = site(lat, lon, tz)
    night = night_table(s, dt.date.fromisoformat(label), 1).iloc[0]
    t = np.linspace(night["sunset_jd_utc"] - 0.02, night["sunrise_jd_utc"] + 0.02, 200)
    fig = charts.night_figure(night, t, np.full((1, t.size), 50.0), ["Tarn-3"],
                              pd.DataFrame(columns=list(schedule.SCHEDULE_COLUMNS)), 30.0, tz=tz)
    top = fig.axes[0].child_axes[0] if fig.axes[0].child_axes else None
    assert top is not None
    ref = clock.date_to_jd_utc(label)
    ticks = top.get_xticks()
    labels = [x.get_text() for x in top.get_xticklabels()]
    offsets = set()
    for x, text in zip(ticks, labels):
        moment = local(ref + x / 24.0, tz)
        # each tick sits where the local clock reads the whole hour it is labelled with
        assert (moment.minute, moment.second) == (0, 0) and f"{moment.hour:02d}" == text[:2]
        # the first tick after the change names the zone's new abbreviation (zoneinfo's tzname)
        assert text[3:] == ("" if not offsets or moment.utcoffset() in offsets else moment.tzname())
        offsets.add(moment.utcoffset())
    assert len(offsets) == 2  # the night spans the change: ticks on both sides of it
    assert len(ticks) >= 6  # a tick every 2 h through a night of more than 12 h


def test_week_chart_bars_sit_at_the_local_clock_times_after_the_change():
    tz = "Europe/Madrid"
    s = site(37.62, -3.12, tz)
    nights = night_table(s, dt.date(2026, 10, 23), 3)
    row = {c: np.nan for c in schedule.SCHEDULE_COLUMNS}
    # 2026-10-25 04:00-05:30 UTC, after the change: 05:00-06:30 CET (zoneinfo), night of the 24th
    j = clock.date_to_jd_utc("2026-10-25")
    row.update(night="2026-10-24", start_jd_utc=j + 4 / 24, end_jd_utc=j + 5.5 / 24, target="Tarn-3",
               target_index=0, event="periastron", label="periastron", kind="fixed", score=1.0, notes="")
    fig = charts.week_figure(pd.DataFrame([row])[list(schedule.SCHEDULE_COLUMNS)], nights, tz=tz)
    bar = [c for c in fig.axes[0].collections if c.get_gid() == "block"]
    assert len(bar) == 1
    xs = bar[0].get_paths()[0].vertices[:, 0]
    start, end = local(j + 4 / 24, tz), local(j + 5.5 / 24, tz)
    assert (start.hour, start.minute, end.hour, end.minute) == (5, 0, 6, 30)
    assert abs(xs.min() - (24 + 5.0)) <= TICK_TOL_H and abs(xs.max() - (24 + 6.5)) <= TICK_TOL_H


def test_local_clock_hours_and_whole_hours_against_zoneinfo():
    tz = "Europe/Madrid"
    j0 = clock.date_to_jd_utc("2026-10-24")
    jd, hours = clock.local_whole_hours(j0 + 0.75, j0 + 1.25, tz)
    # 18:00 UTC .. 06:00 UTC: local 20..02 CEST, then 02 again (CET) .. 07 CET
    assert hours == [20, 21, 22, 23, 0, 1, 2, 2, 3, 4, 5, 6, 7]
    for v, h in zip(jd, hours):
        moment = local(v, tz)
        assert (moment.hour, moment.minute) == (h, 0)
    wall = clock.local_clock_h(jd, tz, "2026-10-24")
    assert np.allclose(wall, [20, 21, 22, 23, 24, 25, 26, 26, 27, 28, 29, 30, 31], atol=TICK_TOL_H, rtol=0)
    # a half-hour zone: Asia/Kolkata is UTC+05:30 all year, so whole local hours fall on UTC :30
    jd_in, hours_in = clock.local_whole_hours(j0, j0 + 0.25, "Asia/Kolkata")
    assert hours_in[0] == 6 and abs((jd_in[0] - j0) * 24 - 0.5) <= TICK_TOL_H
