"""Property-based fuzzing: loaders raise only the project's own errors; engine invariants hold."""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.inputs import catalogue
from planner.orbits import geometry
from planner.errors import PeriplanError
from planner.orbits.events import predict_events

COLUMNS = ["name", "ra", "dec", "period_d", "e", "omega_deg", "tp", "tc", "t0", "time_system",
           "time_offset_d", "period_err_d", "e_err", "omega_err_deg", "tc_err_d", "events", "priority",
           "a_rstar", "inc_deg", "b", "rp_rstar", "duration_h", "omega_of", "bogus"]
cell = st.one_of(
    st.just(""), st.text(max_size=12), st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-10**7, 10**7).map(str), st.sampled_from(["BJD_TDB", "HJD_UTC", "jd_utc", "12:30:00",
                                                          "+45:00:00", "periastron;rv_max", "companion"]),
)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.binary(max_size=400))
def test_random_bytes_only_raise_periplan_errors(data):
    try:
        catalogue.parse_catalogue(data, source="fuzz.csv")
    except PeriplanError:
        pass


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(header=st.lists(st.sampled_from(COLUMNS), min_size=1, max_size=10, unique=True),
       rows=st.lists(st.lists(cell, min_size=0, max_size=11), max_size=5))
def test_random_rows_only_raise_periplan_errors(header, rows):
    import csv
    import io

    buf = io.StringIO()
    w = csv.writer(buf)
    w.writerow(header)
    w.writerows(rows)
    try:
        table = catalogue.parse_catalogue(buf.getvalue(), source="fuzz.csv")
    except PeriplanError:
        return
    # whatever loads must be usable by the engine without anything but our own errors
    assert np.all((table.e.isna()) | ((table.e >= 0) & (table.e < 1)))
    assert np.all(table.period_d > 0)
    predict_events(table, 2461000.0, 2461010.0)


elements = st.tuples(st.floats(0.3, 400.0), st.floats(0.0, 0.98), st.floats(0.0, 360.0))


@settings(max_examples=150, deadline=None)
@given(el=elements)
def test_event_invariants(el):
    p, e, w_deg = el
    text = ("name,ra,dec,period_d,e,omega_deg,tp,k_ms,events\n"
            f"F,10,20,{p!r},{e!r},{w_deg!r},2461000.0,100,{';'.join(geometry.ORBIT_EVENTS)}\n")
    t = catalogue.parse_catalogue(text, source="f.csv")
    ev = predict_events(t, 2461000.0, 2461000.0 + 3.5 * p)
    # periastron-to-periastron spacing equals P
    peri = ev[ev.event == "periastron"].bjd_tdb.to_numpy()
    assert np.all(np.abs(np.diff(peri) - p) <= 1e-7 * max(p, 1))
    # within each orbit, events come in the order of their true anomalies after periastron
    nu = geometry.event_true_anomalies(np.radians(t.omega_deg[0]))
    order = [geometry.ORBIT_EVENTS[i] for i in np.argsort(nu, kind="stable")]
    first = ev[ev.bjd_tdb >= peri[0]].head(6)
    # (skip orders that float64 BJDs cannot resolve: events closer than 1e-6 d)
    ph = np.sort(geometry.event_phases(e, np.radians(t.omega_deg[0])))
    gaps = np.diff(np.concatenate([ph, [ph[0] + 1]]))
    if gaps.min() * p > 1e-6:
        assert list(first.event) == order
    # the RV at rv_max is the curve's maximum, at rv_min its minimum
    tp = t.tp_bjd_tdb[0]
    w = np.radians(t.omega_deg[0])
    grid = np.linspace(tp, tp + p, 4001)
    v = geometry.radial_velocity(grid, tp, p, e, w, 100.0)
    for name, fn, sign in (("rv_max", np.max, 1), ("rv_min", np.min, -1)):
        t_ev = ev[ev.event == name].bjd_tdb.to_numpy()[0]
        v_ev = geometry.radial_velocity(t_ev, tp, p, e, w, 100.0)
        assert sign * (v_ev - fn(v)) >= -1e-9


site_value = st.one_of(st.integers(-1000, 1000), st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=20),
                       st.booleans(), st.lists(st.lists(st.floats(-400, 400), max_size=3), max_size=4))
SITE_KEYS = ["name", "latitude_deg", "longitude_deg", "elevation_m", "timezone", "min_altitude_deg", "max_airmass",
             "horizon", "darkness", "moon_min_separation_deg", "moon_separation_growth_deg", "min_hour_angle_h",
             "max_hour_angle_h", "min_declination_deg", "max_declination_deg", "sun_min_separation_deg", "bogus"]


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.binary(max_size=300))
def test_site_loader_random_bytes_only_raise_periplan_errors(data):
    from planner.inputs.site import parse_site
    from planner.inputs.textfile import decode_text

    try:
        parse_site(decode_text(data, "fuzz.toml", "a TOML site file"), "fuzz.toml")
    except PeriplanError:
        pass


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(values=st.dictionaries(st.sampled_from(SITE_KEYS), site_value, max_size=10))
def test_site_loader_random_values_only_raise_periplan_errors(values):
    import json

    from planner.inputs.site import parse_site

    # TOML has no NaN/inf literals in JSON's spelling; write them as TOML does
    def toml(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, float):
            return "nan" if v != v else ("inf" if v == float("inf") else "-inf" if v == float("-inf") else repr(v))
        if isinstance(v, list):
            return "[" + ", ".join(toml(x) for x in v) + "]"
        return json.dumps(v)

    text = "".join(f"{k} = {toml(v)}\n" for k, v in values.items())
    try:
        site = parse_site(text, "fuzz.toml")
    except PeriplanError:
        return
    assert -90 <= site.latitude_deg <= 90 and -5 <= site.min_altitude_deg <= 90
