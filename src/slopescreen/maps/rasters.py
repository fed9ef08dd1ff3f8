"""Writing rasters: tiled, compressed Cloud Optimized GeoTIFFs, written whole or not at all.

Blocks are written to a tiled GeoTIFF beside the target, which is then copied to a COG and
renamed over the target, so an interrupted run leaves any previous file whole.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from slopescreen.maps.grid import Grid

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
        self.target.parent.mkdir(parents=True, exist_ok=True)
        self.tmp = self.target.with_name(f".{self.target.stem}.part.tif")
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
        final_tmp = self.target.with_name(f".{self.target.stem}.cog.tif")
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
            for leftover in (self.tmp, final_tmp):
                if leftover.exists():
                    leftover.unlink()
        return self.target

    def discard(self) -> None:
        if not self.dataset.closed:
            self.dataset.close()
        if self.tmp.exists():
            self.tmp.unlink()


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
