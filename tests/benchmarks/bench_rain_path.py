"""The rain path's speed: the storm search and the critical intensity on 10^5 cells, and the
demo's storm and rainfall scenarios, measured side by side with an earlier checkout.

    python tests/benchmarks/bench_rain_path.py                      # this checkout only
    python tests/benchmarks/bench_rain_path.py --before /tmp/old    # and an older one

``--before`` names the root of another checkout (e.g. ``git worktree add /tmp/old REV``);
its ``src`` runs in a child process with the same interpreter, one after the other, on the
same cells and the same demo files, and the ratios are printed. Not a test: no assertion.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

CELLS = r"""
import inspect, json, sys, time
import numpy as np
from slopescreen import rain_thresholds as rt, storm
rng = np.random.default_rng(1)
n = 100_000
kw = dict(slope_deg=rng.uniform(5, 45, n), cohesion_kpa=rng.uniform(0, 8, n),
          friction_deg=rng.uniform(28, 38, n), unit_weight_kn_m3=18.0,
          water_table_depth_m=1.0, hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=5e-5)
soil = rng.uniform(0.5, 2.5, n)
older = "time_steps" in inspect.signature(storm.storm_summary).parameters
extra = {"time_steps": 12} if older else {}  # an older checkout's scan of times
best = {}
for _ in range(2):
    t = time.perf_counter()
    storm.storm_summary(soil_depth_m=soil, later_h=24.0, duration_h=12.0, rain_mm_h=20.0,
                        **kw, **extra)
    best["storm"] = min(best.get("storm", 1e9), time.perf_counter() - t)
    t = time.perf_counter()
    rt.critical_intensity_mm_h(12.0, depth_m=soil, **kw)
    best["critical intensity"] = min(best.get("critical intensity", 1e9), time.perf_counter() - t)
print(json.dumps(best))
"""


def _cells(src: Path) -> dict[str, float]:
    env = dict(os.environ, PYTHONPATH=str(src))
    done = subprocess.run(
        [sys.executable, "-c", CELLS], env=env, capture_output=True, text=True, check=True
    )
    return json.loads(done.stdout.strip().splitlines()[-1])


def _demo(src: Path, folder: Path) -> dict[str, float]:
    """Timings of the demo's storm and rainfall scenarios (a warm-up run first, so that
    compiled kernels are cached)."""
    env = dict(os.environ, PYTHONPATH=str(src))
    scenarios = folder / "quillbrook_scenarios.toml"
    text = scenarios.read_text()
    schema = src / "slopescreen" / "maps" / "region" / "scenario_schema.py"
    if not schema.exists():  # a checkout from before the map engine was split by role
        schema = src / "slopescreen" / "maps" / "scenario_schema.py"
    keys = schema.read_text()
    if '"series"' not in keys:  # an older checkout without the key
        text = "\n".join(line for line in text.splitlines() if not line.startswith("series"))
    toml = folder / f"bench_{abs(hash(str(src)))}.toml"
    toml.write_text(text)
    timings: dict[str, float] = {}
    for _ in range(2):
        out = folder / "out"
        shutil.rmtree(out, ignore_errors=True)
        command = [sys.executable, "-m", "slopescreen.cli.main", "run", str(toml)]
        command += ["--out", str(out), "--quiet", "--only", "design_storm", "rain_frequency"]
        command += ["rain_frequency_uplift"]
        subprocess.run(command, env=env, capture_output=True, check=True)
        timings = json.loads((out / "manifest.json").read_text())["timings_s"]
    return {k: v for k, v in timings.items() if k.startswith("scenario ")}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--before", type=Path, help="root of an earlier checkout")
    args = parser.parse_args()
    sources = {"this checkout": ROOT / "src"}
    if args.before:
        sources = {"before": args.before / "src", **sources}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        for item in (ROOT / "demo_region").iterdir():
            shutil.copy(item, folder / item.name)
        results = {}
        for label, src in sources.items():
            started = time.perf_counter()
            results[label] = {**_cells(src), **_demo(src, folder)}
            print(f"{label}: {json.dumps(results[label])} ({time.perf_counter() - started:.0f} s)")
    if len(results) == 2:
        before, after = results["before"], results["this checkout"]
        for key in after:
            if key in before:
                print(f"{key}: {after[key]:.2f} s against {before[key]:.2f} s: "
                      f"{after[key] / before[key]:.2f}x")  # fmt: skip


if __name__ == "__main__":
    main()
