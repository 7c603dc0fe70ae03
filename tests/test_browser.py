"""The sheets and the week page in a real browser (headless Chromium, Debian's package).

References: ISO 216 (A4 is 210 mm x 297 mm = 595.28 x 841.89 PostScript points, 1 pt = 1/72 in);
the CSS Color Module (a computed colour serialises as ``rgb(r, g, b)``); RFC 8089 (file URIs) and
the WHATWG URL standard for resolving a relative link and its fragment against the page's URL.
Screenshots and PDFs are kept in tests/artifacts/ (not committed) for a person to look at.
"""

from __future__ import annotations

import datetime as dt
import html.parser
import re
import urllib.parse

import numpy as np
import pandas as pd
import pytest

import headless
from conftest import REPO
from planner.outputs import sheets
from planner.scheduling import schedule
from test_sheets import J0, NIGHT, TZ, block

#: ISO 216 A4 in PostScript points, to the 0.01 pt that pdfinfo prints.
A4_PT = (595.28, 841.89)
A4_TOL_PT = 0.5


def five_blocks() -> pd.DataFrame:
    """A typical full night: five blocks with the pointing columns the plan adds, long notes."""
    rows = []
    for i, (s, kind, event) in enumerate(((0.27, "fixed", "primary_conjunction"), (0.37, "fixed", "periastron"),
                                          (0.47, "flexible", "visit"), (0.55, "fixed", "rv_max"),
                                          (0.64, "fixed", "secondary_conjunction"))):
        rows.append(block(s, s + 0.08, f"Target {i + 1}", event=event, kind=kind, target_index=i,
                          notes="partial: 90% of the event window is observable; starts near the altitude limit"))
    frame = pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]
    frame["ra_deg"], frame["dec_deg"], frame["mag"] = np.linspace(30, 90, 5), np.linspace(-10, 40, 5), 11.3
    frame["az_start_deg"], frame["ha_start_h"] = np.linspace(90, 270, 5), np.linspace(-3, 3, 5)
    frame["lowest_alt_deg"] = 32.0
    frame["meridian_jd_utc"] = frame["start_jd_utc"] + 0.03
    frame["covers"] = "T1, T2, T3, T4 and both baselines"
    return frame


def test_five_block_night_prints_on_one_a4_page(tmp_path):
    page = tmp_path / "night.html"
    night = NIGHT.copy()
    night["moon_rise_jd_utc"], night["moon_set_jd_utc"], night["moon_up_dark_h"] = J0 + 0.55, J0 + 0.05, 4.4
    page.write_text(sheets.night_sheet_html(night, five_blocks(), TZ, site_name="Test site (invented)"))
    pdf = headless.artifact("night-five-blocks.pdf")
    headless.print_pdf(page, pdf)
    info = headless.pdf_info(pdf)
    assert info["Pages"] == "1"
    w, h = (float(v) for v in re.match(r"([\d.]+) x ([\d.]+) pts", info["Page size"]).groups())
    assert abs(w - A4_PT[0]) < A4_TOL_PT and abs(h - A4_PT[1]) < A4_TOL_PT
    headless.screenshot(page, headless.artifact("night-five-blocks.png"))


def test_a_night_mode_reader_still_prints_black_on_white(tmp_path):
    from PIL import Image

    page = tmp_path / "night.html"
    page.write_text(sheets.night_sheet_html(NIGHT, five_blocks(), TZ))
    pdf = headless.artifact("night-printed-from-dark.pdf")
    headless.chromium(page.resolve().as_uri(), f"--print-to-pdf={pdf}", "--no-pdf-header-footer",
                      "--force-dark-mode", "--blink-settings=preferredColorScheme=0")
    import subprocess

    subprocess.run([headless.need("pdftoppm"), "-r", "30", "-png", "-singlefile", str(pdf),
                    str(tmp_path / "page")], check=True, timeout=60)
    grey = np.asarray(Image.open(tmp_path / "page.png").convert("L"), float)
    assert grey.mean() > 230  # a white page with black text (a night-mode page would be near 0)


class _Links(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.links, self.ids = [], set()

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.add(a["id"])
        for key in ("href", "src"):
            if tag in ("a", "img", "link", "script") and a.get(key):
                self.links.append(a[key])


def _parse(text):
    p = _Links()
    p.feed(text)
    return p


@pytest.fixture(scope="module")
def plan_folder(tmp_path_factory):
    import planner

    out = tmp_path_factory.mktemp("plan") / "week"
    targets = planner.read_catalogue(REPO / "sample_targets" / "targets.csv")
    site = planner.read_site(REPO / "sample_targets" / "site.toml")
    plan = planner.make_plan(targets, site, dt.date(2026, 12, 9), 3)
    planner.write_plan(plan, out)
    return out


def test_every_link_of_the_week_pages_resolves_from_file_urls(plan_folder):
    index = plan_folder / "index.html"
    rendered = headless.dump_dom(index)
    seen, todo, checked = set(), [index], 0
    doms = {index: _parse(rendered)}
    while todo:
        page = todo.pop()
        if page in seen:
            continue
        seen.add(page)
        dom = doms.get(page) or _parse(page.read_text())
        base = page.resolve().as_uri()
        for link in dom.links:
            url = urllib.parse.urljoin(base, link)
            parts = urllib.parse.urlsplit(url)
            assert parts.scheme == "file", f"{page.name}: {link} leaves the folder (no network allowed)"
            target = plan_folder / urllib.parse.unquote(parts.path).rsplit("/", 1)[-1]
            assert target.is_file(), f"{page.name}: {link} does not resolve"
            if parts.fragment:
                ids = doms[target].ids if target in doms else _parse(target.read_text()).ids
                assert parts.fragment in ids, f"{page.name}: anchor #{parts.fragment} missing in {target.name}"
            if target.suffix == ".html" and target not in seen:
                todo.append(target)
            checked += 1
    assert any(p.name.startswith("target-") for p in seen) and any(p.name.startswith("night-") for p in seen)
    assert checked > 20
    headless.screenshot(index, headless.artifact("week-index.png"), (1200, 2400))


#: Run after the page's own script has wired the switch: record the computed colours, press the
#: switch, record again, with what the page remembered.
PROBE = """<script>
document.addEventListener("DOMContentLoaded", function () {
  var b = document.body, s = function () { var c = getComputedStyle(b); return c.color + "|" + c.backgroundColor; };
  b.setAttribute("data-before", s());
  document.getElementById("view-switch").click();
  b.setAttribute("data-after", s());
  b.setAttribute("data-saved", String(window.localStorage.getItem("periplan-view")));
});
</script>"""


def _rgb(text):
    return [tuple(int(v) for v in re.findall(r"\d+", part)[:3]) for part in text.split("|")]


def test_night_mode_switch_changes_the_computed_colours(tmp_path):
    page = tmp_path / "night.html"
    page.write_text(sheets.night_sheet_html(NIGHT, five_blocks(), TZ).replace("</body>", PROBE + "</body>"))
    body = _parse_body(headless.dump_dom(page))
    (fg0, bg0), (fg1, bg1) = _rgb(body["data-before"]), _rgb(body["data-after"])
    assert bg0 == (255, 255, 255) and fg0 == (17, 17, 17)       # day: near-black on white
    assert bg1 == (0, 0, 0) and fg1[0] >= 150 and fg1[1] == fg1[2] == 0  # night: deep red on black
    assert body["data-saved"] == "night"
    # a reader whose system prefers dark gets night mode first; the switch then gives day
    dark = _parse_body(headless.dump_dom(page, "--force-dark-mode", "--blink-settings=preferredColorScheme=0"))
    assert _rgb(dark["data-before"])[1] == (0, 0, 0) and _rgb(dark["data-after"])[1] == (255, 255, 255)
    plain = tmp_path / "plain.html"
    plain.write_text(sheets.night_sheet_html(NIGHT, five_blocks(), TZ))
    headless.screenshot(plain, headless.artifact("night-dark.png"), (1100, 1500), "--force-dark-mode",
                        "--blink-settings=preferredColorScheme=0")


LOOK = """<script>
document.addEventListener("DOMContentLoaded", function () {
  document.body.setAttribute("data-now", getComputedStyle(document.body).backgroundColor);
});
</script>"""


def test_a_saved_choice_is_taken_up_by_the_next_page(tmp_path):
    # what the switch saved (test above) is what the next page reads first, before it is drawn; the
    # saved value is put in place here, since Chromium may stop before writing its storage to disk
    sheet = sheets.night_sheet_html(NIGHT, five_blocks(), TZ)
    for saved, bg in (("night", (0, 0, 0)), ("day", (255, 255, 255))):
        page = tmp_path / f"next-{saved}.html"
        seed = f'<head>\n<script>window.localStorage.setItem("periplan-view", "{saved}");</script>'
        page.write_text(sheet.replace("<head>", seed, 1).replace("</body>", LOOK + "</body>"))
        extra = ("--force-dark-mode", "--blink-settings=preferredColorScheme=0") if saved == "day" else ()
        assert _rgb(_parse_body(headless.dump_dom(page, *extra))["data-now"])[0] == bg


def _parse_body(dom):
    m = re.search(r"<body([^>]*)>", dom)
    assert m, "no body in the dumped DOM"
    return dict(re.findall(r'(data-[a-z]+)="([^"]*)"', m.group(1)))


def test_a_missing_browser_fails_under_ci_and_is_skipped_with_its_reason_elsewhere(monkeypatch):
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="not installed"):
        headless.need("periplan-no-such-browser")
    monkeypatch.setenv("CI", "")
    with pytest.raises(pytest.skip.Exception, match="not installed"):
        headless.need("periplan-no-such-browser")
