"""Benchmark 9: routing tile by tile against routing the whole grid at once, side by side.

The benchmark's convergent DEM (N x N, default 10,000 x 10,000 = 10^8 cells) is written to a
.npy file; each way runs in its own child process (so each peak is its own): the whole grid
in memory (``slopescreen.routing.route``), and tiles of T x T (default 4000) one after
another in one process (``slopescreen.maps.tiled_routing.route_tiles`` with its work files
on disk), which is what one dask worker does with its share of the tiles. Reports the times,
their ratio (target: tiled within 1.3x of whole), each child's peak memory (target: tiled
under 1.5 GB, the bound on a worker), the rounds between tiles, and the largest relative
difference of the contributing areas. The time of the spill graph and of the edge exchange
on the client is printed apart, for the projection to larger grids.

    python tests/benchmarks/bench_tiled_routing.py [--size 10000] [--tile 4000]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def _child(way: str, folder: Path, tile: int) -> None:
    import resource

    from slopescreen import routing
    from slopescreen.maps import tiled_routing
    from slopescreen.maps.runners import serial_runner

    dem = np.load(folder / "dem.npy", mmap_mode="r")
    n = dem.shape[0]
    lattice = routing.uniform_lattice(5.0, 5.0, n, n)
    routing.route(np.asarray(dem[:64, :64], np.float64), routing.uniform_lattice(5.0, 5.0, 64, 64))
    with tempfile.TemporaryDirectory(dir=folder) as work:
        small = np.asarray(dem[:300, :300], np.float64)  # compile the tile kernels once
        tiled_routing.route_array(small, routing.uniform_lattice(5.0, 5.0, 300, 300), 128,
                                  Path(work), serial_runner)  # fmt: skip
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    timed = {}
    started = time.perf_counter()
    if way == "whole":
        area, _, _ = routing.route(np.asarray(dem, np.float64), lattice)
        seconds = time.perf_counter() - started
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
        np.save(folder / "area_whole.npy", area)
        info = {}
    else:
        work = folder / "tiles"
        work.mkdir(exist_ok=True)
        client = {"spill graph": 0.0}
        original = tiled_routing._spill_levels

        def timed_levels(*args):
            at = time.perf_counter()
            out = original(*args)
            client["spill graph"] += time.perf_counter() - at
            return out

        tiled_routing._spill_levels = timed_levels
        original_inflows = tiled_routing._inflows
        client["edge exchange"] = 0.0

        def timed_inflows(*args):
            at = time.perf_counter()
            out = original_inflows(*args)
            client["edge exchange"] += time.perf_counter() - at
            return out

        tiled_routing._inflows = timed_inflows
        layout = tiled_routing.Layout(n, n, tile)
        info = tiled_routing.route_tiles(
            tiled_routing.NpySource(folder / "dem.npy"), layout, lattice, work, serial_runner
        )
        seconds = time.perf_counter() - started
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
        timed = client
        area = np.empty((n, n))
        for t in layout.tiles():
            area[t.r0 : t.r1, t.c0 : t.c1] = tiled_routing.tile_outputs(work, t)[0]
        np.save(folder / "area_tiled.npy", area)
    print(json.dumps({"seconds": seconds, "peak_mb": peak, "before_mb": before,
                      "info": info, "client": timed}))  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=10_000)
    parser.add_argument("--tile", type=int, default=4000)
    parser.add_argument("--child", choices=["whole", "tiled"], default=None)
    parser.add_argument("--folder", type=Path, default=None)
    args = parser.parse_args()
    if args.child:
        _child(args.child, args.folder, args.tile)
        return
    from _terrain import convergent_rows

    folder = Path(tempfile.mkdtemp(prefix="slopescreen-bench-tiles-"))
    n = args.size
    dem = np.lib.format.open_memmap(folder / "dem.npy", "w+", np.float32, (n, n))
    for top in range(0, n, 2048):
        dem[top : top + 2048] = convergent_rows(n, top, min(2048, n - top), 5.0)
    dem.flush()
    del dem
    results = {}
    for way in ("whole", "tiled"):
        out = subprocess.run(
            [
                sys.executable,
                __file__,
                "--child",
                way,
                "--folder",
                str(folder),
                "--tile",
                str(args.tile),
            ],
            check=True,
            capture_output=True,
            text=True,
        )
        results[way] = json.loads(out.stdout.strip().splitlines()[-1])
    whole, tiled = results["whole"], results["tiled"]
    a, b = np.load(folder / "area_whole.npy"), np.load(folder / "area_tiled.npy")
    ok = np.isfinite(a)
    rel = float(np.max(np.abs(b[ok] - a[ok]) / a[ok]))
    info = tiled["info"]
    print(f"routing the convergent {n} x {n} DEM ({n * n / 1e6:.0f} M cells), this machine:")
    print(
        f"  whole grid in memory:        {whole['seconds']:7.1f} s, peak {whole['peak_mb']:6.0f} MB"
    )
    print(
        f"  tiles of {args.tile} x {args.tile} in one process: {tiled['seconds']:7.1f} s, "
        f"peak {tiled['peak_mb']:6.0f} MB ({info['tiles']} tiles, {info['flat_rounds']} "
        f"round(s) across flats, {info['flow_rounds']} of flow)"
    )
    print(
        f"  ratio tiled / whole: {tiled['seconds'] / whole['seconds']:.2f} (target: <= 1.30); "
        f"tiled peak (a worker's bound): {tiled['peak_mb'] / 1024:.2f} GB (target < 1.5 GB)"
    )
    print(
        "  on the client: "
        + ", ".join(f"{k} {v:.2f} s" for k, v in tiled["client"].items())
        + f"; largest relative difference of contributing area: {rel:.1e}"
    )


if __name__ == "__main__":
    main()
