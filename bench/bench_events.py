"""Events for many targets over a year: loader + engine + UTC conversion, timed by stage.

Run: ``python bench/bench_events.py [--targets 10000] [--days 365]``. The catalogue is random but
realistic (periods 0.5-500 d log-uniform, e up to 0.95 with errors, a third of epochs as HJD_UTC).
Prints the seconds of each stage, events per second, and, as a same-run reference, the time
astropy takes to convert the same number of BJD_TDB times to UTC through ``Time`` with its own
``light_travel_time`` (what a straightforward implementation would do per event).
"""

from __future__ import annotations

import argparse
import pathlib
import tempfile
import time

import numpy as np


def random_catalogue(n, seed=0, epoch_span_d=500.0):
    """CSV text of ``n`` random targets; their epochs spread over ``epoch_span_d`` days before BJD 2460500."""
    rng = np.random.default_rng(seed)
    period = 10 ** rng.uniform(np.log10(0.5), np.log10(500), n)
    e = np.where(rng.uniform(size=n) < 0.3, 0.0, rng.uniform(0, 0.95, n))
    # events named in full: the same workload as before the defaults began to follow the target
    every = "periastron;apastron;primary_conjunction;secondary_conjunction;rv_max;rv_min"
    circular = "primary_conjunction;secondary_conjunction;rv_max;rv_min"
    lines = ["name,ra,dec,period_d,period_err_d,e,e_err,omega_deg,omega_err_deg,tc,tc_err_d,time_system,events"]
    for i in range(n):
        system = "HJD_UTC" if i % 3 == 0 else "BJD_TDB"
        lines.append(f"T{i},{rng.uniform(0, 360):.5f},{rng.uniform(-60, 80):.5f},{period[i]:.7f},"
                     f"{period[i] * 1e-6:.2e},{e[i]:.4f},{0.01 if e[i] else ''},"
                     f"{rng.uniform(0, 360) if e[i] else '':}{'' if e[i] else ''},{2.0 if e[i] else ''},"
                     f"{2460500 - epoch_span_d + rng.uniform(0, epoch_span_d):.5f},0.0005,{system},"
                     f"{every if e[i] else circular}")
    return "\n".join(lines) + "\n"


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, default=10_000)
    parser.add_argument("--days", type=float, default=365.0)
    args = parser.parse_args(argv)

    from astropy import units as u
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    import planner
    from planner.timescales import clock, earth_orientation

    earth_orientation.configure()  # the astropy reference below must not try to download either

    with tempfile.TemporaryDirectory() as tmp:
        path = pathlib.Path(tmp) / "random.csv"
        path.write_text(random_catalogue(args.targets), encoding="utf-8")
        t0 = time.perf_counter()
        targets = planner.read_catalogue(path)
    t1 = time.perf_counter()
    start = Time("2027-01-01T00:00:00", scale="utc")
    events = planner.predict_events(targets, start, start + args.days * u.day)
    t2 = time.perf_counter()
    utc, local = clock.jd_utc_to_iso_z(events["jd_utc"]), clock.jd_utc_to_local_iso(events["jd_utc"], "Europe/Madrid")
    t3 = time.perf_counter()
    n = len(events)
    assert len(utc) == len(local) == n
    print(f"{args.targets} targets, {args.days:g} days: {n} events")
    print(f"  load + validate + epochs to BJD_TDB  {t1 - t0:7.2f} s")
    print(f"  events, uncertainties, BJD -> UTC   {t2 - t1:7.2f} s")
    print(f"  UTC and local strings                {t3 - t2:7.2f} s")
    print(f"  total                                {t3 - t0:7.2f} s  ({n / (t3 - t0):.3g} events/s)")

    # Same-run reference: astropy's own per-event conversion on a sample, scaled to all events.
    sample = min(n, 20_000)
    idx = events["target_index"].to_numpy()[:sample]
    coords = SkyCoord(targets.ra_deg.to_numpy()[idx] * u.deg, targets.dec_deg.to_numpy()[idx] * u.deg)
    geo = EarthLocation.from_geocentric(0, 0, 0, unit=u.m)
    r0 = time.perf_counter()
    bjd = Time(events["bjd_tdb"].to_numpy()[:sample], format="jd", scale="tdb", location=geo)
    approx = bjd - bjd.light_travel_time(coords)
    approx = (bjd - Time(approx, location=geo).light_travel_time(coords)).utc.isot
    r1 = time.perf_counter()
    ours_per_event = (t3 - t1) / max(n, 1)  # prediction included: a conservative ratio
    ref_per_event = (r1 - r0) / max(sample, 1)
    print(f"reference: astropy Time.light_travel_time per event {ref_per_event * 1e6:.1f} us, "
          f"ours {ours_per_event * 1e6:.1f} us: ratio {ref_per_event / ours_per_event:.1f}x")


if __name__ == "__main__":
    main()
