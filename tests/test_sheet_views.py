"""What the sheets add for the telescope and what the week pages hold.

References: astropy's ``Angle.to_string`` (sexagesimal formatting of right ascension and
declination); the IANA time-zone database through Python's zoneinfo (local dates of the Moon's
rise and set); the 16-point compass rose (N = 0 deg, E = 90 deg, each point 22.5 deg wide, as
in any navigation text: common practice).
"""

from __future__ import annotations

import datetime as dt
import html
import re
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from conftest import REPO, SAMPLE_TARGETS
from planner.outputs import sheet_pointing, sheets, week_page
from planner.outputs.chart_marks import event_words
from test_sheets import J0, NIGHT, TZ, blocks_shuffled


@pytest.mark.parametrize("ra_deg, dec_deg", [(63.140833, 21.786111), (0.0, -0.5), (359.99999, -89.99), (187.7, 12.39)])
def test_coordinates_match_astropy_sexagesimal(ra_deg, dec_deg):
    import astropy.units as u
    from astropy.coordinates import Angle

    ra = Angle(ra_deg * u.deg).wrap_at(360 * u.deg).to_string(unit=u.hour, sep=":", precision=1, pad=True)
    dec = Angle(dec_deg * u.deg).to_string(unit=u.deg, sep=":", precision=0, pad=True, alwayssign=True)
    assert sheet_pointing.ra_hms(ra_deg) == (ra if not ra.startswith("24") else "00:00:00.0")
    assert sheet_pointing.dec_dms(dec_deg) == dec


@pytest.mark.parametrize("az, name", [(0, "N"), (11.2, "N"), (11.3, "NNE"), (90, "E"), (180, "S"), (247.5, "WSW"),
                                      (348.8, "N"), (348.7, "NNW")])
def test_compass_points(az, name):
    assert sheet_pointing.compass(az) == name


def pointed_blocks():
    frame = blocks_shuffled()
    by_name = {"Early one": (11.3,), "Middle one": (np.nan,), "Late one": (9.8,)}
    frame["ra_deg"], frame["dec_deg"] = 63.140833, 21.786111
    frame["magnitude"] = [f"mag {by_name[t][0]:g}" if np.isfinite(by_name[t][0]) else "" for t in frame["target"]]
    frame["az_start_deg"], frame["ha_start_h"], frame["lowest_alt_deg"] = 95.0, -2.25, 33.4
    frame["meridian_jd_utc"] = frame["start_jd_utc"] + 0.02
    return frame


def test_text_sheet_has_every_pointing_item_and_lines_within_100_characters():
    text = sheets.night_sheet_text(NIGHT, pointed_blocks(), TZ, site_name="An invented observatory " * 3)
    assert max(len(ln) for ln in text.splitlines()) <= 100
    flat = " ".join(text.split())
    meridian = (dt.datetime(2000, 1, 1, tzinfo=dt.timezone.utc) + dt.timedelta(days=J0 + 0.32 - 2451544.5))
    local = meridian.astimezone(ZoneInfo(TZ))
    assert ("Point: RA/Dec J2000 04:12:33.8 +21:47:10; mag 11.3; at start az 95 deg (E), HA -2:15; "
            f"meridian {local:%H:%M} local ({meridian:%H:%M} UTC), during the block.") in flat
    assert "mag 9.8" in flat and flat.count("mag ") == 2  # no magnitude where the catalogue has none


def test_items_are_skipped_when_the_schedule_lacks_their_columns():
    text = sheets.night_sheet_text(NIGHT, blocks_shuffled(), TZ)
    assert "Point:" not in text
    assert "RA/Dec J2000" in sheets.night_sheet_html(NIGHT, pointed_blocks(), TZ)


def test_moon_rise_and_set_carry_their_own_dates():
    night = NIGHT.copy()
    night["moon_set_jd_utc"], night["moon_rise_jd_utc"] = J0 + 0.10, J0 + 0.93  # set before dusk, rise next day
    text = sheets.night_sheet_text(night, blocks_shuffled(), TZ)

    def local(jd):
        return (dt.datetime(2000, 1, 1, 12, tzinfo=dt.timezone.utc)
                + dt.timedelta(days=jd - 2451545.0)).astimezone(ZoneInfo(TZ))
    s, r = local(J0 + 0.10), local(J0 + 0.93)
    assert s.date() != r.date()
    assert f"sets {s:%H:%M} local on {s:%Y-%m-%d}, rises {r:%H:%M} local on {r:%Y-%m-%d}" in " ".join(text.split())


def test_html_sheet_has_the_night_mode_switch_and_print_rules():
    page = sheets.night_sheet_html(NIGHT, pointed_blocks(), TZ)
    assert 'id="view-switch"' in page and "prefers-color-scheme: dark" in page and "localStorage" in page
    assert "@page { size: A4" in page and 'class="sky"' in page
    assert not re.search(r"(src|href)=\"https?:", page)  # nothing from the network


@pytest.fixture(scope="module")
def week(tmp_path_factory):
    import planner

    targets = planner.read_catalogue(SAMPLE_TARGETS)
    site = planner.read_site(REPO / "sample_targets" / "site.toml")
    plan = planner.make_plan(targets, site, dt.date(2026, 12, 7), 3)
    out = tmp_path_factory.mktemp("wk") / "plan"
    planner.write_plan(plan, out)
    return plan, out


def test_index_lists_every_block_and_links_every_night(week):
    plan, out = week
    page = (out / "index.html").read_text()
    rows = re.findall(r'<tr><td><a href="#night-', page)
    assert len(rows) == len(plan.schedule)
    for lab in plan.nights["night"].astype(str):
        assert f'href="night-{lab}.html"' in page and (out / f"night-{lab}.html").is_file()
    assert '<img src="week.png"' in page and "Never point the telescope" in page


def test_unscheduled_requests_are_listed_with_their_reason(week):
    plan, out = week
    page = html.unescape((out / "index.html").read_text())
    assert len(plan.unscheduled)
    for code, reason in zip(plan.unscheduled["reason_code"], plan.unscheduled["reason"]):
        if code != "lost":  # blocks lost to others are grouped under the first one's words
            assert reason in page



def test_a_long_list_of_losses_keeps_the_highest_priority_rows_on_the_page(week, monkeypatch):
    plan, _ = week
    un = plan.unscheduled
    groups = un.groupby(["target", "event", "reason_code"])["priority"].max()
    assert len(groups) > 2 and groups.nunique() > 1  # the demo week loses requests of several priorities
    monkeypatch.setattr(week_page, "UNSCHEDULED_ROWS", 2)
    page = html.unescape("".join(week_page._unscheduled_lines(plan, ["unscheduled.csv"])))
    cells = re.findall(r"<tr><td>([^<]*)</td><td>([^<]*)</td>", page)  # target, event in words
    assert len(cells) == 2
    labels = dict(zip(plan.targets["name"], plan.targets["label"]))
    shown = [max(p for (tt, ev, _), p in groups.items() if tt == t and event_words(ev, labels[t]) == words)
             for t, words in cells]
    assert min(shown) == groups.sort_values(ascending=False).iloc[1]  # the two of highest priority
    assert f"of {len(groups)}; " in page and 'href="unscheduled.csv"' in page and f"({len(un)})" in page

def test_each_scheduled_target_has_a_page_with_its_events(week):
    plan, out = week
    crossing = 0
    for ti in sorted(set(plan.schedule["target_index"])):
        name = plan.targets["name"].iloc[ti]
        page = html.unescape((out / week_page.page_name(plan, name)).read_text())
        n_events = int((plan.events["target_index"] == ti).sum())
        assert page.count("</tr>") - 1 == n_events or (n_events == 0 and "No event of this target" in page)
        assert 'href="index.html"' in page
        # a block on another night than its event's row (an RV window reaching into the next
        # night) names that night; one on the row's night gives its times only
        for row_night, link_night, text in re.findall(
                r'<tr><td>([0-9-]+)</td>.*?<a href="night-([0-9-]+)\.html">block ([^<]*)</a>', page):
            assert text.startswith(f"night of {link_night}, ") == (link_night != row_night), (name, text)
            crossing += link_night != row_night
    assert crossing  # the demo week has such blocks (Lantisca-4's RV windows)


def test_an_index_html_alone_counts_as_a_plan(tmp_path):
    from planner.outputs import plan_folder

    (tmp_path / "index.html").write_text("x")
    (tmp_path / "target-A.html").write_text("x")
    assert plan_folder.existing_plan_files(tmp_path) == ["index.html", "target-A.html"]


def test_a_small_observable_fraction_is_never_shown_as_zero():
    assert week_page._percent(0.0) == "0%" and week_page._percent(0.002) == "<1%" and week_page._percent(0.37) == "37%"


def test_week_page_tables_name_events_in_words(week):
    _, out = week
    page = (out / "index.html").read_text()
    cells = re.findall(r"<td>([^<]*)</td>", page)
    assert not [c for c in cells if "_" in c]  # primary conjunction, never primary_conjunction
    assert "<1%" not in page  # escaped where shown


def test_every_blocks_printed_factors_multiply_to_its_score(week):
    # The Why of each block lists factors and points; they must give the score it prints (a
    # block serving two requests prints the two parts, which add up). Monitor visits carry a
    # tie-break of at most 0.01 % towards the middle of their stretch (planner.scheduling.monitor).
    from planner.scheduling.log_requests import new_parts_share

    plan, _ = week
    assert len(plan.schedule)
    for _, b in plan.schedule.iterrows():
        points = sum(b[c] for c in ("pts_coverage", "pts_airmass", "pts_moon", "pts_timing"))
        own = b["x_priority"] * b["x_rarity"] * points * new_parts_share(b["covers"], b["logged_parts"])
        shared = sheets.shared_score(b)
        if shared is None:
            assert abs(own - b["score"]) <= 1e-4 * b["score"], (b["target"], b["event"])
        else:
            parts = [float(text.split()[0]) for text in shared]
            assert abs(sum(parts) - round(b["score"], 1)) <= 0.051 and abs(parts[0] - own) <= 0.051
