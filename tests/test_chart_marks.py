"""Site limits, event words, clipped windows, one look per target, RV units and timing bands.

References: astropy's AltAz frame (azimuth and altitude of a real star's track, no refraction);
Young 1994, Applied Optics 33, 1108 (airmass 1.9917 at zenith distance 60 deg, as tabulated in the
project's reference values from the published formula); radvel's ``kepler.rv_drive`` (Fulton et
al. 2018, PASP 130, 044504) for the RV curve; WCAG 2.1 (W3C 2018), definition of relative
luminance, for telling the palette's colours apart in grey.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.inputs.catalogue import parse_catalogue
from planner.inputs.site import parse_site
from planner.outputs import charts, target_style
from planner.scheduling import schedule
from planner.sky import windows
from test_charts import J0, NIGHT, block

SITE = parse_site('name = "Test site (invented)"\nlatitude_deg = 37.62\nlongitude_deg = -3.12\nelevation_m = 1650\n'
                  'timezone = "Europe/Madrid"\nmin_altitude_deg = 20\nmax_airmass = 1.9917\n'
                  'min_hour_angle_h = -2\nmax_hour_angle_h = 2\n'
                  'horizon = [[0, 10], [80, 45], [110, 45], [180, 10], [300, 10]]\n')
# Aldebaran, ICRS place from memory, rounded (astropy takes the same numbers)
TARGETS = pd.DataFrame({"name": ["alpha Tau"], "ra_deg": [68.98], "dec_deg": [16.51]})
#: Engine and astropy azimuths agree to well under an arcsecond (tests/test_block_sky.py); the
#: profile's steepest slope is 35/80 deg per deg, so the drawn limit agrees to 1e-3 deg.
LIMIT_TOL_DEG = 1e-3


def track():
    t = np.arange(J0 + 0.15, J0 + 0.85, 5 / 1440)
    pos = windows.target_positions(TARGETS, SITE, np.zeros((1, 1), int), t[None, :])
    return t, pos


def night_fig(blocks=None, t=None, pos=None):
    if t is None:
        t, pos = track()
    blocks = blocks if blocks is not None else pd.DataFrame(
        [block("2026-12-07", J0 + 0.30, J0 + 0.42, "alpha Tau", 0, event="primary_conjunction", ev=J0 + 0.36,
               ws=J0 + 0.28, we=J0 + 0.44)])[list(schedule.SCHEDULE_COLUMNS)]
    return charts.night_figure(NIGHT, t, pos.alt_deg, ["alpha Tau"], blocks, SITE.min_altitude_deg, tz="Europe/Madrid",
                               az_deg=pos.az_deg, ha_h=pos.ha_h, site=SITE), t


def lines(fig, gid):
    return [ln for ln in fig.axes[0].get_lines() if ln.get_gid() == gid]


def test_horizon_profile_follows_the_track_azimuth_from_astropy():
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    fig, t = night_fig()
    (horizon,) = lines(fig, "horizon")
    frame = AltAz(obstime=Time(t, format="jd", scale="utc"), location=SITE.earth_location(), pressure=0 * u.hPa)
    az = SkyCoord(68.98 * u.deg, 16.51 * u.deg).transform_to(frame).az.deg
    profile = np.interp(az, [0, 80, 110, 180, 300], [10, 45, 45, 10, 10], period=360)
    want = np.where(profile > 20.05, profile, np.nan)  # drawn only where it rises above the minimum altitude
    got = np.asarray(horizon.get_ydata(), float)
    assert np.array_equal(np.isfinite(got), np.isfinite(want)) and np.isfinite(want).any()
    assert np.nanmax(abs(got - want)) < LIMIT_TOL_DEG


def test_airmass_limit_is_drawn_at_its_altitude():
    fig, _ = night_fig()
    (line,) = lines(fig, "airmass_limit")
    # Young (1994): X = 1.9917 at zenith distance 60 deg, i.e. altitude 30 deg (4 decimals printed)
    assert line.get_ydata()[0] == pytest.approx(30.0, abs=0.01)


def test_curve_outside_the_hour_angle_limits_is_marked():
    import astropy.units as u
    from astropy.time import Time

    fig, t = night_fig()
    (grey,) = lines(fig, "ha_outside")
    lst = Time(t, format="jd", scale="utc").sidereal_time("apparent", longitude=-3.12 * u.deg).hour
    ha = (lst - 68.98 / 15 + 12) % 24 - 12  # mean place: within a minute of time of the apparent one
    outside = np.isfinite(np.asarray(grey.get_ydata(), float))
    clear = abs(abs(ha) - 2.0) > 2 / 60  # away from the limit by more than the place difference
    assert np.array_equal(outside[clear], (abs(ha) > 2.0)[clear]) and outside.any() and (~outside).any()


def test_windows_are_labelled_in_words_and_a_long_one_is_clipped_with_an_arrow():
    long_window = pd.DataFrame([block("2026-12-07", J0 + 0.30, J0 + 0.70, "alpha Tau", 0, event="secondary_conjunction",
                                      ev=J0 + 0.5, ws=J0 - 0.2, we=J0 + 1.3)])[list(schedule.SCHEDULE_COLUMNS)]
    fig, _ = night_fig(long_window)
    ax = fig.axes[0]
    texts = [tx.get_text() for tx in ax.texts]
    assert "alpha Tau: secondary conjunction" in texts and not any("_" in tx for tx in texts)
    (window,) = lines(fig, "window")
    assert list(window.get_xdata()) == list(ax.get_xlim())  # drawn to both edges, not lost
    assert len([a for a in ax.texts if a.get_gid() == "clipped"]) == 2
    short, _ = night_fig()
    assert not [a for a in short.axes[0].texts if a.get_gid() == "clipped"]
    assert "alpha Tau: primary conjunction" in [tx.get_text() for tx in short.axes[0].texts]


def test_many_overlapping_windows_get_lanes_of_their_own_and_no_label_covers_another():
    # sixteen blocks of a crowded night, every event window longer than the night (an RV window
    # lasting days): each in its own lane under the altitude scale, no two labels overlapping
    rows = [block("2026-12-07", J0 + 0.27 + 0.029 * k, J0 + 0.295 + 0.029 * k, "alpha Tau", 0, event="rv_max",
                  ev=J0 + 0.3 + 0.029 * k, ws=J0 - 1.0 - 0.1 * k, we=J0 + 1.5) for k in range(16)]
    crowded = pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]
    fig, _ = night_fig(crowded)
    ax = fig.axes[0]
    heights = sorted({ln.get_ydata()[0] for ln in lines(fig, "window")})
    assert len(heights) == 16 and max(heights) < 0  # sixteen lanes, all below the horizon line
    assert ax.get_ylim()[1] == 90 and ax.get_ylim()[0] <= min(heights) - 1
    fig.canvas.draw()
    boxes = [t.get_window_extent() for t in ax.texts if t.get_text()]
    assert len(boxes) >= 16
    assert not any(p.overlaps(q) for i, p in enumerate(boxes) for q in boxes[i + 1:])
    curve = [ln for ln in ax.get_lines() if ln.get_gid() == "curve"][0]
    # the curve stops at the horizon, above the lanes: clipped at altitude 0 (display pixels)
    assert abs(curve.get_clip_box().y0 - ax.transData.transform((0.0, 0.0))[1]) < 0.5


def test_each_target_keeps_its_look_in_every_chart_and_looks_differ_without_colour():
    names = ["Zeta", "Alpha", "Mid"]
    styles = target_style.plan_styles(names)
    assert styles == target_style.plan_styles(list(reversed(names)))  # order of meeting does not matter
    t = np.linspace(J0 + 0.2, J0 + 0.8, 50)
    alt = np.vstack([np.full(50, 40.0 + 10 * k) for k in range(2)])
    rows = [block("2026-12-07", J0 + 0.3, J0 + 0.4, "Zeta", 0), block("2026-12-07", J0 + 0.5, J0 + 0.6, "Mid", 1)]
    blocks = pd.DataFrame(rows)[list(schedule.SCHEDULE_COLUMNS)]
    night = charts.night_figure(NIGHT, t, alt, ["Zeta", "Mid"], blocks, 30.0, styles=styles)
    curves = {ln.get_label(): ln for ln in night.axes[0].get_lines() if ln.get_gid() == "curve"}
    week = charts.week_figure(blocks, pd.DataFrame([NIGHT]), styles=styles)
    bars = [c for c in week.axes[0].collections if c.get_gid() == "block"]
    from matplotlib.colors import to_hex

    for nm, bar in zip(["Zeta", "Mid"], bars):
        assert to_hex(curves[nm].get_color()) == styles[nm].colour == to_hex(bar.get_facecolor()[0])
        assert curves[nm].get_linestyle() == charts_ls(styles[nm].linestyle)
    pairs = {(str(target_style.style_for_index(i).linestyle), target_style.style_for_index(i).marker) for i in range(30)}
    assert len(pairs) == 30
    grey = sorted(target_style.relative_luminance(c) for c in target_style.COLOURS)
    assert all(abs(grey[i] - grey[i + 1]) > 0.0 for i in range(len(grey) - 1))


def charts_ls(ls):
    from matplotlib.lines import Line2D

    return Line2D([], [], ls=ls).get_linestyle()


def test_neighbouring_palette_colours_differ_in_grey():
    lum = [target_style.relative_luminance(c) for c in target_style.COLOURS]
    # consecutive targets alternate dark and light: a contrast ratio (WCAG 2.1) of at least 1.5
    ratios = [(max(a, b) + 0.05) / (min(a, b) + 0.05) for a, b in zip(lum, lum[1:] + lum[:1])]  # and round again
    assert min(ratios) >= 1.5


ECC = parse_catalogue(
    "name,ra,dec,period_d,e,omega_deg,tp,k_ms,gamma_ms\nBig K,06:00:00,+20:00:00,6.77321,0.276,250.4,2460812.5,52300,11200\n"
    "Small K,06:00:00,+20:00:00,111.4,0.93,301.2,2460900.1,468,0\n")


def test_rv_chart_uses_km_s_for_large_k_and_matches_radvel():
    from radvel.kepler import rv_drive

    big = charts.rv_figure(ECC.iloc[0], ECC.iloc[:0], n_phase=200)
    ax = big.axes[0]
    assert "km/s" in ax.get_ylabel()
    (curve,) = [ln for ln in ax.get_lines() if ln.get_gid() == "curve"]
    ph = np.asarray(curve.get_xdata())
    t = ECC.tp_bjd_tdb[0] + ph * ECC.period_d[0]
    ref = rv_drive(t, [ECC.period_d[0], ECC.tp_bjd_tdb[0], 0.276, np.radians(250.4), 52300.0]) + 11200.0
    assert np.max(abs(np.asarray(curve.get_ydata()) - ref / 1000.0)) < 1e-9  # km/s
    small = charts.rv_figure(ECC.iloc[1], ECC.iloc[:0], n_phase=200)
    assert "(m/s)" in small.axes[0].get_ylabel()


def test_rv_timing_band_is_two_sigma_wide_in_phase_and_logged_points_are_marked():
    sigma_d = 0.02
    fig = charts.rv_figure(ECC.iloc[0], ECC.iloc[:0], n_phase=200, event_sigma_d={"periastron": sigma_d},
                           logged_jd_utc=[2461382.4, 2461383.1])
    ax = fig.axes[0]
    bands = [p for p in ax.patches if p.get_gid() == "sigma"]
    widths = []
    for p in bands:
        if hasattr(p, "get_width"):  # a Rectangle (matplotlib >= 3.9)
            widths.append(p.get_width())
        else:
            xs = np.asarray(p.get_xy())[:, 0]
            widths.append(xs.max() - xs.min())
    # periastron is at phase 0: the band shows on both edges, sigma / P either side of it
    assert sum(widths) == pytest.approx(2 * sigma_d / ECC.period_d[0], rel=1e-9)
    (logged,) = [ln for ln in ax.get_lines() if ln.get_gid() == "logged"]
    assert len(logged.get_xdata()) == 2
    assert any("1 sigma 28.8 min" in tx.get_text() for tx in ax.texts)  # 0.02 d = 28.8 min


def test_rv_chart_says_when_the_catalogue_gave_no_uncertainty():
    # sigma exactly 0 is the loader's "no uncertainty given" (planner.scheduling.score.no_uncertainty):
    # the label says so instead of "1 sigma 0.0 min"
    fig = charts.rv_figure(ECC.iloc[0], ECC.iloc[:0], n_phase=200, event_sigma_d={"periastron": 0.0})
    texts = [tx.get_text() for tx in fig.axes[0].texts]
    assert any(t.startswith("periastron, no uncertainty given") for t in texts)
    assert not any("0.0 min" in t for t in texts)
