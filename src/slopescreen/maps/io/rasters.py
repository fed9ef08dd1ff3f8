"""Reading and writing rasters on the DEM's grid.

Outputs are tiled, compressed Cloud Optimized GeoTIFFs written whole or not at all: blocks
go to a tiled GeoTIFF in a private work folder beside the target (see
:mod:`slopescreen.maps.io.safe_writes`), which is then copied to a COG and renamed over
the target, so an interrupted run leaves any previous file whole and no link is ever
written through.
Inputs on other grids (saturation rasters) are read resampled onto the DEM's grid.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.safe_writes import TEMP_PREFIX, real_folder
from slopescreen.maps.outputs.output_names import ASSEMBLY_FILE

BLOCK = 512


TILE = 2048  # cells per side of a work tile (a whole number of storage blocks)


def windows(grid: Grid, size: int | None = None) -> Iterator[tuple[slice, slice]]:
    """Square work tiles of the grid (default ``TILE`` cells a side), row by row: every
    per-cell step works tile by tile, so its memory does not grow with the region."""
    size = size or TILE
    for top in range(0, grid.height, size):
        for left in range(0, grid.width, size):
            yield (
                slice(top, min(top + size, grid.height)),
                slice(left, min(left + size, grid.width)),
            )


class RasterSink:
    """One output raster: ``write(rows, cols, block)`` then ``close()`` (or ``discard()``)."""

    def __init__(
        self,
        target: Path,
        grid: Grid,
        dtype: str,
        nodata: float | int,
        tags: dict[str, str] | None = None,
        colormap: dict | None = None,
        resampling: str = "average",
    ) -> None:
        import rasterio

        self.target = Path(target)
        self.work = Path(tempfile.mkdtemp(prefix=TEMP_PREFIX, dir=real_folder(target.parent)))
        self.tmp = self.work / ASSEMBLY_FILE
        self.resampling = resampling
        self.dataset = rasterio.open(
            self.tmp,
            "w",
            driver="GTiff",
            width=grid.width,
            height=grid.height,
            count=1,
            dtype=dtype,
            crs=grid.crs,
            transform=grid.transform,
            nodata=nodata,
            tiled=True,
            blockxsize=BLOCK,
            blockysize=BLOCK,
            BIGTIFF="IF_SAFER",  # uncompressed: fast to write; the COG copy compresses
        )
        if tags:
            self.dataset.update_tags(**tags)
        if colormap:
            self.dataset.write_colormap(1, colormap)

    def write(self, rows: slice, cols: slice, block: np.ndarray) -> None:
        from rasterio.windows import Window

        window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
        self.dataset.write(block, 1, window=window)

    def close(self) -> Path:
        import rasterio.shutil

        self.dataset.close()
        final_tmp = self.work / self.target.name
        try:
            rasterio.shutil.copy(
                self.tmp,
                final_tmp,
                driver="COG",
                compress="DEFLATE",
                LEVEL=1,  # fast deflate, readable by any GIS
                NUM_THREADS="ALL_CPUS",
                BLOCKSIZE=BLOCK,
                OVERVIEW_RESAMPLING=self.resampling.upper(),
                BIGTIFF="IF_SAFER",
            )
            os.replace(final_tmp, self.target)
        finally:
            shutil.rmtree(self.work, ignore_errors=True)
        return self.target

    def discard(self) -> None:
        if not self.dataset.closed:
            self.dataset.close()
        shutil.rmtree(self.work, ignore_errors=True)


@contextlib.contextmanager
def all_or_nothing(*sinks: RasterSink) -> Iterator[None]:
    """Close every sink (publishing its file) if the block succeeds; discard all otherwise,
    so an interrupted step leaves the previous files whole."""
    try:
        yield
    except BaseException:
        for sink in sinks:
            sink.discard()
        raise
    for sink in sinks:
        sink.close()


def read_block(path: Path, rows: slice, cols: slice) -> np.ndarray:
    import rasterio
    from rasterio.windows import Window

    with rasterio.open(path) as src:
        window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
        return src.read(1, window=window)


def read_on_grid(
    path: Path,
    grid: Grid,
    what: str,
    allowed: tuple[float, float],
    rows: slice | None = None,
    cols: slice | None = None,
    needed: Callable[[slice, slice], np.ndarray] | None = None,
    resampling: str = "bilinear",
) -> np.ndarray:
    """A window of a raster on any grid (``what``: "saturation", "rain_mm_h" ...) resampled
    onto the DEM grid (bilinear, or ``resampling``: "nearest"; NaN where it has no data).
    With no window, checks the whole
    raster tile by tile: readable, georeferenced, values within ``allowed`` only, and
    covering some cell of the DEM, or, with ``needed`` (tile -> mask of cells that must
    have a value), every such cell."""
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.vrt import WarpedVRT
    from rasterio.windows import Window

    low, high = allowed
    try:
        src = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(f"{path}: cannot read {what} raster ({exc})") from None
    with src:
        if src.crs is None:
            raise InputError(f"{path}: {what} raster has no coordinate reference system")
        if src.count != 1:
            raise InputError(
                f"{path}: {what} raster has {src.count} bands; give a raster of one band"
            )
        with WarpedVRT(
            src,
            crs=grid.crs,
            transform=grid.transform,
            width=grid.width,
            height=grid.height,
            resampling=Resampling[resampling],
            nodata=np.nan,
            dtype="float32",
        ) as vrt:

            def read(r: slice, c: slice) -> np.ndarray:
                window = Window(c.start, r.start, c.stop - c.start, r.stop - r.start)
                try:
                    return vrt.read(1, window=window).astype(np.float64)
                except rasterio.errors.RasterioError as exc:
                    raise InputError(f"{path}: cannot read {what} raster ({exc})") from None

            if rows is not None and cols is not None:
                return read(rows, cols)
            covered = 0
            for r, c in windows(grid):
                m = read(r, c)
                finite = np.isfinite(m)
                bad = finite & ((m < low) | (m > high))
                if bad.any():
                    raise InputError(
                        f"{path}: {what} values must be in [{low:g}, {high:g}], found "
                        f"{float(m[bad][0]):g}"
                    )
                if needed is not None:
                    gap = needed(r, c) & ~finite
                    if gap.any():
                        i, j = np.argwhere(gap)[0]
                        x, y = grid.centre_xy(r.start + i, c.start + j)
                        raise InputError(
                            f"{path}: {what} raster does not cover the DEM {grid.path.name}: "
                            f"no value at x = {x:.6g}, y = {y:.6g} (row {r.start + i}, "
                            f"column {c.start + j})"
                        )
                covered += int(finite.sum())
            if covered == 0:
                raise InputError(
                    f"{path}: {what} raster covers no cell of the DEM {grid.path.name} "
                    "(after reprojection to the DEM's grid)"
                )
            return np.empty(0)


def read_at_cells(path: Path, grid: Grid, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
    """The raster's values at the cells (rows, cols) of the grid, read tile by tile (only
    the tiles holding one of the cells); float64."""
    out = np.full(rows.shape, np.nan)
    for r, c in windows(grid):
        inside = (rows >= r.start) & (rows < r.stop) & (cols >= c.start) & (cols < c.stop)
        if inside.any():
            block = read_block(path, r, c)
            out[inside] = block[rows[inside] - r.start, cols[inside] - c.start]
    return out
