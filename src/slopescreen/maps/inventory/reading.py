"""A landslide inventory on the DEM's grid: points or polygons read with geopandas,
reprojected to the DEM's CRS and turned into landslide cells.

- A point marks the cell that holds it.
- A polygon marks the cells whose centres it covers (the cell holding a point inside it
  when it covers no centre). With ``part = "scarp"`` only the highest ``SCARP_SHARE``
  (20%) of those cells by elevation are kept, at least one: the source area where a
  shallow slide starts, not the runout below it.
- A cell covered by two landslides counts once, for the first.

Features outside the DEM and cells on no-data are counted and reported, never dropped in
silence. The held-out part for the prediction rate is the newest ``test_share`` of the
landslides (``split = "date"``), or the cells of spatial blocks drawn with probability
``test_share`` (``split = "blocks"``; see :func:`slopescreen.validation.held_out_blocks`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid, read_elevations
from slopescreen.maps.region.config import SCARP_SHARE, InventorySpec
from slopescreen.validation import held_out_blocks

FEW_CELLS = 10  # fewer landslide cells than this: scores are given with a warning


@dataclass
class Inventory:
    spec: InventorySpec
    kind: str  # "points" or "polygons"
    rows: np.ndarray  # landslide cells (int64), one entry per cell
    cols: np.ndarray
    slide: np.ndarray  # index of the landslide each cell belongs to
    names: list[str]  # per landslide
    dates: list[str | None]  # per landslide (ISO date) or None
    test_slide: np.ndarray  # per landslide: held out by date (split = "date")
    features: int  # features read
    outside: int  # landslides with no cell on the DEM
    block_cells: tuple[int, int] = (1, 1)  # block size in rows, columns (split = "blocks")
    split_note: str = ""
    warnings: list[str] = field(default_factory=list)

    @property
    def landslides(self) -> int:
        return len(self.names)

    def test_cells(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        """True for cells in held-out blocks (split = "blocks"); all False for a date split."""
        if self.spec.split != "blocks":
            return np.zeros(np.broadcast(rows, cols).shape, bool)
        br, bc = self.block_cells
        return held_out_blocks(
            np.asarray(rows) // br,
            np.asarray(cols) // bc,
            self.spec.test_share,
            self.spec.random_state,
        )

    def cell_is_test(self) -> np.ndarray:
        """Per landslide cell: in the held-out part."""
        if self.spec.split == "date":
            return self.test_slide[self.slide]
        return self.test_cells(self.rows, self.cols)


def _fail(path: Path, message: str) -> InputError:
    return InputError(f"{path}: {message}")


def _crs_name(path: Path) -> str:
    import pyogrio

    crs = pyogrio.read_info(path).get("crs")
    return str(crs) if crs else "unknown"


def _read_frame(spec: InventorySpec) -> Any:
    import geopandas as gpd

    path = spec.path
    try:
        frame = gpd.read_file(path)
    except Exception as exc:  # any reader failure is a problem with the user file
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise _fail(path, f"cannot read landslide inventory ({first})") from None
    if len(frame) == 0:
        raise _fail(path, "landslide inventory is empty (no features)")
    if "geometry" not in frame or frame.geometry.isna().all():
        raise _fail(path, "no geometry: the inventory needs points or polygons")
    for label, name in (("key", spec.key), ("date_field", spec.date_field)):
        if name is not None and name not in frame.columns:
            fields = ", ".join(str(c) for c in frame.columns if c != "geometry")
            raise _fail(path, f"no field {name!r} ({label}); fields: {fields or 'none'}")
    if frame.crs is None:
        raise _fail(path, "landslide inventory has no coordinate reference system")
    keep = frame.geometry.notna() & ~frame.geometry.is_empty
    dropped = int((~keep).sum())
    frame = frame[keep].reset_index(drop=True)
    if len(frame) == 0:
        raise _fail(path, "no geometry: every feature of the inventory is empty")
    frame.attrs["notes"] = []
    if dropped:
        frame.attrs["notes"].append(f"{path.name}: {dropped} features without geometry dropped")
    invalid = ~frame.geometry.is_valid
    if invalid.any():  # self-intersecting polygons, say: repaired, and said
        frame.loc[invalid, "geometry"] = frame.geometry[invalid].make_valid()
        frame.attrs["notes"].append(
            f"{path.name}: {int(invalid.sum())} invalid geometries (self-intersecting "
            "polygons, say) repaired with shapely's make_valid"
        )
    if spec.key is not None:
        keys = frame[spec.key]
        blank = keys.isna() | (keys.astype(str).str.strip() == "")
        if blank.any():
            raise _fail(
                path,
                f"feature {int(np.flatnonzero(blank.to_numpy())[0])}: field {spec.key!r} (key) "
                "holds no value; every landslide needs one",
            )
        if len(frame) > 1 and keys.astype(str).str.strip().nunique() == 1:
            frame.attrs["notes"].append(
                f"{path.name}: all {len(frame)} features share the key {str(keys.iloc[0])!r} "
                f"(field {spec.key!r}): scored as one landslide"
            )
    kinds = set(frame.geometry.geom_type)
    if kinds <= {"Point", "MultiPoint"}:
        return frame, "points"
    if kinds <= {"Polygon", "MultiPolygon"}:
        return frame, "polygons"
    raise _fail(
        path,
        f"geometry must be all points or all polygons, found {', '.join(sorted(kinds))}",
    )


SLASH_DATE = re.compile(r"^(\d{1,2})[/.](\d{1,2})[/.](\d{4})$")


def _slash_order(spec: InventorySpec, column: Any) -> tuple[bool | None, list[str]]:
    """Whether dates written with slashes (14/03/2019) put the day first, from the column's
    own values (a first part above 12 is a day; a second part above 12 is a day); None
    where there are none. InputError where the column cannot tell."""
    found = [m for v in column if v is not None and (m := SLASH_DATE.match(str(v).strip()))]
    if not found:
        return None, []
    first = max(int(m.group(1)) for m in found)
    second = max(int(m.group(2)) for m in found)
    if (first > 12) == (second > 12):
        raise _fail(
            spec.path,
            f"field {spec.date_field!r} (date_field): dates such as {found[0].group(0)!r} "
            "read as day/month or month/day; write ISO dates (2019-03-14)",
        )
    order = "day/month/year" if first > 12 else "month/day/year"
    return first > 12, [
        f"{spec.path.name}: {len(found)} dates written with slashes read as {order} "
        f"(a {'first' if first > 12 else 'second'} part above 12 shows it)"
    ]


def _dates(spec: InventorySpec, frame: Any) -> tuple[list[str | None], list[str]]:
    """Each feature's date (ISO) and a note on how dates with slashes were read."""
    import pandas as pd

    if spec.date_field is None:
        return [None] * len(frame), []
    day_first, notes = _slash_order(spec, frame[spec.date_field])
    out: list[str | None] = []
    for i, value in enumerate(frame[spec.date_field]):
        text = str(value).strip() if value is not None else ""
        try:
            if isinstance(value, int | float) and not isinstance(value, bool):
                if not math.isfinite(value) or value != int(value):
                    raise ValueError
                stamp = pd.Timestamp(year=int(value), month=1, day=1)
            elif text.isdigit() and len(text) == 4:
                stamp = pd.Timestamp(year=int(text), month=1, day=1)
            elif (m := SLASH_DATE.match(text)) is not None:
                a, b, year = int(m.group(1)), int(m.group(2)), int(m.group(3))
                day, month = (a, b) if day_first else (b, a)
                stamp = pd.Timestamp(year=year, month=month, day=day)
            else:
                stamp = pd.Timestamp(value)
            if pd.isna(stamp):
                raise ValueError
        except (ValueError, TypeError, OverflowError):
            raise _fail(
                spec.path,
                f"feature {i}: field {spec.date_field!r} (date_field) holds {text!r}, not a "
                "date; give an ISO date (2019-03-14) or a year",
            ) from None
        out.append(stamp.date().isoformat())
    return out, notes


def _point_cells(grid: Grid, geoms: Any) -> list[tuple[np.ndarray, np.ndarray]]:
    inverse = ~grid.transform
    out = []
    for g in geoms:
        points = list(g.geoms) if g.geom_type == "MultiPoint" else [g]
        rc = [inverse * (p.x, p.y) for p in points]
        cols = np.array([math.floor(c) for c, _ in rc], np.int64)
        rows = np.array([math.floor(r) for _, r in rc], np.int64)
        out.append((rows, cols))
    return out


def _polygon_cells(
    grid: Grid, geoms: Any, scarp: bool, dem: Path, unit: str
) -> list[tuple[np.ndarray, np.ndarray]]:
    from rasterio import features
    from rasterio.windows import Window, transform

    inverse = ~grid.transform
    out = []
    for g in geoms:
        x0, y0, x1, y1 = g.bounds
        c0, r1 = inverse * (x0, y0)
        c1, r0 = inverse * (x1, y1)
        top, left = max(math.floor(min(r0, r1)), 0), max(math.floor(min(c0, c1)), 0)
        bottom = min(math.floor(max(r0, r1)) + 1, grid.height)
        right = min(math.floor(max(c0, c1)) + 1, grid.width)
        if top >= bottom or left >= right:
            out.append((np.empty(0, np.int64), np.empty(0, np.int64)))
            continue
        t = transform(Window(left, top, right - left, bottom - top), grid.transform)
        mask = features.rasterize(
            [(g, 1)], out_shape=(bottom - top, right - left), transform=t, fill=0, dtype="uint8"
        ).astype(bool)
        rows, cols = np.nonzero(mask)
        rows, cols = rows + top, cols + left
        if rows.size == 0:  # smaller than a cell: the cell holding a point inside it
            p = g.representative_point()
            c, r = inverse * (p.x, p.y)
            rows, cols = np.array([math.floor(r)], np.int64), np.array([math.floor(c)], np.int64)
        elif scarp and rows.size > 1:
            z = read_elevations(dem, unit, slice(top, bottom), slice(left, right))
            elev = z[rows - top, cols - left]
            order = np.argsort(np.where(np.isnan(elev), -np.inf, -elev), kind="stable")
            keep = order[: max(1, math.ceil(SCARP_SHARE * rows.size))]
            rows, cols = rows[np.sort(keep)], cols[np.sort(keep)]
        out.append((rows.astype(np.int64), cols.astype(np.int64)))
    return out


def read_inventory(spec: InventorySpec, grid: Grid, dem_elevation_unit: str = "m") -> Inventory:
    """The landslide cells of an inventory on ``grid``; InputError (one line naming the
    file and the field) for an unreadable, empty or non-geometry file or a missing field."""
    frame, kind = _read_frame(spec)
    if kind == "points" and spec.part is not None:
        raise _fail(
            spec.path, f"part = {spec.part!r} applies to polygons; this inventory holds points"
        )
    dates, date_notes = _dates(spec, frame)
    names = (
        [str(v).strip() for v in frame[spec.key]]
        if spec.key is not None
        else [str(i + 1) for i in range(len(frame))]
    )
    notes = [*frame.attrs.get("notes", []), *date_notes]
    frame = frame.to_crs(grid.crs)
    placed = np.isfinite(frame.geometry.bounds.to_numpy()).all(axis=1)
    if not placed.any():
        raise _fail(
            spec.path,
            f"no feature can be placed in the DEM's CRS from the inventory's CRS "
            f"({_crs_name(spec.path)}): is the inventory's CRS label right?",
        )
    if not placed.all():
        notes.append(
            f"{spec.path.name}: {int((~placed).sum())} features cannot be placed in the "
            "DEM's CRS and are dropped"
        )
        frame = frame[placed].reset_index(drop=True)
        names = [n for n, ok in zip(names, placed, strict=True) if ok]
        dates = [d for d, ok in zip(dates, placed, strict=True) if ok]
    if kind == "points":
        per_feature = _point_cells(grid, frame.geometry)
    else:
        per_feature = _polygon_cells(
            grid, frame.geometry, spec.part != "whole", grid.path, dem_elevation_unit
        )
    slide_of: dict[str, int] = {}
    slide_names: list[str] = []
    slide_dates: list[str | None] = []
    rows_all, cols_all, slide_all = [], [], []
    for (rows, cols), name, date in zip(per_feature, names, dates, strict=True):
        if name not in slide_of:
            slide_of[name] = len(slide_names)
            slide_names.append(name)
            slide_dates.append(date)
        elif date is not None and (slide_dates[slide_of[name]] or "") < date:
            slide_dates[slide_of[name]] = date  # one landslide: its latest date
        inside = (rows >= 0) & (rows < grid.height) & (cols >= 0) & (cols < grid.width)
        rows_all.append(rows[inside])
        cols_all.append(cols[inside])
        slide_all.append(np.full(int(inside.sum()), slide_of[name], np.int64))
    rows = np.concatenate(rows_all) if rows_all else np.empty(0, np.int64)
    cols = np.concatenate(cols_all) if cols_all else np.empty(0, np.int64)
    slide = np.concatenate(slide_all) if slide_all else np.empty(0, np.int64)
    _, first = np.unique(rows * grid.width + cols, return_index=True)
    first = np.sort(first)  # a cell covered twice counts once, for the first landslide
    rows, cols, slide = rows[first], cols[first], slide[first]
    on_grid = np.zeros(len(slide_names), bool)
    on_grid[slide] = True
    inv = Inventory(
        spec=spec,
        kind=kind,
        rows=rows,
        cols=cols,
        slide=slide,
        names=slide_names,
        dates=slide_dates,
        test_slide=np.zeros(len(slide_names), bool),
        features=len(frame),
        outside=int((~on_grid).sum()),
    )
    inv.warnings.extend(notes)
    if inv.outside:
        inv.warnings.append(
            f"{spec.path.name}: {inv.outside} of {len(slide_names)} landslides lie outside the "
            f"DEM {grid.path.name} and are not scored"
        )
    if rows.size == 0:
        raise _fail(spec.path, f"no landslide of the inventory lies on the DEM {grid.path.name}")
    _split(inv, grid)
    return inv


def _split(inv: Inventory, grid: Grid) -> None:
    spec = inv.spec
    if spec.split == "date":
        known = [d for d in inv.dates if d is not None]
        order = sorted(set(known))
        n_test = max(1, math.ceil(spec.test_share * len(known)))
        cutoff = sorted(known)[-n_test]
        inv.test_slide = np.array([d is not None and d >= cutoff for d in inv.dates])
        inv.split_note = (
            f"by date: scored on the {int(inv.test_slide.sum())} landslides dated {cutoff} or "
            f"later, against {len(known) - int(inv.test_slide.sum())} older ones (dates "
            f"{order[0]} to {order[-1]})"
        )
        return
    du0, du1, dv0, dv1 = grid.ground.ground_spacing_m()
    br = max(1, round(spec.block_size_m / ((dv0 + dv1) / 2.0)))
    bc = max(1, round(spec.block_size_m / ((du0 + du1) / 2.0)))
    inv.block_cells = (br, bc)
    inv.split_note = (
        f"by spatial blocks of {br} x {bc} cells (about {spec.block_size_m:g} m a side on the "
        f"ground), each held out with probability {spec.test_share:g} (random_state "
        f"{spec.random_state})"
    )
