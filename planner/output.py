"""Writing tables: terminal text, CSV and JSON, to a stream or atomically to a file.

Only this module and the other output modules write files. :func:`atomic_write` writes to a
temporary file in the destination folder and renames it into place, so a reader never sees a
half-written file and an interrupted run leaves the previous file intact.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import tempfile

import numpy as np
import pandas as pd

FORMATS = ("table", "csv", "json")


@contextlib.contextmanager
def atomic_write(path, mode="w", encoding="utf-8", force=True):
    """Open a temporary file beside ``path``; on success rename it to ``path``, else delete it.

    With ``force=False`` an existing ``path`` raises ``FileExistsError`` before anything is written.
    """
    path = os.fspath(path)
    if not force and os.path.exists(path):
        raise FileExistsError(path)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".periplan-", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, mode, **({} if "b" in mode else {"encoding": encoding, "newline": ""})) as fh:
            yield fh
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def _json_value(v):
    if v is None or v is pd.NA or (isinstance(v, float) and math.isnan(v)):
        return None
    if isinstance(v, np.generic):
        return v.item()
    return v


def render(frame: pd.DataFrame, fmt: str, float_formats: dict | None = None) -> str:
    """Text of ``frame`` as an aligned terminal table, CSV (with header) or a JSON list of objects.

    ``float_formats`` maps column names to format strings for the terminal table and CSV (JSON
    keeps full precision).
    """
    if fmt == "json":
        records = [{k: _json_value(v) for k, v in row.items()} for row in frame.to_dict(orient="records")]
        return json.dumps(records, indent=1) + "\n"
    shown = frame.copy()
    for col, spec in (float_formats or {}).items():
        if col in shown:
            shown[col] = [("" if (v is None or v is pd.NA or (isinstance(v, float) and math.isnan(v)))
                           else format(v, spec)) for v in shown[col]]
    if fmt == "csv":
        return shown.to_csv(index=False, lineterminator="\n")
    if fmt == "table":
        if shown.empty:
            return "(none)\n"
        shown = shown.astype(object).where(pd.notna(shown), "")
        return shown.to_string(index=False) + "\n"
    raise ValueError(f"unknown format {fmt!r}; expected one of {', '.join(FORMATS)}")
