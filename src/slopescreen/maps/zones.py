"""Hazard-zone polygons of the least stable classes (rasterio.features, geopandas)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from slopescreen.maps.grid import Grid
from slopescreen.outputs import replacing

ZONE_CLASSES = (1, 2)  # the two least stable classes
_UNIT_SPAN = 65536


def hazard_zones(
    hazard: np.ndarray,
    codes: np.ndarray,
    grid: Grid,
    unit_keys: list[str],
    class_names: list[str],
    min_area_m2: float,
    scenario: str,
) -> object:
    """GeoDataFrame of polygons of classes 1 and 2, one per class and soil unit.

    Polygons smaller than ``min_area_m2`` (the minimum mapping unit) are dropped. Areas are
    in m2, measured in a local UTM projection where the DEM is geographic.
    """
    import geopandas as gpd
    from rasterio import features
    from shapely.geometry import shape

    mask = np.isin(hazard, ZONE_CLASSES) & (codes > 0)
    label = (hazard.astype(np.int32) * _UNIT_SPAN + codes.astype(np.int32)) * mask
    geoms, classes, units = [], [], []
    for geom, value in features.shapes(label, mask=mask, transform=grid.transform, connectivity=4):
        value = int(value)
        geoms.append(shape(geom))
        classes.append(value // _UNIT_SPAN)
        units.append(unit_keys[value % _UNIT_SPAN - 1])
    frame = gpd.GeoDataFrame(
        {
            "scenario": [scenario] * len(geoms),
            "hazard_class": classes,
            "class_name": [class_names[c - 1] for c in classes],
            "soil_unit": units,
        },
        geometry=geoms,
        crs=grid.crs,
    )
    if grid.geographic and len(frame):
        area = frame.to_crs(frame.estimate_utm_crs()).area
    else:
        area = frame.area * grid.crs.linear_units_factor[1] ** 2 if len(frame) else frame.area
    frame["area_m2"] = np.asarray(area, dtype=float)
    frame = frame[frame["area_m2"] >= min_area_m2].reset_index(drop=True)
    frame["hazard_class"] = frame["hazard_class"].astype("int32")
    return frame


def write_zones(frame: object, target: Path) -> Path:
    """Write a GeoPackage atomically (an empty layer keeps its fields).

    GDAL stamps GeoPackages with the current time; a fixed stamp keeps reruns
    byte-identical, so outputs can be compared by hash.
    """
    from pyogrio import set_gdal_config_options

    set_gdal_config_options({"OGR_CURRENT_DATE": "2000-01-01T00:00:00.000Z"})
    with replacing(target) as tmp:
        tmp.unlink()
        frame.to_file(tmp, driver="GPKG", layer="hazard_zones")  # type: ignore[attr-defined]
    return target
