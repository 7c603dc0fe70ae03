"""The observation-log template of a plan: one row per planned block, to be filled in at the telescope.

Columns are the log's own (:mod:`planner.inputs.observation_log`): ``target, start, end, purpose,
cycle, outcome, covers, notes``, times in ISO 8601 UTC, ``outcome`` set to ``planned`` (a row
that counts for nothing until the observer writes ``done``, ``partial`` or ``lost``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..inputs.observation_log import LOG_COLUMNS, PURPOSES
from ..timescales import clock
from .atomic import atomic_write


def log_template_frame(schedule: pd.DataFrame) -> pd.DataFrame:
    """The template rows of a schedule table (UTC Julian dates in, ISO strings out)."""
    events = schedule["event"].astype(str).to_numpy(object)
    # a monitor visit, a phase-coverage visit and a wanted orbital phase are logged as visits
    purpose = np.where(~np.isin(events, PURPOSES) | np.isin(events, ["visit"])
                       | (schedule["kind"].astype(str).to_numpy() != "fixed"), "visit", events)
    cycle = schedule["cycle"] if "cycle" in schedule else pd.Series([np.nan] * len(schedule))
    return pd.DataFrame({
        "target": schedule["target"].to_numpy(object),
        "start": clock.jd_utc_to_iso_z(schedule["start_jd_utc"].to_numpy(float)),
        "end": clock.jd_utc_to_iso_z(schedule["end_jd_utc"].to_numpy(float)),
        "purpose": purpose,
        "cycle": [("" if not np.isfinite(c) else str(int(c))) for c in np.asarray(cycle, float)],
        "outcome": "planned",
        "covers": "",
        "notes": "",
    }, columns=list(LOG_COLUMNS))


def write_log_template(path, schedule: pd.DataFrame) -> str:
    """Write :func:`log_template_frame` as CSV to ``path`` (atomically), with a comment saying how to fill it."""
    with atomic_write(path) as fh:
        fh.write("# periplan observation log: set outcome to done, partial or lost after each block; add rows "
                 "for anything else observed; rows left as 'planned' count for nothing\n")
        log_template_frame(schedule).to_csv(fh, index=False, lineterminator="\n")
    return str(path)
