"""Windows of periodic events (linear ephemeris, no duration) are a share of the period, capped.

The rule is our stated common practice (planner.sky.window_size: 0.3 of the period, at most the
4 h an orbital event without a duration gets), with no published source. The periods are of
real pulsating stars, from memory: XX Cyg, a high-amplitude delta Scuti star, P = 0.134865 d
(3.24 h); RR Lyr, P = 0.566839 d (13.6 h). Epochs below are placeholders: no expected value
depends on them. The 1-sigma of a linear ephemeris is sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2
(Bevington & Robinson 2003, eq. 3.14, from memory).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from planner.inputs.catalogue import parse_catalogue
from planner.inputs.site import Site
from planner.orbits.events import predict_events
from planner.pipeline import make_plan
from planner.sky import window_size, windows
from planner.sky.night import night_table, tracks_for_nights

#: Window edges are sums of floats in days: 1e-6 h (4 ms) is rounding.
EDGE_TOL_H = 1e-6
P_XX_CYG_D = 0.134865   # from memory
P_RR_LYR_D = 0.566839   # from memory

CATALOGUE = f"""\
name,ra,dec,period_d,period_err_d,t0,t0_err_d,label,events,e,omega_deg,tp
XX Cyg,20:03:15.6,+58:57:17,{P_XX_CYG_D},,2461000.1000,,maximum,,,,
RR Lyr,19:25:27.9,+42:47:04,{P_RR_LYR_D},,2461000.2000,,maximum,,,,
XX Cyg err,20:03:15.6,+58:57:17,{P_XX_CYG_D},0.000001,2461000.1000,0.0010,maximum,,,,
Ecc test,19:40:00.0,+45:00:00,20.0,,,,,periastron,0.3,40.0,2460997.9000
"""


def site():
    return Site(name="Altozano Ridge test", latitude_deg=37.62, longitude_deg=-3.12, elevation_m=1650.0,
                timezone="Europe/Madrid")


@pytest.fixture(scope="module")
def visible():
    s = site()
    targets = parse_catalogue(CATALOGUE)
    tracks = tracks_for_nights(s, dt.date(2027, 7, 10), 2, margin_d=1.1)
    nights = night_table(s, dt.date(2027, 7, 10), 2, tracks=tracks)
    ev = predict_events(targets, nights.noon_jd_utc.min() - 0.5, nights.next_noon_jd_utc.max() + 0.5)
    return targets, windows.event_visibility(ev, targets, s, nights, tracks=tracks)


def lengths_h(vis, name):
    rows = vis[vis["target"] == name]
    return rows, (rows["window_end_jd_utc"] - rows["window_start_jd_utc"]).to_numpy() * 24.0


def test_a_three_hour_pulsator_gets_a_window_of_its_period_share(visible):
    _, vis = visible
    rows, w_h = lengths_h(vis, "XX Cyg")
    assert len(rows) > 10
    expected_h = window_size.PERIODIC_WINDOW_FRACTION * P_XX_CYG_D * 24.0  # 0.97 h
    assert np.max(np.abs(w_h - expected_h)) <= EDGE_TOL_H
    assert expected_h < P_XX_CYG_D * 24.0 and expected_h < 1.0
    # consecutive maxima never share a window
    assert np.all(rows["window_start_jd_utc"].to_numpy()[1:] > rows["window_end_jd_utc"].to_numpy()[:-1])


def test_a_long_period_pulsator_reaches_the_cap(visible):
    _, vis = visible
    _, w_h = lengths_h(vis, "RR Lyr")
    cap_h = window_size.DEFAULT_EVENT_LENGTH_H + 2 * window_size.DEFAULT_BASELINE_H  # 4 h
    assert window_size.PERIODIC_WINDOW_FRACTION * P_RR_LYR_D * 24 > cap_h  # 4.08 h before the cap
    assert np.max(np.abs(w_h - cap_h)) <= EDGE_TOL_H


def test_uncertainty_widens_the_periodic_window_by_k_sigma_either_side(visible):
    _, vis = visible
    rows, w_h = lengths_h(vis, "XX Cyg err")
    n = rows["cycle"].to_numpy(float)
    sigma_d = np.hypot(0.0010, n * 0.000001)  # Bevington & Robinson 2003, eq. 3.14
    expected_h = (window_size.PERIODIC_WINDOW_FRACTION * P_XX_CYG_D + 2 * window_size.DEFAULT_K_SIGMA * sigma_d) * 24
    assert np.max(np.abs(w_h - expected_h)) <= EDGE_TOL_H


def test_orbital_events_without_duration_keep_their_window(visible):
    _, vis = visible
    _, w_h = lengths_h(vis, "Ecc test")
    assert len(w_h) == 1 and abs(w_h[0] - 4.0) <= EDGE_TOL_H  # 2 h + 1 h baseline either side


def test_plan_blocks_of_a_short_period_pulsator_are_short():
    targets = parse_catalogue(CATALOGUE).iloc[:1].reset_index(drop=True)
    plan = make_plan(targets, site(), dt.date(2027, 7, 10), 2)
    blocks_h = (plan.schedule["end_jd_utc"] - plan.schedule["start_jd_utc"]).to_numpy() * 24
    assert len(blocks_h) > 0
    assert np.all(blocks_h <= window_size.PERIODIC_WINDOW_FRACTION * P_XX_CYG_D * 24 + EDGE_TOL_H)
