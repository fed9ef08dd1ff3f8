"""Benchmark 2: terrain routing against general-purpose routing libraries, side by side.

slopescreen: level depression fill (by basins of steepest descent), flat steps, D-infinity
directions, contributing area.
References on the same DEM in the same run: pyflwdir (fill + D8 + upstream area) and, where
it is installed, topotoolbox (fill + D8 + flow accumulation; GPL, used only here as a
reference, never a dependency: `python -m pip install topotoolbox`).

Two DEMs of the benchmark's own making: the convergent one (SIZE x SIZE) and a noisy
ridge-and-valley one with many closed depressions (NOISY x NOISY). Contributing area is
compared on the convergent terrain: cells draining more than 1% of the grid, where D8 and
D-infinity should agree to within a stated tolerance (median ratio within 10%).

    python tests/benchmarks/bench_routing.py [--size 4000] [--noisy 3000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _time(fn, repeat: int = 2):
    best, result = float("inf"), None
    for _ in range(repeat):
        started = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - started)
    return best, result


def compare(z: np.ndarray, cell: float, label: str) -> tuple[np.ndarray, np.ndarray | None]:
    """Time slopescreen and the references on one DEM, print the table; return the
    contributing areas of slopescreen and pyflwdir."""
    from _terrain import peak_rss_mb

    from slopescreen.maps.terrain.routing import specific_catchment_area

    n = z.shape[0]
    specific_catchment_area(z[:64, :64].astype(np.float64), cell, cell)  # compile once
    before = peak_rss_mb()
    ours_s, (area, _) = _time(lambda: specific_catchment_area(z.astype(np.float64), cell, cell))
    ours_mb = peak_rss_mb() - before
    rows = [("slopescreen D-infinity (fill + routing + area)", ours_s)]

    import pyflwdir
    from rasterio.transform import from_origin

    def run_pyflwdir():
        flw = pyflwdir.from_dem(z, transform=from_origin(0, n * cell, cell, cell))
        return flw.upstream_area(unit="m2")

    pyflwdir.from_dem(z[:64, :64])
    ref_s, ref_area = _time(run_pyflwdir)
    rows.append(("pyflwdir D8 (fill + routing + area)", ref_s))
    try:
        import topotoolbox as tt

        def run_topotoolbox():
            grid = tt.GridObject()
            grid.z = z.copy()
            grid.cellsize = cell
            return tt.FlowObject(grid).flow_accumulation() * cell * cell

        tt_s, _ = _time(run_topotoolbox)
        rows.append(("topotoolbox D8 (fill + routing + area)", tt_s))
    except ImportError:
        rows.append(
            ("topotoolbox D8: not installed (python -m pip install topotoolbox)", float("nan"))
        )
    fastest_ref = np.nanmin([t for _, t in rows[1:]])
    print(f"routing on the {label} {n} x {n} DEM ({n * n / 1e6:.1f} M cells), best of 2, s:")
    for name, seconds in rows:
        print(f"  {name:70s} {seconds:8.2f}")
    print(f"  ratio slopescreen / fastest reference: {ours_s / fastest_ref:.2f} (target: <= 1.00)")
    if ours_mb > 0:  # the process's peak: only the first (larger) DEM can raise it
        print(
            f"  slopescreen routing memory: about {ours_mb * 1e6 / (n * n):.0f} bytes per cell "
            f"above the DEM ({ours_mb:.0f} MB)"
        )
    return area, ref_area


def main() -> None:
    from _terrain import convergent_dem, noisy_dem

    parser = argparse.ArgumentParser()
    parser.add_argument("--size", type=int, default=4000)
    parser.add_argument("--noisy", type=int, default=3000, help="0: skip the noisy DEM")
    args = parser.parse_args()
    n, cell = args.size, 5.0
    area, ref_area = compare(convergent_dem(n, cell), cell, "convergent")
    big = ref_area > 0.01 * n * n * cell * cell
    ratio = area[big] / ref_area[big]
    print(
        f"  contributing area, {big.sum()} cells draining > 1% of the grid: median ratio "
        f"D-inf/D8 {np.median(ratio):.3f}, 10-90% {np.percentile(ratio, 10):.3f}-"
        f"{np.percentile(ratio, 90):.3f} (stated tolerance: median within 0.90-1.10)"
    )
    if args.noisy:
        compare(noisy_dem(args.noisy, cell), cell, "noisy ridge-and-valley")


if __name__ == "__main__":
    main()
