"""Benchmark 8: the frequency step alone (critical intensities already known), side by side
with reading the same number of float32 values from memory.

For CELLS cells and the 7 x 8 demo-like IDF table: the return period per duration, the
triggering period, the annual probability and the hazard class, by the map engine's
compiled one-pass kernel (``frequency_by_cell``) and by the numpy core
(:mod:`slopescreen.rainfall_frequency`). Target (issue 12): under 30 s for 10^8 cells; the
figure printed for 10^8 is the measured time scaled by 10^8 / CELLS (the step is per cell,
tile by tile, so it scales linearly).

    python tests/benchmarks/bench_rainfall_frequency.py [--cells 10000000] [--repeat 2]
"""

from __future__ import annotations

import argparse
import time


def main() -> None:
    import numpy as np

    from slopescreen.maps.region.kernels import frequency_by_cell
    from slopescreen.rainfall_frequency import (
        annual_probability,
        hazard_class,
        idf_formula,
        return_period_yr,
        triggering_return_period_yr,
    )

    parser = argparse.ArgumentParser()
    parser.add_argument("--cells", type=int, default=10_000_000)
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    durations = (1.0, 3.0, 6.0, 12.0, 24.0, 48.0, 72.0)
    periods = (2.0, 5.0, 10.0, 25.0, 50.0, 100.0, 200.0, 500.0)
    table = idf_formula(durations, periods, 30.0, 0.2, 0.3, 0.75)
    rng = np.random.default_rng(0)
    critical = [
        np.where(rng.random(args.cells) < 0.3, -2.0, rng.lognormal(1.5, 1.0, args.cells))
        .astype(np.float32)
        .astype(np.float64)
        for _ in durations
    ]
    best = {
        "copy the intensities": float("inf"),
        "numpy core": float("inf"),
        "compiled kernel": float("inf"),
    }
    found = np.array(critical)
    period, p, cls = np.empty(args.cells), np.empty(args.cells), np.empty(args.cells, np.uint8)
    codes = np.array([-1.0, -2.0, -3.0, -4.0])
    shortest = float(annual_probability([-1.0], periods[0])[0])
    log_p, log_d = np.log(periods), np.log(table * 1.2)
    breaks = np.array([0.1, 0.01, 0.001])
    frequency_by_cell(found[:, :10], log_p, log_d, shortest, breaks, codes, period, p, cls)
    for _ in range(args.repeat):
        started = time.perf_counter()
        copies = [c.copy() for c in critical]
        best["copy the intensities"] = min(
            best["copy the intensities"], time.perf_counter() - started
        )
        del copies
        started = time.perf_counter()
        per_duration = [return_period_yr(c, periods, table[i], 1.2) for i, c in enumerate(critical)]
        period = triggering_return_period_yr(np.array(per_duration))
        hazard_class(annual_probability(period, periods[0]))
        best["numpy core"] = min(best["numpy core"], time.perf_counter() - started)
        started = time.perf_counter()
        frequency_by_cell(found, log_p, log_d, shortest, breaks, codes, period, p, cls)
        best["compiled kernel"] = min(best["compiled kernel"], time.perf_counter() - started)
    for name, seconds in best.items():
        print(f"{name:22} {seconds:8.3f} s")
    for name in ("numpy core", "compiled kernel"):
        scaled = best[name] * 1e8 / args.cells
        print(f"frequency step ({name}) on 10^8 cells: about {scaled:.0f} s (target < 30 s)")


if __name__ == "__main__":
    main()
