"""Benchmark 9: routing tile by tile against routing the whole grid at once, side by side.

The benchmark's convergent DEM (N x N, default 10,000 x 10,000 = 10^8 cells) is written to a
.npy file; each way runs in its own child process (so each peak is its own): the whole grid
in memory (``slopescreen.maps.terrain.routing.route``, its directions on every core), tiles of T x T
(default 4000) on a thread per core in one process (what ``slopescreen run`` does without a
cluster), and the same tiles one after another on one thread (what one dask worker does
with its share of the tiles). Reports the times, the ratio of tiles to whole (target:
within 1.3x), each child's peak memory (target: one thread under 1.5 GB, the bound on a
worker), the rounds between tiles, the stages, and the largest relative difference of the
contributing areas.

    python tests/benchmarks/bench_tiled_routing.py [--size 10000] [--tile 4000]
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def _child(way: str, folder: Path, tile: int) -> None:
    import resource

    from slopescreen.maps.region.runners import serial_runner, threaded_runner
    from slopescreen.maps.terrain import routing, tiled_routing

    dem = np.load(folder / "dem.npy", mmap_mode="r")
    n = dem.shape[0]
    lattice = routing.uniform_lattice(5.0, 5.0, n, n)
    routing.route(np.asarray(dem[:64, :64], np.float64), routing.uniform_lattice(5.0, 5.0, 64, 64))
    with tempfile.TemporaryDirectory(dir=folder) as work:
        small = np.asarray(dem[:300, :300], np.float64)  # compile the tile kernels once
        tiled_routing.route_array(small, routing.uniform_lattice(5.0, 5.0, 300, 300), 128,
                                  Path(work), serial_runner)  # fmt: skip
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    started = time.perf_counter()
    if way == "whole":
        area, _, _ = routing.route(np.asarray(dem, np.float64), lattice)
        seconds = time.perf_counter() - started
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
        np.save(folder / "area_whole.npy", area)
        info = {}
    else:
        work = folder / f"tiles_{way}"
        work.mkdir(exist_ok=True)
        layout = tiled_routing.Layout(n, n, tile)
        runner = threaded_runner if way == "threads" else serial_runner
        info = tiled_routing.route_tiles(
            tiled_routing.NpySource(folder / "dem.npy"), layout, lattice, work, runner
        )
        seconds = time.perf_counter() - started
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
        area = np.empty((n, n))
        for t in layout.tiles():
            area[t.r0 : t.r1, t.c0 : t.c1] = tiled_routing.tile_outputs(work, t)[0]
        np.save(folder / f"area_{way}.npy", area)
        shutil.rmtree(work)
    print(json.dumps({"seconds": seconds, "peak_mb": peak, "before_mb": before,
                      "info": info}))  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=10_000)
    parser.add_argument("--tile", type=int, default=4000)
    parser.add_argument("--child", choices=["whole", "threads", "one"], default=None)
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
    for way in ("whole", "threads", "one"):
        command = [sys.executable, __file__, "--child", way, "--folder", str(folder)]
        out = subprocess.run(
            [*command, "--tile", str(args.tile)],
            check=True,
            capture_output=True,
            text=True,
        )
        results[way] = json.loads(out.stdout.strip().splitlines()[-1])
    whole = results["whole"]
    a = np.load(folder / "area_whole.npy")
    ok = np.isfinite(a)
    print(f"routing the convergent {n} x {n} DEM ({n * n / 1e6:.0f} M cells), this machine:")
    print(f"  whole grid in memory: {whole['seconds']:.1f} s, peak {whole['peak_mb']:.0f} MB")
    for way, label in (("threads", "a thread per core"), ("one", "one thread")):
        r = results[way]
        b = np.load(folder / f"area_{way}.npy")
        rel = float(np.max(np.abs(b[ok] - a[ok]) / a[ok]))
        info = r["info"]
        print(
            f"  tiles of {args.tile} x {args.tile} on {label}: {r['seconds']:.1f} s "
            f"(ratio to whole {r['seconds'] / whole['seconds']:.2f}), peak {r['peak_mb']:.0f} MB;"
            f" {info['tiles']} tiles, {info['flat_rounds']} round(s) across flats, "
            f"{info['flow_rounds']} of flow; largest relative difference of area {rel:.1e}"
        )
        print("    stages: " + ", ".join(f"{k} {v:.1f} s" for k, v in info["seconds"].items()))
    print(
        "  targets: tiles within 1.30x of whole in one process; one thread (a worker's "
        "share) under 1.5 GB"
    )


if __name__ == "__main__":
    main()
