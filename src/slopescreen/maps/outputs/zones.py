"""Low-margin zones: polygons of the two least stable classes (rasterio.features, geopandas).

Polygons are traced tile by tile from the written rasters, so memory stays bounded; pieces
that meet across a tile edge are merged afterwards (by class and soil unit), so the result
does not depend on the tiling.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np

from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.io.safe_writes import replacing

ZONE_CLASSES = (1, 2)  # the two least stable classes
_UNIT_SPAN = 65536


def _tile_polygons(label: np.ndarray, transform: object) -> list[tuple]:
    """(polygon, label) of every 4-connected patch of equal positive labels in a tile.

    Polygons are built in one vectorised shapely call from the traced rings (one Python
    object per polygon would dominate the run time on large regions).
    """
    import shapely
    from rasterio import features

    mask = label > 0
    if not mask.any():
        return []
    rings, ring_owner, values = [], [], []
    for k, (geom, value) in enumerate(
        features.shapes(label.astype(np.int32), mask=mask, transform=transform, connectivity=4)
    ):
        values.append(int(value))
        for ring in geom["coordinates"]:
            rings.append(np.asarray(ring, dtype=np.float64))
            ring_owner.append(k)
    lengths = np.fromiter((len(r) for r in rings), dtype=np.int64, count=len(rings))
    made = shapely.linearrings(
        np.concatenate(rings), indices=np.repeat(np.arange(len(rings)), lengths)
    )
    polygons = shapely.polygons(made, indices=np.asarray(ring_owner))
    return list(zip(polygons, values, strict=True))


def traced_patches(
    read: Callable[[slice, slice], np.ndarray], grid: Grid
) -> tuple[list[object], list[int]]:
    """(polygons, labels) of the 4-connected patches of equal positive labels that ``read``
    returns window by window (int32 or bool). Traced tile by tile, so memory stays bounded;
    pieces that meet across a tile edge are merged by label afterwards, so the result does
    not depend on the tiling. Pieces inside one tile come first, in tracing order, then the
    merged ones by label."""
    import geopandas as gpd
    import shapely
    from rasterio.windows import Window, transform

    pieces: list[tuple] = []
    edges = []
    for rows, cols in windows(grid):
        window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
        t = transform(window, grid.transform)
        pieces += _tile_polygons(np.asarray(read(rows, cols)), t)
        x0, y0 = t.c, t.f
        x1, y1 = t.c + t.a * (cols.stop - cols.start), t.f + t.e * (rows.stop - rows.start)
        edges.append(shapely.box(min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)).boundary)
    geoms = [p[0] for p in pieces]
    labels = [p[1] for p in pieces]
    if len(edges) > 1 and pieces:
        frame = gpd.GeoDataFrame({"label": labels}, geometry=geoms, crs=grid.crs)
        outer = shapely.box(*grid_bounds(grid)).boundary
        inner_edges = shapely.difference(shapely.union_all(edges), outer)
        on_edge = frame.intersects(inner_edges).to_numpy()
        merged = frame[on_edge].dissolve(by="label", as_index=False)
        merged = merged.explode(index_parts=False)
        geoms = list(frame.geometry[~on_edge]) + list(merged.geometry)
        labels = list(frame["label"][~on_edge]) + [int(v) for v in merged["label"]]
    return geoms, labels


def low_margin_zones(
    class_path: Path,
    codes_path: Path,
    grid: Grid,
    unit_keys: list[str],
    class_names: list[str],
    min_area_m2: float,
    scenario: str,
    slope_path: Path | None = None,
) -> object:
    """GeoDataFrame of polygons of classes 1 and 2, one per connected patch of a class in a
    soil unit; patches under ``min_area_m2`` (the minimum mapping unit, on the ground) are
    dropped. Areas are ground areas in m2 (:func:`ground_areas_m2`), whatever the CRS."""
    import geopandas as gpd

    def label(rows: slice, cols: slice) -> np.ndarray:
        classes, codes = read_block(class_path, rows, cols), read_block(codes_path, rows, cols)
        mask = np.isin(classes, ZONE_CLASSES) & (codes > 0)
        return (classes.astype(np.int32) * _UNIT_SPAN + codes.astype(np.int32)) * mask

    geoms, labels = traced_patches(label, grid)
    values = np.asarray(labels, np.int64)
    frame = gpd.GeoDataFrame(
        {"stability_class": values // _UNIT_SPAN, "code": values % _UNIT_SPAN},
        geometry=geoms,
        crs=grid.crs,
    )
    frame = frame.sort_values(["stability_class", "code"], kind="stable")
    frame["scenario"] = scenario
    frame["class_name"] = [class_names[int(c) - 1] for c in frame["stability_class"]]
    frame["soil_unit"] = [unit_keys[int(c) - 1] for c in frame["code"]]
    frame["area_m2"] = ground_areas_m2(frame.geometry, grid)
    frame = frame[frame["area_m2"] >= min_area_m2].reset_index(drop=True)
    frame["stability_class"] = frame["stability_class"].astype("int32")
    columns = ["scenario", "stability_class", "class_name", "soil_unit", "area_m2"]
    if slope_path is not None:
        frame["mean_slope_deg"] = mean_in_zones(frame.geometry, slope_path, grid)
        columns.append("mean_slope_deg")
    return frame[[*columns, "geometry"]]


def mean_in_zones(geometry: object, raster: Path, grid: Grid) -> np.ndarray:
    """Mean of a raster's cells (centres inside) per polygon, tile by tile."""
    import shapely
    from rasterio import features
    from rasterio.windows import Window, transform

    geoms = np.asarray(geometry, dtype=object)
    total = np.zeros(geoms.size + 1)
    count = np.zeros(geoms.size + 1)
    if geoms.size == 0:
        return np.zeros(0)
    tree = shapely.STRtree(geoms)
    for rows, cols in windows(grid):
        window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
        t = transform(window, grid.transform)
        x0, y0 = t.c, t.f
        x1, y1 = t.c + t.a * window.width, t.f + t.e * window.height
        hits = tree.query(shapely.box(min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)))
        if hits.size == 0:
            continue
        ids = features.rasterize(
            zip(geoms[hits], hits + 1, strict=True),
            out_shape=(window.height, window.width),
            transform=t,
            fill=0,
            dtype="int32",
        ).ravel()
        values = read_block(raster, rows, cols).astype(np.float64).ravel()
        ok = np.isfinite(values) & (values > -9000.0)
        total += np.bincount(ids[ok], weights=values[ok], minlength=total.size)
        count += np.bincount(ids[ok], minlength=count.size)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count[1:] > 0, total[1:] / np.maximum(count[1:], 1), np.nan)


SMALL_ZONE_CELLS = 32  # zones within this many cells a side: local areal scale suffices


def ground_areas_m2(geometry: object, grid: Grid) -> np.ndarray:
    """Ground areas (m2) of polygons in the grid's CRS.

    A polygon that spans at most ``SMALL_ZONE_CELLS`` cells each way takes its map area
    times the ground-to-map area ratio of the cell under its centroid (the areal scale
    changes by far less than 0.1% over such a span on the projections in use); a larger
    one is measured on the CRS's ellipsoid (``pyproj.Geod.geometry_area_perimeter``,
    Karney 2013) after its edges are split at the cell size, so that a straight edge on
    the map follows its true path on the ground. A local CRS without a datum measures in
    the plane."""
    import geopandas as gpd
    import shapely
    from pyproj import CRS

    geoms = np.asarray(geometry, dtype=object)
    if geoms.size == 0:
        return np.zeros(0)
    t = grid.transform
    map_cell = abs(t.a * t.e)  # type: ignore[attr-defined]
    if grid.ground.kind == "local":
        factor = grid.ground.map_step[0] / abs(t.a)  # type: ignore[attr-defined]
        return shapely.area(geoms) * factor**2
    bounds = shapely.bounds(geoms)
    span = np.maximum(
        (bounds[:, 2] - bounds[:, 0]) / abs(t.a),  # type: ignore[attr-defined]
        (bounds[:, 3] - bounds[:, 1]) / abs(t.e),  # type: ignore[attr-defined]
    )
    centre = shapely.centroid(geoms)
    col = np.clip(((shapely.get_x(centre) - t.c) / t.a).astype(np.int64), 0, grid.width - 1)  # type: ignore[attr-defined]
    row = np.clip(((shapely.get_y(centre) - t.f) / t.e).astype(np.int64), 0, grid.height - 1)  # type: ignore[attr-defined]
    areas = shapely.area(geoms) * grid.ground.cell_area_at(row, col) / map_cell
    large = np.flatnonzero(span > SMALL_ZONE_CELLS)
    if large.size:
        crs = CRS.from_user_input(grid.crs.to_wkt())  # type: ignore[attr-defined]
        step = min(abs(t.a), abs(t.e))  # type: ignore[attr-defined]
        dense = shapely.orient_polygons(shapely.segmentize(geoms[large], step))
        lonlat = gpd.GeoSeries(dense, crs=grid.crs).to_crs(crs.geodetic_crs)
        lonlat = shapely.orient_polygons(np.asarray(lonlat.values, dtype=object))
        geod = crs.get_geod()
        areas[large] = [abs(geod.geometry_area_perimeter(g)[0]) for g in lonlat]
    return areas


def grid_bounds(grid: Grid) -> tuple[float, float, float, float]:
    t = grid.transform
    return (t.c, t.f + t.e * grid.height, t.c + t.a * grid.width, t.f)  # type: ignore


def write_zones(frame: object, target: Path) -> Path:
    """Write a GeoPackage atomically (an empty layer keeps its fields).

    GDAL stamps GeoPackages with the current time; a fixed stamp keeps reruns
    byte-identical, so outputs can be compared by hash.
    """
    from pyogrio import set_gdal_config_options

    set_gdal_config_options({"OGR_CURRENT_DATE": "2000-01-01T00:00:00.000Z"})
    with replacing(target) as tmp:
        frame.to_file(tmp, driver="GPKG", layer="low_margin_zones")  # type: ignore[attr-defined]
    return target
