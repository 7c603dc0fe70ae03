"""Phase coverage from a log built at known phases of a published orbit.

Reference system: HAT-P-2 b, Pal et al. 2010, MNRAS 401, 2665 (abstract): transit epoch
2454387.49375 BJD, P = 5.6334729 d, e = 0.5171, omega = 185.22 deg. The time of periastron comes
from radvel (``radvel.orbit.timetrans_to_timeperi``), the RV curve from radvel's ``rv_drive``;
the log's times are placed at chosen mean-anomaly phases after that periastron in the test.
"""

import numpy as np
import pandas as pd
import radvel

from planner.inputs.catalogue import parse_catalogue
from planner.orbits import coverage
from planner.scheduling.coverage import coverage_table, parts_covered

P, TC, E, W_DEG, K = 5.6334729, 2454387.49375, 0.5171, 185.22, 983.9
TP = radvel.orbit.timetrans_to_timeperi(TC, P, E, np.radians(W_DEG))
#: Phases are compared to 1e-9 of an orbit (float64 times near 2.45e6 d: 1e-10 d of resolution).
PHASE_TOL = 1e-9


def hatp2():
    return parse_catalogue(f"name,ra,dec,period_d,e,omega_deg,tc,k_ms\n"
                           f"HAT-P-2 b,245.15,41.05,{P},{E},{W_DEG},{TC},{K}\n", "cat.csv")


def log_at(phases, cycles_after=400, single=True, length_phase=0.0):
    start = TP + P * (cycles_after + np.asarray(phases, float))
    end = start + length_phase * P
    n = len(start)
    return pd.DataFrame({"row": np.arange(n) + 2, "target": "HAT-P-2 b", "target_index": 0,
                         "purpose": "visit", "cycle": np.nan, "outcome": "done", "covers": "",
                         "single": single, "start_jd_utc": start, "end_jd_utc": end,
                         "start_bjd_tdb": start, "end_bjd_tdb": end, "notes": ""})


def test_catalogue_periastron_equals_radvels_modulo_the_period():
    offset = (hatp2()["tp_bjd_tdb"][0] - TP) / P
    assert abs(offset - round(offset)) <= 1e-8  # 5e-8 d: float64 resolution of the epochs and radvel's solver


def test_bins_gap_and_rv_range_of_known_phases():
    phases = [0.03, 0.31, 0.36, 0.74]  # bins 0, 3, 3, 7 of 10
    table = coverage_table(log_at(phases), hatp2(), n_bins=10)
    row = table.iloc[0]
    assert row["bins_covered"] == "3/10" and abs(row["phase_coverage"] - 0.3) <= 1e-12
    # empty runs: bins 1-2, 4-6, 8-9; the longest is 4-6
    assert (row["gap_start_phase"], row["gap_end_phase"]) == (0.4, 0.7)
    times = TP + P * (400 + np.array(phases))
    rv = radvel.kepler.rv_drive(times, np.array([P, TP, E, np.radians(W_DEG), K]))
    assert abs(row["rv_sampled_min_ms"] - rv.min()) <= 1e-6 * K
    assert abs(row["rv_sampled_max_ms"] - rv.max()) <= 1e-6 * K
    assert abs(row["rv_range_fraction"] - (rv.max() - rv.min()) / (2 * K)) <= 1e-9


def test_a_series_through_phase_zero_covers_both_ends():
    bins = coverage.covered_bins(np.array([400.95]), np.array([401.05]), np.array([False]), 10)
    assert np.flatnonzero(bins).tolist() == [0, 9]
    assert coverage.covered_bins(np.array([3.2]), np.array([4.4]), np.array([False]), 10).all()
    g0, g1, w = coverage.largest_gap(np.array([True] + [False] * 8 + [True]))
    assert (g0, g1, w) == (0.1, 0.9, 0.8)
    assert coverage.largest_gap(np.array([False, True, False, False])) == (0.5, 1.25, 0.75)  # wraps


def test_lost_observations_do_not_count():
    log = log_at([0.05, 0.55])
    log.loc[1, "outcome"] = "lost"
    assert coverage_table(log, hatp2(), 10)["bins_covered"][0] == "1/10"


def test_parts_of_a_series_from_its_contacts():
    # a transit at t = 0 lasting 0.2 d: a stretch from -0.15 to 0.01 holds the baseline, T1 and mid
    assert parts_covered(-0.15, 0.01, 0.0, 0.2) == "pre;T1;mid"
    assert parts_covered(0.02, 0.2, 0.0, 0.2) == "T4;post"
    assert parts_covered(-0.3, 0.3, 0.0, 0.2) == "pre;T1;mid;T4;post"
    assert parts_covered(-0.3, 0.3, 0.0, np.nan) == "mid"
