"""Every printed sum of score parts equals its parts, on the nightly lists and in the calendar.

Checked by parsing the printed text of a real plan (the demo scenario, which has flexible
visits). References: decimal arithmetic (Python's ``decimal``, exact for one-decimal numbers);
the largest-remainder method of apportionment (Hamilton's method: round every part down, give
the units left to the largest remainders; Balinski & Young, *Fair Representation*, 2nd ed.
2001, ch. 2, from memory), which keeps each printed part within one unit of its value.
"""

from __future__ import annotations

import re
from decimal import Decimal

import numpy as np
import pandas as pd
import pytest
from icalendar import Calendar

from conftest import REPO, SAMPLE_TARGETS
from planner import cli
from planner.outputs import explain

SITE = REPO / "sample_targets" / "site.toml"
#: One unit of the printed last decimal of the points.
UNIT = 10.0 ** -explain.POINT_DECIMALS

WHY = re.compile(r"Why: score (\d+\.\d) = priority (\S+) x rarity x(\d+\.\d\d) \(.*?\) x conditions "
                 r"(\d+\.\d) points: (.*)\.$")
#: A block that serves two requests of one target: its own value (as above) plus the other's.
WHY_TWO = re.compile(r"Why: score (\d+\.\d) = (\d+\.\d) for the .*? \(priority (\S+) x rarity x(\d+\.\d\d) \(.*?\) "
                     r"x conditions (\d+\.\d) points: (.*)\) \+ (\d+\.\d) for the .* it serves too\.$")
ICS = re.compile(r"Score: (\d+\.\d) = priority (\S+) x rarity (\d+\.\d\d) x conditions (\d+\.\d) points "
                 r"\((.*)\)")


def logical_lines(text):
    """Lines of a text sheet with the wrapped ones joined again: a continuation follows a line
    that reached the wrapping width, indented 3 more than that line's first part."""
    out, prev = [], ""
    for ln in text.splitlines():
        lead = len(ln) - len(ln.lstrip(" "))
        if out and ln.strip() and len(prev) > 80 and lead == out[-1][0] + 3:
            out[-1] = (out[-1][0], out[-1][1] + " " + ln.strip())
        else:
            out.append((lead, ln))
        prev = ln
    return [ln for _, ln in out]


@pytest.fixture(scope="module")
def plan_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("sums") / "plan"
    assert cli.main(["plan", str(SAMPLE_TARGETS), "--site", str(SITE), "--start", "2026-12-07", "--nights", "4",
                     "--out", str(out)]) == 0
    return out


def test_largest_remainder_parts_add_up_and_stay_within_one_unit():
    rng = np.random.default_rng(9)
    for _ in range(2000):
        v = rng.uniform(0, 20, size=4).round(rng.integers(1, 6))
        parts, total = explain.rounded_parts(v)
        assert sum(Decimal(f"{p:.1f}") for p in parts) == Decimal(f"{total:.1f}")
        assert abs(total - v.sum()) <= UNIT / 2 + 1e-9
        assert all(abs(p - x) < UNIT + 1e-9 for p, x in zip(parts, v))
    # three parts of 0.16 each: naive rounding prints 0.2 + 0.2 + 0.2 beside a total of 0.5
    parts, total = explain.rounded_parts([0.16, 0.16, 0.16])
    assert total == 0.5 and sorted(parts) == [0.1, 0.2, 0.2]


def test_sheets_sums_equal_their_parts_flexible_visits_included(plan_dir):
    schedule = pd.read_csv(plan_dir / "schedule.csv")
    assert (schedule["kind"] == "flexible").any(), "the demo plan must hold a flexible visit for this test"
    whys = [ln.strip() for p in sorted(plan_dir.glob("night-*.txt")) for ln in logical_lines(p.read_text())
            if ln.strip().startswith("Why:")]
    assert len(whys) == len(schedule)
    flexible_seen = 0
    for line in whys:
        m, two = WHY.match(line), WHY_TWO.match(line)
        assert m or two, line
        if two:  # the two values add up to the score, and the first is this request's own product
            assert Decimal(two.group(2)) + Decimal(two.group(7)) == Decimal(two.group(1)), line
            own, prio, rarity, total = (Decimal(two.group(i)) for i in (2, 3, 4, 5))
            parts = [Decimal(x) for x in re.findall(r"\((\d+\.\d)\)", two.group(6))]
            assert sum(parts) == total, line
            assert abs(own - prio * rarity * total) <= prio * (Decimal("0.005") * total + rarity * Decimal("0.05")) \
                + Decimal("0.1"), line
            continue
        score, prio, rarity, total = (Decimal(m.group(i)) for i in (1, 2, 3, 4))
        parts = [Decimal(x) for x in re.findall(r"\((\d+\.\d)\)", m.group(5))]
        assert len(parts) == 4, line  # coverage, airmass, Moon and timing: every term is printed
        assert sum(parts) == total, line
        # the product holds to the rounding of its printed factors
        bound = prio * (Decimal("0.005") * total + rarity * Decimal("0.05")) + Decimal("0.05")
        assert abs(score - prio * rarity * total) <= bound, line
        flexible_seen += "no event time to catch" in line
    assert flexible_seen == int((schedule["kind"] == "flexible").sum())


def test_html_lists_print_the_same_parts(plan_dir):
    import html

    for txt in sorted(plan_dir.glob("night-*.txt")):
        text_totals = re.findall(r"x conditions (\d+\.\d) points: ", " ".join(txt.read_text().split()))
        page = html.unescape(txt.with_suffix(".html").read_text())
        assert re.findall(r"<li>conditions (\d+\.\d) points: ", page) == text_totals
        # each item of a list reads alone: its parentheses close inside it
        for item in re.findall(r"<li>(.*?)</li>", page):
            depth = np.cumsum([{"(": 1, ")": -1}.get(c, 0) for c in item])
            assert depth[-1] == 0 and depth.min() >= 0, item


def test_a_block_serving_two_requests_shows_both_values_in_one_line_on_the_html_sheet(plan_dir):
    import html

    texts = {p: " ".join(p.read_text().split()) for p in sorted(plan_dir.glob("night-*.txt"))}
    shared = [(p, m) for p, t in texts.items() for m in re.finditer(r"Why: score (\d+\.\d) = (\d+\.\d) for the (.*?) "
                                                                  r"\(priority .*?\) \+ (\d+\.\d) for the (\S+ \S+) "
                                                                  r"it serves too\.", t)]
    assert shared, "the demo plan must hold a block serving two requests for this test"
    for p, m in shared:
        page = " ".join(html.unescape(p.with_suffix(".html").read_text()).split())
        assert (f"score {m.group(1)} = {m.group(2)} for the {m.group(3)} + {m.group(4)} for the {m.group(5)} "
                "it serves too; the first = priority x rarity x conditions") in page


def test_calendar_sums_equal_their_parts_and_the_schedule(plan_dir):
    schedule = pd.read_csv(plan_dir / "schedule.csv")
    cal = Calendar.from_ical((plan_dir / "plan.ics").read_bytes())
    events = cal.walk("VEVENT")
    assert len(events) == len(schedule)
    for ev in events:
        m = ICS.search(str(ev["description"]))
        assert m, str(ev["description"])
        total = Decimal(m.group(4))
        named = dict((k, Decimal(v)) for k, v in re.findall(r"(\w+) (\d+\.\d)", m.group(5)))
        assert set(named) == {"coverage", "airmass", "moon", "timing"}
        assert sum(named.values()) == total
        row = schedule[(schedule["start_utc"].str[:16] == ev.decoded("dtstart").strftime("%Y-%m-%dT%H:%M"))
                       & (schedule["target"] == str(ev["summary"]).split(":")[0])]
        assert len(row) == 1
        for k, v in named.items():  # schedule.csv prints 2 decimals: each part within one unit
            assert abs(float(v) - row[f"pts_{k}"].iloc[0]) <= UNIT + 0.005 + 1e-9
