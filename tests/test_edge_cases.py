"""Edge cases of the whole chain: extreme orbits, circumpolar and never-rising targets, events on
a window edge, empty and very large catalogues, dates decades ahead."""

import io

import numpy as np
import pandas as pd
import pytest

from conftest import REPO
from planner.inputs import catalogue
from planner import cli
from planner.sky import night
from planner.orbits import geometry
from planner.timescales import epochs
from planner.sky import windows
from planner.errors import InputErrors
from planner.orbits.events import predict_events
from planner.inputs.site import parse_site

SITE_TEXT = ('name = "Edge test site"\nlatitude_deg = 37.62\nlongitude_deg = -3.12\nelevation_m = 1650\n'
             'timezone = "Europe/Madrid"\nmin_altitude_deg = 30\nmoon_min_separation_deg = 0\n'
             'sun_min_separation_deg = 0\n')


def load(text):
    return catalogue.parse_catalogue(text, source="edge.csv")


def test_circular_orbit_events_are_quarter_periods_apart():
    # e = 0: omega = 90 deg by convention, so periastron = transit; the secondary conjunction is
    # half a period later and the RV extremes a quarter period either side (exact geometry).
    t = load("name,ra,dec,period_d,e,tc,events\nC,10,10,4.0,0,2460000.0,"
             "periastron;primary_conjunction;secondary_conjunction;rv_max;rv_min\n")
    ev = predict_events(t, 2460000.0 - 1e-6, 2460004.0 - 1e-6).set_index("event").bjd_tdb
    assert abs(ev["periastron"] - ev["primary_conjunction"]) <= 1e-9
    assert abs(ev["secondary_conjunction"] - ev["primary_conjunction"] - 2.0) <= 1e-9
    assert abs(ev["rv_min"] - ev["primary_conjunction"] - 1.0) <= 1e-9  # receding side after transit
    assert abs(ev["rv_max"] - ev["primary_conjunction"] - 3.0) <= 1e-9


def test_e_0999_events_cluster_at_periastron():
    # At e = 0.999 everything but apastron happens within a tiny fraction of the orbit around
    # periastron (the mean anomaly from periastron to nu = 90 deg is of order (1 - e)^1.5).
    t = load("name,ra,dec,period_d,e,e_err,omega_deg,omega_err_deg,tp,tp_err_d,events\n"
             "X,10,10,1000.0,0.999,0.0002,60,1,2460000.0,0.01,"
             "periastron;apastron;primary_conjunction;secondary_conjunction;rv_max;rv_min\n")
    ev = predict_events(t, 2460000.0 - 1, 2461000.0 - 1)
    assert len(ev) == 6
    near = ev[ev.event != "apastron"]
    assert np.all(np.abs(near.bjd_tdb - 2460000.0) < 2.0)
    apo = ev[ev.event == "apastron"].bjd_tdb.iloc[0]
    assert abs(apo - 2460500.0) <= 1e-6
    assert np.all(np.isfinite(ev.sigma_d)) and np.all(ev.sigma_d > 0)


def test_edge_on_orbit_has_zero_impact_parameter():
    # i = 90 deg: b = 0 at both conjunctions; the duration is then the widest chord's.
    b = geometry.impact_parameter(15.0, np.radians(90.0), 0.4, np.radians(30.0))
    assert abs(b) <= 1e-12
    t = load("name,ra,dec,period_d,e,omega_deg,tc,a_rstar,inc_deg,rp_rstar\n"
             "E,10,10,5.0,0.4,30,2460000.0,15,90,0.1\n")
    ev = predict_events(t, 2460000.0 - 0.1, 2460005.0 - 0.1, kinds=["primary_conjunction", "secondary_conjunction"])
    assert ev.eclipses.all()
    expected = geometry.eclipse_duration(5.0, 15.0, np.pi / 2, 0.1, 0.4, np.radians(30.0))
    assert abs(ev[ev.event == "primary_conjunction"].duration_d.iloc[0] - expected) <= 1e-12


@pytest.fixture(scope="module")
def week():
    site = parse_site(SITE_TEXT, "edge.toml")
    tracks = night.tracks_for_nights(site, "2026-12-07", 2)
    nights = night.night_table(site, "2026-12-07", 2, tracks=tracks)
    return site, tracks, nights


def test_circumpolar_and_never_rising_targets(week):
    site, tracks, nights = week
    t = load("name,ra,dec,period_d,tc\nPolar,120,85,1.0,2460000.0\nSouthern,120,-70,1.0,2460000.0\n")
    iv = windows.observable_intervals(t, site, nights, tracks=tracks)
    first = nights.iloc[0]
    polar = iv[(iv.target == "Polar") & (iv.night == first.night)]
    # dec 85 at latitude 37.6: always above 52 deg, so observable through the whole dark time
    assert len(polar) == 1
    assert abs(polar.start_jd_utc.iloc[0] - first.dark_start_jd_utc) * 86400 <= 1.0
    assert abs(polar.end_jd_utc.iloc[0] - first.dark_end_jd_utc) * 86400 <= 1.0
    assert (iv.target == "Southern").sum() == 0
    gone = windows.never_rising(t, site)
    assert list(gone.target) == ["Southern"]
    # culmination 90 - |37.62 + 70| = -17.6 deg
    assert abs(gone.culmination_alt_deg.iloc[0] - (90 - abs(37.62 + 70))) <= 1e-9


@pytest.mark.parametrize("where, expected_fraction", [("inside", 1.0), ("straddling", 0.5)])
def test_event_window_on_the_edge_of_darkness(week, where, expected_fraction):
    # A circumpolar target's event whose window begins exactly at the start of darkness is fully
    # observable; one whose window is centred on it is half observable.
    site, tracks, nights = week
    dark0 = nights.iloc[0].dark_start_jd_utc
    half_d = 1.0 / 24 + 1.0 / 24  # default event length 2 h / 2 + baseline 1 h, sigma 0
    event_utc = dark0 + (half_d if where == "inside" else 0.0)
    bjd = float(epochs.to_bjd_tdb(event_utc, "JD_UTC", 120.0, 85.0))
    t = load(f"name,ra,dec,period_d,tc,label\nPolar,120,85,100.0,{bjd!r},minimum\n")
    ev = predict_events(t, bjd - 1, bjd + 1)
    vis = windows.event_visibility(ev, t, site, nights, tracks=tracks)
    assert abs(vis.window_start_jd_utc.iloc[0] - (event_utc - half_d)) * 86400 <= 0.01
    assert abs(vis.observable_fraction.iloc[0] - expected_fraction) <= 1e-5  # 0.05 s of a 4 h window


def test_empty_catalogue_gives_an_empty_plan(tmp_path, capsys):
    cat = tmp_path / "empty.csv"
    cat.write_text("name,ra,dec,period_d,e,omega_deg,tc\n")
    code = cli.main(["plan", str(cat), "--site", str(REPO / "sample_targets" / "site.toml"),
                     "--start", "2026-12-07", "--nights", "2", "--out", str(tmp_path / "p")])
    out, _ = capsys.readouterr()
    assert code == 0 and "Nothing could be scheduled" in out
    assert len(pd.read_csv(tmp_path / "p" / "schedule.csv")) == 0


def test_hundred_thousand_rows(tmp_path):
    rng = np.random.default_rng(4)
    n = 100_000
    frame = pd.DataFrame({"name": [f"S{i}" for i in range(n)], "ra": rng.uniform(0, 360, n).round(5),
                          "dec": rng.uniform(-89, 89, n).round(5), "period_d": rng.uniform(0.5, 50, n).round(6),
                          "e": rng.uniform(0, 0.9, n).round(4), "omega_deg": rng.uniform(0, 360, n).round(3),
                          "tc": (2460000 + rng.uniform(0, 100, n)).round(5)})
    path = tmp_path / "big.csv"
    frame.to_csv(path, index=False)
    t = catalogue.read_catalogue(path)
    assert len(t) == n
    assert np.array_equal(t.period_d.to_numpy(), frame.period_d.to_numpy())
    # one bad row at the end is found and named by its line number
    with open(path, "a") as fh:
        fh.write("Bad,10,10,-1,0.1,10,2460000\n")
    with pytest.raises(InputErrors) as info:
        catalogue.read_catalogue(path)
    assert str(info.value) == "big.csv, row 100002, column period_d: -1 must be positive"


def test_decades_ahead_gives_one_warning_then_results(capsys):
    code = cli.main(["events", str(REPO / "sample_targets" / "targets.csv"), "--start", "2071-06-01",
                     "--days", "3", "--format", "csv"])
    out, err = capsys.readouterr()
    assert code == 0
    warnings = [ln for ln in err.splitlines() if ln.startswith("periplan: warning:")]
    assert len(warnings) == 1 and "beyond the bundled" in warnings[0]
    rows = pd.read_csv(io.StringIO(out))
    assert len(rows) > 0 and rows.utc.str.startswith("2071-06-0").all()


def test_nan_safe_mod_equals_numpy_mod_and_keeps_nan():
    # numerics.mod skips numpy's slow path for NaN cells; on numbers it must be numpy.mod itself
    # (the reference), and NaN or infinite cells give NaN, as numpy.mod does.
    from planner import numerics

    rng = np.random.default_rng(7)
    x = np.concatenate([rng.uniform(-1e4, 1e4, 1000), [-0.0, 0.0, -1e-20, 360.0, -360.0, 719.999999]])
    assert np.array_equal(numerics.mod(x, 360.0), np.mod(x, 360.0))
    assert np.array_equal(numerics.mod(x / 97.0, 1.0), np.mod(x / 97.0, 1.0))
    with np.errstate(invalid="ignore"):
        special = np.array([np.nan, np.inf, -np.inf])
        assert np.all(np.isnan(np.mod(special, 360.0)))
    assert np.all(np.isnan(numerics.mod(special, 360.0)))
    assert numerics.mod(-90.0, 360.0) == 270.0
