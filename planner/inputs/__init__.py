"""Stage 2, inputs: the only readers of user files (catalogue CSV or ECSV/VOTable/FITS table, site TOML).

``catalogue`` validates a target table (epochs to BJD_TDB, Tc to Tp) with one validator per
concern in ``catalogue_checks``; ``site`` reads a site file into a frozen ``Site``; ``textfile``
is their shared reader. Imports ``orbits`` and ``timescales``.
"""
