"""Tables for people: engine tables -> columns with UTC, local time and minutes; text, CSV, JSON.

The one place where engine tables (UTC Julian dates, days) become display tables (ISO strings in
UTC and local time, minutes) and where tables are rendered for the terminal or a file.
"""

from __future__ import annotations

import functools
import json
import math

import numpy as np
import pandas as pd

from ..errors import PeriplanError
from ..scheduling.blocks import MIN_PER_DAY
from ..scheduling.score import SCORE_COLUMNS, no_uncertainty
from ..timescales import clock

FORMATS = ("table", "csv", "json")


def _sigma_min(sigma_d) -> np.ndarray:
    """1-sigma uncertainties (days) in minutes, NaN where none is given (sigma exactly 0)."""
    sigma = np.asarray(sigma_d, dtype=float)
    return np.where(no_uncertainty(sigma), np.nan, sigma * MIN_PER_DAY)


def events_frame(events: pd.DataFrame, t_utc, tz: str | None) -> pd.DataFrame:
    """Events for display and export, from :func:`seen_in_span`'s two results.

    Columns ``target, event, label, cycle, bjd_tdb, utc`` (ISO 8601, ``Z``), ``local`` (only when
    ``tz`` is given), ``sigma_min`` (1-sigma, minutes; empty when the catalogue gives no
    uncertainty, see :func:`planner.scheduling.score.no_uncertainty`) and ``duration_h``.
    """
    some = len(events) > 0
    out = pd.DataFrame({
        "target": events["target"], "event": events["event"], "label": events["label"],
        "cycle": events["cycle"], "bjd_tdb": events["bjd_tdb"],
        "utc": clock.utc_to_iso_z(t_utc) if some else np.array([], dtype=object),
    })
    if tz:
        out["local"] = clock.utc_to_local_iso(t_utc, tz) if some else np.array([], dtype=object)
    out["sigma_min"] = _sigma_min(events["sigma_d"])
    out["duration_h"] = events["duration_d"].to_numpy(float) * 24.0
    return out


#: Up to this many targets that never rise get a warning line each; more get one line in all.
MAX_WARNING_LINES = 10


def never_rising_lines(table: pd.DataFrame, site_name: str, listed_in: str | None = None) -> list[str]:
    """Warning lines for targets that can never be observed from the site (none is dropped silently).

    One line per target up to :data:`MAX_WARNING_LINES`, else one line that counts them and
    names the first, and ``listed_in`` (a file holding them all) when given.
    """
    if len(table) <= MAX_WARNING_LINES:
        return [f"{row.target} never rises high enough at {site_name}: {row.reason}" for row in table.itertuples()]
    first = table.iloc[0]
    where = f"; all are listed in {listed_in}" if listed_in else ""
    return [f"{len(table)} targets never rise high enough at {site_name} (e.g. {first['target']}: "
            f"{first['reason']}){where}"]


#: Night-table times shown by :func:`nights_frame`, as ``NAME_jd_utc`` columns.
NIGHT_TIME_COLUMNS = ("sunset", "dark_start", "dark_end", "sunrise")


def nights_frame(nights: pd.DataFrame, tz: str) -> pd.DataFrame:
    """Display table of a night table: ISO times in UTC and local time, hours, illumination."""
    out = pd.DataFrame({"night": nights["night"].to_numpy(object)})
    for name in NIGHT_TIME_COLUMNS:
        out[f"{name}_utc"] = clock.jd_utc_to_iso_z(nights[f"{name}_jd_utc"].to_numpy(float))
    for name in NIGHT_TIME_COLUMNS:
        out[f"{name}_local"] = clock.jd_utc_to_local_iso(nights[f"{name}_jd_utc"].to_numpy(float), tz)
    for col in ("dark_kind", "dark_h", "moon_illumination", "moon_up_dark_h"):
        out[col] = nights[col].to_numpy()
    return out


#: Altitude columns of the schedule shown in schedule.csv: the lowest in the block, at the event
#: moment (when the block holds it) and at each contact it covers.
ALTITUDE_COLUMNS = ("alt_low_deg", "alt_event_deg", "alt_t1_deg", "alt_t2_deg", "alt_t3_deg", "alt_t4_deg")


def with_visibility(table: pd.DataFrame, vis: pd.DataFrame, min_fraction: float | None = None) -> pd.DataFrame:
    """The events display table with the night, altitude, Moon separation and observable fraction of
    :func:`planner.sky.windows.event_visibility` (rows alike); only the rows observable at least to
    ``min_fraction`` when given."""
    table["night"] = vis["night"].to_numpy(object)
    table["alt_deg"] = vis["alt_deg"].to_numpy(float)
    table["moon_sep_deg"] = vis["moon_sep_deg"].to_numpy(float)
    table["observable_fraction"] = vis["observable_fraction"].to_numpy(float)
    table["night"] = table["night"].where(table["night"].notna(), "")
    if min_fraction is not None:
        table = table[table["observable_fraction"] >= min_fraction].reset_index(drop=True)
    return table


def display_frame(schedule: pd.DataFrame, tz: str | None) -> pd.DataFrame:
    """The schedule for people and spreadsheets: ISO times in UTC and local time, minutes, notes.

    Columns ``night, start_utc, end_utc, start_local, end_local, target, event, serves, label,
    kind, request, covers, not_covered, logged_parts (parts of a series the observation log
    holds already; for an RV sequence's visit, the visits of its passage logged), t1_utc .. t4_utc,
    event_utc, event_sigma_min, score,
    x_priority, x_rarity, pts_*, science_fraction, baseline_min (the baseline a series keeps either
    side when it is cut to fit; empty for whole baselines), alt_low_deg, alt_event_deg, alt_t1_deg ..
    alt_t4_deg, airmass, moon_sep_deg, moon_illumination, observable_fraction, notes``. Local
    columns are empty without ``tz`` (an IANA zone name); a contact's time is empty when unknown;
    ``event_sigma_min`` is empty (NaN) where the catalogue gives no uncertainty, so a missing value
    never reads as a perfectly known time.
    """
    n = len(schedule)

    def iso(col, local):
        jd = schedule[col].to_numpy(float)
        if local and not tz:
            return np.full(n, "", dtype=object)
        return clock.jd_utc_to_local_iso(jd, tz) if local else clock.jd_utc_to_iso_z(jd)

    frame = pd.DataFrame({
        "night": schedule["night"].to_numpy(object),
        "start_utc": iso("start_jd_utc", False), "end_utc": iso("end_jd_utc", False),
        "start_local": iso("start_jd_utc", True), "end_local": iso("end_jd_utc", True),
        "target": schedule["target"].to_numpy(object), "event": schedule["event"].to_numpy(object),
        "serves": schedule["serves"].to_numpy(object),
        "label": schedule["label"].to_numpy(object), "kind": schedule["kind"].to_numpy(object),
        "request": schedule["request"].to_numpy(object), "covers": schedule["covers"].to_numpy(object),
        "not_covered": schedule["not_covered"].to_numpy(object),
        "logged_parts": [p if isinstance(p, str) else "" for p in schedule.get("logged_parts", [""] * n)],
    })
    if "site" in schedule:  # a campaign of several sites: which telescope observes the block
        frame.insert(1, "site", schedule["site"].to_numpy(object))
    for c in ("t1", "t2", "t3", "t4"):
        frame[f"{c}_utc"] = iso(f"{c}_jd_utc", False)
    frame["event_utc"] = iso("event_jd_utc", False)
    frame["event_sigma_min"] = _sigma_min(schedule["event_sigma_d"])
    frame["score"] = schedule["score"].to_numpy(float)
    for c in SCORE_COLUMNS[:-1] + ("science_fraction", "baseline_min") + ALTITUDE_COLUMNS + (
            "airmass", "moon_sep_deg", "moon_illumination", "observable_fraction", "notes"):
        frame[c] = schedule[c].to_numpy()
    return frame


def _json_value(v):
    if v is None or v is pd.NA or (isinstance(v, float) and math.isnan(v)):
        return None
    if isinstance(v, np.generic):
        return v.item()
    return v


def _formatted(values: pd.Series, spec: str) -> np.ndarray:
    """``format(v, spec)`` of each value, "" where missing; each distinct value is formatted once
    (a survey's million unscheduled rows hold a few thousand distinct values). Floats are told
    apart by their bits, so that -0.0 stays "-0.0"."""
    if pd.api.types.is_float_dtype(values):
        x = values.to_numpy(float, na_value=np.nan)
        missing = np.isnan(x)
        codes, uniques = pd.factorize(np.where(missing, 0.0, x).view(np.int64))
        out = np.array([format(u, spec) for u in uniques.view(np.float64)], dtype=object)[codes]
        out[missing] = ""
        return out
    codes, uniques = pd.factorize(values)
    return np.array([format(u, spec) for u in uniques] + [""], dtype=object)[codes]  # code -1: missing


@functools.cache
def _quoted_pattern() -> str:
    """A regex of the characters that make the csv module quote a field (minimal quoting with
    "\\n" line ends, as pandas writes), asked of the module itself: Python versions differ on "\\r"."""
    import csv
    import io
    import re

    def quoted(ch):
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\n").writerow([f"a{ch}b", "c"])
        return buf.getvalue().startswith('"')

    return "[" + "".join(re.escape(ch) for ch in ',"\r\n' if quoted(ch)) + "]"


#: Rows joined at once by :func:`_csv_text` (bounds the Arrow arrays beside the text).
CSV_CHUNK_ROWS = 100_000


def _csv_text(frame: pd.DataFrame) -> str:
    """``frame.to_csv(index=False)`` with "\\n" line ends. A table of text columns alone (the
    unscheduled requests of a survey's week: a million rows) is joined by Arrow's string kernels,
    :data:`CSV_CHUNK_ROWS` rows at a time, the same text 3x faster; other tables go through pandas."""
    texts = all(pd.api.types.infer_dtype(frame[c]) in ("string", "empty") for c in frame.columns)
    if not texts or len(frame) == 0 or frame.shape[1] < 2:  # a lone empty field is written '""'
        return frame.to_csv(index=False, lineterminator="\n")
    parts = [frame.iloc[:0].to_csv(index=False, lineterminator="\n")]
    for lo in range(0, len(frame), CSV_CHUNK_ROWS):
        parts.append(_csv_rows(frame.iloc[lo:lo + CSV_CHUNK_ROWS]))
    return "".join(parts)


def _csv_rows(frame: pd.DataFrame) -> str:
    """The CSV lines of a table of text columns, by Arrow's string kernels (:func:`_csv_text`)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    text = pa.large_string()  # 64-bit offsets: no 2 GB limit on a column
    mark, empty = pa.scalar('"', text), pa.scalar("", text)
    fields = []
    for col in frame.columns:
        a = pa.array(frame[col], text, from_pandas=True).fill_null(empty)
        quote = pc.match_substring_regex(a, _quoted_pattern())
        if pc.any(quote).as_py():
            quoted = pc.binary_join_element_wise(mark, pc.replace_substring(a, '"', '""'), mark, empty)
            a = pc.if_else(quote, quoted, a)
        fields.append(a)
    lines = pc.binary_join_element_wise(pc.binary_join_element_wise(*fields, pa.scalar(",", text)), empty,
                                        pa.scalar("\n", text))  # each row and its "\n"
    ends = np.frombuffer(lines.buffers()[1], np.int64)[lines.offset:lines.offset + len(lines) + 1]
    return lines.buffers()[2].slice(int(ends[0]), int(ends[-1] - ends[0])).to_pybytes().decode("utf-8")


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
            shown[col] = _formatted(shown[col], spec)
    if fmt == "csv":
        return _csv_text(shown)
    if fmt == "table":
        if shown.empty:
            return "(none)\n"
        shown = shown.astype(object).where(pd.notna(shown), "")
        return shown.to_string(index=False) + "\n"
    raise PeriplanError(f"unknown format {fmt!r}; expected one of {', '.join(FORMATS)}")
