"""periplan: plan observing nights around the moments that matter in eccentric orbits, transits
and eclipses.

Catalogue of published elements in, predicted event times (BJD_TDB, UTC, local) with their
uncertainties out; then visibility at a site, a ranked schedule per night, and printable lists,
charts and calendar files. The pipeline stages are the modules ``catalogue``, ``kepler``,
``orbit``, ``events``, ``timescales`` and their successors; see DEVELOPERS.md.
"""

__version__ = "0.1.0"
