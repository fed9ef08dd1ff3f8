"""The map engine: DEM + soil-unit polygons + scenarios -> rasters, zones, tables, report.

Internal: its modules may move between releases (the public API is ``slopescreen`` and
its physics modules, the shell and the spreadsheet functions). Laid out by role:
``terrain`` (slope, ground geometry, routing), ``io`` (files, rasters, caches, locks),
``region`` (the scenario file and the regional run), ``outputs`` (names, tables, zones,
maps, the report) and ``inventory`` (known landslides on a finished run). All physics
comes from the numpy-only core modules.
"""
