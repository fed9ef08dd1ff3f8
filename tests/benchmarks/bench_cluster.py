"""Benchmark 10: a region larger than one routing tile end to end on a dask cluster whose
workers have a memory limit, and a projection to 10^10 cells.

Builds benchmark 3's invented region at N x N (default 20,000 x 20,000 = 4 x 10^8 cells),
starts a LocalCluster of 2 worker processes (1 thread each, ``memory_limit`` 4 GB each),
and runs ``slopescreen run`` on three scenarios with ``--scheduler`` pointing at it, in a
child process (the client). Reports the wall time, each process's peak memory (the client
and every worker), the routing's stages and rounds as the run printed them, and a
projection for 10^10 cells on 32 such workers: the measured cost of a tile in each stage x
the tile count / 32, plus the client's spill graph and edge exchange scaled with the number
of tile edges, and the rounds scaled with the tiles along the grid's side.

    python tests/benchmarks/bench_cluster.py [--size 20000] [--workdir DIR]
"""

from __future__ import annotations

import argparse
import json
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _worker_peak_mb() -> float:
    import resource as r

    return r.getrusage(r.RUSAGE_SELF).ru_maxrss / 1024.0


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=20_000)
    parser.add_argument("--workdir", type=Path, default=None)
    parser.add_argument("--memory-limit", default="4GB")
    args = parser.parse_args()
    from bench_end_to_end import make_region
    from distributed import Client, LocalCluster

    folder = args.workdir or Path(tempfile.mkdtemp(prefix="slopescreen-bench-cluster-"))
    started = time.perf_counter()
    make_region(folder, args.size)
    n = args.size
    print(f"region {n} x {n} ({n * n / 1e6:.0f} M cells) made in "
          f"{time.perf_counter() - started:.0f} s under {folder}")  # fmt: skip
    with (
        LocalCluster(
            n_workers=2,
            threads_per_worker=1,
            processes=True,
            memory_limit=args.memory_limit,
            dashboard_address=None,
        ) as cluster,
        Client(cluster) as client,
    ):
        started = time.perf_counter()
        out = subprocess.run(
            [
                sys.executable,
                "-m",
                "slopescreen.cli.main",
                "run",
                str(folder / "scenarios.toml"),
                "--out",
                str(folder / "out"),
                "--only",
                "dry",
                "wet",
                "saturated",
                "--scheduler",
                cluster.scheduler_address,
            ],
            check=True,
            capture_output=True,
            text=True,
        )
        seconds = time.perf_counter() - started
        workers = client.run(_worker_peak_mb)
    client_peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    timings = json.loads((folder / "out" / "manifest.json").read_text())["timings_s"]
    routing_line = next(line for line in out.stdout.splitlines() if line.startswith("routing:"))
    print(f"three scenarios end to end on 2 workers ({args.memory_limit} each): {seconds:.0f} s")
    print(f"  peak memory: client {client_peak / 1024:.2f} GB; workers "
          + ", ".join(f"{mb / 1024:.2f} GB" for mb in workers.values()))  # fmt: skip
    print("  steps: " + ", ".join(f"{k} {v:.0f} s" for k, v in timings.items()))
    print(f"  {routing_line}")
    stages = dict(re.findall(r"([a-z ]+) ([0-9.]+) s", routing_line.split(";", 2)[2]))
    stages = {k.strip(): float(v) for k, v in stages.items()}
    tiles = int(re.search(r"routing: (\d+) tiles", routing_line).group(1))
    rounds = int(re.search(r"(\d+) of flow", routing_line).group(1))
    client_s = stages.get("spill graph", 0.0) + stages.get("edge exchange", 0.0)
    worker_s = sum(stages.values()) - client_s  # on 2 workers: tile-seconds / 2
    big_tiles = 10**10 / 4000**2
    side = (big_tiles / tiles) ** 0.5  # tiles along a side grow with the square root
    projected = worker_s * 2 * big_tiles / tiles / 32 + client_s * big_tiles / tiles
    print(
        f"  projection for 10^10 cells on 32 such workers: {big_tiles:.0f} tiles, about "
        f"{projected / 60:.0f} min of routing (measured {worker_s * 2 / tiles:.1f} s of work a "
        f"tile x {big_tiles:.0f} / 32, client {client_s:.1f} s x {big_tiles / tiles:.0f}), "
        f"flow rounds about {rounds * side:.0f} (here {rounds}; each round's tiles run in "
        "parallel, so rounds add latency, not work)"
    )


if __name__ == "__main__":
    main()
