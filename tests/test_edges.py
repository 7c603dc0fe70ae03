"""Closed-form interval edges (planner.sky.edges) against the bisection of the one search routine.

Reference: planner.sky.crossings.find_crossings on the same margin function, which brackets each
edge to 0.05 s (DEFAULT_TOLERANCE_D); the closed form must give the same intervals with every
edge within that tolerance. The closed form itself is the hour angle of an altitude on the
sphere, cos H0 = (sin h0 - sin phi sin delta) / (cos phi cos delta) (e.g. Meeus, *Astronomical
Algorithms*, 2nd ed. 1998, eq. 15.1), checked here through the margin it must zero.
"""

import datetime as dt

import numpy as np
import pandas as pd
import pytest

from conftest import REPO
from planner.inputs.site import read_site
from planner.sky import crossings, edges, windows
from planner.sky.night import night_table, tracks_for_nights


def random_targets(n, seed):
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"name": [f"Edge test {i}" for i in range(n)], "ra_deg": rng.uniform(0, 360, n),
                         "dec_deg": np.degrees(np.arcsin(rng.uniform(-0.7, 1.0, n)))})


@pytest.mark.parametrize("first_night", ["2026-12-18", "2027-01-03"])  # Moon waxing gibbous / new
def test_closed_form_edges_equal_bisection(first_night, monkeypatch):
    # the demo site has a horizon profile above its minimum altitude towards some azimuths, Moon
    # and Sun limits: those edges must go through the bisection and still agree
    site = read_site(REPO / "sample_targets" / "site.toml")
    first = dt.date.fromisoformat(first_night)
    tracks = tracks_for_nights(site, first, 5)
    nights = night_table(site, first, 5, tracks=tracks)
    targets = random_targets(400, seed=3)
    fast = windows.observable_intervals(targets, site, nights, tracks=tracks)
    used_fallback = []
    real_find = edges.find_crossings

    def counting(func, grid, values=None, tolerance_d=crossings.DEFAULT_TOLERANCE_D):
        used_fallback.append(len(grid))
        return real_find(func, grid, values, tolerance_d)

    monkeypatch.setattr(edges, "find_crossings", counting)
    windows.observable_intervals(targets, site, nights, tracks=tracks)
    assert sum(used_fallback) > 0  # this case exercises both paths

    def bisection_only(site_, tracks_, func, grid, n_per_grid, above, ra_c, dec_c):
        row_grid = np.repeat(grid, n_per_grid, axis=0)
        return crossings.find_crossings(func, row_grid, np.where(above, 1.0, -1.0))

    monkeypatch.setattr(edges, "edge_crossings", bisection_only)
    slow = windows.observable_intervals(targets, site, nights, tracks=tracks)
    assert len(fast) == len(slow) > 500
    assert (fast[["target_index", "night"]].to_numpy() == slow[["target_index", "night"]].to_numpy()).all()
    tolerance_d = crossings.DEFAULT_TOLERANCE_D
    assert np.max(np.abs(fast.start_jd_utc - slow.start_jd_utc)) <= tolerance_d
    assert np.max(np.abs(fast.end_jd_utc - slow.end_jd_utc)) <= tolerance_d


def test_closed_form_edge_sits_on_the_altitude_limit():
    # at a rising edge set by the minimum altitude the airless altitude equals the limit
    site = read_site(REPO / "sample_targets" / "site.toml")
    first = dt.date(2027, 1, 3)
    tracks = tracks_for_nights(site, first, 2)
    nights = night_table(site, first, 2, tracks=tracks)
    targets = random_targets(200, seed=4)
    iv = windows.observable_intervals(targets, site, nights, tracks=tracks)
    d0 = nights["dark_start_jd_utc"].to_numpy(float)
    inner = iv[(~np.isin(iv.start_jd_utc, d0)) & (iv.start_jd_utc > d0.min() + 1e-6)]
    alt = windows.target_positions(targets, site, inner.target_index.to_numpy(), inner.start_jd_utc.to_numpy()).alt_deg
    on_limit = np.abs(alt - site.min_altitude_deg) < 0.01
    assert on_limit.sum() > 50
    # 0.05 s of sidereal motion moves an altitude by at most 0.05 * 15 arcsec = 2e-4 deg
    assert np.max(np.abs(alt[on_limit] - site.min_altitude_deg)) <= 2.1e-4


def test_rows_near_track_never_leaves_out_a_row_that_comes_near():
    # brute force: the least separation of each vector from every point of the track
    from planner import numerics

    rng = np.random.default_rng(5)
    for _ in range(20):
        ra0, dec0 = rng.uniform(0, 2 * np.pi), rng.uniform(-1.2, 1.2)
        t = np.linspace(0, 1, 50)
        track = numerics.unit_vectors(ra0 + rng.uniform(0.05, 0.5) * t, dec0 + rng.uniform(-0.1, 0.1) * t)
        vectors = numerics.unit_vectors(rng.uniform(0, 2 * np.pi, 3000), np.arcsin(rng.uniform(-1, 1, 3000)))
        limit_deg = rng.uniform(5, 60)
        kept = np.zeros(3000, bool)
        kept[numerics.rows_near_track(vectors, track, limit_deg)] = True
        least_deg = np.degrees(np.arccos(np.clip((vectors @ track.T).max(axis=1), -1, 1)))
        assert not np.any(~kept & (least_deg <= limit_deg))
        assert kept.sum() < 3000  # it does leave rows out


def test_mask_with_the_moon_shortcut_equals_the_full_evaluation(monkeypatch):
    from planner import numerics

    site = read_site(REPO / "sample_targets" / "site.toml")
    first = dt.date(2026, 12, 18)
    tracks = tracks_for_nights(site, first, 3)
    nights = night_table(site, first, 3, tracks=tracks)
    targets = random_targets(1500, seed=6)
    jd = np.linspace(nights.noon_jd_utc.min(), nights.next_noon_jd_utc.max(), 900)
    fast = windows.observable_mask(targets.ra_deg, targets.dec_deg, site, jd, tracks=tracks)
    monkeypatch.setattr(numerics, "rows_near_track", lambda v, track, limit: np.arange(len(v)))
    full = windows.observable_mask(targets.ra_deg, targets.dec_deg, site, jd, tracks=tracks)
    assert fast.any() and np.array_equal(fast, full)


@pytest.mark.parametrize("span_turns", [0.05, 0.45, 0.97, 1.3])
def test_rows_that_may_clear_never_leaves_out_a_row_above_the_limit(span_turns):
    # brute force: cos H > cos H0 at any sample (the grid mask's own test), with the local Earth
    # rotation angle wrapped into [0, 2 pi) as ERFA returns it
    rng = np.random.default_rng(int(span_turns * 100))
    n = 5000
    ra_c = rng.uniform(0, 2 * np.pi, n)
    cos_h0 = rng.uniform(-1.3, 1.3, n)
    theta = np.mod(rng.uniform(0, 2 * np.pi) + np.linspace(0, 2 * np.pi * span_turns, 300), 2 * np.pi)
    kept = np.zeros(n, bool)
    kept[edges.rows_that_may_clear(cos_h0, ra_c, theta)] = True
    above_somewhere = (np.cos(theta[None, :] - ra_c[:, None]) > cos_h0[:, None]).any(axis=1)
    assert not np.any(above_somewhere & ~kept)
    if span_turns < 0.5:
        assert (~kept).sum() > n // 10  # it does skip targets
