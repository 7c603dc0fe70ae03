"""Chart of an orbit's phase coverage: the RV curve (or the phase line), logged points, empty bins.

One PNG per target: the primary's radial velocity over one orbit of mean-anomaly phase (a flat
line at 0 for targets without K), each logged exposure as a marker on the curve, each logged
series as a bar along the curve's foot, and the phase bins without data shaded. Every drawn
element has a ``gid`` (``curve``, ``exposure``, ``series``, ``empty-bin``) so tests can count them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..orbits import coverage, geometry
from .charts import PALETTE, _figure, save_png

EMPTY_SHADE = "#b7b7b7"


def coverage_figure(target: pd.Series, log_rows: pd.DataFrame, phase0_bjd_tdb: float, n_bins: int,
                    n_phase: int = 600):
    """The coverage chart (a matplotlib Figure) of one catalogue row and its log rows."""
    p = float(target["period_d"])
    orbit = target["ephemeris"] == "orbit"
    k = float(target.get("k_ms", np.nan))
    with_rv = orbit and np.isfinite(k)
    scale, unit = (1000.0, "km/s") if with_rv and k >= 5000.0 else (1.0, "m/s")

    def curve(t):
        if not with_rv:
            return np.zeros(np.shape(t))
        return geometry.radial_velocity(t, target["tp_bjd_tdb"], p, target["e"], np.radians(target["omega_deg"]),
                                        k) / scale

    fig = _figure(8.0, 4.0, margins_in=(0.85, 0.2, 0.35, 0.55))
    ax = fig.add_subplot()
    phase = np.linspace(0.0, 1.0, n_phase)
    ax.plot(phase, curve(phase0_bjd_tdb + phase * p), color=PALETTE[0], lw=1.5, gid="curve",
            label="RV of the primary" if with_rv else "orbit")
    s = (log_rows["start_bjd_tdb"].to_numpy(float) - phase0_bjd_tdb) / p
    e = (log_rows["end_bjd_tdb"].to_numpy(float) - phase0_bjd_tdb) / p
    single = log_rows["single"].to_numpy(bool)
    bins = coverage.covered_bins(s, e, single, n_bins)
    for kbin in np.flatnonzero(~bins):
        ax.axvspan(kbin / n_bins, (kbin + 1) / n_bins, color=EMPTY_SHADE, alpha=0.45, lw=0, gid="empty-bin")
    ph = np.mod(s[single], 1.0)
    ax.plot(ph, curve(log_rows["start_bjd_tdb"].to_numpy(float)[single]), ls="none", marker="o", ms=5,
            color=PALETTE[1], markeredgecolor="black", gid="exposure", label="logged exposure")
    y0 = ax.get_ylim()[0]
    for a, b in zip(s[~single], e[~single]):
        a0 = np.mod(a, 1.0)
        width = min(b - a, 1.0)
        for lo, hi in [(a0, min(a0 + width, 1.0))] + ([(0.0, a0 + width - 1.0)] if a0 + width > 1.0 else []):
            ax.plot([lo, max(hi, lo + 0.003)], [y0, y0], lw=6, color=PALETTE[2], solid_capstyle="butt", gid="series")
    ax.set_xlim(0.0, 1.0)
    ax.set_xlabel("orbital phase (mean anomaly / 2 pi" + (", from periastron)" if orbit else ", from the epoch)"))
    ax.set_ylabel(f"radial velocity ({unit})" if with_rv else "")
    ax.grid(alpha=0.3, lw=0.5)
    ax.set_title(f"{target['name']}: {int(bins.sum())} of {n_bins} phase bins observed; grey = no data yet",
                 fontsize=10)
    return fig


def write_coverage_chart(path, target, log_rows, phase0_bjd_tdb, n_bins):
    """PNG of :func:`coverage_figure` at ``path`` (atomic); returns ``path``."""
    return save_png(coverage_figure(target, log_rows, phase0_bjd_tdb, n_bins), path)
