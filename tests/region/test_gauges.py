"""Several rain gauges: their records on common steps, each cell's share (nearest gauge or
inverse distance on the ground), and a scenario that replays them."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pytest
from rasterio.transform import from_origin
from region_files import storm_fs, storm_region, write_gauges

from slopescreen.errors import InputError
from slopescreen.maps.region.gauge_rain import common_steps, gauge_weights
from slopescreen.maps.terrain.ground import ground_distances_m
from slopescreen.rain_history import rain_steps


def test_common_steps_keep_every_gauges_rain():
    # rain in steps is piecewise constant: on the union of the steps each record's depth
    # and its rain at every time are unchanged (exact)
    starts = [0.0, 0.5, 2.0]
    ends = [np.array([1.0, 3.0]), np.array([0.25, 0.75, 4.0]), np.array([1.5])]
    rain = [np.array([10.0, 2.0]), np.array([0.0, 30.0, 4.0]), np.array([8.0])]
    common, on_steps = common_steps(starts, ends, rain)
    for g, (start, e, r) in enumerate(zip(starts, ends, rain, strict=True)):
        depth = float(rain_steps(e, r).depth_mm)
        assert float(rain_steps(common, on_steps[g]).depth_mm) == pytest.approx(depth, rel=1e-12)
        for t in np.linspace(0.01, common[-1] - 0.01, 97):  # the rain falling at time t
            local = t - start
            inside = 0.0 < local < e[-1]
            expected = r[np.searchsorted(e, local, side="right")] if inside else 0.0
            k = np.searchsorted(common, t, side="right")
            assert on_steps[g, k] == expected


def test_weights_by_nearest_gauge_and_by_inverse_distance():
    d = np.array([[100.0, 300.0, 0.0, 50.0], [200.0, 100.0, 80.0, 50.0], [400.0, 900.0, 1.0, 60.0]])
    nearest = gauge_weights(d, "nearest")
    assert nearest.tolist() == [[1, 0, 1, 1], [0, 1, 0, 0], [0, 0, 0, 0]]  # ties: the first
    idw = gauge_weights(d, "inverse_distance", 2.0)
    np.testing.assert_allclose(idw.sum(axis=0), 1.0, rtol=1e-15)
    # Shepard (1968): w_i = d_i^-p / sum_j d_j^-p; a cell at a gauge takes that gauge alone
    col0 = np.array([100.0, 200.0, 400.0]) ** -2.0
    np.testing.assert_allclose(idw[:, 0], col0 / col0.sum(), rtol=1e-14)
    assert idw[:, 2].tolist() == [1.0, 0.0, 0.0]
    steeper = gauge_weights(d, "inverse_distance", 6.0)
    assert steeper[0, 0] > idw[0, 0]  # a higher power leans on the nearest gauge


def test_ground_distances_on_a_projection_include_its_scale():
    # UTM's scale on its central meridian is k0 = 0.9996 (Snyder 1987, Map Projections: A
    # Working Manual, USGS Professional Paper 1395, p. 57): 400 m of grid there are
    # 400 / 0.9996 m on the ground
    transform = from_origin(500000.0 - 5.0, 5000000.0 + 5.0, 10.0, 10.0)
    from rasterio.crs import CRS

    d = ground_distances_m(
        transform, CRS.from_epsg(32633), slice(40, 41), slice(0, 1), np.array([500000.0]),
        np.array([5000000.0]),
    )  # fmt: skip  # the cell of row 40 is centred 400 m south of the point
    assert d[0, 0, 0] == pytest.approx(400.0 / 0.9996, abs=0.02)


@pytest.fixture(scope="module")
def region(tmp_path_factory):
    folder = storm_region(tmp_path_factory.mktemp("gauges"))
    (folder / "a.csv").write_text("end_h,rain_mm\n2,10\n4,60\n6,10\n")
    (folder / "b.csv").write_text("end_h,rain_mm\n2,0\n4,5\n6,20\n")
    write_gauges(folder, "gauges.gpkg", ("a.csv", "b.csv"))
    return folder


def _fs(region, tmp_path, name, rain):
    return storm_fs(region, tmp_path / name, rain)


def test_each_cell_takes_its_nearest_gauges_record(region, tmp_path):
    # Thiessen: a cell west of the middle (x < 500250) is nearest the west gauge and gets
    # the same factor of safety as a run with that gauge's record alone, value for value
    both = _fs(region, tmp_path, "both", 'gauges = "gauges.gpkg"')
    west = _fs(region, tmp_path, "west", 'hyetograph = "a.csv"')
    east = _fs(region, tmp_path, "east", 'hyetograph = "b.csv"')
    np.testing.assert_array_equal(both[:, :25], west[:, :25])
    np.testing.assert_array_equal(both[:, 25:], east[:, 25:])
    assert not np.array_equal(west, east)


def test_inverse_distance_lies_between_the_gauges(region, tmp_path):
    text = 'gauges = "gauges.gpkg"\ngauge_weighting = "inverse_distance"'
    mixed = _fs(region, tmp_path, "idw", text)
    west = _fs(region, tmp_path, "west", 'hyetograph = "a.csv"')
    east = _fs(region, tmp_path, "east", 'hyetograph = "b.csv"')
    mapped = west > -9999.0
    low, high = np.minimum(west, east), np.maximum(west, east)
    # the wetter record gives the lower FS; a share of each lies between (FS falls as the
    # head rises, and the head is linear in the rain below the cap)
    assert np.all(mixed[mapped] >= low[mapped] - 1e-6)
    assert np.all(mixed[mapped] <= high[mapped] + 1e-6)
    assert np.any((mixed[mapped] > low[mapped] + 1e-4) & (mixed[mapped] < high[mapped] - 1e-4))


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ("no_record", "needs the fields 'name' and 'record'"),
        ("clocks", "mix"),
        ("power", "gauge_power: cannot matter with the nearest gauge"),
    ],
)
def test_bad_gauges_are_refused_in_one_line(region, tmp_path, change, message):
    rain = 'gauges = "bad.gpkg"'
    if change == "no_record":
        frame = gpd.read_file(region / "gauges.gpkg").drop(columns="record")
        frame.to_file(region / "bad.gpkg", driver="GPKG")
    elif change == "clocks":
        (region / "timed.csv").write_text(
            "end_time,rain_mm\n2026-11-30T00:00,\n2026-11-30T01:00,5\n"
        )
        write_gauges(region, "bad.gpkg", ("a.csv", "timed.csv"))
    else:
        rain = 'gauges = "gauges.gpkg"\ngauge_power = 3.0'
    with pytest.raises(InputError) as caught:
        storm_fs(region, tmp_path / f"bad_{change}", rain)
    text = str(caught.value)
    assert message in text and "\n" not in text
    assert "bad" in text or "gauge_power" in text  # the file or the key is named


def test_the_manifest_hashes_every_file_the_rain_comes_from(region, tmp_path):
    # a rerun is reproducible only if the manifest names what the rain was read from:
    # the gauge layer and every gauge's record, each by its SHA-256 (hashlib, common
    # practice for file identity)
    import hashlib
    import json

    storm_fs(region, tmp_path / "hashed", 'gauges = "gauges.gpkg"')
    hashes = json.loads((tmp_path / "hashed" / "manifest.json").read_text())["inputs_sha256"]
    for name in ("gauges.gpkg", "a.csv", "b.csv"):
        expected = hashlib.sha256((region / name).read_bytes()).hexdigest()
        assert hashes[f"storm_rain:s:{name}"] == expected
