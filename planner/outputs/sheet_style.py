"""Night mode and print style shared by the nightly sheets and the week pages (CSS and a script).

Night mode keeps dark adaptation at the telescope: deep red text and lines on black. It is
chosen by the reader's system (``prefers-color-scheme: dark``) or by the switch on the page,
whose choice is remembered in the browser's ``localStorage`` (the switch needs no network; on a
file:// page the choice is kept for the pages of that browser profile). Printing always uses
black on white. The print rules fit a night of up to five blocks on one A4 page: compact type,
the score's reasons run on as one paragraph, and only a block (never the sky table or the
caution) is kept from splitting across pages, so no near-empty first page is left behind.
"""

from __future__ import annotations

#: localStorage key of the reader's choice ("night" or "day").
STORAGE_KEY = "periplan-view"

#: Colours of each view: page background, text, table lines, block accent, caution frame.
DAY = {"bg": "#ffffff", "fg": "#111111", "line": "#999999", "accent": "#1f5f8b", "warn": "#b00000"}
NIGHT = {"bg": "#000000", "fg": "#c80000", "line": "#5a0000", "accent": "#8a0000", "warn": "#ff3030"}
PRINT = {"bg": "#ffffff", "fg": "#000000", "line": "#777777", "accent": "#000000", "warn": "#000000"}
#: Dims the PNG charts to deep red in night mode.
_RED_IMAGES = "filter: grayscale(1) brightness(0.55) sepia(1) hue-rotate(-45deg) saturate(6);"


def colour_rules(scope: str, c: dict) -> str:
    """CSS giving the elements under ``scope`` (a selector for ``html``) the colours ``c``."""
    return (f"{scope}, {scope} body {{ background: {c['bg']}; color: {c['fg']}; }}\n"
            f"{scope} th, {scope} td {{ border-color: {c['line']}; }}\n"
            f"{scope} a {{ color: {c['fg']}; }}\n"
            f"{scope} .caution {{ border-color: {c['warn']}; }}\n"
            f"{scope} .block {{ border-left-color: {c['accent']}; }}\n"
            f"{scope} .view-switch {{ background: {c['bg']}; color: {c['fg']}; border-color: {c['line']}; }}\n")


CSS = (colour_rules("html", DAY) + colour_rules("html.night", NIGHT)
       + "@media (prefers-color-scheme: dark) {\n" + colour_rules("html:not(.day)", NIGHT)
       + f"html:not(.day) img {{ {_RED_IMAGES} }}\n}}\n" + f"html.night img {{ {_RED_IMAGES} }}\n" + """
.sky th, .sky td:first-child, .sky tr:not(:last-child) td { white-space: nowrap; }
.pointing { margin: 0.2em 0; }
.pointing span { white-space: nowrap; margin-right: 1.2em; }
.view-switch { float: right; font: inherit; border: 1px solid; padding: 0.2em 0.7em; cursor: pointer; }
@media print {
""" + "".join(colour_rules(scope, PRINT) for scope in ("html", "html.night", "html:not(.day)")) + """
  html.night img, html:not(.day) img { filter: none; }
  .view-switch { display: none; }
  body { font-size: 8.5pt; line-height: 1.25; }
  h1 { font-size: 12pt; margin: 0 0 0.2em 0; }
  .caution { padding: 0.25em 0.5em; margin: 0.3em 0; }
  table, .caution { break-inside: auto; page-break-inside: auto; }
  th, td { padding: 0.1em 0.4em; }
  table { margin: 0.2em 0 0.4em 0; }
  .block { margin: 0.35em 0; padding: 0.1em 0.6em; }
  .block h2 { font-size: 9.5pt; }
  .block p { margin: 0.1em 0; }
  .block ul { margin: 0.1em 0; padding: 0; }
  .block li { display: inline; }
  .block li + li::before { content: " \\00b7 "; }
}
""")

#: The switch button; its label says what a press gives.
SWITCH_HTML = ('<button type="button" id="view-switch" class="view-switch" aria-pressed="false">'
               'night mode</button>')

#: Runs in <head> before the body is drawn (no flash of the wrong colours) and wires the switch.
HEAD_SCRIPT = """
(function () {
  var key = "%s", root = document.documentElement, saved = null;
  try { saved = window.localStorage.getItem(key); } catch (e) { saved = null; }
  var dark = window.matchMedia && window.matchMedia("(prefers-color-scheme: dark)").matches;
  function apply(night) {
    root.classList.toggle("night", night);
    root.classList.toggle("day", !night);
    var b = document.getElementById("view-switch");
    if (b) { b.textContent = night ? "day mode" : "night mode"; b.setAttribute("aria-pressed", String(night)); }
  }
  var night = saved ? saved === "night" : dark;
  apply(night);
  document.addEventListener("DOMContentLoaded", function () {
    apply(night);
    document.getElementById("view-switch").addEventListener("click", function () {
      night = !night;
      apply(night);
      try { window.localStorage.setItem(key, night ? "night" : "day"); } catch (e) { /* private mode */ }
    });
  });
})();
""" % STORAGE_KEY


def head_html() -> str:
    """The ``<style>`` and ``<script>`` elements for a page's ``<head>``."""
    return f"<style>{CSS}</style>\n<script>{HEAD_SCRIPT}</script>"
