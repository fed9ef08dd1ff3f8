"""Benchmark 7: critical rain intensities for 8 durations against one steady scenario, per
cell, side by side (the compiled kernels on the same cells, best of the repeats).

The steady scenario's per-cell work is the steady saturation and the FS kernel
(`steady_saturation_by_unit`, `fs_by_unit`); the thresholds are
`critical_intensity_by_unit` for durations 1, 3, 6, 12, 24, 48, 72 and 96 h. Target (issue
12): within 5x. The whole-map figure is the per-cell time times 10^8.

    python tests/benchmarks/bench_rain_thresholds.py [--cells 1000000] [--repeat 2]
"""

from __future__ import annotations

import argparse
import time


def main() -> None:
    import numpy as np

    from slopescreen.maps.kernels import (
        critical_intensity_by_unit,
        fs_by_unit,
        steady_saturation_by_unit,
    )
    from slopescreen.rain_thresholds import (
        _LOG_STORM,
        _PEAK_OFFSET,
        DEPTH_SCAN,
        REFINE_STEPS,
        SURFACE_FRACTION,
    )

    parser = argparse.ArgumentParser()
    parser.add_argument("--cells", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    n = args.cells
    rng = np.random.default_rng(0)
    tan = np.tan(np.radians(rng.uniform(5.0, 45.0, n))).astype(np.float32)
    sca = (10.0 ** rng.uniform(0.5, 3.5, n)).astype(np.float32)
    codes = rng.integers(1, 4, n).astype(np.uint16)

    def unit(*values: float) -> np.ndarray:
        return np.array([np.nan, *values])

    depth, c = unit(1.2, 2.0, 0.8), unit(3.0, 6.0, 1.0)
    tan_phi = np.tan(np.radians(unit(33.0, 36.0, 31.0)))
    gamma, gamma_sat = unit(18.5, 19.5, 18.0), unit(20.0, 21.0, 19.5)
    k, d0, t = unit(1e-5, 3e-6, 5e-5), unit(5e-5, 1e-5, 1e-4), unit(np.nan, np.nan, np.nan)
    durations = (1.0, 3.0, 6.0, 12.0, 24.0, 48.0, 72.0, 96.0)
    m, fs, out = np.empty(n), np.empty(n), np.empty(n)
    best = {"steady scenario": float("inf"), "8 durations": float("inf")}
    for _ in range(args.repeat):
        started = time.perf_counter()
        steady_saturation_by_unit(np.array([10.0]), tan, sca, codes, depth, k, t, m)
        fs_by_unit(tan, codes, m, depth, c, tan_phi, gamma, gamma_sat, 0.0, 9.81, fs)
        best["steady scenario"] = min(best["steady scenario"], time.perf_counter() - started)
        started = time.perf_counter()
        for d in durations:
            critical_intensity_by_unit(
                d * 3600.0, (d + 24.0) * 3600.0, tan, sca, codes, depth, c, tan_phi, gamma,
                gamma_sat, k, d0, t, 1.0, 0.0, 0.0, 9.81, DEPTH_SCAN, REFINE_STEPS,
                SURFACE_FRACTION, _LOG_STORM, _PEAK_OFFSET, -1.0, -2.0, out,
            )  # fmt: skip
        best["8 durations"] = min(best["8 durations"], time.perf_counter() - started)
    for name, seconds in best.items():
        print(f"{name:18} {seconds:8.3f} s  ({seconds / n * 1e9:8.1f} ns a cell)")
    ratio = best["8 durations"] / best["steady scenario"]
    print(f"8 durations / steady: {ratio:.0f}x (target <= 5x)")
    print(f"8 durations on 10^8 cells: about {best['8 durations'] / n * 1e8 / 60:.0f} min")


if __name__ == "__main__":
    main()
