"""Which parts of an eclipse or event a stretch of observation covers, and what that is worth.

A photometric series of a transit, eclipse or occultation has seven parts: the baseline before
first contact (``pre``), the contacts ``T1`` .. ``T4`` and the mid-event (``mid``, the
predicted moment), and the baseline after fourth contact (``post``). A stretch [s, e] covers a
contact or the mid-event when it holds that moment, and a baseline when it holds at least
:data:`BASELINE_PART` of the wanted baseline next to its contact (half an hour of a one-hour
baseline is enough to normalise a light curve [common practice, no single source]).

Science kept, :func:`science_fraction` (the weights are our policy; every plan prints them):

==============================================  =====  =========================================
both sides (pre + T1 and T4 + post)             1.0    a full light curve: times of both
                                                       contacts, depth, shape
one side (a contact with its baseline side)     0.7    most of a timing measurement: one contact
                                                       time against the ephemeris
one side and the mid-event                      0.8    the timing plus the depth
the mid-event alone                             0.3    a depth only, no timing
anything else                                   0      not worth a block
==============================================  =====  =========================================

A series may also be offered with its baselines cut to :data:`BASELINE_PART` of the wanted
length (the contacts, their timing margin and every part it covers kept), worth
:data:`SHORT_BASELINE` of the same series with whole baselines: the solver takes it where the time
it frees is worth more, such as room for another block (two eclipses an hour apart in one night).

Without contacts (no geometry and no ``duration_h``) the parts are unknown: the stretch is worth
its observable share of the window when it holds the mid-event, and nothing otherwise (the rule
the planner used before requests existed).
"""

from __future__ import annotations

import numpy as np

#: Share of the wanted baseline that counts as having the baseline [common practice].
BASELINE_PART = 0.5
FULL, ONE_SIDE, ONE_SIDE_MID, MID_ONLY = 1.0, 0.7, 0.8, 0.3
#: Science kept by a series whose baselines are cut to :data:`BASELINE_PART` of the wanted length,
#: against the same parts with whole baselines [our policy; common practice, no source: a shorter
#: baseline fits the out-of-eclipse trend less well].
SHORT_BASELINE = 0.9
PART_NAMES = ("pre", "T1", "T2", "mid", "T3", "T4", "post")
PART_WORDS = {"pre": "pre-baseline", "T1": "ingress (T1)", "T2": "second contact (T2)", "mid": "mid-event",
              "T3": "third contact (T3)", "T4": "egress (T4)", "post": "post-baseline"}


def covered_parts(start, end, t1, t2, t3, t4, mid, baseline_d):
    """Boolean (n, 7) array: which of :data:`PART_NAMES` each stretch [start, end] holds.

    All arguments (n,) UTC Julian dates (``baseline_d`` days); a NaN contact is never covered;
    ``pre``/``post`` need T1/T4 and :data:`BASELINE_PART` of the baseline next to them.
    """
    s, e = np.asarray(start, float), np.asarray(end, float)

    def holds(t):
        t = np.asarray(t, float)
        return np.isfinite(t) & (s <= t) & (t <= e)

    need = BASELINE_PART * np.asarray(baseline_d, float)
    t1, t4 = np.asarray(t1, float), np.asarray(t4, float)
    pre = holds(t1) & (t1 - s >= need - 1e-9)
    post = holds(t4) & (e - t4 >= need - 1e-9)
    return np.stack([pre, holds(t1), holds(t2), holds(mid), holds(t3), holds(t4), post], axis=1)


def covered_parts_with_pause(start, end, pause_start, pause_end, t1, t2, t3, t4, mid, baseline_d):
    """:func:`covered_parts` of a block [start, end] observed except in a pause [pause_start,
    pause_end] (NaN: no pause): the parts either side holds, and the mid-event when the pause
    holds it (both of its sides observed: a maximum or a depth is still measured across a short
    gap; a contact inside the pause is not held)."""
    p0, p1 = np.asarray(pause_start, float), np.asarray(pause_end, float)
    paused = np.isfinite(p0) & np.isfinite(p1)
    before_end = np.where(paused, p0, end)
    parts = covered_parts(start, before_end, t1, t2, t3, t4, mid, baseline_d)
    if paused.any():
        after = covered_parts(np.where(paused, p1, np.nan), end, t1, t2, t3, t4, mid, baseline_d)
        parts = parts | after
        m = np.asarray(mid, float)
        parts[:, PART_NAMES.index("mid")] |= paused & (p0 <= m) & (m <= p1)
    return parts


def science_fraction(parts, has_contacts, observable_fraction):
    """Science kept (0..1, see module table) of stretches with ``parts`` from :func:`covered_parts`.

    ``has_contacts`` (n,) False where T1/T4 are unknown: then the stretch keeps
    ``observable_fraction`` when it holds the mid-event, else 0.
    """
    p = np.asarray(parts, bool)
    ingress = p[:, 0] & p[:, 1]
    egress = p[:, 5] & p[:, 6]
    mid = p[:, 3]
    with_contacts = np.select([ingress & egress, (ingress | egress) & mid, ingress | egress, mid],
                              [FULL, ONE_SIDE_MID, ONE_SIDE, MID_ONLY], 0.0)
    frac = np.clip(np.nan_to_num(np.asarray(observable_fraction, float), nan=1.0), 0.0, 1.0)
    return np.where(has_contacts, with_contacts, np.where(mid, frac, 0.0))


def covers_text(parts, has_contacts):
    """The ``covers`` column: covered parts joined by ``;`` (``T1-T4;pre;post`` for a whole event)."""
    out = []
    for row, known in zip(np.asarray(parts, bool), has_contacts):
        names = [n for n, c in zip(PART_NAMES, row) if c]
        if not known:
            names = [n for n in names if n == "mid"]
        elif all(row[1:6]):
            names = ["T1-T4"] + [n for n in ("pre", "post") if n in names]
        out.append(";".join(names))
    return np.asarray(out, dtype=object)


def parts_in_words(covers: str, not_covered: str) -> str:
    """A sentence for a sheet: which parts a block covers and which it does not."""
    def words(text):
        names = [n for n in text.split(";") if n]
        expanded = []
        for n in names:
            expanded += ["T1", "T2", "mid", "T3", "T4"] if n == "T1-T4" else [n]
        return [PART_WORDS.get(n, n) for n in expanded]

    got, miss = words(covers), words(not_covered)
    if covers == "mid" and not not_covered:  # a series whose contacts are not known
        return "Covers the mid-event (its contacts are not known: no duration or geometry in the catalogue)."
    text = f"Covers {', '.join(got)}" if got else "Covers no contact"
    return text + (f"; not covered: {', '.join(miss)}." if miss else "; nothing of the event is missed.")


def missing_text(parts, has_contacts, t2_known):
    """The ``not_covered`` column: parts the stretch misses (T2/T3 only where they exist)."""
    out = []
    for row, known, inner in zip(np.asarray(parts, bool), has_contacts, t2_known):
        if not known:
            out.append("" if row[3] else "mid")
            continue
        out.append(";".join(n for n, c in zip(PART_NAMES, row) if not c and (inner or n not in ("T2", "T3"))))
    return np.asarray(out, dtype=object)
