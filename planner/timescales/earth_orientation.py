"""Keep astropy from reaching the network: Earth-orientation data come from astropy-iers-data.

Called by the engine entry points that need Earth orientation (never on import). Beyond the
range of the bundled tables astropy extrapolates; we let it, and the command line folds its many
warnings into the one of :data:`FAR_FUTURE_MESSAGE`, because a planner for dates decades ahead
still wants an answer good to a second or so.

Notes
-----
astropy's default table (``IERS_Auto``, offline) reads the same bundled finals2000A file and
then overwrites its Bulletin B columns with the bundled IERS-B (EOP C04) series; the table set
here keeps the file's own Bulletin B columns, so the two differ where both have B values:
UT1 - UTC by up to 4.9 ms (1980), 0.48 ms after 1995 and 0.19 ms after 2020, polar motion by
up to 45 mas (1976), 2 mas after 1995. After the IERS-B series ends (the recent weeks and every
prediction, the dates a planner works on) both hold the same Bulletin A values. 5 ms of UT1
turns the Earth by 0.075 arcsec: far below the 1 arcsec of the positions
(tests/test_timescales.py compares the two tables).
"""

from __future__ import annotations

import contextlib
import logging
import warnings

import numpy as np

_configured = False
_log = logging.getLogger(__name__)

#: What reading the bundled file or building astropy's table from it may raise: the data
#: package missing or unreadable, a changed file layout, a changed astropy table API.
_READ_FAILURES = (ImportError, OSError, ValueError, IndexError, KeyError, TypeError, AttributeError)


def configure() -> None:
    """Switch astropy's IERS machinery to offline, bundled-table mode (idempotent).

    The bundled IERS-A table (astropy-iers-data's finals2000A.all) is read by
    :func:`bundled_iers_a` instead of astropy's general text reader, which takes most of a second
    of every run. If that fails, the failure is logged (one warning) and astropy's own reader
    is left in charge: the same file, read more slowly.
    """
    global _configured
    if _configured:
        return
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    try:
        iers.earth_orientation_table.set(bundled_iers_a())
    except _READ_FAILURES as exc:
        _log.warning("the bundled Earth-orientation table could not be read quickly (%s: %s); "
                     "astropy reads it instead (slower; positions move by under 0.1 arcsec)",
                     type(exc).__name__, exc)
    _configured = True


# Columns of finals2000A (IERS Rapid Service readme, "finals2000A.all"): 0-based [start, end).
_FINALS_FLOAT = {
    "MJD": (7, 15), "PM_x_A": (18, 27), "PM_y_A": (37, 46), "UT1_UTC_A": (58, 68),
    "dX_2000A_A": (97, 106), "dY_2000A_A": (116, 125), "PM_X_B": (134, 144), "PM_Y_B": (144, 154),
    "UT1_UTC_B": (154, 165), "dX_2000A_B": (165, 175), "dY_2000A_B": (175, 185),
}
_FINALS_FLAG = {"PolPMFlag_A": 16, "UT1Flag_A": 57, "NutFlag_A": 95}
_FINALS_WIDTH = 185


def bundled_iers_a(path=None):
    """astropy ``IERS_A`` table of the bundled finals2000A file, read with numpy.

    The same rows and combined columns (UT1_UTC, PM_x, PM_y, dX_2000A, dY_2000A and their flags:
    Bulletin B values where present, else Bulletin A) as astropy's ``IERS_A.open``;
    tests/test_timescales.py checks the two agree.
    """
    import astropy.units as u
    from astropy.table import QTable
    from astropy.utils import iers

    if path is None:
        from astropy_iers_data import IERS_A_FILE as path
    with open(path, "rb") as fh:
        lines = [ln[:_FINALS_WIDTH].ljust(_FINALS_WIDTH) for ln in fh.read().splitlines() if ln.strip()]
    chars = np.frombuffer(b"".join(lines), dtype="S1").reshape(len(lines), _FINALS_WIDTH)

    def field(a, b):
        text = np.char.strip(chars[:, a:b].copy().view(f"S{b - a}").ravel())
        return np.where(text == b"", b"nan", text).astype(float)

    def flag(i):
        return np.char.strip(chars[:, i].astype("U1"))

    cols = {k: field(*ab) for k, ab in _FINALS_FLOAT.items()}
    flags = {k: flag(i) for k, i in _FINALS_FLAG.items()}
    keep = np.isfinite(cols["UT1_UTC_A"]) & (flags["PolPMFlag_A"] != "")
    t = QTable()
    t["MJD"] = cols["MJD"][keep] * u.d
    for name, unit, a, b in (("UT1_UTC", u.s, "UT1_UTC_A", "UT1_UTC_B"), ("PM_x", u.arcsec, "PM_x_A", "PM_X_B"),
                             ("PM_y", u.arcsec, "PM_y_A", "PM_Y_B"),
                             ("dX_2000A", u.marcsec, "dX_2000A_A", "dX_2000A_B"),
                             ("dY_2000A", u.marcsec, "dY_2000A_A", "dY_2000A_B")):
        va, vb = cols[a][keep], cols[b][keep]
        t[name] = np.where(np.isnan(vb), va, vb) * unit
    b_ut1 = ~np.isnan(cols["UT1_UTC_B"][keep])
    b_pm = ~(np.isnan(cols["PM_X_B"][keep]) | np.isnan(cols["PM_Y_B"][keep]))
    b_nut = ~(np.isnan(cols["dX_2000A_B"][keep]) | np.isnan(cols["dY_2000A_B"][keep]))
    t["UT1Flag"] = np.where(b_ut1, "B", flags["UT1Flag_A"][keep])
    t["PolPMFlag"] = np.where(b_pm, "B", flags["PolPMFlag_A"][keep])
    t["NutFlag"] = np.where(b_nut, "B", flags["NutFlag_A"][keep])
    table = iers.IERS_A(t)
    p_index = min(np.searchsorted(flags["UT1Flag_A"][keep], "P"), np.searchsorted(flags["PolPMFlag_A"][keep], "P"))
    table.meta["predictive_index"] = int(p_index)
    table.meta["predictive_mjd"] = float(t["MJD"][p_index].value)
    table.meta["data_path"] = str(path)
    return table


#: The one warning shown (once) for dates beyond the bundled tables, whatever astropy or ERFA said.
FAR_FUTURE_MESSAGE = (
    "dates lie beyond the bundled leap-second and Earth-orientation tables; UTC - TAI and UT1 are "
    "extrapolated, so clock times may be off by a second or more (a future leap second) and sky "
    "positions by a few arcseconds"
)


def is_time_table_warning(message: str) -> bool:
    """True for astropy/ERFA warnings about dates outside the leap-second or IERS tables."""
    return "dubious year" in message or "IERS" in message or "polar motion" in message.lower()


class FarFutureWarning(UserWarning):
    """Dates beyond the bundled leap-second/Earth-orientation tables: results degrade gracefully."""


@contextlib.contextmanager
def quiet_iers_warnings():
    """Fold astropy/ERFA warnings about dates outside the bundled tables into one FarFutureWarning.

    Other warnings pass through unchanged.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    folded = False
    for w in caught:
        if is_time_table_warning(str(w.message)):
            folded = True
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    if folded:
        warnings.warn(FAR_FUTURE_MESSAGE, FarFutureWarning, stacklevel=3)
