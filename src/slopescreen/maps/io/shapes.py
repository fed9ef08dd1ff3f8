"""Polygons burnt onto the DEM grid one tile at a time."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid


def rasterize_tile(frame: Any, column: str, grid: Grid, rows: slice, cols: slice) -> np.ndarray:
    """The integer ``column`` of the polygons of ``frame`` (a GeoDataFrame in the grid's
    CRS) on one tile, 0 where none; where polygons overlap, the later one wins."""
    from rasterio import features
    from rasterio.windows import Window, transform
    from shapely.geometry import box

    window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
    t = transform(window, grid.transform)
    shape = (rows.stop - rows.start, cols.stop - cols.start)
    x0, y1 = t.c, t.f
    x1, y0 = t.c + t.a * shape[1], t.f + t.e * shape[0]
    hits = frame.sindex.query(box(x0, y0, x1, y1))
    if len(hits) == 0:
        return np.zeros(shape, np.int32)
    part = frame.iloc[np.sort(hits)]
    return features.rasterize(
        zip(part.geometry, part[column], strict=True),
        out_shape=shape,
        transform=t,
        fill=0,
        dtype="int32",
    )


def read_layer(path: Path, layer: str | None, field: str, key: str, what: str) -> Any:
    """A layer of polygons with the field ``field`` (named in the scenario file as
    ``key``) and a CRS, features without geometry dropped; InputError in one line for a
    file that cannot be read, a missing field or no CRS (``what``: "soil polygons")."""
    import geopandas as gpd

    kwargs = {"layer": layer} if layer else {}
    try:
        frame = gpd.read_file(path, **kwargs)
    except Exception as exc:  # any reader failure is a problem with the user file
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{path}: cannot read {what} ({first})") from None
    if field not in frame.columns:
        raise InputError(
            f"{path}: no field {field!r} ({key}); fields: {', '.join(map(str, frame.columns))}"
        )
    if frame.crs is None:
        raise InputError(f"{path}: {what} have no coordinate reference system")
    return frame[frame.geometry.notna() & ~frame.geometry.is_empty]
