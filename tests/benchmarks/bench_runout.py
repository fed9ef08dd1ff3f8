"""Run-out at map speed: the reach step (sources, patches, the reach sweep, rasters, zones,
map) of a steady scenario on an invented grid (default 3,163 x 3,163, 10^7 cells), beside
the steady scenario itself, terrain cached, side by side in one run (each twice, the
faster kept).

    python tests/benchmarks/bench_runout.py [--size 3163] [--workdir DIR]

Prints the steady scenario's time (the run's own "scenario" step without run-out), the
run-out step's own time (the manifest's runout seconds), their ratio (the issue's target:
at most 3x) and the reach's extent. Not a test: no assertion.
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


if __name__ == "__main__":
    main()
