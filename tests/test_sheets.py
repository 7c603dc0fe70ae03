"""Nightly lists, schedule CSV and terminal summary: caution, times, order, escaping, empty nights.

References: astropy Time (Julian date -> UTC clock time), the IANA time-zone database through
Python's zoneinfo (UTC -> local clock time), the HTML rules for escaping ``<``, ``>`` and ``&``
(WHATWG HTML, "Serializing HTML fragments", escapingString) as implemented by ``html.escape``.
"""

from __future__ import annotations

import datetime as dt
import html
import re
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd

from planner.scheduling import schedule
from planner.outputs import sheets

J0 = 2461382.0  # 2026-12-07 12:00 UTC
TZ = "Europe/Madrid"
NIGHT = pd.Series({"night": "2026-12-07", "sunset_jd_utc": J0 + 0.2013, "dark_start_jd_utc": J0 + 0.2637,
                   "dark_end_jd_utc": J0 + 0.7391, "sunrise_jd_utc": J0 + 0.8012, "moon_illumination": 0.43,
                   "darkness_sun_alt_deg": -18.0})
NO_DARK = pd.Series({"night": "2026-12-08", "sunset_jd_utc": J0 + 1.2, "dark_start_jd_utc": np.nan,
                     "dark_end_jd_utc": np.nan, "sunrise_jd_utc": J0 + 1.8, "moon_illumination": 0.5,
                     "darkness_sun_alt_deg": -18.0})


def block(s, e, target, event="primary_conjunction", kind="fixed", night="2026-12-07", **extra):
    row = {c: np.nan for c in schedule.SCHEDULE_COLUMNS}
    request = {"primary_conjunction": "series", "rv_max": "rv_visit"}.get(event, "monitor")
    row.update(request=request, serves=event, slot=0, n_slots=1, science_fraction=0.8 if request == "series" else 1.0,
               covers="pre;T1;mid" if request == "series" else "", not_covered="T4;post" if request == "series" else "",
               t1_jd_utc=J0 + s + 0.04 if request == "series" else np.nan,
               earliest_start_jd_utc=J0 + s, latest_start_jd_utc=J0 + s)
    row.update(night=night, start_jd_utc=J0 + s, end_jd_utc=J0 + e, target=target, target_index=0,
               event=event, label=event if kind == "fixed" else "flexible visit", kind=kind,
               event_jd_utc=J0 + 0.5 * (s + e) if kind == "fixed" else np.nan,
               event_sigma_d=3.0 / 1440 if kind == "fixed" else np.nan,
               window_start_jd_utc=J0 + s - 0.01 if kind == "fixed" else np.nan,
               window_end_jd_utc=J0 + e + 0.01 if kind == "fixed" else np.nan,
               observable_fraction=0.9 if kind == "fixed" else np.nan, priority=5.0,
               period_d=111.4 if kind == "fixed" else np.nan, alt_low_deg=40.0, alt_event_deg=55.0,
               alt_t1_deg=48.0, airmass=1.3, moon_sep_deg=70.0, moon_illumination=0.43,
               x_priority=5.0, x_rarity=3.76, pts_coverage=18.0, pts_airmass=8.5, pts_moon=10.0,
               pts_timing=9.0, score=855.4, notes="partial: 90% of the event window is observable")
    row.update(extra)
    return row


def blocks_shuffled():
    rows = [block(0.55, 0.60, "Late one", event="rv_max"), block(0.30, 0.40, "Early one"),
            block(0.45, 0.50, "Middle one", event="visit", kind="flexible")]
    return pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]


def utc_clock(jd):
    from astropy.time import Time

    t = Time(jd, format="jd", scale="utc").to_datetime(timezone=dt.timezone.utc)
    return (t + dt.timedelta(seconds=0.5)).replace(microsecond=0)


def test_caution_on_every_list_including_empty_ones():
    for night, blocks in ((NIGHT, blocks_shuffled()), (NO_DARK, blocks_shuffled().iloc[:0])):
        for text in (sheets.night_sheet_text(night, blocks, TZ), sheets.night_sheet_html(night, blocks, TZ)):
            plain = html.unescape(text)
            assert "Never point the telescope at or near the Sun" in plain
            assert "the observatory's own safety rules and local regulations come first" in plain.lower()
            assert plain.count("Never point the telescope") == 2  # at the top and at the bottom


def test_sky_times_in_utc_and_local():
    text = sheets.night_sheet_text(NIGHT, blocks_shuffled(), TZ)
    for col, name in sheets.sky_rows(NIGHT):
        utc = utc_clock(NIGHT[col])
        local = utc.astimezone(ZoneInfo(TZ))
        line = next(ln for ln in text.splitlines() if ln.startswith(name))
        assert line.split()[-2:] == [utc.strftime("%H:%M"), local.strftime("%H:%M")]
    assert "Moon: 43% illuminated" in text
    with_moon = NIGHT.copy()
    with_moon["moon_rise_jd_utc"], with_moon["moon_set_jd_utc"], with_moon["moon_up_dark_h"] = J0 + 0.55, np.nan, 4.4
    rise = utc_clock(J0 + 0.55).astimezone(ZoneInfo(TZ))
    assert (f"Moon: 43% illuminated, rises {rise:%H:%M} local on {rise:%Y-%m-%d}, up for 4.4 h of the dark "
            "time") in \
        sheets.night_sheet_text(with_moon, blocks_shuffled(), TZ)


def test_blocks_are_listed_in_time_order_with_what_and_why():
    text = sheets.night_sheet_text(NIGHT, blocks_shuffled(), TZ)
    heads = [ln for ln in text.splitlines() if re.match(r"^\d+\. ", ln)]
    assert [h.split()[0] for h in heads] == ["1.", "2.", "3."]
    assert ["Early one" in heads[0], "Middle one" in heads[1], "Late one" in heads[2]] == [True] * 3
    starts = [re.search(r"\((\d\d:\d\d)-", h).group(1) for h in heads]
    expect = [utc_clock(J0 + s).strftime("%H:%M") for s in (0.30, 0.45, 0.55)]
    assert starts == expect
    local0 = utc_clock(J0 + 0.30).astimezone(ZoneInfo(TZ)).strftime("%H:%M")
    assert heads[0].startswith(f"1. {local0}-")
    flat = " ".join(text.split())  # lines longer than 100 characters wrap
    assert "Do: photometric time series of the transit or primary eclipse." in flat
    assert ("Covers pre-baseline, ingress (T1), mid-event; not covered: egress (T4), post-baseline.") in flat
    assert "Altitude: lowest 40 deg, at the event 55 deg, at T1 48 deg." in flat
    assert ("Why: score 855.4 = priority 5 x rarity x3.76 (event recurs every 111.4 d) x conditions 45.5 points: "
            "80% of the series' science kept, 90% of the window observable (18.0), mean airmass 1.30 (8.5)") in flat
    assert "Do: one RV spectrum of about 72 min near the RV maximum." in flat
    assert "timing +- 3.0 min (1 sigma) in a 2.9 h window (9.0)" in flat
    assert "Notes: partial: 90% of the event window is observable." in text
    assert "one visit" in text  # the flexible block's action


def test_what_to_do_for_a_linear_ephemeris_says_which_event():
    # a linear ephemeris given as tc is a transit or primary eclipse; an unlabelled one an event
    # of its period; a labelled one its label
    for label, words in (("primary conjunction", "photometric time series of the transit or primary eclipse"),
                         ("periodic", "photometric time series around the predicted periodic event"),
                         ("light maximum", "photometric time series around the predicted light maximum")):
        b = block(0.10, 0.20, "Lin", event="periodic", request="series", label=label)
        assert sheets.action(b) == words


def test_html_escapes_names_and_notes_and_has_print_styling():
    evil = "<Tgt & Co> \"b\""
    blocks = pd.DataFrame([block(0.3, 0.4, evil, notes="alt < 30 & <script>")])[list(schedule.SCHEDULE_COLUMNS)]
    page = sheets.night_sheet_html(NIGHT, blocks, TZ, site_name="Obs <1>")
    # the only script is the page's own night-mode switch, in the head; the notes' one is escaped
    assert evil not in page and page.count("<script>") == 1 and "Obs <1>" not in page
    assert page.index("<script>") < page.index("</head>")
    assert "&lt;Tgt &amp; Co&gt; &quot;b&quot;" in page
    assert "alt &lt; 30 &amp; &lt;script&gt;" in page
    assert "@media print" in page and "<!DOCTYPE html>" in page


def test_empty_nights_say_why():
    none = blocks_shuffled().iloc[:0]
    assert "No astronomical darkness this night" in sheets.night_sheet_text(NO_DARK, none, TZ)
    assert "Nothing scheduled" in sheets.night_sheet_text(NIGHT, none, TZ)
    assert "Nothing scheduled" in sheets.night_sheet_html(NIGHT, none, TZ)
    nights = pd.DataFrame([NIGHT, NO_DARK])
    summary = sheets.week_summary_text(none, nights, TZ)
    assert "2026-12-08  no astronomical darkness  nothing scheduled" in summary
    assert "Nothing could be scheduled in these nights; unscheduled.csv gives each request's reason." in summary


def test_writers_produce_one_text_and_one_html_per_night_and_the_csv(tmp_path):
    nights = pd.DataFrame([NIGHT, NO_DARK])
    plan = blocks_shuffled()
    paths = sheets.write_night_sheets(tmp_path, plan, nights, TZ, "Test site")
    names = sorted(p.rsplit("/", 1)[-1] for p in paths)
    assert names == ["night-2026-12-07.html", "night-2026-12-07.txt", "night-2026-12-08.html", "night-2026-12-08.txt"]
    csv_path = sheets.write_schedule_csv(tmp_path / "schedule.csv", plan, TZ)
    back = pd.read_csv(csv_path, keep_default_na=False)
    for col in ("night", "start_utc", "end_utc", "start_local", "end_local", "target", "event", "event_utc",
                "score", "request", "covers", "not_covered", "t1_utc", "alt_low_deg", "alt_event_deg", "alt_t1_deg",
                "airmass", "moon_sep_deg", "notes"):
        assert col in back.columns
    assert len(back) == 3
    first = back.iloc[0]
    start = utc_clock(J0 + 0.55)
    assert first["start_utc"] == start.strftime("%Y-%m-%dT%H:%M:%SZ")
    assert first["start_local"] == start.astimezone(ZoneInfo(TZ)).isoformat()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".periplan-")]  # no temporary left


def test_summary_of_a_full_night_keeps_lines_within_100_characters_and_each_block_whole():
    # sixteen 40-minute blocks (a large catalogue's night); the line wrapped at block boundaries
    rows = [block(0.27 + 0.029 * k, 0.295 + 0.029 * k, f"Target {k:02d}", event="periastron") for k in range(16)]
    lines = sheets.week_summary_text(pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)], pd.DataFrame([NIGHT]),
                                     TZ).splitlines()
    assert max(map(len, lines)) <= sheets.TEXT_WIDTH
    night = [ln for ln in lines if not ln.startswith("16 blocks, ")]
    assert night[0].startswith("2026-12-07") and len(night) > 2
    assert all(ln.startswith(" " * 12) and ln[12] != " " for ln in night[1:])  # continued under "dark"
    joined = " ".join(ln.strip() for ln in night)
    assert [joined.index(f"Target {k:02d} periastron") for k in range(16)] == sorted(
        joined.index(f"Target {k:02d} periastron") for k in range(16))


def test_summary_lists_each_night_in_order():
    nights = pd.DataFrame([NIGHT, NO_DARK])
    summary = sheets.week_summary_text(blocks_shuffled(), nights, TZ).splitlines()
    assert summary[0].startswith("2026-12-07") and "3 blocks" in summary[0]
    second = next(k for k, ln in enumerate(summary) if ln.startswith("2026-12-08"))
    first = " ".join(summary[:second])  # a night's line continues on indented lines
    assert first.index("Early one") < first.index("Middle one") < first.index("Late one")
    assert summary[-1].startswith("3 blocks, 3 targets, 2 nights")


def test_a_sequence_visit_says_which_visits_of_its_passage_the_plan_leaves_out(tmp_path):
    # three visit slots over one periastron passage, the plan holding slots 1 and 3 on two nights
    common = dict(event="periastron", request="rv_sequence", serves="periastron", n_slots=3,
                  event_jd_utc=J0 + 0.45)
    rows = [block(0.30, 0.32, "Passage Star", slot=1, **common),
            block(1.30, 1.32, "Passage Star", slot=3, night="2026-12-08", **common),
            block(0.50, 0.52, "Other Star", event="rv_max")]
    frame = pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]
    sheets.write_night_sheets(tmp_path, frame, pd.DataFrame([NIGHT, NO_DARK]), TZ)
    text = " ".join((tmp_path / "night-2026-12-07.txt").read_text().split())
    assert "RV visit 1 of 3 over the periastron passage" in text and "(visit 2 is not in the plan)" in text
    assert text.count("not in the plan") == 1  # the RV maximum's visit is one request, not a sequence
    second = " ".join((tmp_path / "night-2026-12-08.txt").read_text().split())
    assert "(visit 2 is not in the plan)" in second
    # slot 1 is 0.14 d from the periastron: no note; slot 3, 0.86 d after it, says so
    assert "the periastron itself" not in text
    assert "one spectrum of about 29 min, 0.9 d after the periastron itself (visit 2 is not in the plan)" in second
    full = frame.iloc[[0, 1, 1]].assign(slot=[1, 2, 3]).reset_index(drop=True)
    assert list(sheets.planned_slots(full)) == ["1;2;3"] * 3


def test_a_secondary_without_contacts_says_what_the_catalogue_must_add():
    # duration_h sets the primary's contacts only; an eccentric orbit's secondary lasts otherwise
    both = [block(0.30, 0.40, "Timed One", request="series", t1_jd_utc=np.nan, covers="mid", not_covered="",
                  event=ev) for ev in ("primary_conjunction", "secondary_conjunction")]
    primary, secondary = (sheets.covers_line(pd.Series(b)) for b in both)
    assert primary.endswith("contacts not known (the catalogue gives no duration or eclipse geometry).")
    assert "secondary needs the eclipse geometry, a_rstar, inc_deg and rp_rstar" in secondary


def test_missed_lines_name_the_event_as_the_blocks_do_and_say_when():
    # two maxima of one pulsator on one night: told apart by their local times (Madrid, UTC+1 in
    # December), named by the target's label; a low-priority and a daylight one are not listed
    unscheduled = pd.DataFrame({
        "night": ["2026-12-07"] * 4, "target": ["Puls", "Puls", "Dim", "Day"],
        "event": ["periodic", "periodic", "rv_max", "rv_max"], "request": ["series"] * 4,
        "priority": [4, 4, 1, 5], "event_utc": ["2026-12-07T19:04:00Z", "2026-12-08T02:41:00Z", "", ""],
        "best_value": [np.nan] * 4, "reason_code": ["altitude", "too_short", "altitude", "no_darkness"],
        "reason": ["low", "short", "low", "day"]})
    lines = sheets.missed_lines(unscheduled, "2026-12-07", "Europe/Madrid", {"Puls": "light maximum"})
    assert lines == ["Puls light maximum at 20:04 (priority 4): low", "Puls light maximum at 03:41 (priority 4): short"]


def test_a_sequence_visit_puts_its_asides_in_one_parenthesis():
    # the third visit of a passage whose first visit is logged and whose second is not planned,
    # merged with the RV maximum of the same passage: one parenthesis says all three
    row = pd.Series(block(0.30, 0.32, "Passage Star", event="periastron", request="rv_sequence",
                          serves="periastron;rv_max", slot=3, n_slots=3, planned_slots="3", logged_parts="1",
                          event_jd_utc=J0 + 0.31))
    assert sheets.action(row).endswith("(visit 1 logged already; visit 2 is not in the plan; it serves "
                                       "periastron and rv max at once)")
    assert sheets.action(row).count("(") == 1
