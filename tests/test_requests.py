"""Observing requests: each event asks for the observation its science needs.

One test per problem of the request issue (each failed before the request stage existed), run
through the whole pipeline on small catalogues of invented targets at an invented site, with
events placed in the night by construction. Where a value is checked it comes from outside the
planner: the RV curve of radvel (Fulton et al. 2018, PASP 130, 044504, radvel.kepler.rv_drive),
the conjunction times of radvel.orbit.timeperi_to_timetrans, the impact parameters of Winn 2010
("Transits and Occultations", in *Exoplanets*, ed. S. Seager, eqs. 7-8), and the sidereal time
and horizontal coordinates of astropy (used to place the targets).
"""

from __future__ import annotations

import datetime as dt

import astropy.units as u
import numpy as np
import pytest
import radvel.kepler
import radvel.orbit
from astropy.coordinates import AltAz, EarthLocation, SkyCoord
from astropy.time import Time

import planner
from planner.inputs.catalogue import parse_catalogue
from planner.outputs import sheets

NIGHT = dt.date(2026, 12, 7)
LAT, LON = 37.62, -3.12
SITE = f"""name = "Test Ridge (invented)"
latitude_deg = {LAT}
longitude_deg = {LON}
elevation_m = 1500
timezone = "Europe/Madrid"
min_altitude_deg = 30
darkness = "astronomical"
moon_min_separation_deg = 0
"""
HEADER = ("name,ra,dec,period_d,e,omega_deg,tc,tc_err_d,time_system,k_ms,priority,events,duration_h,"
          "a_rstar,inc_deg,rp_rstar")
# no observe column: the defaults decide (photometry where a duration or geometry is given, rv
# where k_ms is), as in most catalogues
#: Contacts and windows are UTC times made from BJD offsets; block edges are bisected to 0.05 s.
#: One second is far below any part of an eclipse and above that rounding.
TIME_TOL_D = 1.0 / 86400.0


def site_file(tmp_path, horizon=None):
    path = tmp_path / "site.toml"
    text = SITE + (f"horizon = {horizon}\n" if horizon else "")
    path.write_text(text)
    return planner.read_site(path)


@pytest.fixture(scope="module")
def dark():
    """(dark start, dark end) of the test night, UTC JD, from the night engine."""
    import tempfile
    import pathlib

    with tempfile.TemporaryDirectory() as tmp:
        site = site_file(pathlib.Path(tmp))
    n = planner.night_table(site, NIGHT, 1)
    return float(n["dark_start_jd_utc"].iloc[0]), float(n["dark_end_jd_utc"].iloc[0])


def ra_culminating_at(jd_utc):
    """Right ascension (deg) on the meridian of the site at ``jd_utc`` (astropy sidereal time)."""
    return float(Time(jd_utc, format="jd", scale="utc").sidereal_time("apparent", longitude=LON * u.deg).deg)


def plan(tmp_path, rows, site=None):
    cat = parse_catalogue(HEADER + "\n" + "\n".join(rows) + "\n")
    return planner.make_plan(cat, site or site_file(tmp_path), NIGHT, 1)


def served(schedule):
    """(target, event) pairs served by the schedule's blocks."""
    col = schedule["serves"] if "serves" in schedule else schedule["event"]
    return {(t, e) for t, s in zip(schedule["target"], col) for e in str(s).split(";")}


def rv_maximum_time(tp, p, e, w):
    """Time of the RV maximum after ``tp``: true anomaly -omega (omega in rad), Kepler's equation
    run forward (the same maximum radvel's rv_drive peaks at; checked in the tests that use it)."""
    big_e = 2 * np.arctan(np.sqrt((1 - e) / (1 + e)) * np.tan(-w / 2))
    return tp + p * np.mod(big_e - e * np.sin(big_e), 2 * np.pi) / (2 * np.pi)


def test_rv_maximum_is_a_short_visit_and_leaves_the_night_to_an_eclipse(tmp_path, dark):
    mid = 0.5 * (dark[0] + dark[1])
    ra = ra_culminating_at(mid)
    # RV target: rv_max at midnight (tc chosen so), an eclipsing binary's eclipse 1 h later
    p, e, w_deg, k = 20.0, 0.3, 40.0, 60.0
    w = np.radians(w_deg)
    tp = 2461000.5
    t_max = rv_maximum_time(tp, p, e, w)
    shift = mid - t_max  # moves the whole orbit so that the maximum falls at midnight
    tc = radvel.orbit.timeperi_to_timetrans(tp + shift, p, e, w)
    rows = [f"Rv-1,{ra:.4f},20,{p},{e},{w_deg},{tc:.6f},0.0005,JD_UTC,{k},3,rv_max,,,,",
            f"Ecl-1,{ra + 2:.4f},22,3.3,0,,{mid + 1 / 24:.6f},0.0003,JD_UTC,,2,,2.0,,,"]
    sched = plan(tmp_path, rows).schedule
    rv = sched[(sched.target == "Rv-1") & (sched.event == "rv_max")]
    assert len(rv) == 1
    assert (rv.end_jd_utc - rv.start_jd_utc).iloc[0] <= 0.5 / 24 + TIME_TOL_D  # default visit_h 0.5 h
    # the visit lies where radvel's RV is within 10 % of K of the maximum (JD_UTC epochs; the
    # 69 s of TT - UTC move the RV by far less than the 1 % of K allowed here)
    t = np.linspace(rv.start_jd_utc.iloc[0], rv.end_jd_utc.iloc[0], 50) - shift
    v = radvel.kepler.rv_drive(t, np.array([p, tp, e, w, k]), use_c_kepler_solver=False)
    assert np.all(v >= k * (1 + e * np.cos(w)) - 0.1 * k - 0.01 * k)
    assert ("Ecl-1", "primary_conjunction") in served(sched)


def test_conjunction_that_does_not_eclipse_gets_no_series(tmp_path, dark):
    # e = 0.5, omega = 90 deg: b_tra = 0.5 and b_occ = 1.5 (Winn 2010 eqs. 7-8) > 1 + k = 1.1
    mid = 0.5 * (dark[0] + dark[1])
    p, e, w_deg, a, k = 12.0, 0.5, 90.0, 20.0, 0.1
    w = np.radians(w_deg)
    inc_deg = np.degrees(np.arccos(0.5 * (1 + e * np.sin(w)) / (a * (1 - e**2))))
    b_tra = a * np.cos(np.radians(inc_deg)) * (1 - e**2) / (1 + e * np.sin(w))
    b_occ = a * np.cos(np.radians(inc_deg)) * (1 - e**2) / (1 - e * np.sin(w))
    assert abs(b_tra - 0.5) < 1e-9 and b_occ > 1 + k
    t_pri = radvel.orbit.timeperi_to_timetrans(0.0, p, e, w)
    t_sec = radvel.orbit.timeperi_to_timetrans(0.0, p, e, w, secondary=True)
    tc = mid - np.mod(t_sec - t_pri, p)  # the secondary conjunction falls at midnight
    rows = [f"Grazer-1,{ra_culminating_at(mid):.4f},20,{p},{e},{w_deg},{tc:.6f},0.0005,JD_UTC,,2,"
            f"primary_conjunction;secondary_conjunction,,{a},{inc_deg:.8f},{k}"]
    pl = plan(tmp_path, rows)
    sec = pl.events[pl.events.event == "secondary_conjunction"]
    assert len(sec) == 1 and abs(sec.jd_utc.iloc[0] - mid) < 0.01
    assert not (pl.schedule.event == "secondary_conjunction").any()
    from planner.scheduling.requests import request_kinds

    assert list(request_kinds(sec, pl.targets)) == [""]


def _az_at(ra, dec, jd):
    loc = EarthLocation(lat=LAT * u.deg, lon=LON * u.deg, height=1500 * u.m)
    frame = AltAz(obstime=Time(jd, format="jd", scale="utc"), location=loc)
    return SkyCoord(ra * u.deg, dec * u.deg).transform_to(frame).az.deg


def test_eclipse_in_the_shorter_stretch_of_a_split_window_is_kept_with_a_pause_at_the_tree(tmp_path, dark):
    # The target sets (30 deg) 1.3 h after the eclipse (hour angle 3.2 h at the eclipse, 4.47 h
    # at 30 deg for dec +20 at latitude 37.62: cos H = (sin 30 - sin phi sin dec) / (cos phi cos dec)); a tree in the horizon profile hides it
    # from 0.9 h to 0.6 h before the eclipse. Window +-(0.5 h + 1 h baseline + 2 x 1 h sigma):
    # the long stretch before the tree holds only baseline, the short one after it the eclipse.
    ev = dark[1] - 3.0 / 24
    dec = 20.0
    ra = ra_culminating_at(ev) - 15.0 * 3.2
    az0, az1 = _az_at(ra, dec, ev - 0.9 / 24), _az_at(ra, dec, ev - 0.6 / 24)
    horizon = [[0, 0], [float(round(az0 - 0.01, 3)), 0], [float(round(az0, 3)), 89], [float(round(az1, 3)), 89],
               [float(round(az1 + 0.01, 3)), 0]]
    site = site_file(tmp_path, horizon)
    rows = [f"Split-1,{ra:.4f},{dec},2.9,0,,{ev:.6f},0.0417,JD_UTC,,2,,1.0,,,"]
    pl = plan(tmp_path, rows, site)
    iv = pl.intervals
    assert len(iv) == 2  # the night's observable time is split by the tree
    longest = iv.loc[iv.duration_h.idxmax()]
    assert not (longest.start_jd_utc <= ev <= longest.end_jd_utc)  # the eclipse is in the shorter one
    block = pl.schedule[pl.schedule.target == "Split-1"]
    assert len(block) == 1
    assert block.start_jd_utc.iloc[0] <= ev <= block.end_jd_utc.iloc[0]
    assert block.end_jd_utc.iloc[0] < longest.end_jd_utc + 3.0 / 24  # it is not the long stretch
    # the 18 min behind the tree are a pause: the block keeps the baseline before it as well,
    # observing in both stretches and pausing exactly over the gap between them
    shorter = iv.loc[iv.duration_h.idxmin()]
    b = block.iloc[0]
    assert b.start_jd_utc < longest.end_jd_utc
    assert abs(b.pause_start_jd_utc - longest.end_jd_utc) < TIME_TOL_D
    assert abs(b.pause_end_jd_utc - shorter.start_jd_utc) < TIME_TOL_D


def test_long_transit_with_ingress_before_dawn_is_scheduled_as_ingress_only(tmp_path, dark):
    # A 12-hour transit: T1 2 h before the end of darkness, mid-transit 4 h after it.
    t1 = dark[1] - 2.0 / 24
    tc = t1 + 6.0 / 24
    ra = ra_culminating_at(dark[1] - 1.5 / 24)
    rows = [f"Long-1,{ra:.4f},40,180.5,0,,{tc:.6f},0.0003,JD_UTC,,3,primary_conjunction,12.0,,,"]
    sched = plan(tmp_path, rows).schedule
    block = sched[sched.target == "Long-1"]
    assert len(block) == 1
    assert block.covers.iloc[0] == "pre;T1"
    assert set(block.not_covered.iloc[0].split(";")) == {"mid", "T4", "post"}
    assert abs(block.t1_jd_utc.iloc[0] - t1) <= TIME_TOL_D


def test_periastron_and_rv_maximum_of_one_passage_are_both_served(tmp_path, dark):
    # e = 0.9, omega = 60 deg: the RV maximum (nu = -60 deg) comes about 3.3 h before periastron.
    mid = 0.5 * (dark[0] + dark[1])
    p, e, w_deg = 30.0, 0.9, 60.0
    w = np.radians(w_deg)
    tp = mid + 1.0 / 24
    tc = radvel.orbit.timeperi_to_timetrans(tp, p, e, w)
    ra = ra_culminating_at(mid)
    rows = [f"Swing-1,{ra:.4f},25,{p},{e},{w_deg},{tc:.6f},0.0005,JD_UTC,80,3,periastron;rv_max,,,,"]
    sched = plan(tmp_path, rows).schedule
    got = served(sched)
    assert ("Swing-1", "periastron") in got and ("Swing-1", "rv_max") in got


def test_block_after_mid_eclipse_says_which_contacts_it_covers(tmp_path, dark):
    # A 6-hour eclipse whose middle is 1 h before darkness: egress and post-baseline observable.
    ev = dark[0] - 1.0 / 24
    ra = ra_culminating_at(dark[0] + 1.0 / 24)
    rows = [f"Late-1,{ra:.4f},30,40.1,0,,{ev:.6f},0.0003,JD_UTC,,2,primary_conjunction,6.0,,,"]
    pl = plan(tmp_path, rows)
    block = pl.schedule[pl.schedule.target == "Late-1"]
    assert len(block) == 1
    text = sheets.night_sheet_text(pl.nights.iloc[0], pl.schedule, "Europe/Madrid")
    assert "Covers egress (T4), post-baseline; not covered: pre-baseline, ingress (T1), mid-event." in text
    assert "before and after" not in text


def test_observe_defaults_follow_what_the_catalogue_gives():
    cat = parse_catalogue(
        "name,ra,dec,period_d,e,omega_deg,tc,t0,k_ms,duration_h,a_rstar,inc_deg,rp_rstar,label\n"
        "Phot,10,20,3,0,,2461000.5,,,2.0,,,,\n"
        "Geo,10,20,3,0.1,30,2461000.5,,,,10,88,0.1,\n"
        "Lin,10,20,0.2,,,,2461000.5,,,,,,maximum\n"
        "Spec,10,20,30,0.3,30,2461000.5,,40,,,,,\n"
        "Both,10,20,3,0,,2461000.5,,40,2.0,,,,\n")
    assert list(cat["observe"]) == ["photometry", "photometry", "photometry", "rv", "photometry;rv"]


def test_observe_both_is_photometry_and_rv():
    # the demo catalogue's header comment and the README call it "both"
    cat = parse_catalogue("name,ra,dec,period_d,e,omega_deg,tc,k_ms,duration_h,observe\n"
                          "Two Ways,10,20,3,0,,2461000.5,40,2.0,both\n"
                          "Listed,10,20,3,0,,2461000.5,40,2.0,rv; photometry\n"
                          "Loud,10,20,3,0,,2461000.5,40,2.0,Both\n")
    assert list(cat["observe"]) == ["photometry;rv"] * 3


def test_rv_maximum_before_the_first_night_is_requested_while_its_window_lasts(tmp_path, dark):
    # An RV maximum two days before the night: its phase window (RV within 10 % of K of the
    # maximum) runs on for days on a 60-day orbit, so the night can still take the visit. A
    # plan made on this night (a re-plan in the middle of the window) must request it.
    mid = 0.5 * (dark[0] + dark[1])
    ra = ra_culminating_at(mid)
    p, e, w_deg, k = 60.0, 0.3, 40.0, 60.0
    w = np.radians(w_deg)
    tp = 2461000.5
    t_max = rv_maximum_time(tp, p, e, w)
    shift = (mid - 2.0) - t_max  # the maximum two days before midnight
    v_max = k * (1 + e * np.cos(w))  # gamma = 0
    # the construction, checked with radvel: the whole night lies inside the window, and the
    # maximum lies before the night's noon by more than a day
    night_t = np.linspace(dark[0], dark[1], 50) - shift
    assert np.all(radvel.kepler.rv_drive(night_t, np.array([p, tp, e, w, k]), use_c_kepler_solver=False)
                  >= v_max - 0.1 * k)
    assert mid - 2.0 < dark[0] - 1.25
    tc = radvel.orbit.timeperi_to_timetrans(tp + shift, p, e, w)
    rows = [f"Rv-2,{ra:.4f},20,{p},{e},{w_deg},{tc:.6f},0.0005,JD_UTC,{k},3,rv_max,,,,"]
    result = plan(tmp_path, rows)
    rv = result.schedule[(result.schedule.target == "Rv-2") & (result.schedule.event == "rv_max")]
    assert len(rv) == 1
    assert rv.event_jd_utc.iloc[0] < dark[0] - 1.25  # the maximum two days back is the one served
    t = np.linspace(rv.start_jd_utc.iloc[0], rv.end_jd_utc.iloc[0], 50) - shift
    v = radvel.kepler.rv_drive(t, np.array([p, tp, e, w, k]), use_c_kepler_solver=False)
    assert np.all(v >= v_max - 0.1 * k - 0.01 * k)


def test_two_eclipses_whose_whole_baselines_overlap_both_fit_with_baselines_cut(tmp_path, dark):
    # Two eclipsing binaries near the meridian, minima 3.5 h apart, each 2 h long. With the
    # wanted hour of baseline either side the series would overlap by half an hour, so one
    # eclipse was dropped; an observer takes both with half-hour baselines (the series-parts
    # rule: half the wanted baseline still normalises the light curve [common practice]).
    mid = 0.5 * (dark[0] + dark[1])
    ra = ra_culminating_at(mid)
    first, second = mid - 1.75 / 24, mid + 1.75 / 24
    rows = [f"Ecl-A,{ra:.4f},30,3.1,0,,{first:.6f},0.0002,JD_UTC,,1,,2.0,,,",
            f"Ecl-B,{ra + 1:.4f},32,4.7,0,,{second:.6f},0.0002,JD_UTC,,1,,2.0,,,"]
    sched = plan(tmp_path, rows).schedule.sort_values("start_jd_utc")
    assert list(sched["target"]) == ["Ecl-A", "Ecl-B"]
    assert np.allclose(sched["baseline_min"], 30.0)
    assert np.allclose(sched["science_fraction"], 0.9)
    assert list(sched["covers"]) == ["pre;T1;mid;T4;post"] * 2  # no T2/T3 without geometry
    # T1 and T4 are the minimum -+ half the duration (duration_h is T1 to T4); each block keeps
    # 30 min beyond them plus the 2-sigma timing margin, which is under a minute here
    t1 = sched["t1_jd_utc"].to_numpy()
    t4 = sched["t4_jd_utc"].to_numpy()
    assert np.allclose(t4 - t1, 2.0 / 24, atol=TIME_TOL_D)
    lead = (t1 - sched["start_jd_utc"].to_numpy()) * 1440
    trail = (sched["end_jd_utc"].to_numpy() - t4) * 1440
    assert np.all((lead >= 30 - 1 / 60) & (lead < 31)) and np.all((trail >= 30 - 1 / 60) & (trail < 31))
    assert sched["start_jd_utc"].iloc[1] > sched["end_jd_utc"].iloc[0]
    notes = " ".join(sched["notes"])
    assert "baselines cut to 30 min (of 60 wanted)" in notes


def test_an_eclipse_alone_in_the_night_keeps_its_whole_baselines(tmp_path, dark):
    mid = 0.5 * (dark[0] + dark[1])
    ra = ra_culminating_at(mid)
    rows = [f"Ecl-A,{ra:.4f},30,3.1,0,,{mid:.6f},0.0002,JD_UTC,,1,,2.0,,,"]
    sched = plan(tmp_path, rows).schedule
    assert len(sched) == 1 and np.isnan(sched["baseline_min"].iloc[0])
    assert sched["science_fraction"].iloc[0] == 1.0
    lead = (sched["t1_jd_utc"] - sched["start_jd_utc"]).iloc[0] * 1440
    assert 60 - 1 / 60 <= lead < 61


def test_merge_candidates_are_paired_only_within_reach_as_brute_force_finds():
    # the pairs that may merge are those of one target whose spans overlap: the sweep must find
    # exactly the pairs an all-pairs comparison finds (ties, touching and NaN spans included)
    from planner.scheduling.request_merge import _pairs_in_reach

    rng = np.random.default_rng(3)
    n = 400
    target = rng.integers(0, 25, n)
    lo = np.round(rng.uniform(0, 7, n), 1)  # rounded: equal starts and touching spans occur
    hi = lo + np.round(rng.uniform(0, 0.5, n), 1)
    lo[::37] = np.nan
    ia, ib = _pairs_in_reach(target, lo, hi)
    i, j = np.triu_indices(n, 1)
    overlap = (target[i] == target[j]) & (lo[i] < hi[j]) & (lo[j] < hi[i])
    found = set(zip(ia.tolist(), ib.tolist()))
    assert set(zip(i[overlap].tolist(), j[overlap].tolist())) <= found
    assert all(target[a] == target[b] for a, b in found)
    # no more than pairs that overlap or touch within the microsecond tolerance
    assert all(lo[b] <= hi[a] + 1e-6 and lo[a] <= hi[b] + 1e-6 for a, b in found)
    assert list(zip(ia, ib)) == sorted(found)  # the order of the all-pairs join


def test_a_transit_through_the_zenith_blind_spot_is_observed_on_both_sides_of_a_pause(tmp_path, dark):
    # An alt-az mount limited to 86 deg, a transit whose target culminates at 89 deg at
    # mid-transit (90 - |lat - dec| by spherical geometry): the window splits into two
    # stretches half an hour apart. The block spans both and pauses in between, so both contacts
    # and both baselines are held; the pause ends are where astropy puts the target at 86 deg.
    import dataclasses

    mid = 0.5 * (dark[0] + dark[1])
    site = dataclasses.replace(site_file(tmp_path), max_altitude_deg=86.0)
    rows = [f"Zenith-1 b,{ra_culminating_at(mid):.4f},{LAT - 1.0:.2f},3.3,0,,{mid:.6f},0.0002,JD_UTC,,1,,2.5,,,"]
    sched = plan(tmp_path, rows, site).schedule
    assert len(sched) == 1
    b = sched.iloc[0]
    assert b["covers"] == "pre;T1;mid;T4;post" and b["science_fraction"] == 1.0
    assert b["start_jd_utc"] < b["t1_jd_utc"] < b["pause_start_jd_utc"] < mid < b["pause_end_jd_utc"] < b["t4_jd_utc"]
    pause = Time([b["pause_start_jd_utc"], b["pause_end_jd_utc"]], format="jd", scale="utc")
    loc = EarthLocation.from_geodetic(LON * u.deg, LAT * u.deg, 1500 * u.m)
    star = SkyCoord(ra_culminating_at(mid) * u.deg, (LAT - 1.0) * u.deg)
    alt = star.transform_to(AltAz(obstime=pause, location=loc, pressure=0 * u.hPa)).alt.deg
    assert np.all(np.abs(alt - 86.0) < 1.0 / 3600)
    assert 20 < (b["pause_end_jd_utc"] - b["pause_start_jd_utc"]) * 1440 < 45
    assert "pause from" in b["notes"]


def test_a_pause_holds_the_mid_event_between_observed_sides_but_never_a_contact():
    from planner.scheduling import series_parts

    base = 1.0 / 24
    t1, t4, midpoint = 10.0, 10.1, 10.05
    # no pause: the same as covered_parts
    plain = series_parts.covered_parts([9.9], [10.2], [t1], [np.nan], [np.nan], [t4], [midpoint], base)
    same = series_parts.covered_parts_with_pause([9.9], [10.2], [np.nan], [np.nan], [t1], [np.nan], [np.nan], [t4],
                                                 [midpoint], base)
    assert (plain == same).all()
    names = series_parts.PART_NAMES
    around_mid = series_parts.covered_parts_with_pause([9.9], [10.2], [10.04], [10.06], [t1], [np.nan], [np.nan],
                                                       [t4], [midpoint], base)[0]
    assert all(around_mid[names.index(p)] for p in ("pre", "T1", "mid", "T4", "post"))
    at_ingress = series_parts.covered_parts_with_pause([9.9], [10.2], [9.99], [10.01], [t1], [np.nan], [np.nan],
                                                       [t4], [midpoint], base)[0]
    assert not at_ingress[names.index("T1")] and at_ingress[names.index("mid")] and at_ingress[names.index("T4")]
