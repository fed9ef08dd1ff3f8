"""Terrain products computed once per DEM and cached on disk by content hash."""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import numpy as np

from slopescreen.maps.grid import Grid
from slopescreen.maps.rasters import write_raster

TERRAIN_VERSION = "1"  # bump when a terrain algorithm changes: old caches are not reused
NODATA_F32 = -9999.0
PRODUCTS = ("slope_deg.tif", "specific_catchment_area_m.tif", "hillshade.tif")


def cache_key(dem_sha256: str, elevation_unit: str) -> str:
    return f"{dem_sha256[:24]}-{elevation_unit}-v{TERRAIN_VERSION}"


def _f32(a: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(a), a, NODATA_F32).astype(np.float32)


def terrain_products(
    grid: Grid, elevation_m: np.ndarray, key: str, cache_dir: Path, version: str
) -> tuple[Path, bool]:
    """Folder holding slope, specific catchment area and hillshade COGs; (folder, reused)."""
    from slopescreen import routing, terrain

    folder = cache_dir / f"terrain-{key}"
    stamp = folder / "terrain.json"
    if stamp.exists() and all((folder / p).exists() for p in PRODUCTS):
        return folder, True
    tags = {"slopescreen_version": version, "terrain_key": key}
    slope = terrain.slope_deg(elevation_m, grid.dx_rows_m, grid.dy_m)
    write_raster(
        folder / "slope_deg.tif",
        grid,
        _f32(slope),
        NODATA_F32,
        tags=tags | {"units": "degrees", "method": "Horn (1981)"},
    )
    del slope
    _, sca = routing.specific_catchment_area(elevation_m, grid.dx_rows_m, grid.dy_m)
    write_raster(
        folder / "specific_catchment_area_m.tif",
        grid,
        _f32(sca),
        NODATA_F32,
        tags=tags
        | {
            "units": "m (area per unit contour width)",
            "method": "Priority-Flood+epsilon fill (Barnes et al. 2014), "
            "D-infinity routing (Tarboton 1997)",
        },
    )
    del sca
    shade = terrain.hillshade(elevation_m, grid.dx_rows_m, grid.dy_m)
    write_raster(
        folder / "hillshade.tif",
        grid,
        shade,
        0,
        tags=tags | {"azimuth_deg": "315", "altitude_deg": "45"},
        resampling="nearest",
    )
    tmp = stamp.with_suffix(".part")
    tmp.write_text(json.dumps({"key": key, "dem": str(grid.path)}) + "\n")
    os.replace(tmp, stamp)
    return folder, False


def copy_file(source: Path, target: Path) -> Path:
    """Copy beside the target, then rename over it."""
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = target.with_name(f".{target.name}.part")
    shutil.copyfile(source, tmp)
    os.replace(tmp, target)
    return target
