"""Reading rain gauges: a point layer (any vector format geopandas reads, any CRS), one
point per gauge with its ``name`` and its ``record`` (a hyetograph CSV, see
:mod:`slopescreen.maps.io.hyetographs`, relative to the layer), the records on one clock
and put on common steps."""

from __future__ import annotations

from pathlib import Path
from typing import NamedTuple

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.hyetographs import read_record
from slopescreen.maps.region.gauge_rain import common_steps

NAME_FIELD, RECORD_FIELD = "name", "record"


class Gauges(NamedTuple):
    """Gauges read and checked: names, positions (in ``crs_wkt``), and their rain on the
    common steps (``ends_h`` from the earliest record's start; rain (gauges, steps))."""

    names: tuple[str, ...]
    xy: tuple[tuple[float, float], ...]
    crs_wkt: str
    ends_h: np.ndarray
    rain_mm_h: np.ndarray
    records: tuple[Path, ...]  # each gauge's record file


def read_gauges(path: Path) -> Gauges:
    """The gauge layer at ``path`` and every gauge's record, checked: one line naming the
    file (and the gauge) for what is wrong."""
    import geopandas as gpd

    try:
        frame = gpd.read_file(path)
    except Exception as exc:
        raise InputError(f"{path}: cannot read the gauge layer ({exc})") from None
    if frame.crs is None:
        raise InputError(f"{path}: gauge layer has no coordinate reference system")
    missing = [f for f in (NAME_FIELD, RECORD_FIELD) if f not in frame.columns]
    if missing:
        raise InputError(
            f"{path}: gauge layer needs the fields {NAME_FIELD!r} and {RECORD_FIELD!r} (the "
            f"gauge's hyetograph CSV); missing {', '.join(map(repr, missing))}"
        )
    if frame.empty:
        raise InputError(f"{path}: gauge layer has no gauge")
    names = tuple(str(n) for n in frame[NAME_FIELD])
    for k, geometry in enumerate(frame.geometry):
        if geometry is None or geometry.geom_type != "Point" or geometry.is_empty:
            raise InputError(f"{path}: gauge {names[k]!r} is not a point")
    repeated = sorted({n for n in names if names.count(n) > 1})
    if repeated:
        raise InputError(f"{path}: gauge name {repeated[0]!r} is used more than once")
    files = tuple(path.parent / str(r) for r in frame[RECORD_FIELD])
    records = [read_record(file) for file in files]
    clocks = sorted({r.clock for r in records})
    if len(clocks) > 1:
        raise InputError(
            f"{path}: the gauges' records mix {' and '.join(clocks)}: give every record on "
            "one clock"
        )
    ends, rain = common_steps(
        [r.start_h for r in records], [r.ends_h for r in records], [r.rain_mm_h for r in records]
    )
    xy = tuple((float(g.x), float(g.y)) for g in frame.geometry)
    return Gauges(names, xy, frame.crs.to_wkt(), ends, rain, files)
