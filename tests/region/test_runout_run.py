"""Run-out in a run: a slope that fails above flat ground, its reach, zones, map and the
assets in reach, against the angle-of-reach geometry worked out by hand."""

import csv
import math

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import write_raster
from shapely.geometry import LineString, Point, box

from slopescreen.errors import InputError
from slopescreen.maps.region.config import load_config
from slopescreen.maps.region.engine import run

X0, Y0, CELL = 500000.0, 5000400.0, 10.0
ROWS, COLS, PLANE = 30, 80, 20  # a plane falling east over 20 columns, then flat ground


def _region(tmp_path, runout):
    x = np.arange(COLS) * CELL
    edge = (PLANE - 1) * CELL
    z = np.tile(np.where(x <= edge, 0.8 * (edge - x), 0.0) + 100.0, (ROWS, 1))
    write_raster(tmp_path / "dem.tif", z, transform=from_origin(X0, Y0, CELL, CELL))
    gpd.GeoDataFrame(
        {"unit": ["A"], "cohesion_kpa": [1.0], "friction_deg": [30.0],
         "unit_weight_kn_m3": [18.0], "depth_m": [1.5], "hydraulic_conductivity_m_s": [1e-5]},
        geometry=[box(X0, Y0 - ROWS * CELL, X0 + COLS * CELL, Y0)], crs="EPSG:32633",
    ).to_file(tmp_path / "soils.geojson", driver="GeoJSON")  # fmt: skip
    road = LineString([(X0 + 5.0, Y0 - 150.0), (X0 + COLS * CELL - 5.0, Y0 - 150.0)])
    far = Point(X0 + COLS * CELL - 15.0, Y0 - 155.0)
    gpd.GeoDataFrame(
        {"name": ["valley road", "barn"]}, geometry=[road, far], crs="EPSG:32633"
    ).to_crs("EPSG:4326").to_file(tmp_path / "assets.gpkg", driver="GPKG")
    (tmp_path / "s.toml").write_text(
        '[region]\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n'
        "[outputs]\nreport = false\nzones = false\n"
        '[[scenario]]\nname = "wet"\nsaturation = 1.0\n' + runout
    )
    return tmp_path / "s.toml", z


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1)


def test_reach_below_a_failing_slope_and_the_assets_in_it(tmp_path):
    toml, z = _region(
        tmp_path,
        '[runout]\nscenarios = ["wet"]\ntravel_angle_deg = 20.0\nexponent = 1000.0\n'
        'assets = "assets.gpkg"\nasset_field = "name"\n',
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    fs = _read(out / "wet" / "fs.tif")
    reach = _read(out / "wet" / "runout_reach.tif")
    share = _read(out / "wet" / "runout_source_share.tif")
    source = (fs < 1.0) & (fs > -9000)
    assert source.any() and (reach[source] == 1).all()
    # the sources are the plane's steep cells; on each row the flow from the highest
    # source runs east and stops where the 20-degree line from its top meets the flat:
    # L = (z_top - z_flat) / tan(20 deg) from the top (analytic; steps of 10 m on the row)
    row = ROWS // 2
    top = int(np.flatnonzero(source[row])[0])
    length = (z[row, top] - 100.0) / math.tan(math.radians(20.0))
    last = int(np.flatnonzero(reach[row] == 1)[-1])
    ground = CELL * 0.9996  # UTM 33N near 15 E: the grid's 10 m are 9.996 m on the ground
    assert last == top + math.floor(length / ground)
    assert share[row, last] > 0 and share[row, last + 1] == 0
    with open(out / "wet" / "runout_assets.csv") as handle:
        rows = {r["asset"]: r for r in csv.DictReader(handle)}
    assert set(rows) == {"valley road"}  # the barn lies beyond the reach
    # the road's length in reach: its ground length across the reach zones (pyproj's
    # geodesic of the same line, computed here from the zones and the road)
    zones = gpd.read_file(out / "wet" / "runout_zones.gpkg")
    road = gpd.read_file(tmp_path / "assets.gpkg").to_crs(zones.crs).geometry.iloc[0]
    piece = road.intersection(zones.union_all())
    from pyproj import Geod

    expected = Geod(ellps="WGS84").geometry_length(
        gpd.GeoSeries([piece], crs=zones.crs).to_crs("EPSG:4326").iloc[0]
    )
    assert float(rows["valley road"]["length_in_reach_m"]) == pytest.approx(expected, abs=0.006)
    assert float(rows["valley road"]["source_value"]) < 1.0  # the FS of a failing source
    assert (out / "wet" / "runout_reach.png").exists()
    assert len(gpd.read_file(out / "wet" / "runout_assets.gpkg")) == 1


def test_runout_keys_are_checked(tmp_path):
    for text, key in (
        ('[runout]\nscenarios = ["nope"]\n', "scenarios"),
        ('[runout]\nscenarios = ["wet"]\nfs_below = 1.2\nsource = "probability"\n', "fs_below"),
        ('[runout]\nscenarios = ["wet"]\nsource = "inventory"\n', "source"),
        ('[runout]\nscenarios = ["wet"]\ntravel_angle_deg = 20.0\nregression_a = 0.1\n',
         "travel_angle_deg"),
        ('[runout]\nscenarios = ["wet"]\nmax_speed_m_s = 10.0\n', "max_speed_m_s"),
        ('[runout]\nscenarios = ["wet"]\nasset_field = "name"\n', "asset_field"),
    ):  # fmt: skip
        toml, _ = _region(tmp_path, text)
        with pytest.raises(InputError, match=key):
            load_config(toml)


def test_sources_from_the_inventory_and_from_the_probability(tmp_path):
    """Inventory sources: the reach starts at the slides' cells only (one slide on the
    plane's axis, the rest of the plane holding); probability sources: cells above the
    limit, each weighted by its probability of failure."""
    toml, _ = _region(tmp_path, "")
    slide = Point(X0 + 5 * CELL + 5.0, Y0 - (ROWS // 2) * CELL - 5.0)
    gpd.GeoDataFrame({"slide_id": ["s1"]}, geometry=[slide], crs="EPSG:32633").to_file(
        tmp_path / "slides.gpkg", driver="GPKG"
    )
    text = toml.read_text().replace("saturation = 1.0", "saturation = 0.0")
    toml.write_text(
        text + '[inventory]\npath = "slides.gpkg"\nkey = "slide_id"\n'
        '[runout]\nscenarios = ["wet"]\nsource = "inventory"\ntravel_angle_deg = 20.0\n'
        "exponent = 1000.0\n"
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    reach = _read(out / "wet" / "runout_reach.tif")
    row, col = ROWS // 2, 5
    assert reach[row, col] == 1 and reach[row - 3, col] == 0  # one slide: one path
    height = 0.8 * (PLANE - 1 - col) * CELL  # the slide's cell above the flat
    last = int(np.flatnonzero(reach[row] == 1)[-1])
    assert last == col + math.floor(height / math.tan(math.radians(20.0)) / (CELL * 0.9996))


def test_sources_weighted_by_their_probability_of_failure(tmp_path):
    """Probability sources: every cell above the limit starts flow in proportion to its
    P(FS < 1), so a source cell passes at least its own share p / sum(p) of all source
    flow, and the assets table gives the highest P among the sources reaching an asset."""
    toml, _ = _region(
        tmp_path,
        '[runout]\nscenarios = ["wet"]\nsource = "probability"\nprobability_above = 0.5\n'
        'travel_angle_deg = 20.0\nassets = "assets.gpkg"\nasset_field = "name"\n',
    )
    frame = gpd.read_file(tmp_path / "soils.geojson")
    frame["cohesion_kpa_sd"] = 0.8  # a spread: probabilities of failure
    frame.to_file(tmp_path / "soils.geojson", driver="GeoJSON")
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    p = _read(out / "wet" / "probability_of_failure.tif").astype(float)
    share = _read(out / "wet" / "runout_source_share.tif").astype(float)
    source = p > 0.5
    assert source.any() and (share[source] > 0).all()
    own = p[source] / p[source].sum()
    assert (share[source] >= own * (1 - 1e-6)).all()  # float32 storage
    with open(out / "wet" / "runout_assets.csv") as handle:
        rows = {r["asset"]: r for r in csv.DictReader(handle)}
    assert 0.5 < float(rows["valley road"]["source_value"]) <= 1.0


@pytest.mark.parametrize("source", ["fs", "probability"])
def test_tiles_do_not_change_the_runout(tmp_path, monkeypatch, source):
    """Tiles of 7 cells against one tile: the source patches cross tile edges (their
    volumes, and so their angles by the regression, are joined), the flow crosses them and
    the flat floor; the reach and angles are the same, the shares to float32 storage."""
    from slopescreen.maps.region import runout_tiles

    rule = 'source = "probability"\nprobability_above = 0.3\n' if source != "fs" else ""
    toml, _ = _region(
        tmp_path,
        f'[runout]\nscenarios = ["wet"]\n{rule}min_source_area_m2 = 2500.0\n'
        'assets = "assets.gpkg"\nasset_field = "name"\n',
    )
    frame = gpd.read_file(tmp_path / "soils.geojson")
    frame["cohesion_kpa_sd"] = 0.8
    frame.to_file(tmp_path / "soils.geojson", driver="GeoJSON")
    outs = {}
    for size in (1000, 7):
        monkeypatch.setattr(runout_tiles, "RUNOUT_TILE", size)
        outs[size] = tmp_path / f"out{size}"
        run(toml, outs[size], progress=False, echo=lambda s: None)
    one, many = outs[1000] / "wet", outs[7] / "wet"
    reach = _read(one / "runout_reach.tif")
    assert (reach == 1).sum() > 200
    for name in ("runout_reach.tif", "runout_travel_angle_deg.tif"):
        assert np.array_equal(_read(one / name), _read(many / name)), name
    np.testing.assert_allclose(
        _read(many / "runout_source_share.tif"), _read(one / "runout_source_share.tif"),
        rtol=1e-6,
    )  # fmt: skip
    assert (one / "runout_assets.csv").read_text() == (many / "runout_assets.csv").read_text()
    zones = [gpd.read_file(o / "runout_zones.gpkg") for o in (one, many)]
    assert len(zones[0]) == len(zones[1])
    assert zones[0]["area_m2"].sum() == pytest.approx(zones[1]["area_m2"].sum(), rel=1e-12)


def test_the_runout_map_is_read_once_at_the_maps_step(tmp_path, monkeypatch):
    # a grid wider than a map's pixels: the map shows every step-th cell, as every other
    # map does (read once at that step, not thinned again)
    from slopescreen.maps.outputs import quicklook

    monkeypatch.setattr(quicklook, "MAX_PIXELS", 20)  # 80 columns: a step of 4
    drawn = []
    real = quicklook.draw_classes

    def spy(target, frame, classes, *args, **kwargs):
        if target.name == "runout_reach.png":
            drawn.append((classes.shape, frame.step))
        return real(target, frame, classes, *args, **kwargs)

    monkeypatch.setattr(quicklook, "draw_classes", spy)
    toml, _ = _region(tmp_path, '[runout]\nscenarios = ["wet"]\ntravel_angle_deg = 20.0\n')
    run(toml, tmp_path / "out", progress=False, echo=lambda s: None)
    assert drawn == [((ROWS // 4, COLS // 4), 4)]
