"""Benchmark 3: a synthetic DEM end to end with three scenarios, then one more scenario with
the terrain cached.

Builds an invented N x N DEM at 5 m (default 10,000 x 10,000 = 10^8 cells) with four soil
units in a scratch folder, runs ``slopescreen run`` on three scenarios in a child process
and reports wall time and the child's peak memory (targets: under 10 minutes, under 8 GB);
then runs one more scenario into the same folder, terrain cached (target: under 30 s).

    python tests/benchmarks/bench_end_to_end.py [--size 10000] [--workdir DIR] [--workers N]
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

SCENARIOS = """[region]
name = "benchmark region (invented)"
dem = "dem.tif"
soil_units = "soils.gpkg"

[outputs]
quicklook_map = true
zones = true
report = true

[[scenario]]
name = "dry"
saturation = 0.2

[[scenario]]
name = "wet"
recharge_mm_day = 10.0

[[scenario]]
name = "saturated"
saturation = 1.0

[[scenario]]
name = "storm_season"
recharge_mm_day = 25.0

[[scenario]]
name = "quake"
saturation = 0.5
seismic_coefficient = 0.1

[[scenario]]
name = "design_storm"
[scenario.storm]
rain_mm_h = 20.0
duration_h = 12.0
later_h = 24.0
initial_water_table_depth_m = 1.0
"""


def make_region(folder: Path, n: int, cell: float = 5.0) -> None:
    import geopandas as gpd
    import rasterio
    from _terrain import convergent_rows
    from rasterio.transform import from_origin
    from shapely.geometry import box

    folder.mkdir(parents=True, exist_ok=True)
    x0, y0 = 500_000.0, 5_000_000.0
    with rasterio.open(
        folder / "dem.tif",
        "w",
        driver="GTiff",
        width=n,
        height=n,
        count=1,
        dtype="float32",
        crs="EPSG:32633",
        nodata=-9999.0,
        tiled=True,
        compress="deflate",
        BIGTIFF="YES",
        transform=from_origin(x0, y0 + n * cell, cell, cell),
    ) as dst:
        for top in range(0, n, 2048):
            rows = min(2048, n - top)
            dst.write(
                convergent_rows(n, top, rows, cell),
                1,
                window=rasterio.windows.Window(0, top, n, rows),
            )
    width = n * cell
    rows = [
        dict(
            unit=f"U{i}",
            cohesion_kpa=2.0 + 2 * i,
            friction_deg=30.0 + i,
            unit_weight_kn_m3=18.5,
            saturated_unit_weight_kn_m3=20.0,
            depth_m=1.0 + 0.3 * i,
            hydraulic_conductivity_m_s=1e-5 * (i + 1),
            diffusivity_m2_s=1e-4,
            geometry=box(x0 + i * width / 4, y0, x0 + (i + 1) * width / 4, y0 + width),
        )
        for i in range(4)
    ]
    gpd.GeoDataFrame(rows, crs="EPSG:32633").to_file(folder / "soils.gpkg", driver="GPKG")
    (folder / "scenarios.toml").write_text(SCENARIOS)


def _run(args: list[str]) -> float:
    started = time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "slopescreen.cli.main", "run", *args, "--quiet"],
        check=True,
        stdout=subprocess.DEVNULL,
    )
    return time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=10_000)
    parser.add_argument("--workdir", type=Path, default=None)
    parser.add_argument("--workers", type=int, default=0)
    parser.add_argument(
        "--storm-size",
        type=int,
        default=2000,
        help="side of the region for the design-storm step, run apart (0: skip)",
    )
    args = parser.parse_args()
    folder = args.workdir or Path(tempfile.mkdtemp(prefix="slopescreen-bench-"))
    started = time.perf_counter()
    make_region(folder, args.size)
    print(
        f"region {args.size} x {args.size} ({args.size**2 / 1e6:.0f} M cells) made in "
        f"{time.perf_counter() - started:.0f} s under {folder}"
    )
    out = folder / "out"
    extra = ["--workers", str(args.workers)] if args.workers else []
    first = _run(
        [
            str(folder / "scenarios.toml"),
            "--out",
            str(out),
            "--only",
            "dry",
            "wet",
            "saturated",
            *extra,
        ]
    )
    peak_gb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024**2
    timings = json.loads((out / "manifest.json").read_text())["timings_s"]
    second = _run(
        [str(folder / "scenarios.toml"), "--out", str(out), "--only", "storm_season", *extra]
    )
    timings2 = json.loads((out / "manifest.json").read_text())["timings_s"]
    third = _run([str(folder / "scenarios.toml"), "--out", str(out), "--only", "quake", *extra])
    timings3 = json.loads((out / "manifest.json").read_text())["timings_s"]
    print(
        f"three scenarios end to end: {first:.0f} s (target < 600 s), peak memory "
        f"{peak_gb:.2f} GB (target < 8 GB)"
    )
    print("  steps: " + ", ".join(f"{k} {v:.0f} s" for k, v in timings.items()))
    print(
        f"one more rainfall scenario, terrain and soils cached: {second:.0f} s for the whole "
        f"command, {timings2['scenario storm_season']:.0f} s for the scenario (target < 30 s)"
    )
    print("  steps: " + ", ".join(f"{k} {v:.0f} s" for k, v in timings2.items()))
    print(
        f"one more scenario with a new seismic load (critical recharge recomputed): {third:.0f}"
        f" s for the whole command, {timings3['scenario quake']:.0f} s for the scenario"
    )
    if args.storm_size:  # the bracketed minimum over depth and time, reported apart
        storm_folder = folder / "storm"
        make_region(storm_folder, args.storm_size)
        _run([str(storm_folder / "scenarios.toml"), "--out", str(storm_folder / "out"),
              "--only", "design_storm", *extra])  # fmt: skip
        seconds = json.loads((storm_folder / "out" / "manifest.json").read_text())["timings_s"][
            "scenario design_storm"
        ]
        cells = args.storm_size**2
        print(
            f"design storm (exact minimum over depth and time) on {cells / 1e6:.0f} M cells: "
            f"{seconds:.0f} s for the scenario, {cells / seconds / 1e3:.0f} k cells/s; at that "
            f"rate {args.size**2 / (cells / seconds) / 60:.0f} min for the main region"
        )


if __name__ == "__main__":
    main()
