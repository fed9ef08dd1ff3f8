"""Run-out of one scenario (``[runout]``): its source cells and patches, the reach sweep
(:mod:`slopescreen.maps.terrain.reach`) on the whole grid, the reach rasters, zones and
map, and the assets lying in reach. Reach is an empirical screening estimate."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid, read_elevations
from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, read_block, windows
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
from slopescreen.maps.region.config import Config, Scenario
from slopescreen.maps.region.runout_config import RunoutSpec
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.runout import reach_ratio


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


def _whole(path: Path, grid: Grid) -> np.ndarray:
    """A float32 output of the run on the whole grid, float64 with NaN for no data."""
    out = np.empty((grid.height, grid.width))
    for rows, cols in windows(grid):
        out[rows, cols] = read_block(path, rows, cols)
    out[out == NODATA_F32] = np.nan
    return out


def _tan_alpha(spec: RunoutSpec, volume_m3: np.ndarray) -> np.ndarray:
    """tan(alpha) of each source patch by the spec's reach rule."""
    if spec.travel_angle_deg is not None:
        return np.full(volume_m3.shape, math.tan(math.radians(spec.travel_angle_deg)))
    if spec.angle_table:
        limits = np.array([v for v, _ in spec.angle_table])
        angles = np.array([a for _, a in spec.angle_table])
        k = np.minimum(np.searchsorted(limits, volume_m3), limits.size - 1)
        return np.tan(np.radians(angles[k]))
    a, b = spec.regression
    return np.asarray(reach_ratio(np.maximum(volume_m3, 1e-3), a, b), float)


def sources(
    spec: RunoutSpec, sc: Scenario, out: Path, grid: Grid, inventory: Any, fs: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(source mask, each cell's weight: 1 or its P(FS < 1)) of a scenario's run-out;
    ``fs``: the scenario's FS on the whole grid (NaN for no data)."""
    if spec.source == "probability":
        if not (out / PROBABILITY).exists():
            raise InputError(
                f'[runout] source = "probability": scenario {sc.name} has no probability of '
                "failure (no spread in the soil table)"
            )
        p = _whole(out / PROBABILITY, grid)
        mask = np.isfinite(p) & (p > spec.probability_above)
        return mask, np.where(mask, p, 0.0)
    if spec.source == "fs":
        mask = np.isfinite(fs) & (fs < spec.fs_below)
    else:
        mask = np.zeros(fs.shape, bool)
        mask[inventory.rows, inventory.cols] = True
        mask &= np.isfinite(fs)
    return mask, mask.astype(float)


def runout_outputs(
    cfg: Config, sc: Scenario, grid: Grid, out: Path, terrain_dir: Path, inventory: Any = None
) -> RunoutResult:
    """Every run-out output of the scenario in ``out`` (its folder)."""
    import time

    from slopescreen.maps.terrain.reach import label_patches, spread_reach

    started = time.perf_counter()
    spec = cfg.runout
    assert spec is not None
    shape = (grid.height, grid.width)
    z = read_elevations(cfg.region.dem, cfg.region.dem_elevation_unit)
    ue, un, ve, vn = grid.ground.vectors(slice(0, grid.height), slice(0, grid.width))
    col_step = np.ascontiguousarray(np.broadcast_to(np.hypot(ue, un), shape), np.float64)
    row_step = np.ascontiguousarray(np.broadcast_to(np.hypot(ve, vn), shape), np.float64)
    area = np.broadcast_to(
        grid.ground.cell_area_m2(slice(0, grid.height), slice(0, grid.width)), shape
    )
    fs = _whole(out / FS, grid)
    mask, weight = sources(spec, sc, out, grid, inventory, fs)
    mask &= np.isfinite(z)
    depth = np.nan_to_num(_whole(out / SOIL_DEPTH, grid), nan=0.0)
    labels, n = label_patches(mask)
    patch_area = np.bincount(labels.ravel(), weights=area.ravel(), minlength=n + 1)
    keep = patch_area >= spec.min_source_area_m2
    keep[0] = False
    mask &= keep[labels]
    volume = np.bincount(labels.ravel(), weights=(area * depth).ravel(), minlength=n + 1)
    tan_alpha = _tan_alpha(spec, volume)
    cells = np.flatnonzero(mask)
    lab = labels.ravel()[cells]
    mass = np.zeros(shape)
    margin = np.full(shape, -np.inf)
    ta = np.full(shape, np.inf)
    total = float(weight.ravel()[cells].sum())
    if cells.size:
        mass.ravel()[cells] = weight.ravel()[cells] / total
        # every source cell starts a line of reach; below the top of a source the top's
        # line carries the larger margin, so a path is measured from the top of the
        # source it comes from
        margin.ravel()[cells] = 0.0
        ta.ravel()[cells] = tan_alpha[lab]
    probability = spec.source == "probability"
    worst = np.full(shape, np.inf)
    worst.ravel()[cells] = (-weight if probability else fs).ravel()[cells]
    share = np.zeros(shape)
    cut = np.zeros(shape, np.uint8)
    tan_phi = -1.0
    if spec.friction_angle_deg is not None:
        tan_phi = math.tan(math.radians(spec.friction_angle_deg))
    spread_reach(
        np.ascontiguousarray(z), col_step, row_step, mass, margin, ta, spec.exponent, tan_phi,
        spec.max_speed_m_s**2 / 2.0, spec.min_share / max(cells.size, 1), share, cut, worst,
    )  # fmt: skip
    reached = share > 0.0
    data = np.isfinite(z)
    files = _write_rasters(cfg, sc, grid, out, share, reached, ta, data, spec)
    zones = _zones(grid, reached, out / RUNOUT_ZONES)
    files.append(RUNOUT_ZONES)
    result = RunoutResult(
        rule=spec.reach_rule,
        source_cells=int(mask.sum()),
        source_patches=int(np.unique(labels[mask]).size),
        source_ha=float(area[mask].sum()) / 1e4,
        reach_ha=float(area[reached].sum()) / 1e4,
        cut_off_cells=int((cut.astype(bool) & reached).sum()),
        worst_label="highest source P(FS < 1)" if probability else "lowest source FS",
    )
    if spec.assets is not None:
        rows = _exposure(spec, grid, share, -worst if probability else worst, zones)
        files += _write_assets(rows, out, grid)
        result.assets = sorted(
            (r for r in rows if r["in_reach"]),
            key=lambda r: -float(r["max_share"]),  # type: ignore[arg-type]
        )
        result.asset_count = len(result.assets)
        result.asset_length_m = float(sum(float(r["length_in_reach_m"]) for r in result.assets))  # type: ignore[arg-type]
    if cfg.quicklook_map:
        result.map = _draw(cfg, sc, grid, out, terrain_dir, _map_classes(mask, share, data))
        files.append(RUNOUT_MAP)
    result.files = files
    result.seconds = time.perf_counter() - started
    return result


def _write_rasters(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    share: np.ndarray,
    reached: np.ndarray,
    tan_alpha: np.ndarray,
    data: np.ndarray,
    spec: RunoutSpec,
) -> list[str]:
    tags = {
        "scenario": sc.name,
        "reach_rule": spec.reach_rule,
        "sources": spec.source,
        "caution": "run-out reach is an empirical screening estimate: no entrainment, no "
        "deposition volume balance, no impact pressure",
        "ground_geometry": grid.ground.note,
    }
    angle = np.where(reached, np.degrees(np.arctan(np.minimum(tan_alpha, 1e9))), np.nan)
    layers = {
        RUNOUT_REACH: (np.where(data, reached, 255).astype(np.uint8), "uint8", 255,
                       "1 where flow from a source reaches the cell, 0 where none"),
        RUNOUT_SHARE: (np.where(data, share, np.nan), "float32", NODATA_F32,
                       "share of all source flow passing the cell (0 to 1)"),
        RUNOUT_ANGLE: (angle, "float32", NODATA_F32,
                       "angle of reach (degrees) of the most mobile source reaching the cell"),
    }  # fmt: skip
    sinks = {
        name: RasterSink(out / name, grid, dtype, nodata, tags=tags | {"units": what},
                         resampling="nearest" if dtype == "uint8" else "average")
        for name, (_, dtype, nodata, what) in layers.items()
    }  # fmt: skip
    with all_or_nothing(*sinks.values()):
        for rows, cols in windows(grid):
            for name, (values, dtype, nodata, _) in layers.items():
                block = values[rows, cols]
                if dtype == "float32":
                    block = np.nan_to_num(block, nan=nodata).astype(np.float32)
                sinks[name].write(rows, cols, block)
    return list(layers)


def _zones(grid: Grid, reached: np.ndarray, target: Path) -> Any:
    """Polygons of the reach with their ground area (m2), written to ``target``."""
    import geopandas as gpd
    from rasterio import features
    from shapely.geometry import shape

    from slopescreen.maps.io.safe_writes import replacing
    from slopescreen.maps.outputs.zones import ground_areas_m2

    geoms = [
        shape(g)
        for g, v in features.shapes(
            reached.astype(np.uint8), mask=reached, transform=grid.transform, connectivity=8
        )
        if v == 1
    ]
    frame = gpd.GeoDataFrame({"zone": np.arange(1, len(geoms) + 1)}, geometry=geoms, crs=grid.crs)
    frame["area_m2"] = np.asarray(ground_areas_m2(frame.geometry.to_numpy(), grid), float)
    with replacing(target) as tmp:
        frame.to_file(tmp, driver="GPKG", layer="runout_zones")
    return frame


def _exposure(
    spec: RunoutSpec, grid: Grid, share: np.ndarray, worst: np.ndarray, zones: Any
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
            part = share[r0:r1, c0:c1][cells]
            if part.size and (part > 0).any():
                inside = True
                best = float(part.max())
                source = float(worst[r0:r1, c0:c1][cells][part > 0].min())
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


def _map_classes(source: np.ndarray, share: np.ndarray, data: np.ndarray) -> np.ndarray:
    """Classes 1-4 of :data:`MAP_CLASSES` (0: no data): the reach split at the median share
    of the reached cells that are not sources."""
    reached = (share > 0.0) & ~source
    split = float(np.median(share[reached])) if reached.any() else 0.0
    out = np.where(data, 4, 0).astype(np.uint8)
    out[reached] = np.where(share[reached] >= split, 2, 3)
    out[source & data] = 1
    return out


def _draw(
    cfg: Config, sc: Scenario, grid: Grid, out: Path, terrain_dir: Path, classes: np.ndarray
) -> Path:
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
    step = frame.step
    shown = classes[::step, ::step][: max(1, grid.height // step), : max(1, grid.width // step)]
    return draw_classes(
        out / RUNOUT_MAP,
        frame,
        shown,
        [name for name, _ in MAP_CLASSES],
        "run-out below failing ground",
        no_data_label="no data",
        colours=np.array([hex_rgb(code) for _, code in MAP_CLASSES]),
    )
