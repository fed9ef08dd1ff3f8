"""Soil fields cell by cell on a small invented region: a raster in place of a soil-table
number reaches every per-cell product (compared at one cell with the core functions on
that cell's value), the rasters are checked before a run, caches key on their bytes, the
depth models and land cover run end to end, and every new key changes the result or is
refused."""

import math

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import _dem, _polygons, write_raster
from shapely.geometry import Point, box

from slopescreen import factor_of_safety
from slopescreen.errors import InputError
from slopescreen.hydrology import steady_state_saturation
from slopescreen.maps.region.config import load_config
from slopescreen.maps.region.engine import prepare, run

GRID = from_origin(500000.0, 5000400.0, 10.0, 10.0)  # the test DEM's grid
CELL = (20, 10)  # a cell of unit A (the western half) whose depth the raster sets alone
DEEP = 3.7
SOIL = {"cohesion_kpa": 2.0, "friction_deg": 30.0, "unit_weight_kn_m3": 18.0}
HEAD = """[region]
dem = "dem.tif"
soil_units = "soils.geojson"
soil_table = "soils.csv"
[outputs]
quicklook_map = false
report = false
zones = false
"""


def _depth_raster(path, value=DEEP):
    depth = 0.5 + 0.05 * np.tile(np.arange(50.0), (40, 1))  # 0.5 m in the west, deeper east
    depth[CELL] = value
    return write_raster(path, depth, transform=GRID)


def _region(tmp_path, depth_a="depth.tif", extra="", rows_extra=("", "")):
    """The test DEM and units A (west) and B (east), their table naming ``depth_a`` for A;
    ``extra``: more columns, with ``rows_extra`` for A and B."""
    _dem(tmp_path / "dem.tif")
    _polygons(tmp_path / "soils.geojson")
    _depth_raster(tmp_path / "depth.tif")
    head = "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s"
    head += ",diffusivity_m2_s" + extra
    (tmp_path / "soils.csv").write_text(
        f"{head}\nA,2,30,18,{depth_a},1e-5,1e-4{rows_extra[0]}\n"
        f"B,5,30,18,1.5,1e-5,1e-4{rows_extra[1]}\n"
    )
    return tmp_path


def _write(tmp_path, body, name="s.toml"):
    (tmp_path / name).write_text(HEAD + body)
    return tmp_path / name


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1).astype(np.float64)


def test_a_raster_depth_reaches_every_product_at_its_cell(tmp_path):
    from slopescreen.rain_thresholds import critical_intensity_mm_h
    from slopescreen.scenario import Storm, critical_recharge_mm_day, storm_response

    _region(tmp_path, extra=",depth_m_cov", rows_extra=(",0.2", ""))
    toml = _write(
        tmp_path,
        '[[scenario]]\nname = "dry"\nsaturation = 0.0\n'
        '[[scenario]]\nname = "wet"\nrecharge_mm_day = 40.0\n'
        '[[scenario]]\nname = "storm"\n[scenario.storm]\nrain_mm_h = 15.0\nduration_h = 6.0\n'
        "later_h = 12.0\ninitial_water_table_depth_m = 1.0\n"
        '[[scenario]]\nname = "rain"\n[scenario.rainfall]\ninitial_water_table_depth_m = 1.0\n'
        '[rainfall_frequency]\nidf_table = "idf.csv"\nafter_h = 12.0\n',
    )
    (tmp_path / "idf.csv").write_text(
        "duration_h,return_period_yr,intensity_mm_h\n6,2,8\n6,100,30\n24,2,3\n24,100,10\n"
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    r, c = CELL
    beta = float(_read(out / "terrain" / "slope_deg.tif")[r, c])
    sca = float(_read(out / "terrain" / "specific_catchment_area_m.tif")[r, c])
    depth = _read(out / "dry" / "soil_depth_m.tif")
    assert depth[r, c] == pytest.approx(DEEP, rel=1e-7)
    assert depth[r, 40] == pytest.approx(1.5)  # unit B keeps its number
    assert depth[r, 3] == pytest.approx(0.5 + 0.05 * 3, rel=1e-7)
    soil = dict(SOIL, depth_m=DEEP, saturated_unit_weight_kn_m3=18.0)
    # steady scenarios: the core factor of safety and wetness on the cell's own depth
    assert _read(out / "dry" / "fs.tif")[r, c] == pytest.approx(
        factor_of_safety(beta, DEEP, 2.0, 30.0, 18.0, 0.0), rel=2e-6
    )
    t = 1e-5 * 86400.0 * DEEP * math.cos(math.radians(beta))
    m = float(steady_state_saturation(40.0, sca, beta, t))
    assert _read(out / "wet" / "saturation.tif")[r, c] == pytest.approx(m, rel=2e-6)
    assert _read(out / "wet" / "fs.tif")[r, c] == pytest.approx(
        factor_of_safety(beta, DEEP, 2.0, 30.0, 18.0, m), rel=2e-6
    )
    recharge = critical_recharge_mm_day(
        beta, sca, hydraulic_conductivity_m_s=1e-5, **{**soil, "root_cohesion_kpa": 0.0}
    )
    assert _read(out / "dry" / "critical_recharge_mm_day.tif")[r, c] == pytest.approx(
        float(recharge), rel=2e-6
    )
    # the storm: the numpy core's search on that one cell
    storm = Storm(rain_mm_h=15.0, duration_h=6.0, later_h=12.0, water_table_depth_m=1.0)
    summary, _ = storm_response(
        np.array([beta]), storm, hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=1e-4,
        root_cohesion_kpa=0.0, **soil,
    )  # fmt: skip
    assert _read(out / "storm" / "fs.tif")[r, c] == pytest.approx(
        float(summary.window_min_fs[0]), rel=2e-6
    )
    # critical intensity of a 6-hour storm: the core's
    ic = critical_intensity_mm_h(
        6.0, after_h=12.0, slope_deg=beta, water_table_depth_m=1.0,
        hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=1e-4,
        specific_catchment_area_m=sca, root_cohesion_kpa=0.0, **soil,
    )  # fmt: skip
    assert _read(out / "rain" / "critical_intensity_6h_mm_h.tif")[r, c] == pytest.approx(
        float(ic), rel=2e-6
    )
    # the probability: a cov given as a number scales with the cell's depth (sd 0.74 m
    # here), Taylor series (Duncan 2000) by the core on that cell
    from slopescreen.reliability import Spread, reliability_fosm

    res = reliability_fosm(
        lambda **p: factor_of_safety(beta, p["depth_m"], 2.0, 30.0, 18.0, 0.0),
        {"depth_m": Spread.normal(DEEP, sd=0.2 * DEEP)},
        {},
        fs_distribution="lognormal",
    )
    assert _read(out / "dry" / "probability_of_failure.tif")[r, c] == pytest.approx(
        float(res.probability_of_failure), abs=1e-6
    )


def test_rasters_are_checked_before_the_run(tmp_path):
    _region(tmp_path)
    toml = _write(tmp_path, '[[scenario]]\nname = "dry"\nsaturation = 0.0\n')
    prepare(load_config(toml))  # the good raster passes
    bad = 0.5 + 0.05 * np.tile(np.arange(50.0), (40, 1))
    bad[5, 7] = 80.0  # beyond depth_m's 50 m, in unit A
    bad[5, 40] = 90.0  # in unit B, which does not read the raster: not counted
    write_raster(tmp_path / "depth.tif", bad, transform=GRID)
    with pytest.raises(InputError) as refused:
        prepare(load_config(toml))
    text = str(refused.value)
    assert "depth.tif" in text and "depth_m" in text and "[0.05, 50]" in text
    assert "on 1 mapped cells" in text and "row 5, column 7" in text and "'A'" in text
    half = np.full((40, 20), 1.0)  # covers columns 0-19 only: A's cells 20-24 have none
    write_raster(tmp_path / "depth.tif", half, transform=GRID)
    with pytest.raises(InputError, match=r"has no value on 200 mapped cells"):
        prepare(load_config(toml))
    (tmp_path / "soils.csv").write_text(
        (tmp_path / "soils.csv").read_text().replace("depth.tif", "missing.tif")
    )
    with pytest.raises(InputError, match="neither a number nor a raster"):
        load_config(toml) and prepare(load_config(toml))


def test_a_changed_raster_recomputes_the_cached_results(tmp_path):
    _region(tmp_path)
    toml = _write(tmp_path, '[[scenario]]\nname = "wet"\nrecharge_mm_day = 40.0\n')
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    first = {p.name for p in (out / ".cache").glob("critical_recharge-*")}
    before = _read(out / "wet" / "critical_recharge_mm_day.tif")[CELL]
    run(toml, out, progress=False, echo=lambda s: None)  # same inputs: the same entry
    assert {p.name for p in (out / ".cache").glob("critical_recharge-*")} == first
    _depth_raster(tmp_path / "depth.tif", value=1.1)  # one cell's depth changed
    run(toml, out, progress=False, echo=lambda s: None)
    entries = {p.name for p in (out / ".cache").glob("critical_recharge-*")}
    assert len(entries - first) == 1  # a new key: recomputed, not reused
    assert _read(out / "wet" / "critical_recharge_mm_day.tif")[CELL] != before
    assert _read(out / "wet" / "soil_depth_m.tif")[CELL] == pytest.approx(1.1, rel=1e-7)


def _cover_region(tmp_path):
    """The region with a slope-linear depth model and land cover as a raster of classes 1
    (forest, cut in 2020) and 2 (grass); A's depth a number again."""
    _region(tmp_path, depth_a="1.5")
    classes = np.ones((40, 50))
    classes[:, 30:] = 2.0
    write_raster(tmp_path / "cover.tif", classes, transform=GRID)
    (tmp_path / "cover.csv").write_text(
        "class,root_cohesion_kpa,rooting_depth_m,harvest_year\n1,6.0,3.0,2020\n2,1.0,0.3,\n"
    )
    return (
        '[soil_depth]\nmodel = "slope_linear"\ngentle_slope_deg = 10.0\nsteep_slope_deg = 45.0\n'
        "gentle_depth_m = 2.5\nsteep_depth_m = 0.8\n"
        '[land_cover]\npath = "cover.tif"\ntable = "cover.csv"\nyear = 2019\n'
    )


@pytest.mark.parametrize(
    ("key", "one", "other"),
    [
        ("use_soil_depth", "use_soil_depth = true", "use_soil_depth = false"),
        ("use_land_cover", "use_land_cover = true", "use_land_cover = false"),
        ("year", "year = 2019", "year = 2030"),
    ],
)
def test_each_new_key_changes_the_map(tmp_path, key, one, other):
    tables = _cover_region(tmp_path)
    toml = _write(
        tmp_path,
        tables + f'[[scenario]]\nname = "a"\nsaturation = 0.5\n{one}\n'
        f'[[scenario]]\nname = "b"\nsaturation = 0.5\n{other}\n',
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    a, b = _read(out / "a" / "fs.tif"), _read(out / "b" / "fs.tif")
    assert (a != b).sum() > 50, key


def test_depth_model_and_land_cover_cell_by_cell(tmp_path):
    from slopescreen.root_cohesion import root_cohesion_after_harvest_kpa
    from slopescreen.soil_depth import slope_linear_depth_m

    tables = _cover_region(tmp_path)
    toml = _write(tmp_path, tables + '[[scenario]]\nname = "s"\nsaturation = 0.5\nyear = 2029\n')
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    slope = _read(out / "terrain" / "slope_deg.tif")
    depth = _read(out / "s" / "soil_depth_m.tif")
    root = _read(out / "s" / "root_cohesion_kpa.tif")
    fs = _read(out / "s" / "fs.tif")
    for r, c in ((10, 5), (30, 20), (15, 35), (25, 45)):
        z = float(slope_linear_depth_m(slope[r, c], 10.0, 45.0, 2.5, 0.8))
        assert depth[r, c] == pytest.approx(z, rel=1e-6)
        if c < 30:  # forest cut in 2020, nine years on; its roots reach 3 m
            expected = float(root_cohesion_after_harvest_kpa(9.0, 6.0))
        else:  # grass roots end at 0.3 m: none on a slip plane deeper than that
            expected = 0.0
        assert root[r, c] == pytest.approx(expected, rel=1e-6, abs=1e-9)
        cohesion = 2.0 if c < 25 else 5.0
        core = factor_of_safety(
            slope[r, c], z, cohesion, 30.0, 18.0, 0.5, root_cohesion_kpa=expected
        )
        assert fs[r, c] == pytest.approx(float(core), rel=2e-6)


def test_new_keys_that_change_nothing_are_refused(tmp_path):
    _region(tmp_path, depth_a="1.5")
    for body, key in (
        ('[[scenario]]\nname = "s"\nsaturation = 0.5\nuse_soil_depth = false\n', "use_soil_depth"),
        ('[[scenario]]\nname = "s"\nsaturation = 0.5\nuse_land_cover = true\n', "use_land_cover"),
        ('[[scenario]]\nname = "s"\nsaturation = 0.5\nyear = 2030\n', "year"),
    ):
        with pytest.raises(InputError, match=key):
            load_config(_write(tmp_path, body))
    tables = _cover_region(tmp_path)
    no_year = tables.replace("year = 2019\n", "")
    with pytest.raises(InputError, match="needs a year"):
        load_config(_write(tmp_path, no_year + '[[scenario]]\nname = "s"\nsaturation = 0.5\n'))
    with pytest.raises(InputError, match="applies with use_land_cover = true"):
        load_config(
            _write(
                tmp_path,
                tables + '[[scenario]]\nname = "s"\nsaturation = 0.5\nyear = 2030\n'
                "use_land_cover = false\n",
            )
        )
    with pytest.raises(InputError, match="does not apply to model 'slope_linear'"):
        load_config(
            _write(
                tmp_path,
                tables.replace("gentle_depth_m", "max_depth_m = 2.0\ngentle_depth_m")
                + '[[scenario]]\nname = "s"\nsaturation = 0.5\n',
            )
        )
    classes = np.ones((40, 50))
    classes[3, 4] = 7.0  # a class the table does not have, on a mapped cell
    write_raster(tmp_path / "cover.tif", classes, transform=GRID)
    toml = _write(tmp_path, tables + '[[scenario]]\nname = "s"\nsaturation = 0.5\n')
    with pytest.raises(InputError, match=r"land-cover values not in cover.csv .* classes: 1, 2"):
        prepare(load_config(toml))


def test_land_cover_polygons_and_their_spread_reach_the_probability(tmp_path):
    _region(tmp_path, depth_a="1.5")
    west, east = (
        box(500000.0, 5000000.0, 500200.0, 5000400.0),
        box(500200.0, 5000000.0, 500500.0, 5000400.0),
    )
    gpd.GeoDataFrame({"kind": ["wood", "meadow"]}, geometry=[west, east], crs="EPSG:32633").to_file(
        tmp_path / "cover.gpkg", driver="GPKG"
    )
    (tmp_path / "cover.csv").write_text(
        "class,root_cohesion_kpa,root_cohesion_kpa_sd,rooting_depth_m\n"
        "wood,4.0,1.5,2.0\nmeadow,1.0,,0.3\n"
    )
    toml = _write(
        tmp_path,
        '[land_cover]\npath = "cover.gpkg"\nclass_field = "kind"\ntable = "cover.csv"\n'
        '[[scenario]]\nname = "s"\nsaturation = 0.5\n',
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    root = _read(out / "s" / "root_cohesion_kpa.tif")
    assert root[10, 5] == pytest.approx(4.0) and root[10, 30] == 0.0
    pf = _read(out / "s" / "probability_of_failure.tif")
    assert 0.0 <= pf[10, 5] <= 1.0  # wood: a spread on its roots
    assert pf[10, 30] == -9999.0  # meadow: no spread given there


def test_per_unit_intensity_tables_leave_cells_of_varying_units_to_the_kernel(
    tmp_path, monkeypatch
):
    from slopescreen.maps.region import intensity_tables

    _region(tmp_path)
    (tmp_path / "idf.csv").write_text(
        "duration_h,return_period_yr,intensity_mm_h\n6,2,8\n6,100,30\n24,2,3\n24,100,10\n"
    )
    toml = _write(
        tmp_path,
        '[[scenario]]\nname = "r"\n[scenario.rainfall]\ninitial_water_table_depth_m = 1.0\n'
        '[rainfall_frequency]\nidf_table = "idf.csv"\nafter_h = 12.0\n',
    )
    run(toml, tmp_path / "kernel", progress=False, echo=lambda s: None)
    monkeypatch.setattr(intensity_tables, "MIN_CELLS_PER_NODE", 0)  # a grid "large enough"
    lines = []
    run(toml, tmp_path / "tables", progress=False, echo=lines.append)
    assert any(line.endswith("critical intensities from tables for B") for line in lines)
    a = _read(tmp_path / "kernel" / "r" / "critical_intensity_6h_mm_h.tif")
    b = _read(tmp_path / "tables" / "r" / "critical_intensity_6h_mm_h.tif")
    west = np.s_[:, :25]  # unit A, whose depth varies by cell: the kernel, exactly
    np.testing.assert_array_equal(a[west], b[west])


def test_soil_production_depth_on_a_lat_lon_paraboloid(tmp_path):
    """Curvature in ground metres on a geographic grid: a paraboloid of radius R in ground
    metres (east and north of its top, by pyproj's geodesic) gives the closed-form depth
    h0 ln(P0 rho_r R / (2 rho_s K)) (Heimsath et al. 1997) on every inner cell, within
    the five-point stencil's error on the ellipsoid (0.5%)."""
    from pyproj import Geod

    geod = Geod(ellps="WGS84")
    lat0, lon0, step = 45.0, 10.0, 0.0001
    n = 41
    lats = lat0 + (n // 2 - np.arange(n)) * step
    lons = lon0 + (np.arange(n) - n // 2) * step
    lon, lat = np.meshgrid(lons, lats)
    _, _, east = geod.inv(np.full(lon.shape, lon0), lat, lon, lat)
    _, _, north = geod.inv(np.full(lat.shape, lon0), np.full(lat.shape, lat0),
                           np.full(lat.shape, lon0), lat)  # fmt: skip
    radius = 400.0
    z = 800.0 - (east**2 + north**2) / (2.0 * radius)
    transform = from_origin(lon0 - (n // 2 + 0.5) * step, lat0 + (n // 2 + 0.5) * step, step, step)
    write_raster(tmp_path / "dem.tif", z, crs="EPSG:4326", transform=transform)
    gpd.GeoDataFrame(
        {"unit": ["A"], "depth_m": [1.0], "hydraulic_conductivity_m_s": [1e-5]}
        | {k: [v] for k, v in SOIL.items()},
        geometry=[box(lon0 - 1, lat0 - 1, lon0 + 1, lat0 + 1)],
        crs="EPSG:4326",
    ).to_file(tmp_path / "soils.geojson", driver="GeoJSON")
    p0, k, h0 = 3e-4, 0.005, 0.5
    (tmp_path / "s.toml").write_text(
        '[region]\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n'
        "[outputs]\nquicklook_map = false\nreport = false\nzones = false\n"
        f'[soil_depth]\nmodel = "soil_production"\nproduction_m_yr = {p0}\n'
        f"creep_diffusivity_m2_yr = {k}\nproduction_depth_m = {h0}\nmax_depth_m = 5.0\n"
        '[[scenario]]\nname = "s"\nsaturation = 0.0\n'
    )
    out = tmp_path / "out"
    run(tmp_path / "s.toml", out, progress=False, echo=lambda s: None)
    depth = _read(out / "s" / "soil_depth_m.tif")[1:-1, 1:-1]
    closed = h0 * math.log(p0 * 2.0 * radius / (2.0 * k))
    assert depth == pytest.approx(np.full(depth.shape, closed), rel=5e-3)


def test_backcalc_reads_each_cells_depth(tmp_path):
    from slopescreen.cli.main import main

    _region(tmp_path)
    toml = _write(tmp_path, '[[scenario]]\nname = "wet"\nsaturation = 1.0\n')
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    r, c = CELL
    x, y = GRID * (c + 0.5, r + 0.5)
    gpd.GeoDataFrame({"id": ["s1"]}, geometry=[Point(x, y)], crs="EPSG:32633").to_file(
        tmp_path / "slides.gpkg", driver="GPKG"
    )
    argv = ["backcalc", str(toml), "--out", str(out), "--inventory", str(tmp_path / "slides.gpkg")]
    assert main([*argv, "--scenario", "wet", "--parameter", "cohesion_kpa"]) == 0
    rows = (out / "validation" / "backcalc_wet_cohesion_kpa_cells.csv").read_text().splitlines()
    value = float(rows[1].split(",")[-1])
    beta = float(_read(out / "terrain" / "slope_deg.tif")[r, c])
    fs = factor_of_safety(beta, DEEP, value, 30.0, 18.0, 1.0)  # on the raster's 3.7 m
    assert fs == pytest.approx(1.0, abs=1e-6)


def test_sensitivity_takes_the_units_mean_of_a_field_that_varies(tmp_path):
    """The tornado of unit A stands at its median slope with its mean depth (the raster's
    area-weighted mean over A's cells, computed here from the raster and the unit codes);
    FS there is the core's."""
    import csv

    from slopescreen.cli.main import main

    _region(tmp_path)
    toml = _write(tmp_path, '[[scenario]]\nname = "dry"\nsaturation = 0.3\n')
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    assert main(["sensitivity", str(toml), "--out", str(out), "--scenario", "dry"]) == 0
    with open(out / "validation" / "sensitivity_dry.csv") as handle:
        rows = [r for r in csv.DictReader(handle) if r["soil_unit"] == "A"]
    codes = _read(out / "terrain" / "soil_unit.tif")
    depth = _read(tmp_path / "depth.tif")
    mean_depth = float(depth[codes == 1].mean())  # equal ground cells on this small grid
    base = factor_of_safety(float(rows[0]["median_slope_deg"]), mean_depth, 2.0, 30.0, 18.0, 0.3)
    assert float(rows[0]["fs_base"]) == pytest.approx(float(base), rel=1e-4)
    assert {r["parameter"] for r in rows} >= {"cohesion_kpa", "depth_m"}


def test_a_scenario_can_give_a_unit_a_raster(tmp_path):
    import json

    _region(tmp_path, depth_a="1.5")
    toml = _write(
        tmp_path,
        '[[scenario]]\nname = "table"\nsaturation = 0.0\n'
        '[[scenario]]\nname = "mapped"\nsaturation = 0.0\n'
        '[scenario.soil.A]\ndepth_m = "depth.tif"\n',
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    r, c = CELL
    assert _read(out / "table" / "soil_depth_m.tif")[r, c] == pytest.approx(1.5)
    assert _read(out / "mapped" / "soil_depth_m.tif")[r, c] == pytest.approx(DEEP, rel=1e-7)
    beta = float(_read(out / "terrain" / "slope_deg.tif")[r, c])
    assert _read(out / "mapped" / "fs.tif")[r, c] == pytest.approx(
        factor_of_safety(beta, DEEP, 2.0, 30.0, 18.0, 0.0), rel=2e-6
    )
    manifest = json.loads((out / "manifest.json").read_text())
    mapped = next(s for s in manifest["scenarios"] if s["name"] == "mapped")
    assert mapped["soil_overrides"]["A"]["depth_m"].endswith("depth.tif")
    assert "soil_field:mapped:A:depth_m" in manifest["inputs_sha256"]
    bad = np.full((40, 50), 0.01)  # below depth_m's 0.05 m on every cell of A
    write_raster(tmp_path / "depth.tif", bad, transform=GRID)
    with pytest.raises(InputError, match=r"depth.tif: depth_m raster is outside \[0.05, 50\]"):
        prepare(load_config(toml))


def test_a_storm_takes_conductivity_and_capacity_from_rasters(tmp_path):
    # K from a raster and D0 = K / C0 cell by cell (no D0 in the table): the storm runs, and
    # its FS at a cell equals the core's with that cell's K and D0
    from slopescreen.scenario import Storm, storm_response

    _region(tmp_path, depth_a="1.5")
    k = np.full((40, 50), 2e-5)
    k[CELL] = 5e-6
    write_raster(tmp_path / "k.tif", k, transform=GRID)
    (tmp_path / "soils.csv").write_text(
        "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s,"
        "moisture_capacity_per_m\nA,2,30,18,1.5,k.tif,0.1\nB,5,30,18,1.5,1e-5,0.1\n"
    )
    toml = _write(
        tmp_path,
        '[[scenario]]\nname = "storm"\n[scenario.storm]\nrain_mm_h = 15.0\nduration_h = 6.0\n'
        "later_h = 12.0\ninitial_water_table_depth_m = 1.0\n",
    )
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    r, c = CELL
    beta = float(_read(out / "terrain" / "slope_deg.tif")[r, c])
    storm = Storm(rain_mm_h=15.0, duration_h=6.0, later_h=12.0, water_table_depth_m=1.0)
    summary, _ = storm_response(
        np.array([beta]), storm, hydraulic_conductivity_m_s=5e-6, diffusivity_m2_s=5e-5,
        root_cohesion_kpa=0.0, saturated_unit_weight_kn_m3=18.0, depth_m=1.5, **SOIL,
    )  # fmt: skip
    assert _read(out / "storm" / "fs.tif")[r, c] == pytest.approx(
        float(summary.window_min_fs[0]), rel=2e-6
    )
