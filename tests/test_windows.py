"""Observable masks and intervals against astroplan's constraints; event windows and coverage."""

import warnings

import numpy as np
import pandas as pd
import pytest

from planner.sky import positions
from planner.sky import windows
from planner.sky.night import night_table, tracks_for_nights
from planner.inputs.site import Site

#: "A hair" of a threshold: grid samples whose reference value lies this close to a limit may
#: fall either side. Our positions agree with astropy's to 1 arcsec (targets, Sun) and 1.5 arcsec
#: (Moon separation; tests/test_visibility.py), so 2 arcsec. Measured: no sample differs.
HAIR_DEG = 2.0 / 3600.0
#: Interval edges against astropy at the edge time: the margin function crosses zero there, so
#: the reference quantity equals its limit to the engines' agreement, the README's 1 arcsec.
#: Measured worst: 0.32 arcsec at altitude-limit edges, 0.23 at hour-angle edges, 0.38 for
#: the altitude at an event.
EDGE_TOLERANCE_DEG = 1.0 / 3600.0
SECONDS_PER_DAY = 86400.0


def site(**kw):
    base = dict(name="test", latitude_deg=37.62, longitude_deg=-3.12, elevation_m=1650.0,
                timezone="Europe/Madrid", min_altitude_deg=30.0, moon_min_sep_deg=25.0, sun_min_sep_deg=0.0)
    base.update(kw)
    return Site(**base)


def targets_frame(n, seed=5):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-0.6, 1.0, n)))
    return pd.DataFrame({"name": [f"T{i:03d}" for i in range(n)], "ra_deg": ra, "dec_deg": dec})


def astroplan_reference(s, targets, jd):
    """astroplan masks and the raw quantities (alt, Sun alt, Moon separation) on a time grid."""
    import astropy.units as u
    from astroplan import (AltitudeConstraint, AtNightConstraint, FixedTarget, MoonSeparationConstraint,
                           Observer)
    from astropy.coordinates import AltAz, SkyCoord, get_body, get_sun
    from astropy.time import Time

    obs = Observer(location=s.earth_location(), pressure=0 * u.hPa)
    t = Time(jd, format="jd", scale="utc")
    coords = SkyCoord(targets.ra_deg.to_numpy() * u.deg, targets.dec_deg.to_numpy() * u.deg)
    fixed = [FixedTarget(c) for c in coords]
    constraints = [AltitudeConstraint(min=s.min_altitude_deg * u.deg),
                   AtNightConstraint(max_solar_altitude=s.darkness_sun_alt_deg * u.deg),
                   MoonSeparationConstraint(min=s.moon_min_sep_deg * u.deg)]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        mask = np.ones((len(targets), jd.size), bool)
        for c in constraints:
            mask &= np.asarray(c(obs, fixed, times=t, grid_times_targets=True), dtype=bool)
        frame = AltAz(obstime=t, location=s.earth_location(), pressure=0 * u.hPa)
        alt = coords[:, None].transform_to(AltAz(obstime=t[None, :], location=s.earth_location(),
                                                 pressure=0 * u.hPa)).alt.deg
        sun_alt = get_sun(t).transform_to(frame).alt.deg
        moon = get_body("moon", t, location=s.earth_location())
        # as MoonSeparationConstraint: the targets in the Moon's frame (topocentric GCRS); the
        # angle itself with numpy (astropy's separation() on (N, T) frames is very slow)
        in_moon = coords[:, None].transform_to(moon.frame)
        u1 = in_moon.cartesian.xyz.value
        u2 = moon.cartesian.xyz.value[:, None, :]
        u1 = u1 / np.linalg.norm(u1, axis=0)
        u2 = u2 / np.linalg.norm(u2, axis=0)
        sep = np.degrees(np.arctan2(np.linalg.norm(np.cross(u1, u2, axis=0), axis=0), np.sum(u1 * u2, axis=0)))
    return mask, alt, sun_alt, sep


@pytest.fixture(scope="module")
def setup():
    s = site()
    targets = targets_frame(60)
    # 2026-12-20..22: a gibbous Moon, so the separation limit matters
    nights = night_table(s, "2026-12-20", 3)
    tracks = tracks_for_nights(s, "2026-12-20", 3)
    jd = nights.noon_jd_utc[0] + 0.15 + np.arange(0, 2.7, 5 / 1440)  # 5-minute grid
    ref = astroplan_reference(s, targets, jd)
    return s, targets, nights, tracks, jd, ref


def near_threshold(s, alt, sun_alt, sep):
    return ((np.abs(alt - s.min_altitude_deg) < HAIR_DEG)
            | (np.abs(sun_alt - s.darkness_sun_alt_deg) < HAIR_DEG)[None, :]
            | (np.abs(sep - s.moon_min_sep_deg) < HAIR_DEG))


def test_mask_equals_astroplan_constraints(setup):
    s, targets, nights, tracks, jd, (ref_mask, alt, sun_alt, sep) = setup
    mask = windows.observable_mask(targets.ra_deg, targets.dec_deg, s, jd, tracks)
    hair = near_threshold(s, alt, sun_alt, sep)
    assert ref_mask.any() and (~ref_mask).any()
    # the Moon constraint is active somewhere: otherwise this would test only altitude and night
    assert np.any((sep < s.moon_min_sep_deg) & (alt > s.min_altitude_deg) & (sun_alt < -18)[None, :])
    differ = (mask != ref_mask) & ~hair
    assert not differ.any(), f"{differ.sum()} samples differ away from thresholds"


def test_intervals_agree_with_the_mask_and_have_exact_edges(setup):
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    s, targets, nights, tracks, jd, (ref_mask, alt, sun_alt, sep) = setup
    iv = windows.observable_intervals(targets, s, nights, tracks)
    assert list(iv.columns) == list(windows.INTERVAL_COLUMNS)
    inside = np.zeros(ref_mask.shape, bool)
    for row in iv.itertuples():
        inside[row.target_index] |= (jd > row.start_jd_utc) & (jd < row.end_jd_utc)
    hair = near_threshold(s, alt, sun_alt, sep)
    assert not ((inside != ref_mask) & ~hair).any()
    # edges that are not dusk or dawn are altitude (or Moon) crossings: check the altitude ones
    dark0 = dict(zip(nights.night, nights.dark_start_jd_utc))
    dark1 = dict(zip(nights.night, nights.dark_end_jd_utc))
    edges, rows = [], []
    for row in iv.itertuples():
        for t in (row.start_jd_utc, row.end_jd_utc):
            if abs(t - dark0[row.night]) > 1e-6 and abs(t - dark1[row.night]) > 1e-6:
                edges.append(t)
                rows.append(row.target_index)
    rows = np.array(rows)
    t = Time(np.array(edges), format="jd", scale="utc")
    c = SkyCoord(targets.ra_deg.to_numpy()[rows] * u.deg, targets.dec_deg.to_numpy()[rows] * u.deg)
    ref_alt = c.transform_to(AltAz(obstime=t, location=s.earth_location(), pressure=0 * u.hPa)).alt.deg
    at_alt_limit = np.abs(ref_alt - s.min_altitude_deg) < 0.1
    assert at_alt_limit.sum() > 10
    assert np.max(np.abs(ref_alt[at_alt_limit] - s.min_altitude_deg)) < EDGE_TOLERANCE_DEG
    assert np.all(iv.max_alt_deg >= s.min_altitude_deg - EDGE_TOLERANCE_DEG)


def test_max_altitude_is_the_culmination_when_inside(setup):
    s, targets, nights, tracks, jd, _ = setup
    iv = windows.observable_intervals(targets, s, nights, tracks)
    # reference: a 1-minute astropy-equivalent grid over each interval (our fast positions are
    # checked against astropy in test_visibility); the grid misses the peak by < 0.01 deg
    for row in iv.iloc[::7].itertuples():
        tt = np.linspace(row.start_jd_utc, row.end_jd_utc, int((row.end_jd_utc - row.start_jd_utc) * 1440) + 2)
        a = positions.altaz_grid(targets.ra_deg[row.target_index], targets.dec_deg[row.target_index], tt,
                                  s.latitude_deg, s.longitude_deg).alt_deg[0]
        assert a.max() <= row.max_alt_deg + 1e-6
        assert row.max_alt_deg - a.max() < 0.01


def test_horizon_profile_and_hour_angle_limits_bound_the_intervals():
    import astropy.units as u
    from astropy.coordinates import AltAz, HADec, SkyCoord
    from astropy.time import Time

    s = site(min_altitude_deg=10.0, horizon_az_deg=(0.0, 90.0, 180.0, 270.0),
             horizon_alt_deg=(10.0, 35.0, 10.0, 10.0), min_hour_angle_h=-3.0, max_hour_angle_h=2.0,
             moon_min_sep_deg=0.0)
    targets = pd.DataFrame({"name": ["east", "mid"], "ra_deg": [150.0, 60.0], "dec_deg": [5.0, 45.0]})
    nights = night_table(s, "2027-01-10", 1)
    iv = windows.observable_intervals(targets, s, nights)
    d0, d1 = nights.dark_start_jd_utc[0], nights.dark_end_jd_utc[0]
    loc = s.earth_location()
    for row in iv.itertuples():
        for t in (row.start_jd_utc, row.end_jd_utc):
            if min(abs(t - d0), abs(t - d1)) < 1e-6:
                continue
            tt = Time(t, format="jd", scale="utc")
            c = SkyCoord(targets.ra_deg[row.target_index] * u.deg, targets.dec_deg[row.target_index] * u.deg)
            aa = c.transform_to(AltAz(obstime=tt, location=loc, pressure=0 * u.hPa))
            ha = c.transform_to(HADec(obstime=tt, location=loc, pressure=0 * u.hPa)).ha.hour
            ha = (ha + 12) % 24 - 12
            limit = s.horizon_limit_deg(aa.az.deg)
            on_horizon = abs(aa.alt.deg - limit) < EDGE_TOLERANCE_DEG
            on_ha = min(abs(ha - -3.0), abs(ha - 2.0)) * 15 < EDGE_TOLERANCE_DEG
            assert on_horizon or on_ha, (row.target, aa.alt.deg, limit, ha)
    # every interval lies within the hour-angle limits
    for row in iv.itertuples():
        tt = np.linspace(row.start_jd_utc, row.end_jd_utc, 20)[1:-1]
        pos = windows.target_positions(targets, s, np.full(tt.size, row.target_index), tt)
        assert np.all((pos.ha_h > -3.0) & (pos.ha_h < 2.0))


def test_declination_limits_and_never_rising_targets():
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    targets = pd.DataFrame({"name": ["south", "low", "ok"], "ra_deg": [80.0, 80.0, 80.0],
                            "dec_deg": [-25.0, -22.0, 30.0]})
    s = site(min_declination_deg=-24.0)
    bad = windows.never_rising(targets, s)
    # 'south' is outside the declination limit; 'low' culminates at 90 - 37.62 - 22 = 30.38 deg
    # (above 30) so it is not reported; reference: astropy's highest altitude over a day
    assert list(bad.target) == ["south"]
    t = Time(2461400.0 + np.linspace(0, 1, 1441), format="jd", scale="utc")
    c = SkyCoord(80.0 * u.deg, -22.0 * u.deg)
    top = c.transform_to(AltAz(obstime=t, location=s.earth_location(), pressure=0 * u.hPa)).alt.deg.max()
    assert top > 30.0
    s2 = site(min_altitude_deg=31.0)
    bad2 = windows.never_rising(targets, s2)
    assert set(bad2.target) == {"south", "low"}
    assert "culminates at" in bad2.set_index("target").reason["low"]
    nights = night_table(s, "2027-01-10", 1)
    iv = windows.observable_intervals(targets, s, nights)
    assert "south" not in set(iv.target)


def events_for(targets, s, nights, jd_utc, target_index, duration_d, sigma_d):
    """An events table (predict_events layout) at given UTC times, converted to BJD_TDB."""
    from planner.timescales import epochs

    ra = targets.ra_deg.to_numpy()[target_index]
    dec = targets.dec_deg.to_numpy()[target_index]
    tdb = epochs.utc_to_tdb_jd(jd_utc)
    bjd = tdb + epochs.light_travel_time_d(tdb, ra, dec)
    n = len(jd_utc)
    return pd.DataFrame({"target": targets.name.to_numpy()[target_index], "event": ["periastron"] * n,
                         "label": ["periastron"] * n, "cycle": np.arange(n), "bjd_tdb": bjd,
                         "sigma_d": sigma_d, "duration_d": duration_d, "eclipses": pd.array([pd.NA] * n, "boolean"),
                         "target_index": np.asarray(target_index)})


def test_event_coverage_against_astroplan_on_a_fine_grid(setup):
    s, targets, nights, tracks, jd, _ = setup
    rng = np.random.default_rng(17)
    n = 25
    ti = rng.integers(0, len(targets), n)
    t_ev = nights.noon_jd_utc[0] + rng.uniform(0.2, 1.8, n)
    dur = np.where(rng.uniform(size=n) < 0.5, rng.uniform(0.05, 0.2, n), np.nan)
    sigma = rng.uniform(0.0, 0.02, n)
    ev = events_for(targets, s, nights, t_ev, ti, dur, sigma)
    vis = windows.event_visibility(ev, targets, s, nights, baseline_h=1.0, k_sigma=2.0, tracks=tracks)
    # the BJD -> UTC conversion recovers the event's UTC time (astropy-based, checked in test_timescales)
    assert np.max(np.abs(vis.jd_utc - t_ev)) * SECONDS_PER_DAY < 0.01
    half = np.where(np.isfinite(dur), dur, windows.DEFAULT_EVENT_LENGTH_H / 24) / 2 + 1 / 24 + 2 * sigma
    assert np.max(np.abs(vis.window_start_jd_utc - (t_ev - half))) * SECONDS_PER_DAY < 0.01
    assert np.max(np.abs(vis.window_end_jd_utc - (t_ev + half))) * SECONDS_PER_DAY < 0.01
    # reference: fraction of an astroplan mask on a 1-minute grid over each window; a grid of
    # step h misjudges each edge by up to h, so allow 2 min over the window's length
    used = np.unique(ti)
    fine = np.arange(vis.window_start_jd_utc.min(), vis.window_end_jd_utc.max(), 1 / 1440)
    fine_mask, *_ = astroplan_reference(s, targets.iloc[used], fine)
    for k in range(n):
        w0, w1 = vis.window_start_jd_utc[k], vis.window_end_jd_utc[k]
        in_window = (fine >= w0) & (fine < w1)
        ref = fine_mask[np.searchsorted(used, ti[k]), in_window].mean()
        assert abs(vis.observable_fraction[k] - ref) <= 2.0 / ((w1 - w0) * 1440) + 1e-9, k
    # altitude at the event: astropy AltAz at the event's UTC time
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    c = SkyCoord(targets.ra_deg.to_numpy()[ti] * u.deg, targets.dec_deg.to_numpy()[ti] * u.deg)
    ref_alt = c.transform_to(AltAz(obstime=Time(t_ev, format="jd"), location=s.earth_location(),
                                   pressure=0 * u.hPa)).alt.deg
    assert np.max(np.abs(vis.alt_deg - ref_alt)) < EDGE_TOLERANCE_DEG
    assert set(windows.VISIBILITY_COLUMNS) <= set(vis.columns)
    assert list(vis.columns[:9]) == list(ev.columns)
    ok = vis.observable_fraction > 0
    assert np.all(vis.observable_start_jd_utc[ok] >= vis.window_start_jd_utc[ok] - 1e-9)
    assert np.all(vis.observable_end_jd_utc[ok] <= vis.window_end_jd_utc[ok] + 1e-9)
    assert vis.observable_start_jd_utc[~ok].isna().all()


def test_event_outside_the_nights_has_no_night_label(setup):
    s, targets, nights, tracks, jd, _ = setup
    ev = events_for(targets, s, nights, np.array([nights.noon_jd_utc[0] + 10.0]), np.array([0]),
                    np.array([np.nan]), np.array([0.001]))
    vis = windows.event_visibility(ev, targets, s, nights, tracks=tracks)
    assert vis.night.isna().all() and vis.observable_fraction[0] == 0.0


def test_empty_events_keep_the_columns(setup):
    s, targets, nights, tracks, jd, _ = setup
    ev = events_for(targets, s, nights, np.array([]), np.array([], int), np.array([]), np.array([]))
    vis = windows.event_visibility(ev, targets, s, nights, tracks=tracks)
    assert len(vis) == 0 and set(windows.VISIBILITY_COLUMNS) <= set(vis.columns)


def test_intervals_together_equal_one_at_a_time_and_in_chunks(setup, monkeypatch):
    s, targets, nights, tracks, jd, _ = setup
    together = windows.observable_intervals(targets, s, nights, tracks, target_indices=range(8))
    for i in range(8):
        alone = windows.observable_intervals(targets, s, nights, tracks, target_indices=[i])
        mine = together[together.target_index == i].reset_index(drop=True)
        assert len(alone) == len(mine)
        # same bisection to 0.05 s, on the same grid
        assert np.all(np.abs(alone.start_jd_utc - mine.start_jd_utc) * SECONDS_PER_DAY < 0.1)
        assert np.all(np.abs(alone.end_jd_utc - mine.end_jd_utc) * SECONDS_PER_DAY < 0.1)
    monkeypatch.setattr(windows, "_CHUNK_SAMPLES", 1)  # one night per chunk
    chunked = windows.observable_intervals(targets, s, nights, tracks, target_indices=range(8))
    pd.testing.assert_frame_equal(chunked, together)


def test_a_ceiling_for_an_alt_az_mount_matches_astroplan_and_cuts_intervals_at_it():
    # An alt-az mount that cannot follow a target within 10 deg of the zenith: max_altitude_deg
    # 80. Reference: astroplan's AltitudeConstraint(min, max) with AtNightConstraint on a 5-minute
    # grid, and astropy's altitude at each interval edge that is neither dusk nor dawn.
    import astropy.units as u
    from astroplan import AltitudeConstraint, AtNightConstraint, FixedTarget, Observer
    from astropy.coordinates import AltAz, SkyCoord
    from astropy.time import Time

    from planner.sky.limits import limiting_constraint

    s = site(max_altitude_deg=80.0, moon_min_sep_deg=0.0)
    rng = np.random.default_rng(11)
    n = 30  # declinations 25..50 deg culminate 77.6..90 deg at latitude 37.62: most pass the ceiling
    targets = pd.DataFrame({"name": [f"Z{i}" for i in range(n)], "ra_deg": rng.uniform(0, 360, n),
                            "dec_deg": rng.uniform(25, 50, n)})
    nights = night_table(s, "2026-12-20", 2)
    tracks = tracks_for_nights(s, "2026-12-20", 2)
    jd = nights.noon_jd_utc[0] + 0.15 + np.arange(0, 1.7, 5 / 1440)
    t = Time(jd, format="jd", scale="utc")
    coords = SkyCoord(targets.ra_deg.to_numpy() * u.deg, targets.dec_deg.to_numpy() * u.deg)
    obs = Observer(location=s.earth_location(), pressure=0 * u.hPa)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = np.ones((n, jd.size), bool)
        for c in (AltitudeConstraint(min=30 * u.deg, max=80 * u.deg), AtNightConstraint(max_solar_altitude=-18 * u.deg)):
            ref &= np.asarray(c(obs, [FixedTarget(x) for x in coords], times=t, grid_times_targets=True), dtype=bool)
        alt = coords[:, None].transform_to(AltAz(obstime=t[None, :], location=s.earth_location(),
                                                 pressure=0 * u.hPa)).alt.deg
    hair = (np.abs(alt - 30.0) < HAIR_DEG) | (np.abs(alt - 80.0) < HAIR_DEG)
    mask = windows.observable_mask(targets.ra_deg, targets.dec_deg, s, jd, tracks)
    dark = ref.any(axis=0)
    assert np.any((alt > 80.0) & dark[None, :])  # the ceiling is reached in darkness
    assert not ((mask != ref) & ~hair).any()
    iv = windows.observable_intervals(targets, s, nights, tracks)
    assert np.all(iv.max_alt_deg <= 80.0 + EDGE_TOLERANCE_DEG)
    inner = []
    d0, d1 = dict(zip(nights.night, nights.dark_start_jd_utc)), dict(zip(nights.night, nights.dark_end_jd_utc))
    for row in iv.itertuples():
        inner += [(row.target_index, x) for x in (row.start_jd_utc, row.end_jd_utc)
                  if min(abs(x - d0[row.night]), abs(x - d1[row.night])) > 1e-6]
    rows, times = np.array([r for r, _ in inner]), np.array([x for _, x in inner])
    edge_alt = coords[rows].transform_to(AltAz(obstime=Time(times, format="jd", scale="utc"),
                                               location=s.earth_location(), pressure=0 * u.hPa)).alt.deg
    at_ceiling = np.abs(edge_alt - 80.0) < 0.1
    assert at_ceiling.sum() >= 10
    assert np.max(np.abs(edge_alt[at_ceiling] - 80.0)) < EDGE_TOLERANCE_DEG
    # at its culmination above the ceiling in darkness, a target's reason is the zenith limit
    i, k = np.argwhere((alt > 85.0) & dark[None, :])[0]
    assert limiting_constraint(targets, s, i, jd[k], tracks) == "zenith"
