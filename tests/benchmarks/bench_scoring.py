"""Benchmark 6: scoring a map against an inventory, side by side with reading it once.

A factor-of-safety raster of SIZE x SIZE cells (default 10,000: 10^8 cells) is written as
the engine writes it (tiled, compressed Cloud Optimized GeoTIFF), with its class and
soil-unit rasters, and 10^4 landslide points at random. Timed alternately, best of the
repeats: (a) reading fs.tif once, tile by tile; (b) reading the inventory and scoring the
scenario (both passes: scores at the landslide cells, then the area masses of every tile).
Targets: scoring under 30 s, and within 3x of the read. Serially a map of up to 2^27 cells
keeps the first pass's FS tiles in memory for the second (4 bytes a cell), so the peak
memory is printed too.

    python tests/benchmarks/bench_scoring.py [--size 10000] [--landslides 10000] [--repeat 2]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path


def main() -> None:
    import geopandas as gpd
    import numpy as np
    from rasterio.transform import from_origin
    from shapely.geometry import Point

    from slopescreen.maps.inventory.reading import read_inventory
    from slopescreen.maps.inventory.scoring import score_scenario
    from slopescreen.maps.io.grid import read_grid
    from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, read_block, windows
    from slopescreen.maps.region.config import InventorySpec
    from slopescreen.stability_classes import classify

    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=10_000)
    parser.add_argument("--landslides", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    n = args.size
    work = Path(tempfile.mkdtemp(prefix="bench-scoring-"))
    import rasterio

    transform = from_origin(500_000.0, 5_000_000.0, 5.0, 5.0)
    with rasterio.open(
        work / "dem.tif", "w", driver="GTiff", width=n, height=n, count=1, dtype="float32",
        crs="EPSG:32632", transform=transform, tiled=True, compress="deflate",
    ) as dst:  # fmt: skip
        for rows, cols in _tiles(n):
            dst.write(np.zeros((rows.stop - rows.start, cols.stop - cols.start), np.float32), 1,
                      window=((rows.start, rows.stop), (cols.start, cols.stop)))  # fmt: skip
    grid = read_grid(work / "dem.tif")
    folder = work / "scenario"
    (work / "terrain").mkdir()
    folder.mkdir()
    started = time.perf_counter()
    sinks = [
        RasterSink(folder / "fs.tif", grid, "float32", -3.4e38),
        RasterSink(folder / "stability_class.tif", grid, "uint8", 0, resampling="nearest"),
        RasterSink(work / "terrain" / "soil_unit.tif", grid, "uint16", 0, resampling="nearest"),
    ]
    rng = np.random.default_rng(1)
    with all_or_nothing(*sinks):
        for rows, cols in windows(grid):
            shape = (rows.stop - rows.start, cols.stop - cols.start)
            y, x = np.mgrid[rows, cols]
            fs = 1.6 + 0.8 * np.sin(x / 300.0) * np.cos(y / 410.0) + rng.normal(0, 0.3, shape)
            fs = np.clip(fs, 0.2, 10.0).astype(np.float32)
            sinks[0].write(rows, cols, fs)
            sinks[1].write(rows, cols, classify(fs, (1.0, 1.3, 1.5)))
            sinks[2].write(rows, cols, (1 + (x // 2000 + y // 2000) % 3).astype(np.uint16))
    print(f"rasters of {n} x {n} cells written in {time.perf_counter() - started:.0f} s")
    flat = rng.choice(n * n, args.landslides, replace=False)
    points = [
        Point(500_000.0 + (c + 0.5) * 5.0, 5_000_000.0 - (r + 0.5) * 5.0)
        for r, c in zip(flat // n, flat % n, strict=True)
    ]
    gpd.GeoDataFrame(geometry=points, crs="EPSG:32632").to_file(work / "slides.gpkg")
    spec = InventorySpec(path=work / "slides.gpkg")
    names = ["failing", "narrow", "modest", "ample"]
    best = {"read fs.tif once": float("inf"), "read inventory and score": float("inf")}
    auc = None
    for _ in range(args.repeat):
        started = time.perf_counter()
        total = 0.0
        for rows, cols in windows(grid):
            total += float(read_block(folder / "fs.tif", rows, cols)[0, 0])
        best["read fs.tif once"] = min(best["read fs.tif once"], time.perf_counter() - started)
        started = time.perf_counter()
        inv = read_inventory(spec, grid)
        score = score_scenario("bench", grid, folder, work / "terrain", inv, ["A", "B", "C"], names)
        took = time.perf_counter() - started
        best["read inventory and score"] = min(best["read inventory and score"], took)
        auc = score.record["success_auc"]
    for name, seconds in best.items():
        print(f"{name:28} {seconds:8.2f} s")
    ratio = best["read inventory and score"] / best["read fs.tif once"]
    print(f"scoring / read: {ratio:.2f} (target <= 3); success AUC of random points {auc}")
    print(f"scoring under 30 s: {'yes' if best['read inventory and score'] < 30 else 'NO'}")
    from _terrain import peak_rss_mb

    print(f"peak resident memory of this process: {peak_rss_mb():,.0f} MB")


def _tiles(n: int, size: int = 2048):
    for top in range(0, n, size):
        for left in range(0, n, size):
            yield slice(top, min(top + size, n)), slice(left, min(left + size, n))


if __name__ == "__main__":
    main()
