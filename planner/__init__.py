"""periplan: plan observing nights around the moments that matter in eccentric orbits, transits
and eclipses.

Catalogue of published elements in, predicted event times (BJD_TDB, UTC, local) with their
uncertainties out; then visibility at a site, a ranked schedule per night, and printable lists,
charts and calendar files. The stages are sub-packages, in the order data flows through them:
``timescales`` -> ``orbits`` -> ``inputs`` -> ``sky`` -> ``scheduling`` -> ``outputs``, tied
together by ``pipeline``; ``cli`` is the command line. See DEVELOPERS.md.

The public API (imported on first use, so ``import planner`` stays light)::

    import datetime as dt
    import planner

    targets = planner.read_catalogue("targets.csv")
    site = planner.read_site("site.toml")
    plan = planner.make_plan(targets, site, dt.date(2026, 12, 7), 7)
    planner.write_plan(plan, "plan-week50")
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: Public name -> module that defines it.
_API = {
    "read_catalogue": "planner.inputs.catalogue",
    "read_site": "planner.inputs.site",
    "read_log": "planner.inputs.observation_log",
    "predict_events": "planner.api",
    "night_table": "planner.sky.night",
    "display_frame": "planner.outputs.tables",
    "make_plan": "planner.api",
    "write_plan": "planner.outputs.plan_folder",
    "solve_kepler": "planner.orbits.kepler",
    "Plan": "planner.pipeline",
    "PlanSettings": "planner.pipeline",
    "ScheduleOptions": "planner.scheduling.blocks",
    "Site": "planner.inputs.site",
    "PeriplanError": "planner.errors",
    "InputError": "planner.errors",
    "InputErrors": "planner.errors",
}

__all__ = sorted(_API) + ["__version__"]


def __getattr__(name):
    if name in _API:
        value = getattr(importlib.import_module(_API[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'planner' has no attribute {name!r}")


def __dir__():
    return __all__
