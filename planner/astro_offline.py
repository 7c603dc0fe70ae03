"""Keep astropy from reaching the network: Earth-orientation data come from astropy-iers-data.

Called by the engine entry points that need Earth orientation (never on import). Beyond the
range of the bundled tables astropy extrapolates; we let it, and the command line folds its many
warnings into the one of :data:`FAR_FUTURE_MESSAGE`, because a planner for dates decades ahead
still wants an answer good to a second or so.
"""

from __future__ import annotations

import contextlib
import warnings

_configured = False


def configure() -> None:
    """Switch astropy's IERS machinery to offline, bundled-table mode (idempotent)."""
    global _configured
    if _configured:
        return
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    _configured = True


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
