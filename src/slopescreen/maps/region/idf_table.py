"""Reading a design-rainfall (intensity-duration-frequency, IDF) table: a CSV with columns
``duration_h``, ``return_period_yr`` and one amount column, one row per duration and
return period, lines starting with # skipped. The amount is

- ``intensity_mm_h``, or ``depth_mm`` (intensity = depth / duration): one table for the
  region, checked by :func:`slopescreen.rainfall_frequency.check_table`;
- ``intensity_raster_mm_h`` or ``depth_raster_mm``: a raster path (relative to the CSV) per
  row, gridded design rainfall on any grid and CRS, resampled bilinearly onto the DEM's
  grid; checked cell by cell (:func:`check_gridded`): each raster covers every DEM cell,
  values > 0, rising with return period and falling with duration in every cell.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from pathlib import Path

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.textfiles import read_csv_rows
from slopescreen.rainfall_frequency import check_axes, check_table, plausible_intensity_mm_h

NUMBERS = ("intensity_mm_h", "depth_mm")
RASTERS = ("intensity_raster_mm_h", "depth_raster_mm")
COLUMNS = ("duration_h", "return_period_yr", *NUMBERS, *RASTERS)


def read_idf(
    path: Path,
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, tuple[tuple[Path, ...], ...], bool]:
    """(durations h, return periods yr, intensities mm/h on their grid or None, rasters on
    the same grid or (), whether the rasters hold depths in mm), sorted."""
    numbered = read_csv_rows(path, "rainfall table")
    rows = [row for _, row in numbered]
    if not rows:
        raise InputError(f"{path}: rainfall table is empty")
    head = [h.strip() for h in rows[0]]
    amount = [c for c in (*NUMBERS, *RASTERS) if c in head]
    unknown = [h for h in head if h not in COLUMNS]
    if unknown or len(amount) != 1 or not {"duration_h", "return_period_yr"} <= set(head):
        raise InputError(
            f"{path}: rainfall table needs the columns duration_h, return_period_yr and one of "
            f"{', '.join(NUMBERS + RASTERS)}; found {', '.join(head)}"
        )
    column = amount[0]
    cells: dict[tuple[float, float], float | Path] = {}
    for number, row in numbered[1:]:
        values = dict(zip(head, row, strict=False))
        try:
            d, t = (float(values[c]) for c in ("duration_h", "return_period_yr"))
            a: float | Path = (
                (path.parent / values[column].strip()).resolve()
                if column in RASTERS
                else float(values[column])
            )
        except (KeyError, ValueError):
            raise InputError(f"{path}: line {number}: needs three values, got {row}") from None
        if not all(math.isfinite(x) for x in (d, t)) or d <= 0.0:
            raise InputError(f"{path}: line {number}: values must be finite, duration > 0")
        if isinstance(a, Path) and not a.is_file():
            raise InputError(f"{path}: line {number}: {column}: file not found: {a}")
        if isinstance(a, float) and not math.isfinite(a):
            raise InputError(f"{path}: line {number}: values must be finite, duration > 0")
        if (d, t) in cells:
            raise InputError(f"{path}: line {number}: duration {d:g} h, {t:g} yr given twice")
        cells[(d, t)] = a / d if column == "depth_mm" and isinstance(a, float) else a
    durations = sorted({d for d, _ in cells})
    periods = sorted({t for _, t in cells})
    missing = [(d, t) for d in durations for t in periods if (d, t) not in cells]
    if missing:
        d, t = missing[0]
        raise InputError(
            f"{path}: no row for duration {d:g} h and return period {t:g} yr: give every "
            "duration for every return period"
        )
    if column in RASTERS:
        d_arr, t_arr = check_axes(durations, periods, str(path))
        rasters = tuple(tuple(cells[(d, t)] for t in periods) for d in durations)
        return d_arr, t_arr, None, rasters, column == "depth_raster_mm"  # type: ignore[return-value]
    grid = np.array([[cells[(d, t)] for t in periods] for d in durations])
    d_arr, t_arr, i_arr = check_table(durations, periods, grid, str(path))
    return d_arr, t_arr, i_arr, (), False


def gridded_block(
    rasters: tuple[tuple[Path, ...], ...],
    durations_h: tuple[float, ...],
    depths: bool,
    grid: Grid,
    rows: slice,
    cols: slice,
) -> np.ndarray:
    """Design intensities (mm/h) of a tile: (durations, return periods, rows, cols)."""
    from slopescreen.maps.io.rasters import read_on_grid

    return np.array(
        [
            [
                read_on_grid(p, grid, "design rainfall", (0.0, math.inf), rows, cols)
                / (d if depths else 1.0)
                for p in row
            ]
            for d, row in zip(durations_h, rasters, strict=True)
        ]
    )


def check_gridded(
    rasters: tuple[tuple[Path, ...], ...],
    durations_h: tuple[float, ...],
    periods_yr: tuple[float, ...],
    depths: bool,
    grid: Grid,
    needed: Callable[[slice, slice], np.ndarray],
    where: Path,
) -> None:
    """Every raster readable, georeferenced and covering every DEM cell with a value > 0;
    in every cell, intensity plausible for its duration
    (:func:`slopescreen.rainfall_frequency.plausible_intensity_mm_h`), rising with return
    period and falling with duration. One
    InputError naming the raster(s) and the place otherwise."""
    from slopescreen.maps.io.rasters import read_on_grid, windows

    what = "design rainfall " + ("depth_mm" if depths else "intensity_mm_h")
    for row in rasters:
        for p in row:  # readable, in range, covering: the single-raster checks
            read_on_grid(p, grid, what, (1e-300, math.inf), needed=needed)
    for r, c in windows(grid):
        block = gridded_block(rasters, durations_h, depths, grid, r, c)
        cells = needed(r, c)
        limit = plausible_intensity_mm_h(np.asarray(durations_h, float))[:, None, None, None]
        beyond = (block > limit) & cells[None, None]
        if beyond.any():
            i, j, y, x = np.argwhere(beyond)[0]
            gx, gy = grid.centre_xy(r.start + y, c.start + x)
            raise InputError(
                f"{rasters[i][j]}: {block[i, j, y, x]:g} mm/h over {durations_h[i]:g} h at "
                f"x = {gx:.6g}, y = {gy:.6g} is beyond any rain of that duration (above "
                f"{float(limit[i, 0, 0, 0]):.0f} mm/h); in mm/h (or mm for depth rasters)?"
            )
        rises = np.diff(block, axis=1) > 0.0
        falls = np.diff(block, axis=0) < 0.0
        for ok, axis in ((rises, 1), (falls, 0)):
            bad = ~ok & cells[None, None]
            if bad.any():
                i, j, y, x = np.argwhere(bad)[0]
                a, b = (i, j), (i + 1, j) if axis == 0 else (i, j + 1)
                gx, gy = grid.centre_xy(r.start + y, c.start + x)
                rule = "fall with duration" if axis == 0 else "rise with return period"
                raise InputError(
                    f"{where}: intensity must {rule}: {rasters[a[0]][a[1]].name} "
                    f"({block[a][y, x]:g} mm/h) and {rasters[b[0]][b[1]].name} "
                    f"({block[b][y, x]:g} mm/h) at x = {gx:.6g}, y = {gy:.6g}"
                )


def regional_intensities(
    rasters: tuple[tuple[Path, ...], ...], durations_h: tuple[float, ...], depths: bool
) -> np.ndarray:
    """The median of each design-rainfall raster's own cells (mm/h): the curves drawn on
    the threshold plot for gridded design rainfall."""
    import rasterio

    out = np.empty((len(rasters), len(rasters[0])))
    for i, (d, row) in enumerate(zip(durations_h, rasters, strict=True)):
        for j, p in enumerate(row):
            with rasterio.open(p) as src:
                v = src.read(1, masked=True).astype(float).filled(np.nan)
            out[i, j] = np.nanmedian(v) / (d if depths else 1.0)
    return out
