"""Run-out at map speed: the reach step (sources, patches, the reach sweep, rasters, zones,
map) of a steady scenario on an invented grid (default 3,163 x 3,163, 10^7 cells), beside
the steady scenario itself, terrain cached, side by side in one run (each twice, the
faster kept).

    python tests/benchmarks/bench_runout.py [--size 3163] [--workdir DIR]

Prints the steady scenario's time (the run's own "scenario" step without run-out), the
run-out step's own time (the manifest's runout seconds; the grid is cut into run-out tiles
of 3,000 cells a side), their ratio (the issue's target: at most 3x) and the reach's extent.
Then the reach sweep alone on the same DEM, in one tile against tiles of 1,000 cells (a
thread per core), side by side: the cost of carrying flow between tiles. Not a test: no
assertion.
"""

from __future__ import annotations

import json
from pathlib import Path

SCENARIOS = """[region]
name = "run-out benchmark region (invented)"
dem = "dem.tif"
soil_units = "soils.gpkg"

[outputs]
quicklook_map = true
zones = true
report = false

[[scenario]]
name = "steady"
recharge_mm_day = 20.0

[[scenario]]
name = "with_runout"
recharge_mm_day = 20.0

[runout]
scenarios = ["with_runout"]
fs_below = 1.3
travel_angle_deg = 8.0  # a mobile flow (below the valley sides), so that the sweep travels
"""


def main() -> None:
    from bench_storm_map import bench_region, scenario_seconds  # beside this script

    def write(folder: Path, _: int) -> None:
        (folder / "scenarios.toml").write_text(SCENARIOS)

    folder, _ = bench_region(__doc__.splitlines()[0], "runout", write)
    scenario_seconds(folder, "steady")  # terrain and the compiled kernels warmed up
    scenario_seconds(folder, "with_runout")
    steady, runout = float("inf"), float("inf")
    for _ in range(2):
        steady = min(steady, scenario_seconds(folder, "steady"))
        scenario_seconds(folder, "with_runout")
        manifest = json.loads((folder / "out" / "manifest.json").read_text())
        entry = manifest["runout"]["with_runout"]
        runout = min(runout, float(entry["seconds"]))
    print(f"steady scenario      {steady:8.1f} s")
    print(f"run-out step         {runout:8.1f} s  (sources {entry['source_ha']:,.1f} ha, "
          f"reach {entry['reach_ha']:,.1f} ha, {entry['source_patches']:,} patches)")  # fmt: skip
    print(f"run-out / steady:    {runout / steady:6.2f}x  (target <= 3x)")
    one, tiled, rounds = _tiling(folder)
    print(f"sweep in one tile    {one:8.1f} s")
    print(f"sweep in tiles       {tiled:8.1f} s  ({rounds} rounds, tiles of 1,000 cells)")
    print(f"tiles / one tile:    {tiled / one:6.2f}x")


def _tiling(folder: Path) -> tuple[float, float, int]:
    """The reach sweep from the run's sources, in one tile and in tiles (the faster of two)."""
    import math
    import tempfile
    import time

    import numpy as np
    import rasterio

    from slopescreen.maps.region.runners import threaded_runner
    from slopescreen.maps.terrain.tiled_reach import ArrayStates, SweepRules, reach_array

    with rasterio.open(folder / "dem.tif") as src:
        z = src.read(1).astype(np.float64)
        cell = abs(src.transform.a)
    with rasterio.open(folder / "out" / "with_runout" / "fs.tif") as src:
        fs = src.read(1)
    source = (fs > -9000) & (fs < 1.3)
    states = ArrayStates(
        np.where(source, 1.0 / max(source.sum(), 1), 0.0),
        np.where(source, 0.0, -np.inf),
        np.where(source, math.tan(math.radians(8.0)), np.inf),
        np.where(source, fs, np.inf).astype(np.float64),
    )
    rules = SweepRules(4.0, -1.0, math.inf, 1e-4 / max(source.sum(), 1))  # the defaults
    best = {z.shape[0]: math.inf, 1000: math.inf}
    rounds = 0
    for _ in range(2):
        for size in best:
            with tempfile.TemporaryDirectory(dir=folder) as work:
                started = time.perf_counter()
                _, n = reach_array(z, cell, cell, states, rules, size, Path(work), threaded_runner)
                best[size] = min(best[size], time.perf_counter() - started)
                rounds = n if size == 1000 else rounds
    return best[z.shape[0]], best[1000], rounds


if __name__ == "__main__":
    main()
