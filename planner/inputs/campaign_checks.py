"""Catalogue columns of a campaign: a target's week rule, phase coverage and events wanted.

=====================  =================================================================
``week_rule``          ``every`` (each instance of an event), ``best`` (once in the week, on
                       its best night) or ``first`` (once, as early as possible); empty: the
                       plan's default week rule
``phase_bins``         ask for RV phase coverage in this many mean-anomaly bins (a whole
                       number >= 2): with an observation log, the empty bins become RV visits
``sites``              with several sites, the most sites that may observe one instance of an
                       event (a whole number >= 1, default 1: the site that serves it best)
``campaign_events``    events wanted over the whole campaign, ``event:N`` separated by ``;``
                       (``primary_conjunction:4``): with a log, requests of an event stop
                       once N of them are logged done
=====================  =================================================================
"""

from __future__ import annotations

import numpy as np

from ..orbits.geometry import ALL_EVENTS, canonical_event
from .catalogue_checks import Cells, Coded

WEEK_RULE_WORDS = ("every", "best", "first")
CAMPAIGN_COLUMNS = ("week_rule", "phase_bins", "sites", "campaign_events")


def check_campaign(cells: Cells) -> dict:
    """Engine columns ``week_rule`` (text, "" = default), ``phase_bins`` (0 = none), ``sites``
    (default 1) and ``campaign_events`` (a dict event -> count per target; rows whose cells read
    the same share one dict, to be read, not changed)."""
    if not cells.has_any(CAMPAIGN_COLUMNS):
        none = np.empty(1, dtype=object)
        none[0] = {}
        return {"week_rule": Coded(np.zeros(cells.n, np.int64), [""]), "phase_bins": np.zeros(cells.n, np.int64),
                "sites": np.ones(cells.n, np.int64), "campaign_events": none[np.zeros(cells.n, np.int64)]}
    rows = cells.rows
    codes, texts = cells.codes("week_rule")
    words = [t.strip().lower() for t in texts]
    known = [not w or w in WEEK_RULE_WORDS for w in words]
    bad = ~np.array(known, dtype=bool)[codes]
    for row, code in zip(rows[bad], codes[bad]):
        cells.err(row, "week_rule", f"{texts[code]!r} is not a week rule; expected every, best or first", texts[code])
    rules = Coded(codes, [w if ok else "" for w, ok in zip(words, known)])
    bins = cells.numeric("phase_bins", default=0.0)
    bad = ~((bins == 0) | ((bins >= 2) & (np.mod(bins, 1.0) == 0)))
    for row, v in zip(rows[bad], cells.text_at("phase_bins", bad)):
        cells.err(row, "phase_bins", f"{v} is not a whole number of phase bins >= 2", v)
    sites = cells.numeric("sites", default=1.0)
    bad_sites = ~((sites >= 1) & (np.mod(sites, 1.0) == 0))
    for row, v in zip(rows[bad_sites], cells.text_at("sites", bad_sites)):
        cells.err(row, "sites", f"{v} is not a whole number of sites >= 1", v)
    codes, texts = cells.codes("campaign_events")
    parsed = [_campaign_counts(t) for t in texts]
    wrong = np.array([bool(p[1]) for p in parsed], dtype=bool)[codes]
    for row, code in zip(rows[wrong], codes[wrong]):
        for item in parsed[code][1]:
            cells.err(row, "campaign_events", f"{item!r} is not event:count; expected e.g. "
                      "primary_conjunction:4 or transit:3;periastron:1", texts[code])
    counts = np.empty(len(parsed), dtype=object)
    for i, p in enumerate(parsed):
        counts[i] = p[0]
    return {"week_rule": rules,
            "phase_bins": np.where(bad, 0, bins).astype(np.int64),
            "sites": np.where(bad_sites, 1, sites).astype(np.int64),
            "campaign_events": counts[codes]}


def _campaign_counts(text):
    """({event: count}, items that are not event:count) of a ``campaign_events`` cell."""
    counts, bad = {}, []
    for item in (p.strip() for p in text.split(";") if p.strip()):
        name, _, n = item.partition(":")
        event = canonical_event(name.strip().lower()) or ""
        if event not in ALL_EVENTS or not n.strip().isdigit() or int(n) < 1:
            bad.append(item)
            continue
        counts[event] = int(n)
    return counts, bad
