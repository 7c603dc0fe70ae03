"""Charts: PNG files written and sane, the right artists drawn, the RV curve against radvel.

References: the PNG signature and IHDR layout (ISO/IEC 15948:2004, PNG specification, sec. 5.2
and 11.2.2); radvel's ``kepler.rv_drive`` (Fulton et al. 2018, PASP 130, 044504), which takes
omega as the star's argument of periastron, the convention of planner.orbit.
"""

from __future__ import annotations

import struct

import numpy as np
import pandas as pd
import pytest
import radvel.kepler as radvel_kepler

from planner.outputs import charts
from planner.scheduling import schedule
from planner.inputs.catalogue import parse_catalogue

J0 = 2461382.0  # 2026-12-07 12:00 UTC

NIGHT = pd.Series({"night": "2026-12-07", "sunset_jd_utc": J0 + 0.20, "dark_start_jd_utc": J0 + 0.26,
                   "dark_end_jd_utc": J0 + 0.74, "sunrise_jd_utc": J0 + 0.80, "moon_illumination": 0.4,
                   "darkness_sun_alt_deg": -18.0})


def block(night, s, e, target, ti, event="periastron", kind="fixed", ev=np.nan, ws=np.nan, we=np.nan):
    row = {c: np.nan for c in schedule.SCHEDULE_COLUMNS}
    row.update(night=night, start_jd_utc=s, end_jd_utc=e, target=target, target_index=ti, event=event,
               label=event, kind=kind, event_jd_utc=ev, window_start_jd_utc=ws, window_end_jd_utc=we,
               score=50.0, notes="")
    return row


def night_blocks():
    return pd.DataFrame([
        block("2026-12-07", J0 + 0.30, J0 + 0.42, "Alpha", 0, ev=J0 + 0.36, ws=J0 + 0.28, we=J0 + 0.44),
        block("2026-12-07", J0 + 0.45, J0 + 0.49, "Beta", 1, event="visit", kind="flexible"),
    ])[list(schedule.SCHEDULE_COLUMNS)]


def curves():
    t = np.linspace(J0 + 0.15, J0 + 0.85, 300)
    alt = np.vstack([70 - 150 * abs(t - J0 - 0.45), 65 - 140 * abs(t - J0 - 0.55)])
    return t, alt, ["Alpha", "Beta"]


#: Drawn values are the inputs passed through float arithmetic once; 1e-12 (deg, or orbital
#: phase) is rounding, far below a pixel.
DRAWN_TOL = 1e-12


def png_size(path):
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24]), len(data)


def by_gid(artists, gid):
    return [a for a in artists if a.get_gid() == gid]


def test_night_chart_png_and_artists(tmp_path):
    t, alt, names = curves()
    blocks = night_blocks()
    fig = charts.night_figure(NIGHT, t, alt, names, blocks, 30.0, tz="Europe/Madrid")
    ax = fig.axes[0]
    lines = ax.get_lines()
    assert [ln.get_label() for ln in by_gid(lines, "curve")] == names
    assert len(by_gid(lines, "block")) == 2  # both blocks drawn on their curves
    assert len(by_gid(lines, "window")) == 1  # the fixed block's event window
    assert len(by_gid(lines, "event")) == 1
    limit = by_gid(lines, "limit")
    assert len(limit) == 1 and abs(limit[0].get_ydata()[0] - 30.0) <= DRAWN_TOL
    assert len(by_gid(ax.patches, "dark")) == 1 and len(by_gid(ax.patches, "twilight")) == 2
    # the thick block line spans the block's hours (x = hours after 00:00 UTC of the night's date)
    bx = by_gid(lines, "block")[0].get_xdata()
    step_h = (t[1] - t[0]) * 24
    assert abs(bx.min() - (0.30 + 0.5) * 24) <= step_h and abs(bx.max() - (0.42 + 0.5) * 24) <= step_h
    assert by_gid(lines, "moon") == []
    with_moon = charts.night_figure(NIGHT, t, alt, names, blocks, 30.0, moon_alt_deg=np.linspace(-10, 40, t.size))
    moon = by_gid(with_moon.axes[0].get_lines(), "moon")
    assert len(moon) == 1 and moon[0].get_label() == "Moon, 40% lit"
    path = charts.write_night_chart(tmp_path / "night.png", NIGHT, t, alt, names, blocks, 30.0, tz="Europe/Madrid")
    (w, h), size = png_size(path)
    # the altitude chart's 5.2 in, and one lane under it for the one event window (its 4 deg at
    # the altitude scale's 3.9 in for 90 deg)
    assert (w, h) == (int(10.0 * charts.DPI), int((5.2 + 4.0 * 3.9 / 90) * charts.DPI))
    assert 10_000 < size < 2_000_000


def test_night_chart_legend_stays_inside_the_figure():
    # a darkness given as a Sun altitude names itself at length ("darkness (Sun below -15 deg)")
    # and so may a target: long legend entries wrap instead of running off the PNG
    t, alt, _ = curves()
    night = NIGHT.copy()
    night["darkness_sun_alt_deg"] = -15.0
    names = ["Alpha", "A rather long designation of a star"]
    blocks = night_blocks().assign(target=names)
    fig = charts.night_figure(night, t, alt, names, blocks, 30.0, tz="Europe/Madrid")
    fig.canvas.draw()
    legend = fig.axes[0].get_legend()
    assert legend.get_window_extent(fig.canvas.get_renderer()).x1 <= fig.bbox.x1
    texts = [tx.get_text() for tx in legend.get_texts()]
    assert "darkness (Sun below\n-15 deg)" in texts


def test_night_chart_refuses_mismatched_arrays():
    t, alt, names = curves()
    from planner.errors import PeriplanError

    with pytest.raises(PeriplanError, match="shape"):
        charts.night_figure(NIGHT, t, alt[:1], names, night_blocks(), 30.0)


def test_week_chart_one_bar_per_block_and_empty_nights(tmp_path):
    nights = pd.DataFrame([NIGHT, NIGHT.copy(), NIGHT.copy()])
    nights["night"] = ["2026-12-07", "2026-12-08", "2026-12-09"]
    for col in ("sunset_jd_utc", "dark_start_jd_utc", "dark_end_jd_utc", "sunrise_jd_utc"):
        nights[col] = nights[col] + np.arange(3)
    nights.loc[2, ["dark_start_jd_utc", "dark_end_jd_utc"]] = np.nan  # a night without darkness
    blocks = pd.concat([night_blocks(), pd.DataFrame([block("2026-12-08", J0 + 1.3, J0 + 1.4, "Alpha", 0)])],
                       ignore_index=True)
    fig = charts.week_figure(blocks, nights, tz="Europe/Madrid")
    ax = fig.axes[0]
    assert len(by_gid(ax.collections, "block")) == len(blocks)
    assert len(by_gid(ax.collections, "dark")) == 2  # only the nights that have darkness
    texts = [t.get_text() for t in ax.texts]
    assert "no astronomical darkness" in texts
    assert [t.get_text() for t in ax.get_yticklabels()] == ["2026-12-09", "2026-12-08", "2026-12-07"]
    (w, h), size = png_size(charts.write_week_chart(tmp_path / "week.png", blocks, nights, "Europe/Madrid"))
    assert w == int(10.0 * charts.DPI) and size > 5_000



def test_week_chart_labels_of_a_crowded_night_do_not_overlap():
    """Three short blocks under an hour apart, long names: each name is written whole or shortened
    with an ellipsis, and no label's box, as matplotlib's renderer measures it, crosses another
    label or another block's bar (the placement estimates text widths; the renderer is the check)."""
    nights = pd.DataFrame([NIGHT])
    day = "2026-12-07"
    blocks = pd.DataFrame([
        block(day, J0 + 0.60, J0 + 0.66, "Quejigo EB-4 long name", 0),
        block(day, J0 + 0.67, J0 + 0.69, "Retamar-19 also long", 1),
        block(day, J0 + 0.70, J0 + 0.72, "Lentisco-8 third", 2),
        block(day, J0 + 0.73, J0 + 0.745, "Encina-2 fourth one", 3),
        block(day, J0 + 0.30, J0 + 0.40, "Alpha", 4),
    ])[list(schedule.SCHEDULE_COLUMNS)]
    fig = charts.week_figure(blocks, nights, tz="UTC")
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    ax = fig.axes[0]
    labels = by_gid(ax.texts, "block_label")
    assert len(labels) == len(blocks)
    names = list(blocks["target"])
    for t in labels:
        text = t.get_text()
        assert text in names or (text.endswith("\u2026") and any(n.startswith(text[:-1]) for n in names))
    assert "Alpha" in [t.get_text() for t in labels]  # room inside its bar
    boxes = [t.get_window_extent(renderer) for t in labels]
    bars = [b.get_datalim(ax.transData) for b in by_gid(ax.collections, "block")]  # display units
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert not a.overlaps(b), (labels[i].get_text(), a, b)
        inside = [k for k, bar in enumerate(bars) if bar.x0 - 1 <= a.x0 and a.x1 <= bar.x1 + 1
                  and bar.y0 <= a.y0 and a.y1 <= bar.y1]
        for k, bar in enumerate(bars):
            if k not in inside:
                assert not a.overlaps(bar), (labels[i].get_text(), k)


CATALOGUE = """\
name,ra,dec,period_d,e,omega_deg,tp,k_ms,gamma_ms,events
Ecc,63.14,21.78,111.4367,0.928,301.2,2461300.25,468.0,-3120.0,periastron;primary_conjunction;rv_max;rv_min
"""


def test_rv_chart_curve_matches_radvel_and_marks_events_and_blocks(tmp_path):
    target = parse_catalogue(CATALOGUE).iloc[0]
    p, tp, e, w, k, gamma = 111.4367, 2461300.25, 0.928, np.radians(301.2), 468.0, -3120.0
    blocks = pd.DataFrame([block("2026-12-07", J0 + 0.30, J0 + 0.42, "Ecc", 0)])
    fig = charts.rv_figure(target, blocks, n_phase=2001)
    ax = fig.axes[0]
    curve = by_gid(ax.get_lines(), "curve")[0]
    phase, rv = curve.get_xdata(), curve.get_ydata()
    ref = radvel_kepler.rv_drive(tp + phase * p, np.array([p, tp, e, w, k])) + gamma
    # radvel's and our Kepler solvers both converge to ~1e-12 rad; at K = 468 m/s and e = 0.928
    # the steepest part of the curve turns that into < 1e-6 m/s
    rv_tol_ms = 1e-6
    assert np.max(abs(rv - ref)) <= rv_tol_ms
    # events: a line per wanted event; the RV maximum line sits at radvel's maximum
    gids = sorted(a.get_gid() for a in ax.get_lines() if str(a.get_gid()).startswith("event:"))
    assert gids == ["event:periastron", "event:primary_conjunction", "event:rv_max", "event:rv_min"]
    n_fine = 200_000
    fine = np.linspace(0.0, 1.0, n_fine + 1)
    ref_fine = radvel_kepler.rv_drive(tp + fine * p, np.array([p, tp, e, w, k]))
    x_max = by_gid(ax.get_lines(), "event:rv_max")[0].get_xdata()[0]
    # the maximum of radvel's curve is located to one step of the search grid; two steps of slack
    phase_tol = 2.0 / n_fine
    assert abs(x_max - fine[np.argmax(ref_fine)]) <= phase_tol
    assert abs(by_gid(ax.get_lines(), "event:periastron")[0].get_xdata()[0]) <= DRAWN_TOL
    # the planned block: a shaded span and a dot on the curve at the block's middle
    assert len(by_gid(ax.patches, "block")) == 1
    dot = by_gid(ax.get_lines(), "planned")[0]
    ph, v = dot.get_xdata()[0], dot.get_ydata()[0]
    t_mid = tp + ph * p
    assert abs(v - (radvel_kepler.rv_drive(np.array([t_mid]), np.array([p, tp, e, w, k]))[0] + gamma)) <= rv_tol_ms
    (wpx, hpx), size = png_size(charts.write_rv_chart(tmp_path / "rv.png", target, blocks))
    assert (wpx, hpx) == (int(9.8 * charts.DPI), int(4.2 * charts.DPI)) and size > 10_000
    # the legend sits right of the axes and each night's label left of its block's marker, so
    # neither hides a mark (boxes as matplotlib's renderer measures them)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    legend = ax.get_legend().get_window_extent(renderer)
    assert legend.x0 >= ax.get_window_extent(renderer).x1 and legend.x1 <= fig.bbox.x1
    marker_x = dot.get_window_extent(renderer).x0  # the marker's left edge
    labels = [t for t in ax.texts if t.get_gid() == "night_label"]
    assert len(labels) == len(blocks)
    for label in labels:
        assert label.get_window_extent(renderer).x1 <= marker_x


def test_rv_chart_night_labels_of_close_blocks_do_not_overlap():
    # two blocks of one night 1.2 h apart on a 12.5 d orbit (0.004 in phase), a third of another
    # night half an orbit later: two labels, the first naming its night once, none overlapping
    target = parse_catalogue("name,ra,dec,period_d,e,omega_deg,tp,k_ms\nLow,85.1,-10.2,12.5,0.08,20,2461375.2,12\n").iloc[0]
    blocks = pd.DataFrame([block("2026-12-10", J0 + 0.10, J0 + 0.13, "Low", 0),
                           block("2026-12-10", J0 + 0.18, J0 + 0.21, "Low", 0),
                           block("2026-12-16", J0 + 6.35, J0 + 6.38, "Low", 0)])
    fig = charts.rv_figure(target, blocks)
    ax = fig.axes[0]
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    labels = [t for t in ax.texts if t.get_gid() == "night_label"]
    assert sorted(t.get_text() for t in labels) == ["2026-12-10", "2026-12-16"]
    boxes = [t.get_window_extent(renderer) for t in labels]
    assert not boxes[0].overlaps(boxes[1])
    assert len(by_gid(ax.get_lines(), "planned")) == 3  # every block keeps its marker


def test_rv_chart_needs_an_orbit():
    from planner.errors import PeriplanError

    linear = parse_catalogue("name,ra,dec,period_d,t0\nPuls,10,10,0.137,2461000.1\n").iloc[0]
    with pytest.raises(PeriplanError, match="Keplerian elements"):
        charts.rv_figure(linear, pd.DataFrame(columns=list(schedule.SCHEDULE_COLUMNS)))


def test_failed_chart_leaves_no_file(tmp_path):
    from planner.errors import PeriplanError

    t, alt, names = curves()
    with pytest.raises(PeriplanError, match="not a date"):
        charts.write_night_chart(tmp_path / "night.png", {"night": "not a date"}, t, alt, names, night_blocks(), 30.0)
    assert list(tmp_path.iterdir()) == []


def test_night_chart_draws_a_zenith_limit_beside_the_lower_one():
    from planner.inputs.site import Site

    t, alt, names = curves()
    site = Site(name="alt-az", latitude_deg=54.6, longitude_deg=-2.9, elevation_m=300.0, timezone="Europe/London",
                min_altitude_deg=25.0, max_altitude_deg=80.0)
    az, ha = np.zeros_like(alt), np.zeros_like(alt)
    fig = charts.night_figure(NIGHT, t, alt, names, night_blocks(), 25.0, az_deg=az, ha_h=ha, site=site)
    lines = fig.axes[0].get_lines()
    ceiling, limit = by_gid(lines, "ceiling"), by_gid(lines, "limit")
    assert len(ceiling) == 1 and abs(ceiling[0].get_ydata()[0] - 80.0) <= DRAWN_TOL
    assert limit[0].get_label() == "altitude limits 25 and 80 deg"
    plain = charts.night_figure(NIGHT, t, alt, names, night_blocks(), 25.0)
    assert by_gid(plain.axes[0].get_lines(), "ceiling") == []


def test_a_block_that_pauses_draws_no_thick_line_over_its_pause():
    t, alt, names = curves()
    blocks = night_blocks()
    blocks.loc[0, ["pause_start_jd_utc", "pause_end_jd_utc"]] = [J0 + 0.34, J0 + 0.37]
    fig = charts.night_figure(NIGHT, t, alt, names, blocks, 30.0)
    line = by_gid(fig.axes[0].get_lines(), "block")[0]
    x, y = line.get_xdata(), np.asarray(line.get_ydata(), float)
    in_pause = (x > (0.34 + 0.5) * 24) & (x < (0.37 + 0.5) * 24)
    assert in_pause.any() and np.isnan(y[in_pause]).all() and np.isfinite(y[~in_pause]).all()
