"""Stage 0, time scales: every conversion between time scales, calendar dates and clock strings.

``epochs`` turns catalogue epochs into BJD_TDB and BJD_TDB into UTC (light travel time, TDB - UTC);
``clock`` makes calendar dates, zone lookups and ISO clock strings; ``earth_orientation`` keeps
astropy on the bundled Earth-orientation tables (nothing is downloaded). Imports no other stage.
"""
