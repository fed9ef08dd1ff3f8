"""Benchmark 7: critical rain intensities for 8 durations against one steady scenario, side
by side in one run.

The thresholds (durations 1, 3, 6, 12, 24, 48, 72 and 96 h) are computed two ways on CELLS
random cells of three soil units: `critical_intensity_by_unit` on every cell, and the
large-grid path of :mod:`slopescreen.maps.region.intensity_tables` (a table per unit and
duration, built once per run, interpolated per cell, the kernel where a table cannot
answer). The steady scenario is measured two ways too: its per-cell kernels alone
(`steady_saturation_by_unit`, `fs_by_unit`) on the same cells, and a whole steady
scenario (``--only wet``, terrain cached: reading, kernels, the rasters written, zones,
tables, maps) on invented (SIZE/2)^2 and SIZE^2 regions, per cell at the margin.
Target (issue 12): 8 durations within 5x of one steady scenario on 10^8 cells; the figure
for 10^8 is the tables' build time plus the per-cell time times 10^8, against the whole
scenario's per-cell time times 10^8.

    python tests/benchmarks/bench_rain_thresholds.py [--cells 1000000] [--size 3000]
"""

from __future__ import annotations

import argparse
import time


def main() -> None:
    from types import SimpleNamespace

    import numpy as np

    from slopescreen.maps.region.config import RainfallFrequency, RainfallSpec
    from slopescreen.maps.region.intensity_tables import (
        build_table,
        critical_intensity,
        stack_tables,
        table_coordinates,
    )
    from slopescreen.maps.region.kernels import (
        critical_intensity_by_unit,
        fs_by_unit,
        steady_saturation_by_unit,
    )
    from slopescreen.rain_thresholds import (
        LOG_STORM,
        MIN_SLIP_DEPTH_M,
        PEAK_OFFSET,
        kernel_search,
    )

    parser = argparse.ArgumentParser()
    parser.add_argument("--cells", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--size", type=int, default=3000, help="0: skip the whole scenario")
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
                np.array([d * 3600.0]), np.array([(d + 24.0) * 3600.0]), tan, sca, codes,
                depth, c, tan_phi, gamma,
                gamma_sat, k, d0, t, 1.0, 0.0, 0.0, 9.81, kernel_search(),
                MIN_SLIP_DEPTH_M, LOG_STORM, PEAK_OFFSET, -1.0, -2.0, out,
            )  # fmt: skip
        best["8 durations"] = min(best["8 durations"], time.perf_counter() - started)
    job = SimpleNamespace(
        scenario=SimpleNamespace(
            rainfall=RainfallSpec(initial_water_table_depth_m=1.0), seismic_coefficient=0.0
        ),
        rainfall=RainfallFrequency(
            idf_table=None,
            durations_h=durations,
            return_periods_yr=(2.0, 10.0),
            intensity_mm_h=(),
            after_h=24.0,
        ),
        tables={
            "depth_m": depth,
            "cohesion_kpa": c,
            "root_cohesion_kpa": unit(0.0, 0.0, 0.0),
            "friction_deg": unit(33.0, 36.0, 31.0),
            "unit_weight_kn_m3": gamma,
            "saturated_unit_weight_kn_m3": gamma_sat,
            "hydraulic_conductivity_m_s": k,
            "diffusivity_m2_s": d0,
            "transmissivity_m2_day": t,
        },
    )
    started = time.perf_counter()
    tables = stack_tables(
        {(code, d): build_table(job, code, d) for code in (1, 2, 3) for d in durations}
    )
    build = time.perf_counter() - started
    best["8 durations, tables"] = float("inf")
    for _ in range(args.repeat):
        started = time.perf_counter()
        where = table_coordinates(tan, sca)  # once a tile, for every duration
        for d in durations:
            critical_intensity(job, d, tan, sca, codes, tables, where)
        seconds = time.perf_counter() - started
        best["8 durations, tables"] = min(best["8 durations, tables"], seconds)
    for name, seconds in best.items():
        print(f"{name:20} {seconds:8.3f} s  ({seconds / n * 1e9:8.1f} ns a cell)")
    print(f"building 24 tables   {build:8.3f} s (once per run)")
    whole = whole_steady_scenario(args.size) if args.size else float("nan")
    print(f"whole steady scenario, marginal: {whole * 1e9:8.1f} ns a cell")
    steady = best["steady scenario"] / n * 1e8
    kernel = best["8 durations"] / n * 1e8
    tabled = build + best["8 durations, tables"] / n * 1e8
    print(
        f"on 10^8 cells: 8 durations by kernel {kernel:.0f} s, with tables {tabled:.0f} s; "
        f"steady kernels alone {steady:.1f} s, whole steady scenario {whole * 1e8:.0f} s"
    )
    print(
        f"8 durations with tables / whole steady scenario: {tabled / (whole * 1e8):.1f}x "
        f"(target <= 5x); / steady kernels alone: {tabled / steady:.0f}x"
    )


def whole_steady_scenario(size: int) -> float:
    """Seconds a cell of a whole steady scenario (terrain cached): the marginal cost between
    a (SIZE/2)^2 and a SIZE^2 region, so the scenario's fixed costs (the report's maps,
    start-up) do not count as per-cell work."""
    import json
    import subprocess
    import sys
    import tempfile
    from pathlib import Path

    from bench_end_to_end import make_region

    seconds = {}
    for side in (size // 2, size):
        folder = Path(tempfile.mkdtemp(prefix="slopescreen-bench7-"))
        make_region(folder, side)
        command = [sys.executable, "-m", "slopescreen.cli.main", "run"]
        command += [str(folder / "scenarios.toml"), "--out", str(folder / "out")]
        command += ["--only", "wet", "--quiet"]
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL)  # terrain computed
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL)  # terrain cached
        timings = json.loads((folder / "out" / "manifest.json").read_text())["timings_s"]
        seconds[side] = timings["scenario wet"]
        print(f"whole steady scenario, {side}^2 cells, terrain cached: {seconds[side]:.1f} s")
    small, big = size // 2, size
    return (seconds[big] - seconds[small]) / (big**2 - small**2)


if __name__ == "__main__":
    main()
