"""Regions beyond the memory budget: routing runs on memory-mapped work files and gives the
same terrain, bit for bit."""

import json
from pathlib import Path

import numpy as np
import rasterio

from slopescreen.maps import terrain_cache
from slopescreen.maps.engine import run

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = ROOT / "demo_region" / "quillbrook_scenarios.toml"


def test_memory_mapped_routing_matches_in_memory(tmp_path, monkeypatch):
    run(SCENARIOS, tmp_path / "ram", only=["dry_season"], progress=False, echo=lambda s: None)
    monkeypatch.setenv("SLOPESCREEN_MEMORY_BUDGET_MB", "1")  # far below this grid's needs
    made = []
    real = terrain_cache._Scratch.__call__

    def spy(self, shape, dtype):
        made.append((shape, dtype))
        return real(self, shape, dtype)

    monkeypatch.setattr(terrain_cache._Scratch, "__call__", spy)
    run(SCENARIOS, tmp_path / "disk", only=["dry_season"], progress=False, echo=lambda s: None)
    assert len(made) >= 10  # every work array came from a memory-mapped file
    stamp = next((tmp_path / "disk" / ".cache").glob("terrain-*/entry.json"))
    assert json.loads(stamp.read_text())["info"]["out_of_core"] is True
    assert not list((tmp_path / "disk" / ".cache").glob(".slopescreen-tmp-*"))  # work removed
    for name in ("specific_catchment_area_m.tif", "slope_deg.tif"):
        with (
            rasterio.open(tmp_path / "ram" / "terrain" / name) as a,
            rasterio.open(tmp_path / "disk" / "terrain" / name) as b,
        ):
            assert np.array_equal(a.read(1), b.read(1)), name
