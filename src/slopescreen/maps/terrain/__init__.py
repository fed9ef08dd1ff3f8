"""Terrain work of the map engine: Horn slope and hillshade, ground lengths and areas on any
CRS, flow routing (whole grid and tile by tile) and its compiled kernels.
"""
