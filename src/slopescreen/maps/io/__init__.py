"""The map engine's file edge: text files, lab tests, safe writes, the DEM grid, raster reading
and writing, content-keyed caches and folder locks.
"""
