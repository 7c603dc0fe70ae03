"""``periplan season``: the months' observable events against astropy, the chart, one-line errors.

References: astropy (AltAz of the target, the Sun and the Moon at each event, ERFA, no
refraction) for what can be seen; the Gregorian calendar (2028 is a leap year: divisible by 4
and not a century) for adding months; the PNG signature (ISO/IEC 15948:2004, sec. 5.2).
"""

from __future__ import annotations

import datetime as dt
import io
import json

import numpy as np
import pandas as pd
import pytest

from conftest import REPO, SAMPLE_TARGETS
from planner import cli
from planner.inputs.catalogue import read_catalogue
from planner.inputs.site import read_site
from planner.sky import season

SITE_FILE = REPO / "sample_targets" / "site.toml"
#: A limit is judged by astropy only where the engine is not within 0.05 deg of it: the two
#: agree to an arcsecond, and the margin keeps a grazing case out.
EDGE_DEG = 0.05
#: The hour angle here uses the catalogue (mean J2000) right ascension against the apparent
#: sidereal time: precession since 2000 moves it by up to about 1.5 min of time, so 0.03 h.
EDGE_HA_H = 0.03


def test_adding_months_follows_the_calendar():
    assert season.add_months(dt.date(2027, 1, 31), 1) == dt.date(2027, 2, 28)
    assert season.add_months(dt.date(2028, 1, 31), 1) == dt.date(2028, 2, 29)  # leap year
    assert season.add_months(dt.date(2026, 12, 7), 6) == dt.date(2027, 6, 7)
    assert season.season_nights(dt.date(2026, 12, 7), 6) == 182  # 24 + 31 + 28 + 31 + 30 + 31 + 7


@pytest.fixture(scope="module")
def months():
    targets = read_catalogue(SAMPLE_TARGETS)
    site = read_site(SITE_FILE)
    table = season.season_events(targets, site, dt.date(2026, 12, 7), season.season_nights(dt.date(2026, 12, 7), 3),
                                 kinds=["periastron", "primary_conjunction", "secondary_conjunction", "rv_max"])
    return targets, site, table


def astropy_conditions(targets, site, rows):
    """(target altitude, azimuth, hour angle h, Sun altitude, Moon separation) by astropy at each event."""
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord, get_body, get_sun
    from astropy.time import Time

    t = Time(rows["jd_utc"].to_numpy(float), format="jd", scale="utc")
    loc = site.earth_location()
    frame = AltAz(obstime=t, location=loc, pressure=0 * u.hPa)
    ti = rows["target_index"].to_numpy(int)
    star = SkyCoord(targets["ra_deg"].to_numpy(float)[ti] * u.deg, targets["dec_deg"].to_numpy(float)[ti] * u.deg)
    aa = star.transform_to(frame)
    sun = get_sun(t).transform_to(frame)
    moon = get_body("moon", t, loc)
    sep = moon.separation(star.transform_to(moon.frame)).deg
    lst = t.sidereal_time("apparent", longitude=site.longitude_deg * u.deg).hour
    ha = (lst - star.ra.hour + 12) % 24 - 12
    return aa.alt.deg, aa.az.deg, ha, sun.alt.deg, sep


def test_fully_observable_events_are_dark_and_high_by_astropy(months):
    targets, site, table = months
    full = table[table["observable_fraction"] >= 1.0 - 1e-9]
    assert len(full) >= 3
    alt, az, ha, sun, _ = astropy_conditions(targets, site, full)
    from planner.sky.windows import altitude_limit_deg

    assert np.all(sun < site.darkness_sun_alt_deg + EDGE_DEG)
    assert np.all(alt > altitude_limit_deg(site, az) - EDGE_DEG)
    assert np.all((ha > site.min_hour_angle_h - EDGE_HA_H) & (ha < site.max_hour_angle_h + EDGE_HA_H))


def test_unobservable_events_fail_a_limit_by_astropy(months):
    targets, site, table = months
    none = table[table["observable_fraction"] == 0.0]
    assert len(none) >= 3
    alt, az, ha, sun, sep = astropy_conditions(targets, site, none)
    from planner.sky.windows import altitude_limit_deg

    lit = none["target_index"].to_numpy() * 0 + 1.0  # the strictest Moon rule (full Moon) is checked as a bound
    fails = ((sun > site.darkness_sun_alt_deg - EDGE_DEG) | (alt < altitude_limit_deg(site, az) + EDGE_DEG)
             | (ha < site.min_hour_angle_h + EDGE_HA_H) | (ha > site.max_hour_angle_h - EDGE_HA_H)
             | (sep < site.moon_min_sep_at_deg(lit) + EDGE_DEG))
    assert fails.all()


def test_table_json_and_chart(tmp_path, capsys):
    chart = tmp_path / "season.png"
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--start", "2026-12-07",
                     "--months", "2", "--kinds", "periastron", "primary_conjunction", "--format", "json",
                     "--chart", str(chart)])
    out, _ = capsys.readouterr()
    assert code == 0
    rows = json.loads(out)
    assert rows and all(r["observable_fraction"] > 0 for r in rows)
    assert {r["event"] for r in rows} <= {"periastron", "primary_conjunction"}
    assert all(r["utc"].endswith("Z") for r in rows)
    assert chart.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--start", "2026-12-07",
                     "--months", "2", "--min-fraction", "0", "--format", "csv"])
    every = pd.read_csv(io.StringIO(capsys.readouterr()[0]))
    assert code == 0 and (every["observable_fraction"] == 0).any() and len(every) > len(rows)


def test_season_takes_the_event_words_of_events_and_starts_tonight_by_default(monkeypatch, capsys):
    import datetime as dt

    from planner.cli import spans

    monkeypatch.setattr(spans, "now", lambda: dt.datetime(2026, 12, 8, 1, 0, tzinfo=dt.timezone.utc))
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--months", "1",
                     "--kinds", "transit", "--min-fraction", "0", "--format", "csv"])
    out, err = capsys.readouterr()
    assert code == 0, err
    table = pd.read_csv(io.StringIO(out))
    assert len(table) and set(table["event"]) == {"primary_conjunction"}
    assert table["night"].min() >= "2026-12-07"
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--months", "1"])
    err = capsys.readouterr()[1]
    assert code == 0 and "nights from 2026-12-07 at" in err  # 02:00 in Madrid: the 7th's night is under way


def test_chart_draws_one_bar_per_observable_event_and_a_row_per_pair(months):
    from planner.outputs.season_chart import season_figure

    _, _, table = months
    fig = season_figure(table, 2461381.5, 2461472.5)
    ax = fig.axes[0]
    bars = [c for c in ax.collections if c.get_gid() == "season_event"]
    assert sum(len(b.get_segments()) for b in bars) == int((table["observable_fraction"] > 0).sum())
    pairs = table.groupby(["target", "event"]).ngroups
    assert len([p for p in ax.patches if p.get_gid() == "row"]) == pairs
    labels = [tx.get_text() for tx in ax.get_yticklabels()]
    assert "Varda-7 b: primary conjunction" in labels and not any("_" in lab for lab in labels)


def test_a_linear_ephemeris_given_as_tc_is_drawn_as_a_primary_conjunction():
    from planner.outputs.season_chart import EVENT_LOOK, season_figure

    table = pd.DataFrame({"target": ["Lin", "Puls"], "event": ["periodic", "periodic"],
                          "label": ["primary conjunction", "light maximum"], "jd_utc": [2461390.6, 2461400.6],
                          "observable_fraction": [0.8, 0.6]})
    fig = season_figure(table, 2461381.5, 2461472.5)
    legend = {t.get_text() for t in fig.legends[0].get_texts()}
    assert legend == {"primary conjunction", "periodic event"}
    markers = [ln.get_marker() for ln in fig.axes[0].get_lines()]
    assert markers == [EVENT_LOOK["primary_conjunction"][1], EVENT_LOOK["periodic"][1]]


@pytest.mark.parametrize("extra, words", [
    (["--months", "0"], "--months must be a whole number from 1 to 24"),
    (["--months", "3", "--min-fraction", "1.5"], "--min-fraction must be a fraction between 0 and 1"),
    (["--months", "3", "--chart", "nowhere/season.png"], "does not exist"),
    (["--months", "3", "--chart", "season.txt"], "expected a file name ending in .png"),
])
def test_bad_options_give_one_line_and_exit_2(extra, words, capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--start", "2026-12-07", *extra])
    _, err = capsys.readouterr()
    assert code == 2 and len(err.strip().splitlines()) == 1 and words in err
    assert list(tmp_path.iterdir()) == []


def test_existing_chart_is_kept_without_force(tmp_path, capsys):
    chart = tmp_path / "season.png"
    chart.write_bytes(b"old")
    code = cli.main(["season", str(SAMPLE_TARGETS), "--site", str(SITE_FILE), "--start", "2026-12-07",
                     "--months", "1", "--chart", str(chart)])
    _, err = capsys.readouterr()
    assert code == 2 and "already exists; add --force" in err and chart.read_bytes() == b"old"


def test_bad_catalogue_row_names_file_row_column(tmp_path, capsys):
    bad = tmp_path / "cat.csv"
    bad.write_text("name,ra,dec,period_d,e,omega_deg,tp\nOne,04:00:00,+20:00:00,10,1.2,90,2460000\n")
    code = cli.main(["season", str(bad), "--site", str(SITE_FILE), "--start", "2026-12-07", "--months", "1",
                     "--chart", str(tmp_path / "s.png")])
    _, err = capsys.readouterr()
    assert code == 2 and "row 2" in err and "column e" in err and "Traceback" not in err
    assert not (tmp_path / "s.png").exists()
