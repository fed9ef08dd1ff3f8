"""Benchmark 4: Monte Carlo probability of failure, 1,000 samples on 10^6 cells.

Runs slopescreen.reliability.reliability_monte_carlo with the map engine's compiled FS
kernel (the same path the engine takes for saturation scenarios) over 10^6 cells with
uncertain cohesion, friction and depth (correlated c'-phi'), and prints the time (target:
under 30 s) and the peak memory, which the chunking keeps bounded.

    python tests/benchmarks/bench_monte_carlo.py [--cells 1000000] [--samples 1000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def main() -> None:
    from _terrain import peak_rss_mb

    from slopescreen.maps.region.scenario_tiles import fs_fast
    from slopescreen.reliability import Spread, reliability_monte_carlo

    parser = argparse.ArgumentParser()
    parser.add_argument("--cells", type=int, default=1_000_000)
    parser.add_argument("--samples", type=int, default=1000)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    tan_slope = np.tan(np.radians(rng.uniform(10.0, 45.0, args.cells)))
    saturation = rng.uniform(0.0, 1.0, args.cells)
    values = {
        "cohesion_kpa": Spread.normal(5.0, 2.0),
        "friction_deg": Spread.normal(32.0, 2.5),
        "depth_m": Spread.lognormal(1.5, cov=0.25),
        "unit_weight_kn_m3": 18.5,
        "saturated_unit_weight_kn_m3": 20.0,
        "root_cohesion_kpa": 2.0,
        "tan_slope": tan_slope,
        "saturation": saturation,
    }

    def fs_of(tan_slope, saturation, **p):
        return fs_fast(0.0, tan_slope, saturation, **p)

    corr = {("cohesion_kpa", "friction_deg"): -0.3}
    reliability_monte_carlo(fs_of, values, corr, samples=10, random_state=1)  # compile
    before = peak_rss_mb()
    started = time.perf_counter()
    res = reliability_monte_carlo(fs_of, values, corr, samples=args.samples, random_state=1)
    seconds = time.perf_counter() - started
    print(
        f"Monte Carlo: {args.samples} samples x {args.cells / 1e6:g} M cells = "
        f"{args.samples * args.cells / 1e9:g} G FS evaluations"
    )
    print(
        f"  time {seconds:.1f} s (target < 30 s); {args.samples * args.cells / seconds / 1e6:.0f}"
        f" M FS/s; peak memory growth {peak_rss_mb() - before:.0f} MB"
    )
    print(f"  mean P(FS < 1) over cells {np.mean(res.probability_of_failure):.3f}")


if __name__ == "__main__":
    main()
