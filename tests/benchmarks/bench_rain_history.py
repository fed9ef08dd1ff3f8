"""Rain in steps against the constant storm and a steady scenario's per-cell work, side by
side in one run on the same cells: the numpy core (one process) and the map engine's
compiled storm search (numba's threads):

    python tests/benchmarks/bench_rain_history.py [--cells 20000] [--repeat 2]

Prints cells/s and the ratios the rain-path issue asks about, per cell (the map engine
adds tile I/O to both; bench_storm_map.py measures whole scenarios): a storm against the
steady FS, and hyetographs of 4, 12 and 24 steps against the constant storm of the same
duration (target for 24 steps: at most 3x). Not a test: no assertion.
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _best(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", type=int, default=20_000)
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()

    from slopescreen.maps.region.storm_kernels import compiled_summary
    from slopescreen.rain_history import history_summary
    from slopescreen.scenario import scenario_fs

    rng = np.random.default_rng(7)
    n = args.cells
    soil = dict(
        cohesion_kpa=rng.uniform(0.0, 6.0, n),
        friction_deg=rng.uniform(28.0, 38.0, n),
        unit_weight_kn_m3=18.0,
    )
    slope = rng.uniform(10.0, 45.0, n)
    depth = rng.uniform(0.8, 2.0, n)
    hydro = dict(hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=5e-5)
    steady = _best(
        lambda: scenario_fs(slope, rng.uniform(10, 500, n), depth_m=depth, saturation=0.5, **soil),
        args.repeat,
    )
    column = dict(slope_deg=slope, water_table_depth_m=1.0, **soil, **hydro)
    print(f"cells: {n:,}")
    print(f"steady FS (numpy core):       {n / steady:12,.0f} cells/s")
    hyetographs = {}
    for steps in (4, 12, 24):
        ends = np.linspace(12.0 / steps, 12.0, steps)
        hyetographs[steps] = (ends, rng.uniform(0.0, 40.0, steps))
    for label, search in (("numpy core", history_summary), ("compiled", compiled_summary)):
        search(soil_depth_m=depth[:50], later_h=24.0, ends_h=[12.0], rain_mm_h=[20.0],
               **{k: v[:50] if np.ndim(v) else v for k, v in column.items()})  # fmt: skip
        one = _best(
            lambda search=search: search(
                soil_depth_m=depth, later_h=24.0, ends_h=[12.0], rain_mm_h=[20.0], **column
            ),
            args.repeat,
        )
        print(f"{label}: constant 12 h storm {n / one:12,.0f} cells/s  "
              f"({one / steady:,.0f}x the steady FS)")  # fmt: skip
        for steps, (ends, rain) in hyetographs.items():
            took = _best(
                lambda ends=ends, rain=rain, search=search: search(
                    soil_depth_m=depth, later_h=24.0, ends_h=ends, rain_mm_h=rain, **column
                ),
                args.repeat,
            )
            print(f"{label}: hyetograph of {steps:2d} steps {n / took:12,.0f} cells/s  "
                  f"({took / one:.2f}x the constant storm)")  # fmt: skip
    # rain that differs cell by cell (a rain grid resampled bilinearly): searched directly
    few = max(n // 10, 1)
    part = {k: v[:few] if np.ndim(v) else v for k, v in column.items()}
    for steps in (4, 24):
        ends, rain = hyetographs[steps]
        per_cell = rain[:, None] * rng.uniform(0.5, 1.5, (1, few))
        took = _best(
            lambda ends=ends, per_cell=per_cell: compiled_summary(
                soil_depth_m=depth[:few], later_h=24.0, ends_h=ends, rain_mm_h=per_cell, **part
            ),
            args.repeat,
        )
        print(f"compiled, rain cell by cell: {steps:2d} steps {few / took:12,.0f} cells/s")
    # a rain grid by nearest grid cell: each of 50 grid cells' histories shared by 400 cells
    # (tables built once per history, in the time measured: one pass, nothing cached)
    from slopescreen.rain_history import peak_table, time_table

    cells = 50 * 400
    ends, rain = hyetographs[24]
    pixels = rain[:, None] * rng.uniform(0.5, 1.5, (1, 50))
    for cached in (peak_table, time_table):
        cached.cache_clear()
    started = time.perf_counter()
    compiled_summary(
        soil_depth_m=depth[:cells], later_h=24.0, ends_h=ends,
        rain_mm_h=np.repeat(pixels, 400, axis=1), **column,
    )  # fmt: skip
    took = time.perf_counter() - started
    print(f"compiled, 50 histories x 400 cells, 24 steps (tables built): {cells / took:,.0f} "
          "cells/s")  # fmt: skip


if __name__ == "__main__":
    main()
