"""Terrain products computed once per DEM content and cached as verified entries."""

from __future__ import annotations

import math
import os
import shutil
import tempfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from slopescreen import terrain
from slopescreen.maps import rasters
from slopescreen.maps.cache import building, content_key, usable_entry
from slopescreen.maps.grid import Grid, read_elevations
from slopescreen.maps.ground import GROUND_VERSION, gradient_on_ground
from slopescreen.maps.locks import entry_lock
from slopescreen.maps.rasters import RasterSink, all_or_nothing, read_block
from slopescreen.outputs import TEMP_PREFIX, real_folder

TERRAIN_VERSION = "4"  # bump when a terrain algorithm changes: old caches are not reused
NODATA_F32 = -9999.0
PRODUCTS = (
    "slope_deg.tif",
    "slope_tan.tif",
    "slope_one_sided.tif",
    "specific_catchment_area_m.tif",
    "catchment_cut_off.tif",
    "hillshade.tif",
)


ROUTING_BYTES_PER_CELL = 57  # routing peak (about 36 with the DEM) plus the tile work, rounded up


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


def cache_key(
    dem_files_sha256: dict[str, str], elevation_unit: str, crs_wkt: str, version: str
) -> str:
    """Key of the terrain entry: the content of every file of the DEM (a VRT and each of
    its sources), the elevation unit, the CRS, the terrain algorithms, the ground-geometry
    layer and the program version."""
    parts = [f"{name}={sha}" for name, sha in dem_files_sha256.items()]
    return content_key(
        *parts,
        elevation_unit,
        crs_wkt,
        f"terrain-v{TERRAIN_VERSION}",
        f"ground-v{GROUND_VERSION}",
        version,
    )


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


BAND = 512  # rows per slope band (a whole number of storage blocks)
COS_45 = math.cos(math.radians(45.0))


def _sink(folder: Path, grid: Grid, name: str, dtype: str, tags: dict[str, str]) -> RasterSink:
    nodata = {"float32": NODATA_F32, "uint8": 255}[dtype]
    resampling = "average" if dtype == "float32" else "nearest"
    return RasterSink(folder / name, grid, dtype, nodata, tags=tags, resampling=resampling)


def _compute(
    grid: Grid,
    elevation_unit: str,
    folder: Path,
    tags: dict[str, str],
    scratch: _Scratch | None,
) -> None:
    """Slope, hillshade and the cut-off sources band by band, then routing on the whole
    grid, in ground metres (grid.ground)."""
    from slopescreen import routing

    if scratch is None:
        z = read_elevations(grid.path, elevation_unit)
    else:
        z = scratch((grid.height, grid.width), np.float64)
        for top in range(0, grid.height, rasters.TILE):
            rows = slice(top, min(top + rasters.TILE, grid.height))
            z[rows] = read_elevations(grid.path, elevation_unit, rows, slice(0, grid.width))
    tags = tags | {"ground_geometry": grid.ground.note}
    horn = {"method": "Horn (1981); one-sided where the 3x3 window is incomplete"}
    sinks = {
        "slope": _sink(
            folder, grid, "slope_deg.tif", "float32", tags | horn | {"units": "degrees"}
        ),
        "tan": _sink(folder, grid, "slope_tan.tif", "float32", tags | horn | {"units": "tan"}),
        "one_sided": _sink(
            folder,
            grid,
            "slope_one_sided.tif",
            "uint8",
            tags
            | {
                "description": "1: slope from one-sided differences (the 3x3 window touches no "
                "data or the DEM's edge); 0: full Horn window",
            },
        ),
    }
    shade = RasterSink(
        folder / "hillshade.tif",
        grid,
        "uint8",
        0,
        resampling="nearest",
        tags=tags | {"azimuth_deg": "315", "altitude_deg": "45"},
    )
    sources = (scratch or np.zeros)((grid.height, grid.width), np.uint8)
    with all_or_nothing(*sinks.values(), shade):
        for top in range(0, grid.height, BAND):
            rows = slice(top, min(top + BAND, grid.height))
            tan_b, gradient, one_sided, band_sources = _slope_band(z, grid, rows)
            _write_band(sinks["tan"], rows, grid.width, _f32(tan_b))
            _write_band(sinks["slope"], rows, grid.width, _f32(np.degrees(np.arctan(tan_b))))
            _write_band(
                sinks["one_sided"], rows, grid.width, np.where(np.isfinite(tan_b), one_sided, 255)
            )
            _write_band(shade, rows, grid.width, terrain.hillshade_from_gradient(*gradient))
            sources[rows] = band_sources
    _, sca, cut_off = routing.route(
        z, grid.ground.lattice(), sources, overwrite=True, allocate=scratch
    )
    del z
    route_tags = {
        "method": "Priority-Flood+epsilon fill (Barnes et al. 2014), "
        "D-infinity routing (Tarboton 1997), ground lengths and areas",
    }
    sink = _sink(
        folder,
        grid,
        "specific_catchment_area_m.tif",
        "float32",
        tags | route_tags | {"units": "m (area per unit contour width)"},
    )
    cut_sink = _sink(
        folder,
        grid,
        "catchment_cut_off.tif",
        "uint8",
        tags
        | route_tags
        | {
            "description": "1: part of the upslope area lies beyond a no-data cell or the DEM's "
            "edge that drains inwards (the specific catchment area is a lower bound); 0: whole",
        },
    )
    with all_or_nothing(sink, cut_sink):
        for top in range(0, grid.height, rasters.TILE):
            rows = slice(top, min(top + rasters.TILE, grid.height))
            # cells without a slope have no catchment value either
            no_slope = read_block(folder / "slope_tan.tif", rows, slice(0, grid.width))
            missing = no_slope == NODATA_F32
            _write_band(sink, rows, grid.width, _f32(np.where(missing, np.nan, sca[rows])))
            _write_band(cut_sink, rows, grid.width, np.where(missing, 255, cut_off[rows]))


def _slope_band(
    z: np.ndarray, grid: Grid, rows: slice
) -> tuple[np.ndarray, tuple[np.ndarray, np.ndarray], np.ndarray, np.ndarray]:
    """tan(slope), the ground gradient, the one-sided mark and the cut-off sources of a
    band of rows, read with one row of context above and below (NaN beyond the grid)."""
    n = rows.stop - rows.start
    ctx = np.full((n + 2, grid.width), np.nan)
    lo, hi = max(rows.start - 1, 0), min(rows.stop + 1, grid.height)
    ctx[lo - (rows.start - 1) : hi - (rows.start - 1)] = z[lo:hi]
    dz_dcol, dz_drow_up, one_sided = terrain.grid_gradient(ctx)
    vectors = grid.ground.vectors(rows, slice(0, grid.width))
    g_e, g_n = gradient_on_ground(vectors, dz_dcol[1:-1], dz_drow_up[1:-1])
    padded = np.pad(ctx, ((0, 0), (1, 1)), constant_values=np.nan)
    sources = _cut_off_sources(padded, vectors, g_e, g_n)
    return np.hypot(g_e, g_n), (g_e, g_n), one_sided[1:-1].astype(np.uint8), sources


def _cut_off_sources(
    padded: np.ndarray,
    vectors: tuple[np.ndarray, ...],
    g_e: np.ndarray,
    g_n: np.ndarray,
) -> np.ndarray:
    """Cells with data next to a missing cell (no data, or beyond the edge) that lies
    uphill within 45 degrees of the gradient: ground there would drain into the cell
    (D-infinity sends flow to a neighbour within 45 degrees of its direction)."""
    rows = padded.shape[0] - 2
    centre = padded[1:-1, 1:-1]
    slope = np.hypot(g_e, g_n)
    offsets = [(dr, dc) for dr in (-1, 0, 1) for dc in (-1, 0, 1) if dr or dc]
    missing = [
        ~np.isfinite(padded[1 + dr : 1 + dr + rows, 1 + dc : 1 + dc + centre.shape[1]])
        for dr, dc in offsets
    ]
    at = np.nonzero(np.isfinite(centre) & (slope > 1e-9) & np.logical_or.reduce(missing))
    ue, un, ve, vn = (np.broadcast_to(w, centre.shape)[at] for w in vectors)
    ge, gn, norm = g_e[at], g_n[at], slope[at]
    found = np.zeros(at[0].size, bool)
    for (dr, dc), gap in zip(offsets, missing, strict=True):
        de, dn = dc * ue - dr * ve, dc * un - dr * vn  # ground step to the neighbour
        cos = (de * ge + dn * gn) / (np.hypot(de, dn) * norm)
        found |= gap[at] & (cos > COS_45 + 1e-6)
    out = np.zeros(centre.shape, np.uint8)
    out[at] = found
    return out
