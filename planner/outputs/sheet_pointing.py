"""The pointing facts of a block for the nightly sheets, as short labelled items.

For each block: the target's coordinates (ICRS, which matches the J2000 mean equator to 0.02
arcsec: what a telescope's J2000 catalogue expects), its magnitude when the catalogue gives one,
the azimuth and hour angle at the block's start and the meridian transit (the lowest altitude
is on the block's altitude line) (the contacts covered have a line of their own). Each item is present only when its columns are in the block row, so a schedule without
them gives a sheet without them. Times are UTC Julian dates, shown as ``HH:MM`` UTC and local.
"""

from __future__ import annotations

import numpy as np

from ..timescales import clock

#: 16-point compass names of azimuth (north through east).
COMPASS = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE", "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")


def ra_hms(ra_deg: float) -> str:
    """Right ascension ``HH:MM:SS.s`` (hours, 0..24) of an angle in degrees."""
    tenths = int(round(float(ra_deg) % 360.0 / 15.0 * 36000.0)) % (24 * 36000)
    h, rest = divmod(tenths, 36000)
    m, rest = divmod(rest, 600)
    return f"{h:02d}:{m:02d}:{rest / 10:04.1f}"


def dec_dms(dec_deg: float) -> str:
    """Declination ``+DD:MM:SS`` (whole arcseconds, sign always shown) of an angle in degrees."""
    sign = "-" if dec_deg < 0 else "+"
    secs = int(round(abs(float(dec_deg)) * 3600.0))
    d, rest = divmod(secs, 3600)
    m, s = divmod(rest, 60)
    return f"{sign}{d:02d}:{m:02d}:{s:02d}"


def compass(az_deg: float) -> str:
    """16-point compass name of an azimuth in degrees (north through east)."""
    return COMPASS[int(np.floor(np.mod(float(az_deg) + 11.25, 360.0) / 22.5)) % 16]


def hour_angle_text(ha_h: float) -> str:
    """Hour angle as ``+H:MM`` (hours, positive west: after the meridian)."""
    minutes = int(round(abs(float(ha_h)) * 60.0))
    return f"{'-' if ha_h < 0 and minutes else '+'}{minutes // 60}:{minutes % 60:02d}"


def _finite(b, col) -> bool:
    v = b.get(col, np.nan) if hasattr(b, "get") else np.nan
    try:
        return v is not None and bool(np.isfinite(float(v)))
    except (TypeError, ValueError):
        return False


def pointing_items(b, tz: str | None = None) -> list[tuple[str, str]]:
    """``[(label, text), ...]`` of one block row (a mapping); only items whose columns exist."""
    items = []
    if _finite(b, "ra_deg") and _finite(b, "dec_deg"):
        items.append(("RA/Dec J2000", f"{ra_hms(b['ra_deg'])} {dec_dms(b['dec_deg'])}"))
    magnitude = b.get("magnitude") if hasattr(b, "get") else None
    if isinstance(magnitude, str) and magnitude:  # "vmag 9.5", from the catalogue's magnitude column
        label, _, value = magnitude.partition(" ")
        items.append((label, value))
    if _finite(b, "az_start_deg") and _finite(b, "ha_start_h"):
        items.append(("at start", f"az {float(b['az_start_deg']):.0f} deg ({compass(b['az_start_deg'])}), "
                                  f"HA {hour_angle_text(b['ha_start_h'])}"))
    if _finite(b, "meridian_jd_utc"):
        m = float(b["meridian_jd_utc"])
        where = ("during the block" if b["start_jd_utc"] <= m <= b["end_jd_utc"]
                 else "before the block" if m < b["start_jd_utc"] else "after the block")
        when = clock.local_and_utc(m, tz=tz)
        items.append(("meridian", f"{when}, {where}"))
    return items


def pointing_text(b, tz: str | None = None) -> str:
    """The items of :func:`pointing_items` in one line: ``label value; label value``."""
    return "; ".join(f"{k} {v}" for k, v in pointing_items(b, tz))


def with_pointing_columns(schedule, targets, site):
    """``schedule`` with the columns the sheets' pointing line reads (a copy; rows unchanged).

    Adds ``ra_deg``, ``dec_deg`` from ``targets`` and the :func:`planner.sky.block_sky.block_sky`
    columns computed at the site (the magnitude comes from
    :func:`planner.outputs.sheets.magnitude_texts`, added by the sheet writer).
    """
    from ..sky.block_sky import block_sky

    out = schedule.copy()
    if out.empty:
        return out
    ti = out["target_index"].to_numpy(int)
    for col in ("ra_deg", "dec_deg"):
        if col in targets:
            out[col] = targets[col].to_numpy(float)[ti]
    sky = block_sky(targets, site, ti, out["start_jd_utc"].to_numpy(float), out["end_jd_utc"].to_numpy(float))
    for col in sky.columns:
        out[col] = sky[col].to_numpy(float)
    return out
