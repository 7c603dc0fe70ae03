"""One validator per concern of a catalogue row: names, coordinates, period, e/omega, epoch,
time system, eclipse geometry, observing settings, events and wanted orbital phases.

Each validator takes a :class:`Cells` view of the raw table (text cells, one row per target,
indexed by file row) and returns plain numpy columns in the engine's units; every problem becomes
an :class:`~planner.errors.InputError` naming file, row, column and value, collected in
``cells.errors`` so that one run reports every bad row. :func:`planner.inputs.catalogue.parse_catalogue`
calls them in order and assembles the target table.
"""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np
import pandas as pd

from ..errors import InputError
from ..orbits.geometry import (EVENT_WORDS, ORBIT_EVENTS, PERIODIC_EVENT, PERIODIC_KINDS, canonical_event,
                               periodic_kind)
from ..timescales import epochs

EPOCH_COLUMNS = ("tp", "tc", "t0")
#: Smallest full Julian date accepted as an epoch (JD 2000000 is 763 AD); anything below it is
#: taken to be a reduced date that needs ``time_offset_d``.
MIN_FULL_JD = 2_000_000.0
MAX_FULL_JD = 3_000_000.0

_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d+,\d+\s*$")
_SEXAGESIMAL = re.compile(r"^\s*([+-]?)\s*(\d+)[:\s]+(\d+)(?:[:\s]+(\d+(?:\.\d*)?))?\s*$")


@dataclasses.dataclass
class Cells:
    """The raw catalogue (index = row number) with its source name and error list.

    Cells are text (``""`` when empty), or floats (NaN when empty) for numeric columns of a
    table read with its types. ``names`` maps an engine column to the column name the user gave
    (``period`` for ``period_d``), ``notes`` to a remark added to its messages (a unit
    conversion); messages name the user's column.
    """

    frame: pd.DataFrame
    source: str
    errors: list
    names: dict = dataclasses.field(default_factory=dict)
    notes: dict = dataclasses.field(default_factory=dict)

    @property
    def n(self) -> int:
        return len(self.frame)

    @property
    def rows(self) -> np.ndarray:
        return self.frame.index.to_numpy()

    def err(self, row, column, message, value=None) -> None:
        self.errors.append(InputError(message + self.notes.get(column, ""), file=self.source, row=int(row),
                                      column=self.names.get(column, column), value=value))

    def _is_float(self, column) -> bool:
        return column in self.frame and self.frame[column].dtype.kind == "f"

    def text(self, column) -> np.ndarray:
        """The column's text cells (``""`` for every row when the column is absent)."""
        if column not in self.frame:
            return np.full(self.n, "", dtype=object)
        if self._is_float(column):
            values = self.frame[column].to_numpy(float)
            return np.array(["" if np.isnan(v) else _float_text(v) for v in values], dtype=object)
        return self.frame[column].astype(str).to_numpy()

    def given(self, column) -> np.ndarray:
        """True where the column exists and its cell is not empty."""
        if self._is_float(column):
            return ~np.isnan(self.frame[column].to_numpy(float))
        return self.text(column) != ""

    def numeric(self, column, default=np.nan, positive=False, nonnegative=False) -> np.ndarray:
        """Column as floats; bad cells become NaN (or ``default``) and an InputError each."""
        if column not in self.frame:
            return np.full(self.n, default, dtype=float)
        if self._is_float(column):
            values = self.frame[column].to_numpy(float, copy=True)
            bad_number = np.isinf(values)
            text = pd.Series(self.text(column), index=self.frame.index) if bad_number.any() or positive or nonnegative \
                else None
        else:
            text = self.frame[column].astype(str)
            values = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float, copy=True)
            bad_number = (text != "").to_numpy() & ~np.isfinite(values)
        for row, v in zip(self.frame.index[bad_number], text[bad_number] if bad_number.any() else ()):
            hint = " (a decimal comma? write numbers with a decimal point)" if _DECIMAL_COMMA.match(v) else ""
            self.err(row, column, f"{v!r} is not a number{hint}", v)
        values[bad_number] = np.nan
        if positive:
            bad = values <= 0
            for row, v in zip(self.frame.index[bad], text[bad]):
                self.err(row, column, f"{v} must be positive", v)
            values[bad] = np.nan
        if nonnegative:
            bad = values < 0
            for row, v in zip(self.frame.index[bad], text[bad]):
                self.err(row, column, f"{v} must not be negative (it is a 1-sigma uncertainty)", v)
            values[bad] = np.nan
        return np.where(np.isnan(values), default, values) if not np.isnan(default) else values


def _float_text(value: float) -> str:
    """Shortest text that reads back as ``value``, without a trailing ``.0`` (``12345``, ``5.63``)."""
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


def parse_angle(text: str, hours: bool) -> float:
    """Angle in degrees from decimal degrees or sexagesimal text; ``hours`` for right ascension.

    Raises ValueError with the reason when the text is not a valid angle.
    """
    m = _SEXAGESIMAL.match(text)
    if m:
        sign, a, b, c = m.groups()
        a, b, c = int(a), int(b), float(c or 0.0)
        if b >= 60 or c >= 60:
            raise ValueError("minutes and seconds must be below 60")
        value = a + b / 60.0 + c / 3600.0
        if hours:
            if sign:
                raise ValueError("a right ascension in hours has no sign")
            if value >= 24:
                raise ValueError("hours must be below 24")
            return 15.0 * value
        return -value if sign == "-" else value
    value = float(text)  # raises ValueError
    if not math.isfinite(value):
        raise ValueError("not a finite number")
    return value


def check_names(cells: Cells) -> np.ndarray:
    """Target names: not empty, unique in the file."""
    rows, names = cells.rows, cells.text("name")
    for row in rows[names == ""]:
        cells.err(row, "name", "empty target name")
    dup = pd.Series(names).duplicated(keep="first").to_numpy() & (names != "")
    first_row = {}
    for row, nm in zip(rows, names):
        first_row.setdefault(nm, row)
    for row, nm in zip(rows[dup], names[dup]):
        cells.err(row, "name", f"duplicate target name {nm!r} (first at row {first_row[nm]}); names must be unique", nm)
    return names


def _angles(cells: Cells, column: str, is_ra: bool, expected: str) -> np.ndarray:
    out = np.full(cells.n, np.nan)
    what = "right ascension" if is_ra else "declination"
    for i, (row, text) in enumerate(zip(cells.rows, cells.text(column))):
        try:
            out[i] = parse_angle(text, hours=is_ra and (":" in text or " " in text.strip()))
        except ValueError as exc:
            reason = str(exc) if "could not convert" not in str(exc) else "not a number"
            cells.err(row, column, f"{text!r} is not a {what} ({reason}); expected {expected}", text)
    return out


def check_coordinates(cells: Cells):
    """(ra_deg, dec_deg): ICRS degrees from decimal degrees or sexagesimal text; NaN where bad."""
    ra = _angles(cells, "ra", True, "degrees 0-360 or hh:mm:ss.s")
    bad = np.isfinite(ra) & ~((ra >= 0.0) & (ra < 360.0))
    for row, text in zip(cells.rows[bad], cells.text("ra")[bad]):
        cells.err(row, "ra", f"{text} is outside 0 <= ra < 360 deg", text)
    ra[bad] = np.nan
    dec = _angles(cells, "dec", False, "degrees or +dd:mm:ss")
    bad = np.isfinite(dec) & ~((dec >= -90.0) & (dec <= 90.0))
    for row, text, r in zip(cells.rows[bad], cells.text("dec")[bad], ra[bad]):
        hint = " (are ra and dec swapped?)" if -90 <= r <= 90 else ""
        cells.err(row, "dec", f"{text} is outside -90..+90 deg{hint}", text)
    dec[bad] = np.nan
    return ra, dec


def check_period(cells: Cells):
    """(period_d, period_err_d): the period, or Kepler's third law from a_au and the masses."""
    period = cells.numeric("period_d", positive=True)
    a_au = cells.numeric("a_au", positive=True)
    m1 = cells.numeric("mass1_msun", positive=True)
    m2 = cells.numeric("mass2_msun", default=0.0, nonnegative=True)
    from_kepler = np.isnan(period) & np.isfinite(a_au) & np.isfinite(m1)
    if from_kepler.any():
        import astropy.units as u

        from ..orbits.kepler import period_from_kepler_third_law

        period[from_kepler] = period_from_kepler_third_law(
            a_au[from_kepler] * u.au, (m1[from_kepler] + m2[from_kepler]) * u.M_sun).value
    for row in cells.rows[np.isnan(period) & ~cells.given("period_d")]:
        cells.err(row, "period_d", "missing period; give period_d (days) or a_au with mass1_msun")
    return period, cells.numeric("period_err_d", default=0.0, nonnegative=True)


def check_shape(cells: Cells):
    """(e, e_err, omega_deg, omega_err_deg, linear): the orbit's shape, omega of the primary.

    ``linear`` marks rows without e and omega (a linear ephemeris). A companion's omega
    (``omega_of = companion``) gets 180 deg added; a circular orbit without omega gets 90 deg
    (so Tp = Tc); omega is reduced to 0..360 deg.
    """
    rows = cells.rows
    e = cells.numeric("e")
    bad_e = ~np.isnan(e) & ~((e >= 0) & (e < 1))
    for row, v in zip(rows[bad_e], e[bad_e]):
        cells.err(row, "e", f"{v:g} is not a bound orbit; eccentricity must satisfy 0 <= e < 1", v)
    omega = cells.numeric("omega_deg")
    e_given, w_given = cells.given("e"), cells.given("omega_deg")
    linear = ~e_given & ~w_given
    need_omega = ~linear & ~w_given & ~(e == 0)
    for row in rows[need_omega & ~bad_e & ~np.isnan(e)]:
        cells.err(row, "omega_deg", "missing argument of periastron; it is required when e > 0")
    for row in rows[~e_given & w_given]:
        cells.err(row, "e", "missing eccentricity (omega_deg is given); leave both empty for a linear ephemeris")
    e = np.where(bad_e, np.nan, e)

    omega_of = np.char.lower(cells.text("omega_of").astype(str))
    bad_of = ~np.isin(omega_of, ["", "primary", "companion"])
    for row, v in zip(rows[bad_of], omega_of[bad_of]):
        cells.err(row, "omega_of", f"{str(v)!r} is not allowed; expected 'primary' or 'companion'", v)
    omega = np.where(omega_of == "companion", omega + 180.0, omega)
    omega = np.where(np.isnan(omega) & (e == 0), 90.0, omega)  # circular: Tp = Tc convention
    omega = np.mod(omega, 360.0)
    e_err = cells.numeric("e_err", default=0.0, nonnegative=True)
    omega_err = cells.numeric("omega_err_deg", default=0.0, nonnegative=True)
    return e, e_err, omega, omega_err, linear


def check_epoch(cells: Cells, linear: np.ndarray):
    """(epoch_kind, full_jd, epoch_err_d): exactly one of tp / tc / t0, as a full Julian date.

    ``time_offset_d`` is added first; an epoch below :data:`MIN_FULL_JD` without it is refused as
    a reduced date, and one outside MIN_FULL_JD..MAX_FULL_JD as implausible (NaN in both cases).
    """
    rows, n = cells.rows, cells.n
    present = {c: cells.given(c) for c in EPOCH_COLUMNS}
    count = sum(present.values())
    epoch_kind = np.full(n, "", dtype=object)
    for c in EPOCH_COLUMNS:
        epoch_kind[present[c]] = c
    frame = cells.frame
    for row in rows[count == 0]:
        cells.err(row, "tp" if "tp" in frame else ("tc" if "tc" in frame else "t0"),
                  "missing epoch; give tp (periastron), tc (primary conjunction) or t0 (linear ephemeris)")
    # tp with tc is a row with two epochs: tc is kept here, tp goes to binary_checks.check_second_epoch
    two = present["tp"] & present["tc"] & ~present["t0"] & ~linear
    epoch_kind[two] = "tc"
    for row in rows[(count > 1) & ~two]:
        cells.err(row, "tc", "more than one epoch given (tp, tc, t0); give exactly one, or tc with tp")
    for row in rows[present["t0"] & ~linear]:
        cells.err(row, "t0", "t0 is the epoch of a linear ephemeris; for an orbit with e and omega use tp or tc")
    for row in rows[present["tp"] & linear]:
        cells.err(row, "tp", "tp (periastron) needs e and omega_deg; for a linear ephemeris use t0 or tc")

    epoch = np.full(n, np.nan)
    epoch_err = np.zeros(n)
    for c in EPOCH_COLUMNS:
        vals = cells.numeric(c)
        errs = cells.numeric(f"{c}_err_d", default=0.0, nonnegative=True)
        single = present[c] & ((count == 1) | (two & (c == "tc")))
        epoch = np.where(single, vals, epoch)
        epoch_err = np.where(single, errs, epoch_err)
    offset_given = cells.given("time_offset_d")
    full = epoch + cells.numeric("time_offset_d", default=0.0)
    looks_reduced = np.isfinite(epoch) & ~offset_given & (epoch < MIN_FULL_JD)
    for row, kind, v in zip(rows[looks_reduced], epoch_kind[looks_reduced], epoch[looks_reduced]):
        cells.err(row, kind, f"{v:g} looks like a reduced Julian date; give the offset in column time_offset_d "
                  "(e.g. 2400000, 2450000 or 2400000.5 for MJD)", v)
    out_of_range = np.isfinite(full) & ~looks_reduced & ((full < MIN_FULL_JD) | (full > MAX_FULL_JD))
    for row, kind, v in zip(rows[out_of_range], epoch_kind[out_of_range], full[out_of_range]):
        cells.err(row, kind, f"epoch {v:.6f} (after time_offset_d) is not a plausible Julian date "
                  f"({MIN_FULL_JD:.0f}-{MAX_FULL_JD:.0f})", v)
    return epoch_kind, np.where(looks_reduced | out_of_range, np.nan, full), epoch_err


def check_time_system(cells: Cells, full_jd, ra_deg, dec_deg):
    """(time_system, epoch_bjd_tdb): the stated system (default BJD_TDB), epochs in BJD_TDB.

    Converted in each target's direction by :func:`planner.timescales.epochs.to_bjd_tdb`; NaN
    where the epoch, the coordinates or the system is bad.
    """
    system = np.char.upper(cells.text("time_system").astype(str))
    system = np.where(system == "", "BJD_TDB", system)
    bad = ~np.isin(system, epochs.TIME_SYSTEMS)
    for row, v in zip(cells.rows[bad], system[bad]):
        cells.err(row, "time_system", f"unknown time system {str(v)!r}; expected one of {', '.join(epochs.TIME_SYSTEMS)}", v)
    epoch_bjd = np.full(cells.n, np.nan)
    ok = np.isfinite(ra_deg) & np.isfinite(dec_deg) & np.isfinite(full_jd) & ~bad
    for s in epochs.TIME_SYSTEMS:
        sel = ok & (system == s)
        if sel.any():
            epoch_bjd[sel] = epochs.to_bjd_tdb(full_jd[sel], s, ra_deg[sel], dec_deg[sel])
    return system, epoch_bjd


def check_geometry(cells: Cells, e, omega_deg):
    """(duration_h, a_rstar, inc_deg, rp_rstar): eclipse geometry; ``b`` becomes an inclination."""
    rows = cells.rows
    duration = cells.numeric("duration_h", positive=True)
    a_rstar = cells.numeric("a_rstar", positive=True)
    for row in rows[np.isfinite(a_rstar) & (a_rstar <= 1)]:
        cells.err(row, "a_rstar", "a/R* must exceed 1 (the companion would orbit inside the star)")
    inc = cells.numeric("inc_deg")
    bad = np.isfinite(inc) & ((inc < 0) | (inc > 180))
    for row, v in zip(rows[bad], inc[bad]):
        cells.err(row, "inc_deg", f"{v:g} is outside 0..180 deg", v)
    impact = cells.numeric("b", nonnegative=True)
    rp = cells.numeric("rp_rstar", positive=True)
    for row in rows[np.isfinite(inc) & np.isfinite(impact)]:
        cells.err(row, "b", "give either inc_deg or b, not both")
    from ..orbits.geometry import inclination_from_impact

    with np.errstate(invalid="ignore"):
        inc_from_b = np.degrees(inclination_from_impact(impact, a_rstar, np.nan_to_num(e), np.radians(omega_deg)))
    inc = np.where(np.isnan(inc) & np.isfinite(impact) & np.isfinite(a_rstar), inc_from_b, inc)
    return duration, a_rstar, inc, rp


def check_observing(cells: Cells) -> dict:
    """RV amplitude, systemic velocity, priority and flexible-visit settings, engine columns."""
    return {
        "k_ms": cells.numeric("k_ms", nonnegative=True),
        "gamma_ms": cells.numeric("gamma_ms", default=0.0),
        "priority": cells.numeric("priority", default=1.0, positive=True),
        "visit_h": cells.numeric("visit_h", positive=True),
        "visit_gap_h": cells.numeric("visit_gap_h", default=0.0, nonnegative=True),
        "mag": cells.numeric("mag"),  # brightness for the sheets only, in the observer's band
    }


def default_events(linear, e, rv, eclipse) -> tuple:
    """Events of a target whose ``events`` cell is empty: what its elements make worth observing.

    A linear ephemeris has its ``periodic`` event. An orbit gets periastron when eccentric, unless
    its only use is photometric (eclipse information and no RV amplitude: a transit timer's
    periastron passage shows nothing in the light curve, except for the rare heartbeat stars,
    which can name it); RV maximum and minimum only with an RV amplitude (``rv``: k_ms given);
    apastron only for an eccentric RV target without eclipse information (nothing photometric
    happens there); the two conjunctions only with eclipse information (``eclipse``: a duration,
    or a/R*, inclination and radius ratio). Anything else is observed only when the ``events``
    column asks for it.
    """
    if linear:
        return (PERIODIC_EVENT,)
    eccentric = bool(e > 0)
    wanted = {
        "periastron": eccentric and (rv or not eclipse),
        "apastron": eccentric and rv and not eclipse,
        "primary_conjunction": eclipse,
        "secondary_conjunction": eclipse,
        "rv_max": rv,
        "rv_min": rv,
    }
    return tuple(ev for ev in ORBIT_EVENTS if wanted[ev])


def check_events(cells: Cells, linear, e, rv=None, eclipse=None):
    """(events, labels): each row's tuple of wanted event names and the label of its event.

    Words of the ``events`` column may be the usual aliases (``transit``, ``primary_eclipse``,
    ``occultation``, ``secondary_eclipse``; :data:`planner.orbits.geometry.EVENT_ALIASES`); a
    linear ephemeris may say ``maximum`` or ``minimum`` (then its label, when empty, says so).
    An empty cell gets :func:`default_events` (``rv``: rows with k_ms, ``eclipse``: rows with a
    duration or eclipse geometry; both False when not given). A linear ephemeris is labelled
    ``periodic`` unless ``label`` or the events column says otherwise.
    """
    n = cells.n
    rv = np.zeros(n, bool) if rv is None else np.asarray(rv, bool)
    eclipse = np.zeros(n, bool) if eclipse is None else np.asarray(eclipse, bool)
    labels = cells.text("label").astype(object)
    out = []
    parsed = {}  # cell text -> (unknown words, periodic kinds, wanted names): most rows repeat a few lists
    for i, (row, t, lin, ecc) in enumerate(zip(cells.rows, cells.text("events"), linear, e)):
        if not t:
            out.append(default_events(lin, ecc, rv[i], eclipse[i]))
            continue
        if t not in parsed:
            words = [w.strip() for w in t.split(";") if w.strip()]
            names = [canonical_event(w) for w in words]
            parsed[t] = ([w for w, nm in zip(words, names) if nm is None], {nm for nm in names if nm in PERIODIC_KINDS},
                         tuple(dict.fromkeys(PERIODIC_EVENT if nm in PERIODIC_KINDS else nm for nm in names)))
        unknown, kinds, wanted = parsed[t]
        kinds = set(kinds)
        if unknown:
            cells.err(row, "events", f"unknown event {unknown[0]!r}; expected a semicolon list of "
                      f"{', '.join(EVENT_WORDS)}", t)
        elif lin and set(wanted) - {PERIODIC_EVENT}:
            cells.err(row, "events", "a linear ephemeris (no e, omega_deg) has only the event 'periodic' "
                      "(or 'maximum' / 'minimum')", t)
        elif not lin and PERIODIC_EVENT in wanted:
            cells.err(row, "events", f"{'/'.join(sorted(kinds)) or 'periodic'!r} is the event of a linear "
                      "ephemeris; this row has orbital elements", t)
        elif len(kinds) > 1 or (kinds and labels[i] and periodic_kind(labels[i]) not in ("", *kinds)):
            cells.err(row, "events", f"the events column says {' and '.join(sorted(kinds))} but the label says "
                      f"{labels[i]!r}; a linear ephemeris has one event", t)
        elif kinds and not labels[i]:
            labels[i] = kinds.pop()
        out.append(wanted)
    return out, np.where(labels == "", np.where(linear, "periodic", ""), labels)


#: Words of the ``observe`` column: what the observer does for a target.
OBSERVE_WORDS = ("photometry", "rv")
#: Request defaults: an RV visit counts near an extremum while the RV is within this fraction of K
#: of it; a periastron passage asks for this many RV visits at least this many hours apart
#: [common practice of RV follow-up, our choice; no single source].
DEFAULT_RV_FRACTION_K = 0.1
DEFAULT_RV_VISITS = 3
DEFAULT_RV_GAP_H = 1.0
_YES, _NO = ("yes", "true", "1", "y"), ("no", "false", "0", "n", "")


def check_requests(cells: Cells, linear, duration_h, a_rstar, k_ms) -> dict:
    """Request columns: ``observe``, ``rv_fraction_k``, ``rv_visits``, ``rv_gap_h``, ``full_coverage``.

    ``observe`` is ``photometry``, ``rv`` or both separated by ``;`` (returned in that order);
    by default photometry where eclipse geometry, a duration or only a linear ephemeris is given,
    rv where ``k_ms`` is given, both when both (and when neither). ``rv_fraction_k`` must lie in
    (0, 1], ``rv_visits`` be a whole number >= 1, ``rv_gap_h`` >= 0, ``full_coverage`` yes/no.
    """
    rows = cells.rows
    photometric = np.asarray(linear, bool) | np.isfinite(duration_h) | np.isfinite(a_rstar)
    spectroscopic = np.isfinite(k_ms)
    default = np.where(photometric & ~spectroscopic, "photometry",
                       np.where(spectroscopic & ~photometric, "rv", "photometry;rv"))
    observe = []
    for row, text, d in zip(rows, cells.text("observe"), default):
        words = [w.strip().lower() for w in text.split(";") if w.strip()]
        unknown = [w for w in words if w not in OBSERVE_WORDS]
        if unknown:
            cells.err(row, "observe", f"unknown observation {unknown[0]!r}; expected photometry, rv or "
                      "'photometry;rv'", text)
        observe.append(";".join(w for w in OBSERVE_WORDS if w in words) if words and not unknown else d)
    fraction = cells.numeric("rv_fraction_k", default=DEFAULT_RV_FRACTION_K)
    bad_fraction = ~((fraction > 0) & (fraction <= 1))
    for row, v in zip(rows[bad_fraction], cells.text("rv_fraction_k")[bad_fraction]):
        cells.err(row, "rv_fraction_k", f"{v} is outside 0 < fraction <= 1 (a fraction of K)", v)
    visits = cells.numeric("rv_visits", default=float(DEFAULT_RV_VISITS))
    bad_visits = ~((visits >= 1) & (np.mod(visits, 1.0) == 0))
    for row, v in zip(rows[bad_visits], cells.text("rv_visits")[bad_visits]):
        cells.err(row, "rv_visits", f"{v} is not a whole number of visits >= 1", v)
    gap = cells.numeric("rv_gap_h", default=DEFAULT_RV_GAP_H, nonnegative=True)
    full = []
    for row, text in zip(rows, cells.text("full_coverage")):
        word = text.strip().lower()
        if word not in _YES + _NO:
            cells.err(row, "full_coverage", f"{text!r} is not yes or no", text)
        full.append(word in _YES)
    return {
        "observe": np.asarray(observe, dtype=object),
        "rv_fraction_k": np.where(bad_fraction, DEFAULT_RV_FRACTION_K, fraction),
        "rv_visits": np.where(bad_visits, DEFAULT_RV_VISITS, visits).astype(np.int64),
        "rv_gap_h": np.where(np.isnan(gap), DEFAULT_RV_GAP_H, gap),
        "full_coverage": np.asarray(full, dtype=bool),
    }


#: Half-width (in phase, orbits) of the window of a wanted phase when ``rv_phase_tol`` is not
#: given: 0.02 of an orbit, +-7.2 deg of mean anomaly [our choice: about the width over which an
#: RV point still samples "that" phase of a well-sampled curve; no published standard].
DEFAULT_RV_PHASE_TOL = 0.02


def check_wanted_phases(cells: Cells, linear) -> dict:
    """``rv_phases`` (a tuple of floats per row, empty when none) and ``rv_phase_tol`` (orbits).

    ``rv_phases`` is a ``;``-list of mean-anomaly phases after periastron, each 0 <= phase < 1
    (phase = M / 360 deg); ``rv_phase_tol`` the half-width of each phase's window, 0 < tol < 0.5
    (default :data:`DEFAULT_RV_PHASE_TOL`). A linear ephemeris (``linear``: no e, omega_deg) has no
    periastron and so no such phase: refused. A phase given twice is refused too.
    """
    rows = cells.rows
    tol = cells.numeric("rv_phase_tol", default=DEFAULT_RV_PHASE_TOL)
    bad_tol = ~((tol > 0) & (tol < 0.5))
    for row, v in zip(rows[bad_tol], cells.text("rv_phase_tol")[bad_tol]):
        cells.err(row, "rv_phase_tol", f"{v} is outside 0 < tolerance < 0.5 (the half-width of each wanted "
                  "phase's window, in orbits)", v)
    wanted = []
    for row, text, lin in zip(rows, cells.text("rv_phases"), linear):
        phases = []
        items = [w.strip() for w in str(text).split(";") if w.strip()]
        if items and lin:
            cells.err(row, "rv_phases", "wanted orbital phases need an orbit with a periastron (e, omega_deg and "
                      "tp or tc); this row is a linear ephemeris", text)
            wanted.append(())
            continue
        for item in items:
            try:
                value = float(item)
            except ValueError:
                value = math.nan
            if not math.isfinite(value):
                hint = " (a decimal comma? write numbers with a decimal point)" if _DECIMAL_COMMA.match(item) else ""
                cells.err(row, "rv_phases", f"{item!r} is not an orbital phase{hint}; expected a ;-list of numbers "
                          "0 <= phase < 1 such as 0.25;0.75", text)
            elif not 0.0 <= value < 1.0:
                cells.err(row, "rv_phases", f"{item} is outside 0 <= phase < 1 (mean anomaly / 360 deg after "
                          "periastron)", text)
            elif value in phases:
                cells.err(row, "rv_phases", f"phase {item} is listed twice", text)
            else:
                phases.append(value)
        wanted.append(tuple(phases))
    return {"rv_phases": np.asarray(wanted + [None], dtype=object)[:-1],
            "rv_phase_tol": np.where(bad_tol, DEFAULT_RV_PHASE_TOL, tol)}
