"""Terrain products computed once per DEM content and cached as verified entries."""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from slopescreen.maps import rasters
from slopescreen.maps.cache import building, content_key, usable_entry
from slopescreen.maps.grid import Grid, read_elevations
from slopescreen.maps.locks import entry_lock
from slopescreen.maps.rasters import RasterSink, all_or_nothing, read_block
from slopescreen.outputs import TEMP_PREFIX, real_folder

TERRAIN_VERSION = "3"  # bump when a terrain algorithm changes: old caches are not reused
NODATA_F32 = -9999.0
PRODUCTS = ("slope_deg.tif", "slope_tan.tif", "specific_catchment_area_m.tif", "hillshade.tif")


ROUTING_BYTES_PER_CELL = 56  # routing peak (about 35 with the DEM) plus the tile work, rounded up


def memory_budget_bytes() -> int:
    """Memory the terrain step may use: SLOPESCREEN_MEMORY_BUDGET_MB, else 60% of the memory
    available now (Linux /proc/meminfo), else 8 GB."""
    env = os.environ.get("SLOPESCREEN_MEMORY_BUDGET_MB")
    if env:
        return int(float(env) * 2**20)
    try:
        with open("/proc/meminfo") as handle:
            for line in handle:
                if line.startswith("MemAvailable:"):
                    return int(0.6 * int(line.split()[1]) * 1024)
    except OSError:
        pass
    return 8 * 2**30


class _Scratch:
    """Work arrays as memory-mapped files (deleted afterwards), for grids beyond memory."""

    def __init__(self, folder: Path) -> None:
        folder.mkdir(parents=True, exist_ok=True)
        self.folder = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}routing-", dir=folder))
        self.count = 0

    def __call__(self, shape: tuple[int, ...], dtype: type) -> np.ndarray:
        self.count += 1
        return np.memmap(self.folder / f"a{self.count}.bin", dtype=dtype, mode="w+", shape=shape)

    def close(self) -> None:
        shutil.rmtree(self.folder, ignore_errors=True)


def cache_key(dem_files_sha256: dict[str, str], elevation_unit: str, version: str) -> str:
    """Key of the terrain entry: the content of every file of the DEM (a VRT and each of
    its sources), the elevation unit, the terrain algorithms and the program version."""
    parts = [f"{name}={sha}" for name, sha in dem_files_sha256.items()]
    return content_key(*parts, elevation_unit, f"terrain-v{TERRAIN_VERSION}", version)


def _f32(a: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(a), a, NODATA_F32).astype(np.float32)


def _write_band(sink: RasterSink, rows: slice, width: int, band: np.ndarray) -> None:
    for left in range(0, width, rasters.TILE):
        cols = slice(left, min(left + rasters.TILE, width))
        sink.write(rows, cols, band[:, cols])


def terrain_products(
    grid: Grid,
    elevation_unit: str,
    key: str,
    cache_dir: Path,
    version: str,
    echo: Callable[[str], None],
) -> tuple[Path, bool]:
    """Folder holding slope (degrees and tangent), specific catchment area and hillshade;
    returns (folder, reused). A cached entry is used only after its files pass the check
    against their recorded hashes; otherwise it is (re)built, all or nothing. Slope and
    hillshade are computed in row bands; routing holds the whole grid (see
    slopescreen.routing for its bytes per cell), in memory-mapped work files when the grid
    would not fit in the memory budget."""
    name = f"terrain-{key}"
    with entry_lock(real_folder(cache_dir), name):
        folder = usable_entry(cache_dir, name, echo)
        if folder is not None:
            return folder, True
        tags = {"slopescreen_version": version, "terrain_key": key}
        scratch = None
        if grid.width * grid.height * ROUTING_BYTES_PER_CELL > memory_budget_bytes():
            scratch = _Scratch(cache_dir)  # out of core: slower, but bounded by the budget
        info = {"key": key, "dem": str(grid.path), "out_of_core": scratch is not None}
        try:
            with building(cache_dir, name, info) as work:
                _compute(grid, elevation_unit, work, tags, scratch)
        finally:
            if scratch is not None:
                scratch.close()
        return cache_dir / name, False


def _compute(
    grid: Grid,
    elevation_unit: str,
    folder: Path,
    tags: dict[str, str],
    scratch: _Scratch | None,
) -> None:
    from slopescreen import routing, terrain

    if scratch is None:
        z = read_elevations(grid.path, elevation_unit)
    else:
        z = scratch((grid.height, grid.width), np.float64)
        for top in range(0, grid.height, rasters.TILE):
            rows = slice(top, min(top + rasters.TILE, grid.height))
            z[rows] = read_elevations(grid.path, elevation_unit, rows, slice(0, grid.width))
    sinks = {
        "slope": RasterSink(
            folder / "slope_deg.tif",
            grid,
            "float32",
            NODATA_F32,
            tags=tags | {"units": "degrees", "method": "Horn (1981)"},
        ),
        "tan": RasterSink(
            folder / "slope_tan.tif",
            grid,
            "float32",
            NODATA_F32,
            tags=tags | {"units": "tan(slope)", "method": "Horn (1981)"},
        ),
        "shade": RasterSink(
            folder / "hillshade.tif",
            grid,
            "uint8",
            0,
            resampling="nearest",
            tags=tags | {"azimuth_deg": "315", "altitude_deg": "45"},
        ),
    }
    with all_or_nothing(*sinks.values()):
        for top in range(0, grid.height, rasters.TILE):
            bottom = min(top + rasters.TILE, grid.height)
            lo, hi = max(top - 1, 0), min(bottom + 1, grid.height)
            band = z[lo:hi]
            dx = grid.dx_rows_m[lo:hi]
            gx, gy = terrain.horn_gradient(band, dx, grid.dy_m)
            inner = slice(top - lo, top - lo + bottom - top)
            tan_b = np.hypot(gx, gy)[inner]
            rows = slice(top, bottom)
            _write_band(sinks["tan"], rows, grid.width, _f32(tan_b))
            _write_band(sinks["slope"], rows, grid.width, _f32(np.degrees(np.arctan(tan_b))))
            _write_band(
                sinks["shade"], rows, grid.width, terrain.hillshade(band, dx, grid.dy_m)[inner]
            )
    _, sca = routing.specific_catchment_area(
        z, grid.dx_rows_m, grid.dy_m, overwrite=True, allocate=scratch
    )
    del z
    sink = RasterSink(
        folder / "specific_catchment_area_m.tif",
        grid,
        "float32",
        NODATA_F32,
        tags=tags
        | {
            "units": "m (area per unit contour width)",
            "method": "Priority-Flood+epsilon fill (Barnes et al. 2014), "
            "D-infinity routing (Tarboton 1997)",
        },
    )
    with all_or_nothing(sink):
        for top in range(0, grid.height, rasters.TILE):
            rows = slice(top, min(top + rasters.TILE, grid.height))
            band = sca[rows]
            # cells without a slope (the DEM's edge, next to no data) have no catchment
            # value either: no data in every terrain raster alike
            no_slope = read_block(folder / "slope_tan.tif", rows, slice(0, grid.width))
            band = np.where(no_slope == NODATA_F32, np.nan, band)
            _write_band(sink, rows, grid.width, _f32(band))
