"""Validators for the catalogue columns of eccentric binaries: apsidal motion, a second epoch,
e cos omega / e sin omega, and a third body's light-time orbit.

Same pattern as :mod:`planner.inputs.catalogue_checks`: each function takes the
:class:`~planner.inputs.catalogue_checks.Cells` view, records every problem as an InputError
(file, row, column, value) and returns numpy columns in the engine's units.
"""

from __future__ import annotations

import numpy as np

from .. import numerics
from ..orbits.apsidal import JULIAN_YEAR_D
from ..timescales import epochs
from .catalogue_checks import MAX_FULL_JD, MIN_FULL_JD, Cells, Coded

#: What a row's orbital shape is given as: e and omega (or nothing), ecosw/esinw, secosw/sesinw.
SHAPE_KINDS = ("", "ecosw", "secosw")
SHAPE_COLUMNS = ("ecosw", "esinw", "ecosw_err", "esinw_err", "secosw", "sesinw", "secosw_err", "sesinw_err")
APSIDAL_COLUMNS = ("omega_dot_deg_cycle", "omega_dot_err_deg_cycle", "omega_dot_deg_yr", "omega_dot_err_deg_yr")
SECOND_EPOCH_COLUMNS = ("tsec", "tsec_err_d")
THIRD_BODY_COLUMNS = ("p3_d", "t3", "e3", "omega3_deg", "ltte_amp_d", "a12sini_au")
NUMERIC_COLUMNS = SHAPE_COLUMNS + APSIDAL_COLUMNS + SECOND_EPOCH_COLUMNS + THIRD_BODY_COLUMNS
#: ``omega_dot`` is accepted in the header only to be refused with the names that carry a unit.
TEXT_COLUMNS = ("period_kind", "omega_dot")
#: Two epochs that disagree by more than this many combined sigma are refused.
EPOCH_REFUSE_SIGMA = 10.0
#: ... and by more than this many draw a warning.
EPOCH_WARN_SIGMA = 3.0


def check_shape_alternatives(cells: Cells, e_given, omega_given):
    """(kind, x, y, x_err, y_err, e, omega_deg): e and omega from ecosw/esinw or secosw/sesinw.

    ``kind`` is ``""`` (the row gives e and omega, or nothing), ``"ecosw"`` or ``"secosw"``;
    x, y are the two parameters for the *primary's* omega (both negated for ``omega_of =
    companion``, the same 180 deg turn that :func:`check_shape` applies) and e, omega_deg (0..360)
    follow from them: e = sqrt(x^2 + y^2), omega = atan2(y, x) for ecosw/esinw; e = x^2 + y^2 for
    secosw/sesinw. NaN where not given.
    """
    n, rows = cells.n, cells.rows
    code = np.zeros(n, np.int64)  # index into SHAPE_KINDS
    if not cells.has_any(SHAPE_COLUMNS):
        return (Coded.choose(SHAPE_KINDS, code), *(np.full(n, np.nan) for _ in range(6)))
    out = {c: np.full(n, np.nan) for c in ("x", "y", "x_err", "y_err")}
    for name, a, b in (("ecosw", "ecosw", "esinw"), ("secosw", "secosw", "sesinw")):
        ga, gb = cells.given(a), cells.given(b)
        for row, has_a in zip(rows[ga ^ gb], ga[ga ^ gb]):
            cells.err(row, b if has_a else a, f"{a} and {b} come as a pair; give both (or e and omega_deg instead)")
        both = ga & gb
        clash = both & (code != 0)
        for row in rows[clash]:
            cells.err(row, a, "give one parametrisation of the orbit's shape: ecosw/esinw or secosw/sesinw, not both")
        for row in rows[both & (e_given | omega_given)]:
            cells.err(row, a, f"both e/omega_deg and {a}/{b} are given; give one of the two parametrisations")
        use = both & ~clash & ~e_given & ~omega_given
        code[use] = SHAPE_KINDS.index(name)
        for key, col in (("x", a), ("y", b)):
            out[key] = np.where(use, cells.numeric(col), out[key])
        for key, col in (("x_err", f"{a}_err"), ("y_err", f"{b}_err")):
            out[key] = np.where(use, cells.numeric(col, default=0.0, nonnegative=True), out[key])
    x, y = out["x"], out["y"]
    companion = cells.lookup("omega_of", lambda v: v == "companion", transform=str.lower, dtype=bool)
    x, y = np.where(companion, -x, x), np.where(companion, -y, y)
    r2 = x * x + y * y
    kind = Coded.choose(SHAPE_KINDS, code)
    e = np.where(kind == "ecosw", np.sqrt(r2), np.where(kind == "secosw", r2, np.nan))
    bad = np.isfinite(e) & (e >= 1.0)
    for row, k, v in zip(rows[bad], kind[bad], e[bad]):
        cells.err(row, str(k), f"gives e = {v:.6g}, not a bound orbit; e must be below 1", v)
    e = np.where(bad, np.nan, e)
    omega = np.where(r2 > 0, numerics.mod(np.degrees(np.arctan2(y, x)), 360.0), 90.0)
    omega = np.where(np.isfinite(e), omega, np.nan)
    return kind, x, y, out["x_err"], out["y_err"], e, omega


def check_apsidal(cells: Cells, period_d, linear, e):
    """(omega_dot_deg_d, omega_dot_err_deg_d, period_kind): apsidal rate in deg/day and the period's kind.

    The rate comes as ``omega_dot_deg_cycle`` (degrees per catalogue period) or ``omega_dot_deg_yr``
    (degrees per Julian year of 365.25 d), each with its ``_err_`` column; a bare ``omega_dot`` is
    refused for want of a unit. ``period_kind`` says whether ``period_d`` is the ``sidereal``
    (default: the mean interval between primary minima) or the ``anomalistic`` period.
    """
    rows = cells.rows
    kind = cells.coded("period_kind", lambda v: v or "sidereal", transform=str.lower)
    if not cells.has_any(APSIDAL_COLUMNS + ("omega_dot", "period_kind")):
        return np.zeros(cells.n), np.zeros(cells.n), kind
    if cells.has("omega_dot"):
        cells.err(1, "omega_dot", "omega_dot has no unit; name the column omega_dot_deg_cycle "
                  "(degrees per period) or omega_dot_deg_yr (degrees per Julian year)")
    per_cycle = cells.numeric("omega_dot_deg_cycle")
    per_year = cells.numeric("omega_dot_deg_yr")
    err_cycle = cells.numeric("omega_dot_err_deg_cycle", default=0.0, nonnegative=True)
    err_year = cells.numeric("omega_dot_err_deg_yr", default=0.0, nonnegative=True)
    for row in rows[cells.given("omega_dot_deg_cycle") & cells.given("omega_dot_deg_yr")]:
        cells.err(row, "omega_dot_deg_yr", "give the apsidal rate once: omega_dot_deg_cycle or omega_dot_deg_yr")
    rate = np.where(np.isfinite(per_cycle), per_cycle / period_d, per_year / JULIAN_YEAR_D)
    err = np.where(np.isfinite(per_cycle), err_cycle / period_d, err_year / JULIAN_YEAR_D)
    given = np.isfinite(rate)
    col = np.where(cells.given("omega_dot_deg_cycle"), "omega_dot_deg_cycle", "omega_dot_deg_yr")
    for row, c in zip(rows[given & (linear | (e == 0))], col[given & (linear | (e == 0))]):
        cells.err(row, str(c), "apsidal motion needs an eccentric orbit (e > 0 with omega_deg, or ecosw/esinw)")
    bad = cells.lookup("period_kind", lambda v: (v or "sidereal") not in ("sidereal", "anomalistic"),
                       transform=str.lower, dtype=bool)
    for row, v in zip(rows[bad], kind[bad]):
        cells.err(row, "period_kind", f"{str(v)!r} is not allowed; expected 'sidereal' or 'anomalistic'", v)
    rate = np.where(given & ~linear, rate, 0.0)
    return rate, np.where(given & ~linear, err, 0.0), kind


def _full_epoch(cells: Cells, column, ra_deg, dec_deg, system):
    """A further epoch column as BJD_TDB (time_offset_d added, same time system as the row)."""
    raw = cells.numeric(column)
    full = raw + cells.numeric("time_offset_d", default=0.0)
    bad = np.isfinite(full) & ((full < MIN_FULL_JD) | (full > MAX_FULL_JD))
    for row, v in zip(cells.rows[bad], full[bad]):
        cells.err(row, column, f"epoch {v:.6f} (after time_offset_d) is not a plausible Julian date "
                  f"({MIN_FULL_JD:.0f}-{MAX_FULL_JD:.0f}); reduced dates need time_offset_d", v)
    full = np.where(bad, np.nan, full)
    out = np.full(cells.n, np.nan)
    if not np.isfinite(full).any():
        return out
    ok = np.isfinite(full) & np.isfinite(ra_deg) & np.isfinite(dec_deg) & system.isin(epochs.TIME_SYSTEMS)
    for s in epochs.TIME_SYSTEMS:
        sel = ok & (system == s)
        if sel.any():
            out[sel] = epochs.to_bjd_tdb(full[sel], s, ra_deg[sel], dec_deg[sel])
    return out


def check_second_epoch(cells: Cells, epoch_kind, epoch_err, linear, ra_deg, dec_deg, system):
    """(kind2, epoch2_bjd_tdb, epoch2_err_d): the row's second epoch, ``tp`` or ``tsec``, or none.

    A row that gives both ``tp`` and ``tc`` keeps ``tc`` as its epoch (see check_epoch) and ``tp``
    as the second; ``tsec`` is the time of a secondary conjunction (secondary minimum,
    occultation). Both epochs need their 1-sigma errors, since the two are checked against each
    other and combined.
    """
    rows = cells.rows
    both = cells.given("tp") & cells.given("tc") & (epoch_kind == "tc") & ~linear
    tsec = cells.given("tsec")
    for row in rows[tsec & both]:
        cells.err(row, "tsec", "at most two epochs: tsec with tc or tp, or tc with tp")
    for row in rows[tsec & linear]:
        cells.err(row, "tsec", "tsec (secondary conjunction) needs e and omega_deg (or ecosw/esinw)")
    kind2 = Coded.choose(("", "tp", "tsec"), np.where(both, 1, np.where(tsec & ~both & ~linear, 2, 0)))
    given2 = kind2 != ""
    epoch2 = np.where(both, _full_epoch(cells, "tp", ra_deg, dec_deg, system),
                      np.where(kind2 == "tsec", _full_epoch(cells, "tsec", ra_deg, dec_deg, system), np.nan))
    err2 = np.where(both, cells.numeric("tp_err_d", default=0.0, nonnegative=True),
                    cells.numeric("tsec_err_d", default=0.0, nonnegative=True))
    unsure = given2 & ~((epoch_err > 0) & (err2 > 0))
    for row, k, e2, kind1 in zip(rows[unsure], kind2[unsure], err2[unsure], epoch_kind[unsure]):
        cells.err(row, f"{k}_err_d" if not e2 > 0 else f"{kind1}_err_d",
                  "two epochs need both 1-sigma errors (they are checked against each other and combined)")
    return kind2, np.where(given2, epoch2, np.nan), np.where(given2, err2, 0.0)


def check_epoch_agreement(cells: Cells, offset_d, sigma_d, kind2):
    """Refuse rows whose two epochs disagree by more than :data:`EPOCH_REFUSE_SIGMA` combined sigma;
    ``offset_d``, ``sigma_d``: the second epoch less where the first puts it, and its 1-sigma
    (:func:`planner.orbits.binary_events.epoch_offset`)."""
    tension = np.abs(offset_d) / sigma_d
    bad = np.isfinite(tension) & (tension > EPOCH_REFUSE_SIGMA)
    for row, off, sig, k in zip(cells.rows[bad], offset_d[bad], sigma_d[bad], kind2[bad]):
        side = "later" if off > 0 else "earlier"
        cells.err(row, str(k), f"is {abs(off) * 24:.2f} h {side} than the first epoch and e/omega put it "
                  f"(1-sigma {sig * 24:.2f} h): {abs(off) / sig:.1f} combined sigma, over {EPOCH_REFUSE_SIGMA:g}; "
                  "check the epochs, their errors and e/omega", round(float(abs(off) / sig), 1))


def check_third_body(cells: Cells, ra_deg, dec_deg, system):
    """(p3_d, t3_bjd_tdb, e3, omega3_deg, ltte_amp_d): a third body's light-time orbit, NaN if none.

    The orbit is that of the eclipsing pair about the triple barycentre: period ``p3_d``, periastron
    epoch ``t3`` (same time system and offset as the row's epochs), ``e3`` (0 <= e3 < 1),
    ``omega3_deg`` and the amplitude, either ``ltte_amp_d`` (A = a12 sin i3 / c, days) or
    ``a12sini_au``.
    """
    from ..orbits.light_time import AU_LIGHT_TIME_D

    if not cells.has_any(THIRD_BODY_COLUMNS):
        return tuple(np.full(cells.n, np.nan) for _ in range(5))
    rows = cells.rows
    p3 = cells.numeric("p3_d", positive=True)
    e3 = cells.numeric("e3", default=0.0)
    w3 = cells.numeric("omega3_deg", default=90.0)
    amp = cells.numeric("ltte_amp_d")
    a12 = cells.numeric("a12sini_au", nonnegative=True)
    t3 = _full_epoch(cells, "t3", ra_deg, dec_deg, system)
    bad_e = cells.given("e3") & ~((e3 >= 0) & (e3 < 1))
    for row, v in zip(rows[bad_e], e3[bad_e]):
        cells.err(row, "e3", f"{v:g} is not a bound orbit; the third body's eccentricity must satisfy 0 <= e3 < 1", v)
    for row in rows[cells.given("ltte_amp_d") & cells.given("a12sini_au")]:
        cells.err(row, "a12sini_au", "give the light-time amplitude once: ltte_amp_d (days) or a12sini_au (au)")
    amp = np.where(np.isfinite(amp), amp, a12 * AU_LIGHT_TIME_D)
    any_given = np.zeros(cells.n, bool)
    for c in THIRD_BODY_COLUMNS:
        any_given |= cells.given(c)
    need = {"p3_d": cells.given("p3_d"), "t3": cells.given("t3"),
            "ltte_amp_d": cells.given("ltte_amp_d") | cells.given("a12sini_au")}
    for c, have in need.items():
        for row in rows[any_given & ~have]:
            cells.err(row, c, "a third body needs p3_d, t3 and ltte_amp_d (or a12sini_au); e3 and omega3_deg "
                      "default to 0 and 90")
    for row in rows[any_given & cells.given("e3") & (e3 > 0) & ~cells.given("omega3_deg")]:
        cells.err(row, "omega3_deg", "missing omega3_deg; it is required when e3 > 0")
    ok = any_given & np.isfinite(p3) & np.isfinite(t3) & np.isfinite(amp) & ~bad_e
    nan = np.full(cells.n, np.nan)
    return (np.where(ok, p3, nan), np.where(ok, t3, nan), np.where(ok, e3, nan),
            np.where(ok, numerics.mod(w3, 360.0), nan), np.where(ok, amp, nan))
