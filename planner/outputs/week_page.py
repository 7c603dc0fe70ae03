"""The plan folder's web pages: ``index.html`` for the week and one page per scheduled target.

Self-contained and offline: no script, font or style from the network; the charts are the plan's
own PNG files, linked by relative paths, so the folder can be copied, zipped or opened from a
file:// URL and every link still works. ``index.html`` holds the Sun caution, the week chart,
the list of nights (each night's sheet and altitude chart), a table of every block, a table of
what was not scheduled with its reason, and the list of targets. Each target page
(``target-NAME.html``) lists the target's events in the week, scheduled or not, and shows its
charts. Night mode and printing follow :mod:`planner.outputs.sheet_style`.

Builders return strings (:func:`index_html`, :func:`target_html`); :func:`write_week_pages`
writes them through :func:`planner.outputs.atomic.atomic_write`.
"""

from __future__ import annotations

import html
import os

import numpy as np

from ..scheduling.blocks import MIN_PER_DAY
from ..timescales import clock
from . import sheet_style
from .atomic import atomic_write
from .chart_marks import event_words, target_labels
from .sheets import CAUTION

PAGE_CSS = """
body { font-family: "DejaVu Sans", Arial, sans-serif; margin: 1.5em; max-width: 72em; }
table { border-collapse: collapse; margin: 0.5em 0 1em 0; }
th, td { border: 1px solid; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
td.num { text-align: right; }
.caution { border: 3px solid; padding: 0.6em 0.8em; font-weight: bold; }
img { max-width: 100%; height: auto; }
nav a { margin-right: 1em; }
"""


def file_part(plan, target_name: str) -> str:
    """The target's part of file names in this plan: unique and readable across the whole
    catalogue (:func:`planner.outputs.file_names.unique_file_parts`), so a target keeps its file
    names whichever targets are scheduled with it; computed once per plan object and kept on it
    (a page set asks for it hundreds of times)."""
    parts = vars(plan).get("_file_parts")
    if parts is None:
        from .file_names import unique_file_parts

        parts = vars(plan)["_file_parts"] = unique_file_parts(plan.targets["name"].astype(str))
    return parts[str(target_name)]


def event_rows(plan) -> dict:
    """``{target_index: positions of its rows in plan.events}``, computed once per plan object and
    kept on it (a page set takes every scheduled target's events)."""
    rows = vars(plan).get("_event_rows")
    if rows is None:
        index = plan.events["target_index"].to_numpy(np.int64) if len(plan.events) else np.zeros(0, np.int64)
        order = np.argsort(index, kind="stable")
        ids, first = np.unique(index[order], return_index=True)
        rows = vars(plan)["_event_rows"] = dict(zip(ids.tolist(), np.split(order, first[1:])))
    return rows


def page_name(plan, target_name: str) -> str:
    """File name of a target's page."""
    return f"target-{file_part(plan, target_name)}.html"


def _percent(fraction) -> str:
    """A fraction as a whole percentage; a small non-zero one as ``<1%`` (never a false 0%)."""
    return "<1%" if 0 < fraction < 0.005 else f"{100 * fraction:.0f}%"


def _page(title, body_lines):
    e = html.escape
    return "\n".join(["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
                      f"<title>{e(title)}</title>", f"<style>{PAGE_CSS}</style>", sheet_style.head_html(),
                      "</head>", "<body>", sheet_style.SWITCH_HTML, f"<h1>{e(title)}</h1>",
                      f'<p class="caution">{e(CAUTION)}</p>', *body_lines,
                      f'<p class="caution">{e(CAUTION)}</p>', "</body>", "</html>", ""])


def _table(header, rows):
    e = html.escape
    out = ["<table>", "<tr>" + "".join(f"<th>{e(h)}</th>" for h in header) + "</tr>"]
    for r in rows:
        out.append("<tr>" + "".join(c if c.startswith("<td") else f"<td>{c}</td>" for c in r) + "</tr>")
    out.append("</table>")
    return out


#: Most rows of the index page's table of what got no block; the rest are in unscheduled.csv.
UNSCHEDULED_ROWS = 300


def _unscheduled_lines(plan, files=()) -> list[str]:
    """The table of what got no block (:mod:`planner.scheduling.losses`): one row per target,
    event and reason.

    Each row counts the requests, names the nights (first to last), gives the best value a
    candidate block of them had and the reason in words (the first one's, for blocks lost to
    others), so a catalogue of thousands of targets still gives a page one can read. Beyond
    :data:`UNSCHEDULED_ROWS` rows the page keeps those of highest priority, then best value, and
    says how many more ``unscheduled.csv`` holds (a survey's week leaves a million requests).
    """
    e = html.escape
    un = plan.unscheduled
    if un is None or un.empty:
        return ["<p>Every request of the nights got a block.</p>"]
    groups = un.groupby(["target", "event", "reason_code"], sort=True).agg(
        requests=("night", "size"), first=("night", "min"), last=("night", "max"),
        best=("best_value", "max"), reason=("reason", "first"), priority=("priority", "max")).reset_index()
    note = []
    if len(groups) > UNSCHEDULED_ROWS:
        shown = groups.assign(best0=groups["best"].fillna(-np.inf)).sort_values(
            ["priority", "best0"], ascending=False, kind="stable").index[:UNSCHEDULED_ROWS]
        csv = '<a href="unscheduled.csv">unscheduled.csv</a>' if "unscheduled.csv" in files else "unscheduled.csv"
        note = [f"<p>The {UNSCHEDULED_ROWS} rows of highest priority, then best value, of {len(groups)}; "
                f"{csv} lists every request ({len(un)}).</p>"]
        groups = groups.loc[np.sort(shown)]
    rows = []
    labels = target_labels(getattr(plan, "targets", None))
    for t, ev, _code, k, lo, hi, best, why, _p in groups.itertuples(index=False):
        value = f"{best:.0f}" if np.isfinite(best) else ""
        rows.append([e(str(t)), e(event_words(ev, labels.get(t))), f'<td class="num">{k}</td>',
                     e(lo if lo == hi else f"{lo} to {hi}"), f'<td class="num">{e(value)}</td>', e(str(why))])
    return note + _table(["target", "event", "requests", "nights", "best value", "reason"], rows)


def index_html(plan, files) -> str:
    """``index.html`` of a plan; ``files`` are the names of the plan's files (for the links)."""
    e = html.escape
    tz, site = plan.site.timezone, plan.site.name
    files = set(files)
    sched = plan.schedule.sort_values("start_jd_utc", kind="stable") if len(plan.schedule) else plan.schedule
    labels = list(plan.nights["night"].astype(str))
    title = f"{site}: plan for the nights {labels[0]} to {labels[-1]}" if labels else f"{site}: plan"
    body = ['<nav><a href="#week">week chart</a><a href="#nights">nights</a><a href="#blocks">blocks</a>'
            '<a href="#unscheduled">not scheduled</a><a href="#targets">targets</a></nav>',
            '<h2 id="week">The week</h2>']
    if "week.png" in files:
        body.append('<img src="week.png" alt="the week\'s blocks, one row per night">')
    body.append('<h2 id="nights">Nights</h2>')
    rows = []
    per_night = sched["night"].astype(str).value_counts() if len(sched) else {}
    dark_from = clock.hhmm(plan.nights["dark_start_jd_utc"], tz)
    dark_to = clock.hhmm(plan.nights["dark_end_jd_utc"], tz)
    for (_, night), d0, d1 in zip(plan.nights.iterrows(), dark_from, dark_to):
        lab = str(night["night"])
        n = int(per_night.get(lab, 0))
        links = [f'<a href="night-{lab}.html">sheet</a>'] if f"night-{lab}.html" in files else []
        if f"night-{lab}.txt" in files:
            links.append(f'<a href="night-{lab}.txt">text</a>')
        if f"altitude-{lab}.png" in files:
            links.append(f'<a href="altitude-{lab}.png">altitude chart</a>')
        dark = f"{d0}-{d1}" if np.isfinite(night["dark_start_jd_utc"]) else "no astronomical darkness"
        rows.append([f'<td id="night-{e(lab)}">{e(lab)}</td>', e(dark), f'<td class="num">{n}</td>', " ".join(links)])
    body += _table(["night", "dark (local)", "blocks", "pages"], rows)
    body.append('<h2 id="blocks">Every block</h2>')
    has_covers = "covers" in sched.columns
    header = ["night", "start (local)", "end (local)", "target", "what"] + (["covers"] if has_covers else []) + ["score"]
    rows = []
    starts, ends = clock.hhmm(sched["start_jd_utc"], tz), clock.hhmm(sched["end_jd_utc"], tz)
    for (_, b), b0, b1 in zip(sched.iterrows(), starts, ends):
        cells = [f'<a href="#night-{e(str(b["night"]))}">{e(str(b["night"]))}</a>', e(b0),
                 e(b1), f'<a href="{e(page_name(plan, b["target"]))}">{e(str(b["target"]))}</a>',
                 e(event_words(b["event"], b["label"]))]
        if has_covers:
            cells.append(e(str(b["covers"]).replace("_", " ")) if isinstance(b["covers"], str) else "")
        cells.append(f'<td class="num">{b["score"]:.1f}</td>')
        rows.append(cells)
    body += _table(header, rows) if rows else ["<p>No block could be scheduled in these nights.</p>"]
    body.append('<h2 id="unscheduled">Not scheduled, and why</h2>')
    body += _unscheduled_lines(plan, files)
    body.append('<h2 id="targets">Targets with blocks</h2><ul>')
    for nm in sorted(set(sched["target"].astype(str))) if len(sched) else []:
        body.append(f'<li><a href="{e(page_name(plan, nm))}">{e(nm)}</a></li>')
    body.append("</ul>")
    body.append(f"<p>Times are local ({e(tz)}); the sheets give UTC beside them.</p>")
    return _page(title, body)


def target_html(plan, target_index: int, files) -> str:
    """The page of one target: its place, its events in the nights, its blocks and charts."""
    from .sheet_pointing import dec_dms, ra_hms

    e = html.escape
    tz, files = plan.site.timezone, set(files)
    t = plan.targets.iloc[target_index]
    name = str(t["name"])
    body = ['<p><a href="index.html">back to the week</a></p>',
            f"<p>RA/Dec J2000 {e(ra_hms(t['ra_deg']))} {e(dec_dms(t['dec_deg']))}"
            + (f", mag {float(t['mag']):.1f}" if "mag" in t and np.isfinite(t["mag"]) else "")
            + (f", period {t['period_d']:.6g} d" if np.isfinite(t["period_d"]) else "") + "</p>"]
    ev = plan.events.iloc[event_rows(plan).get(target_index, [])]
    sched = plan.schedule[plan.schedule["target_index"].astype(int) == target_index] if len(plan.schedule) \
        else plan.schedule
    body.append('<h2 id="events">Events in these nights</h2>')
    ev = ev.sort_values("jd_utc")
    jd = ev["jd_utc"].to_numpy(float)
    when = clock.jd_utc_to_local_iso(jd, tz) if len(ev) else []
    s0, s1 = sched["start_jd_utc"].to_numpy(float), sched["end_jd_utc"].to_numpy(float)
    s_event = sched["event"].astype(str).to_numpy()
    period_d = float(t["period_d"]) if np.isfinite(t["period_d"]) else np.inf
    s_serves = [str(x or "").split(";") for x in sched["serves"]] if "serves" in sched else [[x] for x in s_event]
    s_event_jd = sched["event_jd_utc"].to_numpy(float) if "event_jd_utc" in sched else np.full(len(sched), np.nan)
    s_start = clock.jd_utc_to_local_iso(s0, tz) if len(sched) else []
    s_end = clock.jd_utc_to_local_iso(s1, tz) if len(sched) else []
    s_night = sched["night"].astype(str).to_numpy()
    rows = []
    for night, event, label, w, sig_d, frac, w0, w1, t in zip(ev["night"].astype(str), ev["event"].astype(str),
                                                             ev["label"], when,
                                                             ev["sigma_d"].to_numpy(float), ev["observable_fraction"],
                                                             ev["window_start_jd_utc"].to_numpy(float),
                                                             ev["window_end_jd_utc"].to_numpy(float), jd):
        # the block of this event instance: its own (same event moment, wherever its request's
        # window put it), or a merged block that serves it too, within half an orbit of it
        own = (s_event == event) & (np.abs(s_event_jd - t) * MIN_PER_DAY < 1.0)
        also = (np.array([event in names for names in s_serves], dtype=bool)
                & (np.abs(0.5 * (s0 + s1) - t) < 0.5 * period_d))
        mine = np.flatnonzero(own | also | ((s_event == event) & (s0 <= w1) & (s1 >= w0)))
        if mine.size:
            k = mine[0]
            span = f"{s_start[k][11:16]}-{s_end[k][11:16]}"
            if s_night[k] != night:  # an RV window reaching into another night
                span = f"night of {s_night[k]}, {span}"
            block = f'<a href="night-{e(s_night[k])}.html">block {e(span)}</a>'
        else:
            block = "not scheduled"
        sig = sig_d * MIN_PER_DAY
        rows.append([e(night), e(event_words(event, label)), e(str(w)[:16].replace("T", " ")),
                     f'<td class="num">{sig:.1f}</td>' if np.isfinite(sig) else "",
                     f'<td class="num">{e(_percent(frac))}</td>', block])
    body += (_table(["night", "event", "time (local)", "1 sigma (min)", "observable", "block"], rows) if rows
             else ["<p>No event of this target falls in these nights.</p>"])
    flex = sched[sched["kind"] == "flexible"] if len(sched) else sched
    if len(flex):
        body.append("<p>Flexible visits: " + ", ".join(
            f'<a href="night-{e(str(b["night"]))}.html">{e(str(b["night"]))} {e(hhmm)}</a>'
            for (_, b), hhmm in zip(flex.iterrows(), clock.hhmm(flex["start_jd_utc"], tz))) + "</p>")
    body.append('<h2 id="charts">Charts</h2>')
    rv = f"rv-{file_part(plan, name)}.png"
    if rv in files:
        body.append(f'<p><img src="{e(rv)}" alt="radial velocity of {e(name)} over one orbit"></p>')
    for lab in sorted(set(sched["night"].astype(str))) if len(sched) else []:
        if f"altitude-{lab}.png" in files:
            body.append(f'<p><img src="altitude-{e(lab)}.png" alt="altitude chart of the night of {e(lab)}"></p>')
    return _page(f"{name}: events and blocks", body)


def page_files(plan) -> list[str]:
    """Names of the pages :func:`write_week_pages` writes: index.html, then one per target with blocks."""
    ids = sorted(set(plan.schedule["target_index"].astype(int))) if len(plan.schedule) else []
    return ["index.html"] + [page_name(plan, plan.targets["name"].iloc[i]) for i in ids]


def write_week_pages(out_dir, plan, files) -> list[str]:
    """Write ``index.html`` and the target pages into ``out_dir``; returns their paths."""
    paths = []
    ids = sorted(set(plan.schedule["target_index"].astype(int))) if len(plan.schedule) else []
    pages = [("index.html", index_html(plan, files))]
    pages += [(page_name(plan, plan.targets["name"].iloc[i]), target_html(plan, i, files)) for i in ids]
    for name, text in pages:
        path = os.path.join(os.fspath(out_dir), name)
        with atomic_write(path) as fh:
            fh.write(text)
        paths.append(path)
    return paths
