"""Run-out of one scenario (``[runout]``): its source patches and the reach sweep, tile by
tile (:mod:`slopescreen.maps.region.runout_tiles`), then the reach rasters, zones and map,
and the assets lying in reach. Reach is an empirical screening estimate."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, read_block
from slopescreen.maps.io.safe_writes import TEMP_PREFIX, real_folder
from slopescreen.maps.outputs.output_names import (
    FS,
    PROBABILITY,
    RUNOUT_ANGLE,
    RUNOUT_ASSETS,
    RUNOUT_ASSETS_LAYER,
    RUNOUT_MAP,
    RUNOUT_REACH,
    RUNOUT_SHARE,
    RUNOUT_ZONES,
    SOIL_DEPTH,
)
from slopescreen.maps.region import runout_tiles
from slopescreen.maps.region.config import Config, Scenario
from slopescreen.maps.region.runners import Runner, serial_runner, side_by_side
from slopescreen.maps.region.runout_config import RunoutSpec
from slopescreen.maps.region.runout_tiles import SourceRule
from slopescreen.maps.region.terrain_cache import NODATA_F32, ElevationSource
from slopescreen.maps.terrain.tiled_reach import UNREACHED, elevations, tile_outputs
from slopescreen.maps.terrain.tiled_routing import Layout, Tile


@dataclass
class RunoutResult:
    """What the report and the manifest say of one scenario's run-out."""

    rule: str
    source_cells: int
    source_patches: int
    source_ha: float
    reach_ha: float
    cut_off_cells: int
    files: list[str] = field(default_factory=list)
    map: Path | None = None
    assets: list[dict[str, object]] = field(default_factory=list)  # in reach, by share
    asset_count: int = 0
    asset_length_m: float = 0.0
    worst_label: str = "lowest source FS"
    seconds: float = 0.0  # the run-out step's own time

    def as_dict(self) -> dict[str, object]:
        return {
            "reach_rule": self.rule,
            "source_cells": self.source_cells,
            "source_patches": self.source_patches,
            "source_ha": round(self.source_ha, 4),
            "reach_ha": round(self.reach_ha, 4),
            "cut_off_cells": self.cut_off_cells,
            "assets_in_reach": self.asset_count,
            "line_length_in_reach_m": round(self.asset_length_m, 2),
            "seconds": round(self.seconds, 3),
            "files": self.files,
        }


def _source_rule(
    spec: RunoutSpec, sc: Scenario, out: Path, layout: Layout, inventory: Any
) -> SourceRule:
    """The scenario's source cells by the spec's rule."""
    if spec.source == "probability":
        if not (out / PROBABILITY).exists():
            raise InputError(
                f'[runout] source = "probability": scenario {sc.name} has no probability of '
                "failure (no spread in the soil table)"
            )
        return SourceRule("probability", out / PROBABILITY, spec.probability_above)
    if spec.source == "fs":
        return SourceRule("fs", out / FS, spec.fs_below)
    r, c = np.asarray(inventory.rows), np.asarray(inventory.cols)
    tile = (r // layout.size) * layout.tile_cols + c // layout.size
    by_tile = {}
    for t in layout.tiles():
        here = tile == t.index
        by_tile[t.index] = (r[here] - t.r0) * (t.c1 - t.c0) + c[here] - t.c0
    return SourceRule("inventory", out / FS, math.inf, by_tile)


def runout_outputs(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    terrain_dir: Path,
    inventory: Any = None,
    runner: Runner = serial_runner,
) -> RunoutResult:
    """Every run-out output of the scenario in ``out`` (its folder), tile by tile on the
    run's runner (a thread per core when it runs here)."""
    import shutil
    import tempfile
    import time

    started = time.perf_counter()
    spec = cfg.runout
    assert spec is not None
    layout = Layout(grid.height, grid.width, runout_tiles.RUNOUT_TILE)
    rule = _source_rule(spec, sc, out, layout, inventory)
    dem = ElevationSource(cfg.region.dem, cfg.region.dem_elevation_unit)
    scratch = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}runout-", dir=real_folder(out)))
    try:
        layout, patches, swept, _ = runout_tiles.reach_tiles(
            spec, rule, grid, dem, out / SOIL_DEPTH, scratch, side_by_side(runner)
        )
        stitched = Stitched(scratch, layout, swept)
        files, written = _write_rasters(sc, grid, out, spec, dem, patches, stitched)
        zones = _zones(grid, out / RUNOUT_REACH, out / RUNOUT_ZONES)
        files.append(RUNOUT_ZONES)
        probability = rule.probability
        result = RunoutResult(
            rule=spec.reach_rule,
            source_cells=patches.cells,
            source_patches=patches.count,
            source_ha=patches.area_m2 / 1e4,
            reach_ha=written.reach_m2 / 1e4,
            cut_off_cells=written.cut_off_cells,
            worst_label="highest source P(FS < 1)" if probability else "lowest source FS",
        )
        if spec.assets is not None:
            rows = _exposure(spec, grid, stitched, probability, zones)
            files += _write_assets(rows, out, grid)
            result.assets = sorted(
                (r for r in rows if r["in_reach"]),
                key=lambda r: -float(r["max_share"]),  # type: ignore[arg-type]
            )
            result.asset_count = len(result.assets)
            result.asset_length_m = float(
                sum(float(r["length_in_reach_m"]) for r in result.assets)  # type: ignore[arg-type]
            )
        if cfg.quicklook_map:
            result.map = _draw(cfg, sc, grid, out, terrain_dir, written.classes())
            files.append(RUNOUT_MAP)
    finally:
        shutil.rmtree(scratch, ignore_errors=True)
    result.files = files
    result.seconds = time.perf_counter() - started
    return result


@dataclass
class Stitched:
    """Windows of the swept tiles' results, stitched across tile edges, read from the cells
    each tile reached (kept once read: they are as many as the reach, not the tile)."""

    folder: Path
    layout: Layout
    swept: set[int]
    reached: dict[int, dict[str, np.ndarray]] = field(default_factory=dict)

    def _tile(self, t: Tile) -> dict[str, np.ndarray] | None:
        if t.index not in self.swept:
            return None
        if t.index not in self.reached:
            with np.load(self.folder / f"t{t.index}-reach.npz") as saved:
                self.reached[t.index] = {k: saved[k] for k in saved.files}
        return self.reached[t.index]

    def window(self, name: str, rows: slice, cols: slice) -> np.ndarray:
        """``name`` (share or worst) over a window (``UNREACHED`` where nothing reached)."""
        out = np.full((rows.stop - rows.start, cols.stop - cols.start), UNREACHED[name])
        for t in self.layout.tiles():
            r0, r1 = max(rows.start, t.r0), min(rows.stop, t.r1)
            c0, c1 = max(cols.start, t.c0), min(cols.stop, t.c1)
            got = self._tile(t) if r0 < r1 and c0 < c1 else None
            if got is None or not got["cells"].size:
                continue
            rr, cc = np.mgrid[r0:r1, c0:c1]
            flat = ((rr - t.r0) * (t.c1 - t.c0) + cc - t.c0).ravel()
            at = np.minimum(np.searchsorted(got["cells"], flat), got["cells"].size - 1)
            hit = got["cells"][at] == flat
            place = (
                slice(r0 - rows.start, r1 - rows.start),
                slice(c0 - cols.start, c1 - cols.start),
            )
            block = out[place].ravel()  # a copy: the window is not contiguous
            block[hit] = got[name][at[hit]]
            out[place] = block.reshape(r1 - r0, c1 - c0)
        return out


@dataclass
class Written:
    """What the raster pass gathers: reach area, cut-off cells and the map's cells."""

    step: int  # the map's (quicklook.map_step)
    shown: tuple[int, int]  # the map's cells (quicklook.decimated_shape)
    reach_m2: float = 0.0
    cut_off_cells: int = 0
    travelled: list[np.ndarray] = field(default_factory=list)  # shares of reached non-sources

    def __post_init__(self) -> None:
        self.share = np.zeros(self.shown)
        self.source = np.zeros(self.shown, bool)
        self.data = np.zeros(self.shown, bool)

    def take(self, t: Tile, share: np.ndarray, source: np.ndarray, data: np.ndarray) -> None:
        """Keep the map's cells of a tile: every ``step``-th row and column of the grid."""
        self.travelled.append(share[(share > 0.0) & ~source])
        rows = np.arange(-(-t.r0 // self.step) * self.step, t.r1, self.step)
        cols = np.arange(-(-t.c0 // self.step) * self.step, t.c1, self.step)
        rows = rows[rows // self.step < self.shown[0]]
        cols = cols[cols // self.step < self.shown[1]]
        at = np.ix_(rows // self.step, cols // self.step)
        inner = np.ix_(rows - t.r0, cols - t.c0)
        self.share[at], self.source[at], self.data[at] = share[inner], source[inner], data[inner]

    def classes(self) -> np.ndarray:
        """Classes 1-4 of :data:`MAP_CLASSES` (0: no data) on the map's cells: the reach split
        at the median share of all reached cells that are not sources."""
        travelled = np.concatenate(self.travelled) if self.travelled else np.zeros(0)
        split = float(np.median(travelled)) if travelled.size else 0.0
        reached = (self.share > 0.0) & ~self.source
        out = np.where(self.data, 4, 0).astype(np.uint8)
        out[reached] = np.where(self.share[reached] >= split, 2, 3)
        out[self.source & self.data] = 1
        return out


def _write_rasters(
    sc: Scenario,
    grid: Grid,
    out: Path,
    spec: RunoutSpec,
    dem: ElevationSource,
    patches: runout_tiles.Patches,
    stitched: Stitched,
) -> tuple[list[str], Written]:
    """The reach rasters, tile by tile, and what the zones, map and result need."""
    from slopescreen.maps.outputs.quicklook import decimated_shape, map_step

    tags = {
        "scenario": sc.name,
        "reach_rule": spec.reach_rule,
        "sources": spec.source,
        "caution": "run-out reach is an empirical screening estimate: no entrainment, no "
        "deposition volume balance, no impact pressure",
        "ground_geometry": grid.ground.note,
    }
    layers = {
        RUNOUT_REACH: ("uint8", 255, "1 where flow from a source reaches the cell, 0 where none"),
        RUNOUT_SHARE: ("float32", NODATA_F32, "share of all source flow passing the cell (0 to 1)"),
        RUNOUT_ANGLE: ("float32", NODATA_F32,
                       "angle of reach (degrees) of the most mobile source reaching the cell"),
    }  # fmt: skip
    sinks = {
        name: RasterSink(out / name, grid, dtype, nodata, tags=tags | {"units": what},
                         resampling="nearest" if dtype == "uint8" else "average")
        for name, (dtype, nodata, what) in layers.items()
    }  # fmt: skip
    step = map_step(grid)
    written = Written(step, decimated_shape(grid.height, grid.width, step))
    with all_or_nothing(*sinks.values()):
        for t in stitched.layout.tiles():
            rows, cols = slice(t.r0, t.r1), slice(t.c0, t.c1)
            got = tile_outputs(stitched.folder, t, stitched.swept)
            data = np.isfinite(
                elevations(dem, stitched.folder, t, grid.height, grid.width)[1:-1, 1:-1]
            )
            share = np.where(data, got["share"], 0.0)
            reached = share > 0.0
            angle = np.degrees(np.arctan(np.minimum(got["tan_alpha"], 1e9)))
            blocks = {
                RUNOUT_REACH: np.where(data, reached, 255).astype(np.uint8),
                RUNOUT_SHARE: np.where(data, share, NODATA_F32).astype(np.float32),
                RUNOUT_ANGLE: np.where(reached, angle, NODATA_F32).astype(np.float32),
            }
            for name, block in blocks.items():
                sinks[name].write(rows, cols, block)
            area = np.broadcast_to(grid.ground.cell_area_m2(rows, cols), t.shape)
            written.reach_m2 += float(area[reached].sum())
            written.cut_off_cells += int((got["cut"].astype(bool) & reached).sum())
            written.take(t, share, patches.source_mask(t), data)
    return list(layers), written


def _zones(grid: Grid, reach: Path, target: Path) -> Any:
    """Polygons of the reach (four neighbours) with their ground area (m2), traced tile by
    tile from ``reach`` and written to ``target``."""
    import geopandas as gpd

    from slopescreen.maps.io.safe_writes import replacing
    from slopescreen.maps.outputs.zones import ground_areas_m2, traced_patches

    geoms, _ = traced_patches(lambda rows, cols: read_block(reach, rows, cols) == 1, grid)
    frame = gpd.GeoDataFrame({"zone": np.arange(1, len(geoms) + 1)}, geometry=geoms, crs=grid.crs)
    frame["area_m2"] = np.asarray(ground_areas_m2(frame.geometry.to_numpy(), grid), float)
    with replacing(target) as tmp:
        frame.to_file(tmp, driver="GPKG", layer="runout_zones")
    return frame


def _exposure(
    spec: RunoutSpec, grid: Grid, stitched: Stitched, probability: bool, zones: Any
) -> list[dict[str, object]]:
    """Each asset: whether it lies in reach, the largest share of source flow on its cells,
    the worst source reaching it and, for lines, the ground length inside the reach."""
    import geopandas as gpd
    import shapely
    from pyproj import Geod
    from rasterio import features
    from rasterio.windows import Window, from_bounds, transform

    kwargs = {"layer": spec.asset_layer} if spec.asset_layer else {}
    try:
        assets = gpd.read_file(spec.assets, **kwargs)
    except Exception as exc:  # any reader failure is a problem with the user file
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{spec.assets}: cannot read the assets ({first})") from None
    if assets.crs is None:
        raise InputError(f"{spec.assets}: assets have no coordinate reference system")
    if spec.asset_field is not None and spec.asset_field not in assets.columns:
        raise InputError(
            f"{spec.assets}: no field {spec.asset_field!r} (asset_field); fields: "
            f"{', '.join(map(str, assets.columns))}"
        )
    assets = assets[assets.geometry.notna() & ~assets.geometry.is_empty].to_crs(grid.crs)
    reach = shapely.union_all(zones.geometry.to_numpy()) if len(zones) else shapely.Polygon()
    geod = Geod(ellps="WGS84")
    rows_out: list[dict[str, object]] = []
    for i, (idx, asset) in enumerate(assets.iterrows()):
        geom = asset.geometry
        name = str(asset[spec.asset_field]) if spec.asset_field else str(idx)
        x0, y0, x1, y1 = geom.bounds
        win = from_bounds(x0, y0, x1, y1, grid.transform).round_offsets().round_lengths()
        r0 = max(int(win.row_off) - 1, 0)
        c0 = max(int(win.col_off) - 1, 0)
        r1 = min(int(win.row_off + win.height) + 2, grid.height)
        c1 = min(int(win.col_off + win.width) + 2, grid.width)
        best, source, inside = 0.0, math.inf, False
        if r1 > r0 and c1 > c0:
            t = transform(Window(c0, r0, c1 - c0, r1 - r0), grid.transform)
            cells = features.rasterize(
                [(geom, 1)], out_shape=(r1 - r0, c1 - c0), transform=t, all_touched=True,
                dtype="uint8",
            ).astype(bool)  # fmt: skip
            window = (slice(r0, r1), slice(c0, c1))
            part = stitched.window("share", *window)[cells]
            if part.size and (part > 0).any():
                inside = True
                best = float(part.max())
                worst = stitched.window("worst", *window)[cells][part > 0].min()
                source = float(-worst if probability else worst)
        length = 0.0
        if inside and geom.geom_type in ("LineString", "MultiLineString"):
            piece = shapely.intersection(geom, reach)
            if not piece.is_empty:  # on the ellipsoid: ground metres whatever the CRS
                lonlat = gpd.GeoSeries([piece], crs=grid.crs).to_crs("EPSG:4326").iloc[0]
                length = float(geod.geometry_length(lonlat))
        rows_out.append(
            {
                "asset": name,
                "kind": geom.geom_type,
                "in_reach": inside,
                "max_share": round(best, 6),
                "source_value": round(source, 6) if math.isfinite(source) else None,
                "length_in_reach_m": round(length, 2),
                "geometry": geom,
                "order": i,
            }
        )
    return rows_out


def _write_assets(rows: list[dict[str, object]], out: Path, grid: Grid) -> list[str]:
    """The assets in reach: a CSV table and a GeoPackage layer."""
    import geopandas as gpd

    from slopescreen.maps.io.safe_writes import replacing
    from slopescreen.maps.outputs.summary import write_summary

    hit = [r for r in rows if r["in_reach"]]
    table = [
        {k: v for k, v in r.items() if k not in ("geometry", "order", "in_reach")} for r in hit
    ]
    write_summary(table or [{"asset": "", "kind": "", "max_share": "", "source_value": "",
                             "length_in_reach_m": ""}], out / RUNOUT_ASSETS)  # fmt: skip
    frame = (
        gpd.GeoDataFrame(table, geometry=[r["geometry"] for r in hit], crs=grid.crs)
        if hit
        else gpd.GeoDataFrame({"asset": []}, geometry=[], crs=grid.crs)
    )
    with replacing(out / RUNOUT_ASSETS_LAYER) as tmp:
        frame.to_file(tmp, driver="GPKG", layer="assets_in_reach")
    return [RUNOUT_ASSETS, RUNOUT_ASSETS_LAYER]


MAP_CLASSES = (  # the run-out map's classes, in blues apart from the stability classes
    ("source: failing ground", "#08306b"),
    ("reach: the more travelled half", "#2171b5"),
    ("reach: the rest", "#9ecae1"),
    ("not reached", "#f7fbff"),
)


def _draw(
    cfg: Config, sc: Scenario, grid: Grid, out: Path, terrain_dir: Path, classes: np.ndarray
) -> Path:
    """The run-out map of ``classes`` (:data:`MAP_CLASSES`, read at the map's step)."""
    from slopescreen.maps.outputs.output_names import HILLSHADE, SOIL_UNIT
    from slopescreen.maps.outputs.palette import hex_rgb
    from slopescreen.maps.outputs.quicklook import MapFrame, draw_classes

    frame = MapFrame(
        grid,
        terrain_dir / HILLSHADE,
        f"{cfg.region.name}: run-out reach below failing ground (empirical screening estimate)",
        f"scenario {sc.name}: {cfg.runout.reach_rule if cfg.runout else ''}",
        soil_codes=terrain_dir / SOIL_UNIT,
        zones=out / RUNOUT_ZONES,
        zones_label="run-out reach outline",
    )
    return draw_classes(
        out / RUNOUT_MAP,
        frame,
        classes,  # at the frame's step already (Written.take)
        [name for name, _ in MAP_CLASSES],
        "run-out below failing ground",
        no_data_label="no data",
        colours=np.array([hex_rgb(code) for _, code in MAP_CLASSES]),
    )
