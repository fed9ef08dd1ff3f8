"""Terrain routed tile by tile, here and on a real two-worker dask cluster: the same terrain
rasters as routing the whole grid at once, within the stated bound, and the same bytes
whatever runs the tiles."""

from pathlib import Path

import numpy as np
import pytest
import rasterio

from slopescreen.maps.region import terrain_cache
from slopescreen.maps.region.engine import run

SCENARIOS = Path(__file__).resolve().parents[2] / "demo_region" / "quillbrook_scenarios.toml"
TERRAIN = ("specific_catchment_area_m.tif", "catchment_cut_off.tif", "slope_deg.tif")


def _read(out, name):
    with rasterio.open(out / "terrain" / name) as src:
        return src.read(1)


def test_terrain_by_tiles_here_and_on_a_cluster(tmp_path, monkeypatch):
    pytest.importorskip("distributed")
    quiet = {"only": ["dry_season"], "progress": False}
    run(SCENARIOS, tmp_path / "whole", echo=lambda s: None, **quiet)
    monkeypatch.setattr(terrain_cache, "ROUTING_TILE", 100)  # 25 tiles on the 450 x 450 demo
    said = []
    run(SCENARIOS, tmp_path / "tiles", echo=said.append, **quiet)
    assert any(line.startswith("routing: 25 tiles of up to 100 x 100") for line in said)
    said.clear()
    run(SCENARIOS, tmp_path / "cluster", echo=said.append, workers=2, **quiet)
    assert any("dask: 2 workers" in line for line in said)
    assert any(line.startswith("routing: 25 tiles") for line in said)  # terrain on the cluster
    for name in TERRAIN:
        tiles, cluster = _read(tmp_path / "tiles", name), _read(tmp_path / "cluster", name)
        assert tiles.tobytes() == cluster.tobytes(), name  # the same bytes on 1 or 2 workers
    whole, tiles = (_read(tmp_path / o, TERRAIN[0]) for o in ("whole", "tiles"))
    data = whole != terrain_cache.NODATA_F32
    assert np.array_equal(data, tiles != terrain_cache.NODATA_F32)
    # stated bound (slopescreen.maps.terrain.tiled_routing): the area differs by summation order
    # only, far below float32's resolution: at most one unit in the last place
    np.testing.assert_allclose(tiles[data], whole[data], rtol=2.0**-23, atol=0)
    for name in TERRAIN[1:]:
        assert np.array_equal(_read(tmp_path / "whole", name), _read(tmp_path / "tiles", name))
    for out in ("tiles", "cluster"):  # the routing work files are gone
        assert not list((tmp_path / out / ".cache").glob(".slopescreen-tmp-*"))
