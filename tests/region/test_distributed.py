"""A real dask.distributed cluster of two worker processes gives the same bytes as a serial
run; the tiling does not change the per-cell rasters."""

import json
import re
from pathlib import Path

import numpy as np
import pytest
import rasterio

from slopescreen.maps.io import rasters
from slopescreen.maps.region import runout_tiles
from slopescreen.maps.region.engine import run

ROOT = Path(__file__).resolve().parents[2]
SCENARIOS = ROOT / "demo_region" / "quillbrook_scenarios.toml"
ONLY = ["wet_season", "wet_season_logged"]


def _outputs(out):
    """Output hashes from the manifest; the report states its run times, so it is compared
    apart, with them blanked (see the first test)."""
    hashes = json.loads((out / "manifest.json").read_text())["outputs"]
    assert "report.html" in hashes
    return {k: v for k, v in hashes.items() if k != "report.html"}


def test_two_worker_cluster_matches_serial_byte_for_byte(tmp_path, monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.setattr(rasters, "TILE", 128)  # 16 tiles on the 450 x 450 demo
    monkeypatch.setattr(runout_tiles, "RUNOUT_TILE", 100)  # run-out in 25 tiles
    cache = tmp_path / "cache"
    run(
        SCENARIOS,
        tmp_path / "serial",
        only=ONLY,
        cache_dir=cache,
        progress=False,
        echo=lambda s: None,
    )
    lines = []
    run(
        SCENARIOS,
        tmp_path / "cluster",
        only=ONLY,
        cache_dir=cache,
        progress=False,
        echo=lines.append,
        workers=2,
    )
    assert any("dask: 2 workers" in line for line in lines)
    serial, cluster = _outputs(tmp_path / "serial"), _outputs(tmp_path / "cluster")
    assert set(serial) == set(cluster)
    different = [name for name in serial if serial[name] != cluster[name]]
    assert different == []

    def undated(out):
        text = (out / "report.html").read_text()
        return re.sub(r"Run [0-9TZ:-]+ to [0-9TZ:-]+ \(UTC\)", "Run (UTC)", text)

    assert undated(tmp_path / "serial") == undated(tmp_path / "cluster")
    assert any(name.endswith("probability_of_failure.tif") for name in serial)
    assert any(name.endswith("runout_source_share.tif") for name in serial)


def test_existing_scheduler_matches_serial(tmp_path, monkeypatch):
    # --scheduler: an existing cluster (started here on loopback) gets the tiles.
    distributed = pytest.importorskip("distributed")
    monkeypatch.setattr(rasters, "TILE", 200)
    cache = tmp_path / "cache"
    run(
        SCENARIOS,
        tmp_path / "serial",
        only=["dry_season"],
        cache_dir=cache,
        progress=False,
        echo=lambda s: None,
    )
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None, host="127.0.0.1"
    ) as cluster:
        lines = []
        run(
            SCENARIOS,
            tmp_path / "remote",
            only=["dry_season"],
            cache_dir=cache,
            progress=False,
            echo=lines.append,
            scheduler=cluster.scheduler_address,
        )
    assert any(cluster.scheduler_address in line for line in lines)
    assert _outputs(tmp_path / "serial") == _outputs(tmp_path / "remote")


def test_tiling_does_not_change_the_rasters(tmp_path, monkeypatch):
    cache = tmp_path / "cache"
    run(
        SCENARIOS,
        tmp_path / "one",
        only=["wet_season"],
        cache_dir=cache,
        progress=False,
        echo=lambda s: None,
    )
    monkeypatch.setattr(rasters, "TILE", 100)
    monkeypatch.setattr(runout_tiles, "RUNOUT_TILE", 64)
    run(
        SCENARIOS,
        tmp_path / "many",
        only=["wet_season"],
        cache_dir=cache,
        progress=False,
        echo=lambda s: None,
    )
    for name in (
        "fs.tif",
        "saturation.tif",
        "stability_class.tif",
        "probability_of_failure.tif",
        "critical_recharge_mm_day.tif",
        "runout_reach.tif",
        "runout_travel_angle_deg.tif",
    ):
        with (
            rasterio.open(tmp_path / "one" / "wet_season" / name) as a,
            rasterio.open(tmp_path / "many" / "wet_season" / name) as b,
        ):
            assert np.array_equal(a.read(1), b.read(1)), name
    with (
        rasterio.open(tmp_path / "one" / "wet_season" / "runout_source_share.tif") as a,
        rasterio.open(tmp_path / "many" / "wet_season" / "runout_source_share.tif") as b,
    ):  # masses summed in another order (see slopescreen.maps.terrain.tiled_reach)
        np.testing.assert_allclose(b.read(1), a.read(1), rtol=1e-6)
    import geopandas as gpd

    zones_one = gpd.read_file(tmp_path / "one" / "wet_season" / "low_margin_zones.gpkg")
    zones_many = gpd.read_file(tmp_path / "many" / "wet_season" / "low_margin_zones.gpkg")
    assert len(zones_one) == len(zones_many)
    assert zones_one["area_m2"].sum() == pytest.approx(zones_many["area_m2"].sum(), rel=1e-12)
    assert sorted(zones_one["area_m2"]) == pytest.approx(sorted(zones_many["area_m2"]))


def test_unreachable_scheduler_is_one_line(tmp_path, capsys, monkeypatch):
    from slopescreen.cli.main import main
    from slopescreen.maps.region import distributed

    monkeypatch.setattr(distributed, "SCHEDULER_TIMEOUT_S", 1)  # nothing answers: no wait

    code = main(
        [
            "run",
            str(SCENARIOS),
            "--out",
            str(tmp_path / "x"),
            "--only",
            "dry_season",
            "--scheduler",
            "tcp://127.0.0.1:9",
            "--quiet",
        ]
    )
    err = capsys.readouterr().err
    assert code == 2
    assert "--scheduler tcp://127.0.0.1:9: cannot reach the dask scheduler" in err
    assert err.count("\n") == 1
