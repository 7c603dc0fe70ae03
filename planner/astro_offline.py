"""Keep astropy from reaching the network: Earth-orientation data come from astropy-iers-data.

Called by the engine entry points that need Earth orientation (never on import). Beyond the
range of the bundled tables astropy extrapolates; we let it, with one warning of our own per
process, because a planner for dates decades ahead still wants an answer good to a second or so
of UT1 (see DEVELOPERS.md, "Offline").
"""

from __future__ import annotations

import logging
import warnings

log = logging.getLogger(__name__)
_configured = False
_warned_far_future = False


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


def quiet_iers_warnings():
    """Context manager that turns astropy's repeated IERS range warnings into one of ours."""
    from astropy.utils.exceptions import AstropyWarning

    class _Ctx:
        def __enter__(self):
            self._cm = warnings.catch_warnings(record=True)
            self._rec = self._cm.__enter__()
            warnings.simplefilter("always", AstropyWarning)
            return self

        def __exit__(self, *exc):
            self._cm.__exit__(*exc)
            global _warned_far_future
            iers_hits = [w for w in self._rec if "IERS" in str(w.message) or "dubious year" in str(w.message)]
            others = [w for w in self._rec if w not in iers_hits]
            for w in others:
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
            if iers_hits and not _warned_far_future:
                _warned_far_future = True
                warnings.warn(
                    "dates lie outside the bundled Earth-orientation tables; UT1 and polar motion are "
                    "extrapolated, so sky positions may be off by up to a few arcseconds and clock "
                    "times by about a second",
                    FarFutureWarning,
                    stacklevel=2,
                )
            return False

    return _Ctx()


class FarFutureWarning(UserWarning):
    """Dates beyond the bundled Earth-orientation data: results degrade gracefully."""
