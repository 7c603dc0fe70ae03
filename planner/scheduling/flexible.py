"""Monitor visits (targets with ``visit_h``) placed greedily in the gaps between the blocks."""

from __future__ import annotations

import numpy as np

from .blocks import FLEXIBLE, MIN_PER_DAY, SCHEDULE_COLUMNS, altitudes, mean_airmass, sample_times
from .score import airmass_from_alt, score_components


def _free_stretches(lo, hi, busy, overhead_d):
    """Stretches [a, b] inside [lo, hi] at least ``overhead_d`` away from every busy block."""
    out = []
    cur = lo
    for bs, be in sorted(busy):
        if bs - overhead_d > cur:
            out.append((cur, min(hi, bs - overhead_d)))
        cur = max(cur, be + overhead_d)
        if cur >= hi:
            break
    if cur < hi:
        out.append((cur, hi))
    return [(a, b) for a, b in out if b > a]


def _best_placement(ti, stretches, length_d, earliest, busy, overhead_d, step_d, altitude_deg):
    """(start, alt samples, airmass samples) of target ``ti``'s best visit, or None if none fits.

    Candidate starts run on a ``step_d`` grid through every free part of the target's observable
    stretches; the one of lowest mean airmass wins (ties: the earliest). Without an altitude
    function the visit is centred on its stretch as nearly as the free time allows.
    """
    starts = []
    for a0, a1 in stretches:
        for g0, g1 in _free_stretches(a0, a1, busy, overhead_d):
            lo, hi = max(g0, earliest), g1 - length_d
            if hi < lo:
                continue
            if altitude_deg is None:
                starts.append(float(np.clip(0.5 * (a0 + a1) - 0.5 * length_d, lo, hi)))
            else:
                starts.extend(np.append(np.arange(lo, hi, step_d), hi).tolist())
    if not starts:
        return None
    s = np.asarray(starts)
    alt = altitudes(altitude_deg, np.full(s.size, ti), sample_times(s, s + length_d))
    x = airmass_from_alt(alt)
    pick = 0
    if altitude_deg is not None:
        mean_x = mean_airmass(x)
        pick = int(np.argmin(np.where(np.isnan(mean_x), np.inf, mean_x)))
    return float(s[pick]), alt[pick], x[pick]


def fill_flexible(availability, targets, nights, fixed_chosen, altitude_deg, moon_sep_deg, options):
    """Rows (dicts) of the flexible visits placed greedily in the gaps, night by night.

    Each round places, among all flexible targets that still fit, the visit with the highest
    score (ties: lower target index, then earlier start), until nothing fits.
    """
    if availability is None or availability.empty:
        return []
    n_t = len(targets)
    visit_h = targets["visit_h"].to_numpy(float) if "visit_h" in targets else np.full(n_t, np.nan)
    gap_h = targets["visit_gap_h"].to_numpy(float) if "visit_gap_h" in targets else np.full(n_t, np.nan)
    gap_d = np.where(np.isfinite(gap_h), gap_h / 24.0, 0.0)
    priority = targets["priority"].to_numpy(float)
    names = targets["name"].to_numpy(object)
    overhead_d = options.overhead_min / MIN_PER_DAY
    step_d = options.flex_step_min / MIN_PER_DAY
    moon_illum = dict(zip(nights["night"].astype(str), nights["moon_illumination"].to_numpy(float)))
    stretches: dict[str, dict[int, list]] = {}
    av = availability.sort_values(["start_jd_utc", "target_index"], kind="stable")
    for label, ti, a0, a1 in zip(av["night"].astype(str), av["target_index"].astype(int),
                                 av["start_jd_utc"].to_numpy(float), av["end_jd_utc"].to_numpy(float)):
        length_d = visit_h[ti] / 24.0
        if np.isfinite(length_d) and length_d > 0 and a1 - a0 >= length_d:
            stretches.setdefault(label, {}).setdefault(int(ti), []).append((a0, a1))
    last_start: dict[int, float] = {}
    rows = []
    for label in nights["night"].astype(str):
        here_av = stretches.get(label)
        if not here_av:
            continue
        here = fixed_chosen[fixed_chosen["night"] == label]
        busy = list(zip(here["start_jd_utc"], here["end_jd_utc"]))
        todo = sorted(set(here_av) - set(here["target_index"].astype(int)))
        lit = moon_illum.get(label, np.nan)
        while todo:
            found = []
            for ti in todo:
                length_d = visit_h[ti] / 24.0
                earliest = last_start.get(ti, -np.inf) + gap_d[ti]
                got = _best_placement(ti, here_av[ti], length_d, earliest, busy, overhead_d, step_d, altitude_deg)
                if got is not None:
                    found.append((ti, length_d) + got)
            if not found:
                break
            tis = np.array([f[0] for f in found])
            t0 = np.array([f[2] for f in found])
            t1 = t0 + np.array([f[1] for f in found])
            x = np.vstack([f[4] for f in found])
            sep = np.full(tis.size, np.nan)
            if moon_sep_deg is not None:
                sep = np.asarray(moon_sep_deg(tis, 0.5 * (t0 + t1)), dtype=float)
            nan = np.full(tis.size, np.nan)
            sc = score_components(priority[tis], nan, nan, mean_airmass(x), sep, np.full(tis.size, lit),
                                  nan, nan, options.weights)
            total = sc["score"].to_numpy()
            k = min(range(tis.size), key=lambda j: (-total[j], tis[j], t0[j]))
            ti = int(tis[k])
            todo.remove(ti)
            last_start[ti] = t0[k]
            busy.append((t0[k], t1[k]))
            alt = found[k][3]
            row = {c: np.nan for c in SCHEDULE_COLUMNS}
            row.update({
                "night": label, "start_jd_utc": t0[k], "end_jd_utc": t1[k], "target": names[ti],
                "target_index": ti, "event": "visit", "serves": "visit", "label": "flexible visit",
                "kind": FLEXIBLE, "request": "monitor", "request_id": -1, "group": -1, "slot": 0, "n_slots": 1, "covers": "",
                "not_covered": "", "science_fraction": 1.0, "priority": float(priority[ti]),
                "earliest_start_jd_utc": t0[k], "latest_start_jd_utc": t0[k],
                "alt_low_deg": float(np.min(alt)), "airmass": float(mean_airmass(x[k:k + 1])[0]),
                "moon_sep_deg": sep[k], "moon_illumination": lit, "notes": "", "_alt": alt,
            })
            row.update({c: float(sc[c].iloc[k]) for c in sc.columns})
            rows.append(row)
    return rows

