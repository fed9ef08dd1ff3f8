"""Terrain products computed once per DEM content and cached as verified entries."""

from __future__ import annotations

import math
import shutil
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np

from slopescreen.maps.io import rasters
from slopescreen.maps.io.cache import building, content_key, usable_entry
from slopescreen.maps.io.grid import Grid, read_elevations
from slopescreen.maps.io.locks import entry_lock
from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, read_block
from slopescreen.maps.io.safe_writes import TEMP_PREFIX, real_folder
from slopescreen.maps.outputs.output_names import (
    CUT_OFF,
    HILLSHADE,
    SCA,
    SLOPE_DEG,
    SLOPE_ONE_SIDED,
    SLOPE_TAN,
    TERRAIN_CACHE,
)
from slopescreen.maps.region.runners import Runner, serial_runner, side_by_side
from slopescreen.maps.terrain import slope as terrain
from slopescreen.maps.terrain import tiled_routing
from slopescreen.maps.terrain.ground import GROUND_VERSION, gradient_on_ground

TERRAIN_VERSION = "6"  # bump when a terrain algorithm changes: old caches are not reused
NODATA_F32 = -9999.0
PRODUCTS = TERRAIN_CACHE


ROUTING_TILE = 4000  # cells a side of a routing tile: under 1 GB a process at its peak


class ElevationSource:
    """Windows of the DEM in metres (float64, NaN for no data), for the slope and routing
    tasks: a plain, picklable reader, so dask workers read their own windows."""

    def __init__(self, path: Path, elevation_unit: str) -> None:
        self.path, self.elevation_unit = path, elevation_unit

    def __call__(self, rows: slice, cols: slice) -> np.ndarray:
        return read_elevations(self.path, self.elevation_unit, rows, cols)


def cache_key(
    dem_files_sha256: dict[str, str], elevation_unit: str, crs_wkt: str, version: str
) -> str:
    """Key of the terrain entry: the content of every file of the DEM (a VRT and each of
    its sources), the elevation unit, the CRS, the terrain algorithms, the routing tile
    size (it sets the order in which contributing area is summed), the ground-geometry
    layer and the program version."""
    parts = [f"{name}={sha}" for name, sha in dem_files_sha256.items()]
    return content_key(
        *parts,
        elevation_unit,
        crs_wkt,
        f"terrain-v{TERRAIN_VERSION}",
        f"routing-tile-{ROUTING_TILE}",
        f"ground-v{GROUND_VERSION}",
        version,
    )


def _f32(a: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(a), a, NODATA_F32).astype(np.float32)


def terrain_products(
    grid: Grid,
    elevation_unit: str,
    key: str,
    cache_dir: Path,
    version: str,
    echo: Callable[[str], None],
    runner: Runner = serial_runner,
) -> tuple[Path, bool]:
    """Folder holding slope (degrees and tangent), specific catchment area and hillshade;
    returns (folder, reused). A cached entry is used only after its files pass the check
    against their recorded hashes; otherwise it is (re)built, all or nothing. Slope and
    hillshade are computed in windows read from the DEM; routing in one piece when the
    grid fits one routing tile, else tile by tile through ``runner`` (here or on dask
    workers), its work files in a folder under ``cache_dir`` (removed afterwards)."""
    name = f"terrain-{key}"
    with entry_lock(real_folder(cache_dir), name):
        folder = usable_entry(cache_dir, name, echo)
        if folder is not None:
            return folder, True
        tags = {"slopescreen_version": version, "terrain_key": key}
        info = {"key": key, "dem": str(grid.path), "routing_tile": ROUTING_TILE}
        scratch = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}routing-", dir=cache_dir))
        try:
            with building(cache_dir, name, info) as work:
                _compute(grid, elevation_unit, work, tags, scratch, runner, echo)
        finally:
            shutil.rmtree(scratch, ignore_errors=True)
        return cache_dir / name, False


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
    scratch: Path,
    runner: Runner,
    echo: Callable[[str], None],
) -> None:
    """Slope, hillshade and the cut-off sources window by window (tasks through the
    runner, on a thread per core without a cluster), then routing, in ground metres
    (grid.ground)."""
    tags = tags | {"ground_geometry": grid.ground.note}
    horn = {"method": "Horn (1981); one-sided where the 3x3 window is incomplete"}
    sinks = {
        "slope": _sink(folder, grid, SLOPE_DEG, "float32", tags | horn | {"units": "degrees"}),
        "tan": _sink(folder, grid, SLOPE_TAN, "float32", tags | horn | {"units": "tan"}),
        "one_sided": _sink(
            folder,
            grid,
            SLOPE_ONE_SIDED,
            "uint8",
            tags
            | {
                "description": "1: slope from one-sided differences (the 3x3 window touches no "
                "data or the DEM's edge); 0: full Horn window",
            },
        ),
    }
    shade = RasterSink(
        folder / HILLSHADE,
        grid,
        "uint8",
        0,
        resampling="nearest",
        tags=tags | {"azimuth_deg": "315", "altitude_deg": "45"},
    )
    sources = np.lib.format.open_memmap(
        scratch / "sources.npy", mode="w+", dtype=np.uint8, shape=(grid.height, grid.width)
    )
    windows = list(rasters.windows(grid))
    jobs = [(grid, elevation_unit, rows, cols) for rows, cols in windows]
    with all_or_nothing(*sinks.values(), shade):
        results = side_by_side(runner)(_slope_task, jobs)
        for (rows, cols), out in zip(windows, results, strict=True):
            for name, sink in (*sinks.items(), ("shade", shade)):
                sink.write(rows, cols, out[name])
            sources[rows, cols] = out["sources"]
    sources.flush()
    del sources
    route_tags = {
        "method": "level depression fill (the Priority-Flood surface, Barnes et al. 2014, by "
        "basins after Cordonnier et al. 2019; tile by tile after Barnes 2016), "
        "flats drained by steps to their outlet, D-infinity routing (Tarboton 1997), ground "
        "lengths and areas",
    }
    sink = _sink(
        folder,
        grid,
        SCA,
        "float32",
        tags | route_tags | {"units": "m (area per unit contour width)"},
    )
    cut_sink = _sink(
        folder,
        grid,
        CUT_OFF,
        "uint8",
        tags
        | route_tags
        | {
            "description": "1: part of the upslope area lies beyond a no-data cell or the DEM's "
            "edge that drains inwards (the specific catchment area is a lower bound); 0: whole",
        },
    )
    with all_or_nothing(sink, cut_sink):
        for window, sca, cut_off in _routed(grid, elevation_unit, scratch, runner, echo):
            # cells without a slope have no catchment value either
            missing = read_block(folder / SLOPE_TAN, *window) == NODATA_F32
            sink.write(*window, _f32(np.where(missing, np.nan, sca)))
            cut_sink.write(*window, np.where(missing, 255, cut_off))


def _routed(
    grid: Grid, elevation_unit: str, scratch: Path, runner: Runner, echo: Callable[[str], None]
) -> Iterator[tuple[tuple[slice, slice], np.ndarray, np.ndarray]]:
    """(window, specific catchment area, cut-off flags) of the routed grid, window by
    window: in one piece when the grid fits one routing tile, else tile by tile (on a
    thread per core, at most 8, when the run has no dask cluster)."""
    from slopescreen.maps.terrain import routing

    layout = tiled_routing.Layout(grid.height, grid.width, ROUTING_TILE)
    sources = tiled_routing.NpySource(scratch / "sources.npy")
    everything = (slice(0, grid.height), slice(0, grid.width))
    if len(layout.tiles()) == 1:
        z = read_elevations(grid.path, elevation_unit)
        _, sca, cut_off = routing.route(z, grid.ground.lattice(), sources(*everything))
        yield everything, sca, cut_off
        return
    tiled_routing.route_tiles(
        ElevationSource(grid.path, elevation_unit),
        layout,
        grid.ground.lattice(),
        scratch,
        side_by_side(runner),
        sources,
        echo,
    )
    for t in layout.tiles():
        _, sca, cut_off = tiled_routing.tile_outputs(scratch, t)
        yield (slice(t.r0, t.r1), slice(t.c0, t.c1)), sca, cut_off


def _slope_task(grid: Grid, elevation_unit: str, rows: slice, cols: slice) -> dict:
    """Slope (tangent and degrees), the one-sided mark, hillshade and the cut-off sources of
    a window, read with one ring of neighbouring cells (NaN beyond the grid): a tile task
    (here or on a dask worker)."""
    ctx = tiled_routing.framed_read(
        ElevationSource(grid.path, elevation_unit), rows, cols, grid.height, grid.width
    )
    dz_dcol, dz_drow_up, one_sided = terrain.grid_gradient(ctx)
    vectors = grid.ground.vectors(rows, cols)
    g_e, g_n = gradient_on_ground(vectors, dz_dcol[1:-1, 1:-1], dz_drow_up[1:-1, 1:-1])
    tan = np.hypot(g_e, g_n)
    return {
        "tan": _f32(tan),
        "slope": _f32(np.degrees(np.arctan(tan))),
        "one_sided": np.where(np.isfinite(tan), one_sided[1:-1, 1:-1], 255).astype(np.uint8),
        "shade": terrain.hillshade_from_gradient(g_e, g_n),
        "sources": _cut_off_sources(ctx, vectors, g_e, g_n),
    }


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
