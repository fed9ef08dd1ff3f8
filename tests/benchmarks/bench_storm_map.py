"""Storms at map speed: a steady scenario, a constant storm, a 24-step hyetograph and an
alternating-block design storm on the same invented grid (default 3,163 x 3,163, 10^7
cells, four soil units), each run apart with the terrain cached, side by side in one run.

    python tests/benchmarks/bench_storm_map.py [--size 3163] [--workdir DIR]

Prints each scenario's time (the run's own "scenario" step: tiles, rasters, maps, zones)
and the ratios the rain-path issue asks about: the design storm against the steady
scenario (target: at most 20x) and the 24-step hyetograph against the constant storm
(target: at most 3x); and storm cells per second. Not a test: no assertion.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

SCENARIOS = """[region]
name = "storm benchmark region (invented)"
dem = "dem.tif"
soil_units = "soils.gpkg"

[outputs]
quicklook_map = true
zones = true
report = false

[rainfall_frequency]
idf_table = "design_rainfall.csv"

[[scenario]]
name = "steady"
recharge_mm_day = 20.0

[[scenario]]
name = "constant_storm"
[scenario.storm]
rain_mm_h = 20.0
duration_h = 24.0
later_h = 36.0
initial_water_table_depth_m = 1.0

[[scenario]]
name = "hyetograph_24"
[scenario.storm]
hyetograph = "hyetograph_24.csv"
later_h = 36.0
initial_water_table_depth_m = 1.0

[[scenario]]
name = "design_storm"
[scenario.storm]
design_return_period_yr = 100.0
design_duration_h = 24.0
block_h = 1.0
pattern = "end"
later_h = 36.0
initial_water_table_depth_m = 1.0
"""

# invented design rainfall: i = 30 T^0.2 / (D + 0.3)^0.75 mm/h (D h, T years)
DURATIONS_H = (1, 2, 3, 6, 12, 24, 48)
PERIODS_YR = (2, 10, 100)


def write_inputs(folder: Path) -> None:
    rows = ["duration_h,return_period_yr,intensity_mm_h"]
    rows += [
        f"{d},{t},{30.0 * t**0.2 / (d + 0.3) ** 0.75:.3f}" for d in DURATIONS_H for t in PERIODS_YR
    ]
    (folder / "design_rainfall.csv").write_text("\n".join(rows) + "\n")
    rain = [2, 4, 6, 8, 10, 14, 18, 22, 26, 30, 34, 38, 36, 30, 26, 22, 18, 14, 10, 8, 6, 4, 3, 2]
    lines = ["end_h,rain_mm"] + [f"{k + 1},{r}" for k, r in enumerate(rain)]
    (folder / "hyetograph_24.csv").write_text("\n".join(lines) + "\n")
    (folder / "scenarios.toml").write_text(SCENARIOS)


def scenario_seconds(folder: Path, name: str, toml: str = "scenarios.toml") -> float:
    """The scenario step's time (s) of a run of one scenario of ``toml`` into the shared
    output (also used by bench_cell_fields.py)."""
    out = folder / "out"
    subprocess.run(
        [sys.executable, "-m", "slopescreen.cli.main", "run", str(folder / toml),
         "--out", str(out), "--only", name, "--quiet"],
        check=True,
        stdout=subprocess.DEVNULL,
    )  # fmt: skip
    return json.loads((out / "manifest.json").read_text())["timings_s"][f"scenario {name}"]


_run = scenario_seconds


def bench_region(
    description: str, prefix: str, write: Callable[[Path, int], None]
) -> tuple[Path, int]:
    """The benchmarks' invented region (``--size`` cells a side, ``--workdir`` or a new
    folder), its inputs written by ``write(folder, size)``: (folder, cells). Also used by
    bench_cell_fields.py and bench_runout.py."""
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--size", type=int, default=3163)
    parser.add_argument("--workdir", type=Path, default=None)
    args = parser.parse_args()
    from bench_end_to_end import make_region  # beside this script

    folder = args.workdir or Path(tempfile.mkdtemp(prefix=f"slopescreen-{prefix}-bench-"))
    started = time.perf_counter()
    make_region(folder, args.size)
    write(folder, args.size)
    cells = args.size**2
    print(f"region {args.size} x {args.size} ({cells / 1e6:.1f} M cells) made in "
          f"{time.perf_counter() - started:.0f} s under {folder}")  # fmt: skip
    return folder, cells


def main() -> None:
    folder, cells = bench_region(
        __doc__.splitlines()[0], "storm", lambda folder, _: write_inputs(folder)
    )
    _run(folder, "steady")  # terrain and the compiled kernels warmed up, not timed
    _run(folder, "constant_storm")
    took = {name: _run(folder, name) for name in
            ("steady", "constant_storm", "hyetograph_24", "design_storm")}  # fmt: skip
    for name, seconds in took.items():
        print(f"{name:16s} {seconds:8.1f} s  {cells / seconds:12,.0f} cells/s")
    print(f"design storm / steady scenario:       {took['design_storm'] / took['steady']:6.1f}x"
          "  (target <= 20x)")  # fmt: skip
    print(f"24-step hyetograph / constant storm:  "
          f"{took['hyetograph_24'] / took['constant_storm']:6.2f}x  (target <= 3x)")  # fmt: skip


if __name__ == "__main__":
    main()
