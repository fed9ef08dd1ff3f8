"""Bad inputs to the map engine: one line naming file and field, exit code 2, and nothing
already written is damaged. Uses a small region made here (invented data)."""

import csv
import json
import os

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import PARAMS, SCENARIO_TEXT, _dem, _polygons
from shapely.geometry import box

from slopescreen.cli.main import main
from slopescreen.maps.region import scenario_run, scenario_tiles


@pytest.fixture
def region(tmp_path):
    _dem(tmp_path / "dem.tif")
    _polygons(tmp_path / "soils.geojson")
    toml = tmp_path / "scenarios.toml"
    toml.write_text(SCENARIO_TEXT)
    return tmp_path, toml


def _fails(capsys, toml, *fragments, command="check"):
    code = main(
        [command, str(toml), "--out", str(toml.parent / "out")]
        if command == "run"
        else [command, str(toml)]
    )
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1, err
    assert "Traceback" not in err
    for fragment in fragments:
        assert fragment in err, err
    return err


def test_small_region_runs(region, capsys):
    folder, toml = region
    assert main(["run", str(toml), "--out", str(folder / "out"), "--quiet"]) == 0
    with rasterio.open(folder / "out" / "wet" / "fs.tif") as src:
        assert src.shape == (40, 50)


def test_missing_dem(region, capsys):
    folder, toml = region
    os.remove(folder / "dem.tif")
    _fails(capsys, toml, "scenarios.toml: line 3: [region] dem: file not found")


def test_dem_without_crs(region, capsys):
    folder, toml = region
    _dem(folder / "dem.tif", crs=None)
    _fails(capsys, toml, "dem.tif: DEM has no coordinate reference system", "dem_crs")


def test_dem_crs_declares_the_crs_of_a_dem_without_one(region, capsys):
    folder, toml = region
    assert main(["run", str(toml), "--out", str(folder / "with"), "--quiet"]) == 0
    _dem(folder / "dem.tif", crs=None)
    declared = SCENARIO_TEXT.replace('dem = "dem.tif"', 'dem = "dem.tif"\ndem_crs = "EPSG:32633"')
    toml.write_text(declared)
    assert main(["run", str(toml), "--out", str(folder / "declared"), "--quiet"]) == 0
    for name in ("fs.tif", "stability_class.tif"):
        with (
            rasterio.open(folder / "with" / "wet" / name) as a,
            rasterio.open(folder / "declared" / "wet" / name) as b,
        ):
            assert b.crs == a.crs and np.array_equal(a.read(1), b.read(1))
    # another CRS changes the ground lengths (UTM zone 33 at 45 N against zone 31)
    toml.write_text(declared.replace("EPSG:32633", "EPSG:32631"))
    _polygons(folder / "soils.geojson", crs="EPSG:32631")
    assert main(["run", str(toml), "--out", str(folder / "other"), "--quiet"]) == 0
    with rasterio.open(folder / "other" / "wet" / "fs.tif") as b:
        assert b.crs.to_epsg() == 32631
    toml.write_text(declared.replace("EPSG:32633", "EPSG:99999999"))
    _fails(capsys, toml, "[region] dem_crs", "is not a CRS")
    _dem(folder / "dem.tif")  # a DEM with its own CRS: dem_crs is refused
    toml.write_text(declared)
    _fails(capsys, toml, "dem.tif: [region] dem_crs is for a DEM without", "remove dem_crs")


def test_polygons_miss_the_dem(region, capsys):
    folder, toml = region
    _polygons(folder / "soils.geojson", bounds=(600000.0, 5100000.0, 600500.0, 5100400.0))
    _fails(
        capsys, toml, "soils.geojson: no soil polygon overlaps the DEM",
        "polygons span x 600000 to 600500, y 5100000 to 5100400",
        "the DEM x 500000 to 500500, y 5000000 to 5000400",
    )  # fmt: skip


def test_semicolon_soil_table_with_decimal_commas_is_read_and_said(region, capsys):
    # a spreadsheet in a European locale writes ';' between cells and decimal commas
    folder, toml = region
    head = "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s"
    (folder / "comma.csv").write_text(f"{head}\nA,2.5,30,18,1.5,1e-5\nB,2.5,30,18,1.5,1e-5\n")
    (folder / "semi.csv").write_text(
        head.replace(",", ";") + "\nA;2,5;30;18;1,5;1e-5\nB;2,5;30;18;1,5;1e-5\n"
    )
    lines = {}
    for name in ("comma", "semi"):
        toml.write_text(SCENARIO_TEXT.replace(
            'soil_unit_field = "unit"', f'soil_unit_field = "unit"\nsoil_table = "{name}.csv"'
        ))  # fmt: skip
        assert main(["run", str(toml), "--out", str(folder / name), "--quiet"]) == 0
        lines[name] = capsys.readouterr()
    with (
        rasterio.open(folder / "comma" / "wet" / "fs.tif") as a,
        rasterio.open(folder / "semi" / "wet" / "fs.tif") as b,
    ):
        assert np.array_equal(a.read(1), b.read(1))
    said = lines["semi"].out + lines["semi"].err
    assert "semi.csv: soil table read with ';' separators and decimal commas" in said
    assert "separators" not in lines["comma"].out + lines["comma"].err


def test_unknown_soil_column_points_to_the_list(region, capsys):
    folder, toml = region
    (folder / "t.csv").write_text("unit,cohesion_kpa,frction_deg\nA,1,30\nB,1,30\n")
    toml.write_text(SCENARIO_TEXT.replace(
        'soil_unit_field = "unit"', 'soil_unit_field = "unit"\nsoil_table = "t.csv"'
    ))  # fmt: skip
    err = _fails(capsys, toml, "unknown column 'frction_deg'", "docs/scenario-file.md")
    assert len(err) < 300  # one short line, not every allowed name


def test_a_refused_run_leaves_the_disk_as_it_was(region, capsys):
    folder, toml = region
    _dem(folder / "dem.tif", crs=None)
    out = folder / "new_out"
    _fails(capsys, toml, "DEM has no coordinate reference system", command="run")
    assert main(["run", str(toml), "--out", str(out)]) == 2
    assert not out.exists()  # no folder, no lock file
    out.mkdir()
    (out / "mine.txt").write_text("a user's file")
    assert main(["run", str(toml), "--out", str(out)]) == 2
    assert sorted(p.name for p in out.iterdir()) == ["mine.txt"]


def test_missing_soil_parameter(region, capsys):
    folder, toml = region
    frame = gpd.read_file(folder / "soils.geojson").drop(columns=["friction_deg"])
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")
    _fails(
        capsys,
        toml,
        "soils.geojson: unit 'A', field friction_deg: missing",
        "allowed range [0, 70]",
    )


def test_out_of_range_soil_parameter(region, capsys):
    folder, toml = region
    _polygons(folder / "soils.geojson", cohesion_kpa=-5.0)
    _fails(capsys, toml, "unit 'A', field cohesion_kpa: -5 is outside the allowed range")


def _line(text, fragment, occurrence=1):
    """The 1-based number of the line holding ``fragment`` (its n-th occurrence)."""
    hits = [i for i, line in enumerate(text.splitlines(), start=1) if fragment in line]
    return hits[occurrence - 1]


def test_unknown_key_names_the_line(region, capsys):
    _folder, toml = region
    text = SCENARIO_TEXT.replace("recharge_mm_day = 40.0", "rechrage_mm_day = 40.0")
    toml.write_text(text)
    line = _line(text, "rechrage_mm_day")
    _fails(capsys, toml, f"line {line}: [scenario] rechrage_mm_day: unknown key")
    _fails(capsys, toml, "(did you mean recharge_mm_day?)")


def test_duplicate_scenario_name(region, capsys):
    _folder, toml = region
    text = SCENARIO_TEXT.replace('name = "dry"', 'name = "wet"')
    toml.write_text(text)
    line = _line(text, 'name = "wet"', occurrence=2)
    _fails(capsys, toml, f"line {line}: [scenario] name: duplicate scenario name 'wet'")


def test_out_of_range_scenario_value(region, capsys):
    _folder, toml = region
    text = SCENARIO_TEXT.replace("saturation = 0.0", "saturation = 1.5")
    toml.write_text(text)
    line = _line(text, "saturation = 1.5")
    _fails(capsys, toml, f"line {line}: [scenario] saturation: saturation must be in [0, 1]")


def test_soil_table_missing_unit(region, capsys):
    folder, toml = region
    (folder / "table.csv").write_text(
        "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,"
        "depth_m,hydraulic_conductivity_m_s\nA,1,30,18,1,1e-5\n"
    )
    toml.write_text(
        SCENARIO_TEXT.replace(
            'soil_unit_field = "unit"', 'soil_unit_field = "unit"\nsoil_table = "table.csv"'
        )
    )
    _fails(capsys, toml, "table.csv: unit 'B' from soils.geojson has no row in the soil table")


def test_bad_saturation_raster_keeps_previous_outputs(region, capsys):
    folder, toml = region
    out = folder / "out"
    assert main(["run", str(toml), "--out", str(out), "--quiet"]) == 0
    before = (out / "dry" / "fs.tif").read_bytes()
    with rasterio.open(folder / "dem.tif") as src:
        profile = src.profile
    with rasterio.open(folder / "m.tif", "w", **profile) as dst:
        dst.write(np.full((1, 40, 50), 1.7, np.float32))
    toml.write_text(SCENARIO_TEXT.replace("saturation = 0.0", 'saturation_raster = "m.tif"'))
    _fails(capsys, toml, "m.tif: saturation values must be in [0, 1], found 1.7", command="run")
    assert (out / "dry" / "fs.tif").read_bytes() == before
    leftovers = [p for p in out.rglob(".*") if ".cache" not in p.parts]
    assert [p.name for p in leftovers] == [".slopescreen.lock"]


def test_interrupted_run_leaves_previous_outputs_whole(region, capsys, monkeypatch):
    folder, toml = region
    out = folder / "out"
    assert main(["run", str(toml), "--out", str(out), "--quiet"]) == 0
    before = {p: p.read_bytes() for p in out.rglob("*") if p.is_file()}

    calls = {"n": 0}
    real = scenario_tiles.compute_tile

    def interrupted(*args, **kwargs):  # Ctrl-C in the second scenario's first tile
        calls["n"] += 1
        if calls["n"] == 2:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(scenario_run, "compute_tile", interrupted)
    assert main(["run", str(toml), "--out", str(out), "--quiet"]) == 130
    assert calls["n"] == 2
    after = {p: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    # the previous run is put back whole, manifest and report included (a killed process
    # cannot do that: test_trustworthy_runs kills one and reads what its manifest says)
    assert after == before
    assert (out / ".slopescreen.lock").read_bytes() == b""  # at rest it names nobody
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["complete"] is True
    assert "run not finished" not in (out / "report.html").read_text()
    leftovers = [p for p in out.rglob(".*") if ".cache" not in p.parts]
    assert [p.name for p in leftovers] == [".slopescreen.lock"]


def test_geographic_dem_with_projected_polygons(tmp_path, capsys):
    # DEM in degrees, soil polygons in UTM: reprojected onto the DEM grid, areas in m2.
    _dem(tmp_path / "dem.tif", crs="EPSG:4326", origin=(15.0, 45.004), cell=0.0001)
    from pyproj import Transformer

    to_utm = Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True)
    x0, y0 = to_utm.transform(14.999, 44.999)
    x1, y1 = to_utm.transform(15.006, 45.005)
    _polygons(tmp_path / "soils.geojson", bounds=(x0, y0, x1, y1))
    toml = tmp_path / "scenarios.toml"
    toml.write_text(SCENARIO_TEXT)
    assert main(["run", str(toml), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    with rasterio.open(tmp_path / "out" / "wet" / "fs.tif") as src:
        assert src.crs.is_geographic
    report = (tmp_path / "out" / "report.html").read_text()
    assert "geographic CRS" in report
    with open(tmp_path / "out" / "wet" / "summary.csv") as handle:
        rows = list(csv.DictReader(handle))
    total_ha = sum(float(r["area_ha"]) for r in rows if r["soil_unit"] == "ALL")
    # 40 x 50 cells of about 7.87 m x 11.1 m at 45 N (pyproj geodesic scale): every cell,
    # edges included (one-sided slopes there)
    assert total_ha == pytest.approx(40 * 50 * 7.87 * 11.1 / 10_000, rel=0.02)


def test_coverage_warnings(tmp_path, capsys):
    # Polygons cover the western 60% of the DEM; unit C lies far outside it.
    _dem(tmp_path / "dem.tif")
    rows = [dict(PARAMS, unit="A"), dict(PARAMS, unit="C")]
    frame = gpd.GeoDataFrame(
        rows,
        geometry=[
            box(500000.0, 5000000.0, 500300.0, 5000400.0),
            box(700000.0, 5000000.0, 700100.0, 5000100.0),
        ],
        crs="EPSG:32633",
    )
    frame.to_file(tmp_path / "soils.geojson", driver="GeoJSON")
    toml = tmp_path / "scenarios.toml"
    toml.write_text(SCENARIO_TEXT)
    assert main(["check", str(toml)]) == 0
    text = capsys.readouterr().out
    assert "soil units entirely outside the DEM: C" in text
    assert "40.0% of the DEM's data cells (800 cells) lie in no soil unit" in text


def test_dem_nodata_propagates(tmp_path, capsys):
    _dem(tmp_path / "dem.tif")
    with rasterio.open(tmp_path / "dem.tif", "r+") as dst:
        z = dst.read(1)
        z[20, 20] = -9999.0
        dst.write(z, 1)
    _polygons(tmp_path / "soils.geojson")
    toml = tmp_path / "scenarios.toml"
    toml.write_text(SCENARIO_TEXT)
    assert main(["run", str(toml), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    with rasterio.open(tmp_path / "out" / "dry" / "fs.tif") as src:
        fs = src.read(1, masked=True)
    with rasterio.open(tmp_path / "out" / "terrain" / "slope_one_sided.tif") as src:
        one_sided = src.read(1)
    assert fs.mask[20, 20] and fs.mask.sum() == 1  # only the hole itself has no value
    ring = np.zeros(one_sided.shape, bool)
    ring[19:22, 19:22] = True
    ring[20, 20] = False
    ring[[0, -1], :] = True
    ring[:, [0, -1]] = True
    assert (one_sided[ring] == 1).all()  # next to the hole and on the edges: one-sided
    assert one_sided[20, 20] == 255 and (one_sided[~ring & (one_sided != 255)] == 0).all()


def test_unreadable_dem_and_polygons(region, capsys):
    folder, toml = region
    (folder / "dem.tif").write_text("not a raster")
    _fails(capsys, toml, "dem.tif: cannot read DEM")
    _dem(folder / "dem.tif")
    (folder / "soils.geojson").write_text("{ broken")
    _fails(capsys, toml, "soils.geojson: cannot read soil polygons")


def test_storm_and_reliability_errors(region, capsys):
    _folder, toml = region
    storm = SCENARIO_TEXT.replace(
        "saturation = 0.0", "[scenario.storm]\nrain_mm_h = 10.0\nduration_h = 6.0\n"
    )
    toml.write_text(storm)
    _fails(capsys, toml, "[scenario.storm]: storm needs initial_water_table_depth_m")
    toml.write_text(
        storm.replace(
            "duration_h = 6.0", "duration_h = 6.0\ninitial_water_table_depth_m = 1.0\nlater_h = 2.0"
        )
    )
    _fails(capsys, toml, "later_h: must not be before the end of the storm (6 h)")
    toml.write_text(
        storm.replace("duration_h = 6.0", "duration_h = 6.0\ninitial_water_table_depth_m = 1.0")
    )
    _fails(
        capsys,
        toml,
        "storm scenario 'dry' needs diffusivity_m2_s (or "
        "moisture_capacity_per_m) for soil unit 'A'",
        command="run",
    )
    toml.write_text(
        SCENARIO_TEXT.replace("[[scenario]]", '[reliability]\nmethod = "guess"\n\n[[scenario]]', 1)
    )
    _fails(capsys, toml, "[reliability] method: must be one of taylor, monte_carlo")


def test_spread_errors(region, capsys):
    folder, toml = region
    _polygons(folder / "soils.geojson", cohesion_kpa_sd=-1.0)
    _fails(capsys, toml, "unit 'A', field cohesion_kpa spread: sd must be in [0, inf]")
    _polygons(folder / "soils.geojson", cohesion_kpa_sd=1.0, c_phi_correlation=-0.5)
    _fails(capsys, toml, "unit 'A', field c_phi_correlation: needs spreads for both")
    _polygons(
        folder / "soils.geojson", cohesion_kpa_sd=1.0, friction_deg_sd=2.0, c_phi_correlation=-1.5
    )
    _fails(capsys, toml, "c_phi_correlation: -1.5 is outside the allowed range [-1, 1]")


def test_monte_carlo_maps_are_reproducible(region, capsys):
    # Same random_state, same probability map, bit for bit; a different one differs a little.
    folder, toml = region
    _polygons(
        folder / "soils.geojson", cohesion_kpa_sd=1.0, friction_deg_sd=3.0, c_phi_correlation=-0.3
    )
    text = SCENARIO_TEXT.replace(
        "[[scenario]]",
        '[reliability]\nmethod = "monte_carlo"\nsamples = 400\nrandom_state = 3\n\n[[scenario]]',
        1,
    )
    toml.write_text(text)
    maps = []
    for out, state in (("a", 3), ("b", 3), ("c", 4)):
        toml.write_text(text.replace("random_state = 3", f"random_state = {state}"))
        assert main(["run", str(toml), "--out", str(folder / out), "--quiet"]) == 0
        with rasterio.open(folder / out / "dry" / "probability_of_failure.tif") as src:
            assert src.tags()["method"] == "monte_carlo"
            maps.append(src.read(1, masked=True))
    assert np.array_equal(maps[0], maps[1])
    assert not np.array_equal(maps[0], maps[2])
    assert np.ma.max(np.abs(maps[0] - maps[2])) < 0.15
    assert 0.0 <= maps[0].min() and maps[0].max() <= 1.0


def test_saturation_raster_on_another_grid(region, capsys):
    # A coarser saturation raster in geographic coordinates is resampled onto the DEM grid;
    # a uniform 0.5 must give the same FS as "saturation = 0.5" (bilinear of a constant).
    folder, toml = region
    from pyproj import Transformer

    to_geo = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True)
    west, south = to_geo.transform(499900.0, 4999900.0)
    east, north = to_geo.transform(500600.0, 5000500.0)
    transform = from_origin(west, north, (east - west) / 20, (north - south) / 20)
    with rasterio.open(
        folder / "m.tif",
        "w",
        driver="GTiff",
        width=20,
        height=20,
        count=1,
        dtype="float32",
        crs="EPSG:4326",
        transform=transform,
    ) as dst:
        dst.write(np.full((1, 20, 20), 0.5, np.float32))
    toml.write_text(
        SCENARIO_TEXT.replace("saturation = 0.0", 'saturation_raster = "m.tif"')
        + '\n[[scenario]]\nname = "half"\nsaturation = 0.5\n'
    )
    assert main(["run", str(toml), "--out", str(folder / "out"), "--quiet"]) == 0
    with (
        rasterio.open(folder / "out" / "dry" / "fs.tif") as a,
        rasterio.open(folder / "out" / "half" / "fs.tif") as b,
    ):
        fs_raster, fs_uniform = a.read(1, masked=True), b.read(1, masked=True)
    assert fs_raster.count() == fs_uniform.count() > 1000
    assert np.ma.allclose(fs_raster, fs_uniform, rtol=1e-5)


def test_override_moves_the_distribution(region, capsys):
    # Overriding a unit's cohesion shifts its spread with it: the same probabilities as a
    # soil table that had the new value from the start.
    folder, toml = region
    _polygons(folder / "soils.geojson", cohesion_kpa_sd=1.0, friction_deg_sd=2.0)
    toml.write_text(SCENARIO_TEXT + "[scenario.soil.A]\ncohesion_kpa = 5.0\n")
    assert main(["run", str(toml), "--out", str(folder / "override"), "--quiet"]) == 0
    _polygons(folder / "soils.geojson", cohesion_kpa=5.0, cohesion_kpa_sd=1.0, friction_deg_sd=2.0)
    toml.write_text(SCENARIO_TEXT)
    assert main(["run", str(toml), "--out", str(folder / "table"), "--quiet"]) == 0
    with (
        rasterio.open(folder / "override" / "dry" / "probability_of_failure.tif") as a,
        rasterio.open(folder / "table" / "dry" / "probability_of_failure.tif") as b,
    ):
        assert np.array_equal(a.read(1), b.read(1))


def test_dem_without_data_cells(region, capsys):
    folder, toml = region
    with rasterio.open(folder / "dem.tif", "r+") as dst:
        dst.write(np.full((1, 40, 50), -9999.0, np.float32))
    _fails(capsys, toml, "dem.tif: DEM holds no data cells", command="run")
    assert not (folder / "out" / "terrain" / "soil_unit.tif").exists()
