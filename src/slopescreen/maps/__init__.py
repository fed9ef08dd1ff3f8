"""The map engine: DEM + soil-unit polygons + scenarios -> rasters, zones, tables, report.

This package holds the I/O (rasterio, geopandas, matplotlib); all physics comes from the
numpy-only core modules.
"""
