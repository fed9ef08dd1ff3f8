"""A map is right or the run says no: bad inputs, damaged and stale caches, links, two runs
on one folder, killed runs. Real files and real processes throughout; invented regions."""

import codecs
import json
import os
import re
import signal
import subprocess
import sys
import time

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import SCENARIO_TEXT, SCENARIO_TEXT_WITH_MAPS, _dem, _polygons, write_raster
from shapely.geometry import box

from slopescreen.cli.main import main
from slopescreen.maps.region.engine import run


def _files(out):
    """Every output of a run folder (no lock, no work folders, no cache), as bytes."""
    return {
        str(p.relative_to(out)): p.read_bytes()
        for p in sorted(out.rglob("*"))
        if p.is_file()
        and ".cache" not in p.relative_to(out).parts
        and not any(part.startswith(".") for part in p.relative_to(out).parts)
    }


def _outputs(out):
    """The outputs that describe the results: all but the manifest (times, timings), and
    the report with its run times blanked."""
    files = {k: v for k, v in _files(out).items() if k != "manifest.json"}
    if "report.html" in files:
        files["report.html"] = undated(files["report.html"])
    return files


def undated(report: bytes) -> bytes:
    """A report with its run start and end times and its command line blanked."""
    report = re.sub(rb"Run [0-9TZ:-]+ to [0-9TZ:-]+ \(UTC\)", b"Run (UTC)", report)
    return re.sub(rb"<tr><td class='l'>command</td>.*?</tr>", b"", report)


def _run(toml, out, *extra):
    lines = []
    run(toml, out, progress=False, echo=lines.append, **dict(extra))
    return lines


def _region(folder, **soil):
    folder.mkdir(parents=True, exist_ok=True)
    _dem(folder / "dem.tif")
    _polygons(folder / "soils.geojson", **soil)
    toml = folder / "scenarios.toml"
    toml.write_text(SCENARIO_TEXT)
    return toml


# ----------------------------------------------------------------------------------------
# bad inputs: exit 2, one line, no traceback, an earlier good run untouched


@pytest.fixture(scope="module")
def sentinel(tmp_path_factory):
    """A good run whose outputs every bad run below must leave byte-identical."""
    base = tmp_path_factory.mktemp("sentinel")
    out = base / "out"
    assert main(["run", str(_region(base / "good")), "--out", str(out), "--quiet"]) == 0
    return out, _files(out)


def _text(old, new):
    return lambda folder: _edit(folder / "scenarios.toml", old, new)


def _edit(path, old, new):
    text = path.read_text()
    assert old in text, old
    path.write_text(text.replace(old, new, 1))


def _write(name, data):
    return lambda folder: (folder / name).write_bytes(data)


def _whole_toml(text):
    return _write("scenarios.toml", text.encode())


REGION_LINES = SCENARIO_TEXT.split("[classes]")[0]
ONE_SCENARIO = '[[scenario]]\nname = "a"\nsaturation = 0.1\n'


def _soil_table(folder, text, encoding="utf-8", bom=b""):
    (folder / "table.csv").write_bytes(bom + text.encode(encoding))
    _edit(
        folder / "scenarios.toml",
        'soil_unit_field = "unit"',
        'soil_unit_field = "unit"\nsoil_table = "table.csv"',
    )


TABLE = (
    "unit,name,cohesion_kpa,friction_deg,unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s,"
    "strength_lab_tests\nA,sand,2,30,18,1.5,1e-5,{lab}\nB,clay,5,30,18,1.5,1e-5,\n"
)


def _with_lab(folder, lab_bytes):
    (folder / "lab.csv").write_bytes(lab_bytes)
    _soil_table(folder, TABLE.format(lab="lab.csv"))


def _saturation(folder, values, **kw):
    crs = kw.get("crs", "EPSG:32633")
    origin = kw.get("origin", (500000.0, 5000400.0))
    write_raster(folder / "m.tif", values, crs, from_origin(*origin, 10.0, 10.0), None)
    _edit(folder / "scenarios.toml", "saturation = 0.0", 'saturation_raster = "m.tif"')


def _null_unit(folder):
    frame = gpd.read_file(folder / "soils.geojson")
    frame.loc[0, "unit"] = None
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")


def _transformed_dem(folder, transform):
    with rasterio.open(folder / "dem.tif") as src:
        profile, z = src.profile, src.read(1)
    profile.update(transform=transform)
    with rasterio.open(folder / "dem.tif", "w", **profile) as dst:
        dst.write(z, 1)


def _huge_vrt(folder):
    # 50,000 x 50,000 cells: over the 2^31-cell limit, refused before anything is read
    (folder / "dem.vrt").write_text(
        '<VRTDataset rasterXSize="50000" rasterYSize="50000"><SRS>EPSG:32633</SRS>'
        "<GeoTransform>500000, 1, 0, 5000400, 0, -1</GeoTransform>"
        '<VRTRasterBand dataType="Float32" band="1"/></VRTDataset>'
    )
    _edit(folder / "scenarios.toml", 'dem = "dem.tif"', 'dem = "dem.vrt"')


MC = '[reliability]\nmethod = "monte_carlo"\n'


def _inventory(table, frame=None, data=None, name="slides.geojson"):
    """An [inventory] table and its file (a GeoDataFrame, or raw bytes)."""

    def change(folder):
        (folder / "scenarios.toml").write_text(
            (folder / "scenarios.toml").read_text() + f'\n[inventory]\npath = "{name}"\n{table}'
        )
        if frame is not None:
            frame.to_file(folder / name, driver="GeoJSON")
        elif data is not None:
            (folder / name).write_bytes(data)

    return change


def _slides(n=3, **fields):
    from shapely.geometry import Point

    points = [Point(500105.0 + 30.0 * i, 5000195.0) for i in range(n)]
    return gpd.GeoDataFrame(
        {"name": [f"S{i}" for i in range(n)], **fields}, geometry=points, crs="EPSG:32633"
    )


INVENTORY_INPUTS = {
    "inventory empty": (
        _inventory("", data=b'{"type": "FeatureCollection", "features": []}'),
        "slides.geojson: landslide inventory is empty",
    ),
    "inventory without geometry": (
        _inventory("", data=b"name,year\nS1,2001\n", name="slides.csv"),
        "slides.csv: no geometry",
    ),
    "inventory key missing": (
        _inventory('key = "slide_id"\n', _slides()),
        "no field 'slide_id' (key); fields: name",
    ),
    "inventory date field missing": (
        _inventory('date_field = "when"\n', _slides()),
        "no field 'when' (date_field)",
    ),
    "inventory date not a date": (
        _inventory('date_field = "when"\n', _slides(when=["2001-03-01", "soon", "2003"])),
        "feature 1: field 'when' (date_field) holds 'soon', not a date",
    ),
    "inventory lines": (
        _inventory(
            "",
            gpd.GeoDataFrame(
                geometry=gpd.GeoSeries.from_wkt(["LINESTRING (500100 5000200, 500200 5000100)"]),
                crs="EPSG:32633",
            ),
        ),
        "geometry must be all points or all polygons, found LineString",
    ),
    "inventory part with points": (
        _inventory('part = "whole"\n', _slides()),
        "part = 'whole' applies to polygons; this inventory holds points",
    ),
    "inventory part unknown": (_inventory('part = "top"\n', _slides()), 'must be "scarp"'),
    "inventory off the DEM": (
        _inventory("", _slides().set_geometry(_slides().geometry.translate(1e5, 0))),
        "no landslide of the inventory lies on the DEM",
    ),
    "inventory block size with dates": (
        _inventory('date_field = "year"\nblock_size_m = 100.0\n', _slides(year=[1, 2, 3])),
        "[inventory] block_size_m: applies to the spatial-block split only",
    ),
    "inventory test share": (
        _inventory("test_share = 0.99\n", _slides()),
        "[inventory] test_share: ",
    ),
    "inventory file missing": (_inventory("", None), "[inventory] path: file not found"),
    "inventory crs label wrong": (
        _inventory("", _slides().set_crs("EPSG:4326", allow_override=True)),
        "no feature can be placed in the DEM's CRS from the inventory's CRS",
    ),
    "inventory key empty": (
        _inventory('key = "slide_id"\n', _slides(slide_id=["a", None, "c"])),
        "feature 1: field 'slide_id' (key) holds no value; every landslide needs one",
    ),
    "inventory dates day or month first": (
        _inventory('date_field = "when"\n', _slides(when=["03/04/2019", "05/06/2019", "2003"])),
        "dates such as '03/04/2019' read as day/month or month/day",
    ),
    "inventory unknown key": (
        _inventory("date_feild = 1\n", _slides()),
        "unknown key (did you mean date_field?)",
    ),
}
LATIN1_TOML = SCENARIO_TEXT.replace("test region", "Rég").encode("latin-1")
BAD_INPUTS = {
    # text files in encodings other than UTF-8 (with or without BOM) or UTF-16 with BOM
    "toml latin-1": (_write("scenarios.toml", LATIN1_TOML), "is not UTF-8 text (byte 0xe9"),
    "toml utf-16 without BOM": (
        _write("scenarios.toml", SCENARIO_TEXT.encode("utf-16-le")),
        "holds NUL characters",
    ),
    "toml binary": (_write("scenarios.toml", bytes(range(256))), "scenarios.toml"),
    "toml empty": (_write("scenarios.toml", b""), "[region]: a [region] table is required"),
    "soil table latin-1": (
        lambda f: _soil_table(f, TABLE.format(lab="").replace("sand", "sablé"), "latin-1"),
        "table.csv: soil table is not UTF-8",
    ),
    "soil table utf-16 no BOM": (
        lambda f: _soil_table(f, TABLE.format(lab=""), "utf-16-le"),
        "table.csv: soil table holds NUL",
    ),
    "lab tests latin-1": (
        lambda f: _with_lab(
            f, "sigma3_kpa,deviator_kpa,specimen\n50,80,é1\n100,150,é2\n".encode("latin-1")
        ),
        "lab.csv: lab-test file is not UTF-8",
    ),
    "lab tests path to another file": (
        lambda f: _soil_table(f, TABLE.format(lab="scenarios.toml")),
        "none of its",
    ),
    # tables and values of the wrong type or size
    "classes = 5": (_whole_toml(f"classes = 5\n{REGION_LINES}{ONE_SCENARIO}"), "must be a table"),
    "outputs text": (_whole_toml(f'outputs = "x"\n{REGION_LINES}{ONE_SCENARIO}'), "[outputs]"),
    "reliability list": (
        _whole_toml(f"reliability = [1]\n{REGION_LINES}{ONE_SCENARIO}"),
        "must be a table",
    ),
    "scenario = [1, 2]": (
        _whole_toml(f"scenario = [1, 2]\n{REGION_LINES}"),
        "each scenario must be a [[scenario]] table",
    ),
    "scenario text": (_whole_toml(f'scenario = "x"\n{REGION_LINES}'), "scenario"),
    "region = 5": (_whole_toml(f"region = 5\n{ONE_SCENARIO}"), "[region] table is required"),
    "deep nesting": (
        _whole_toml(f"{REGION_LINES}[classes]\nfs_breaks = {'[' * 5000}{']' * 5000}\n"),
        "nested too deeply",
    ),
    "huge integer": (
        _text("saturation = 0.0", f"saturation = {10**30}"),
        "saturation must be in [0, 1]",
    ),
    "huge samples": (
        _text("[[scenario]]", f"{MC}samples = {2**62}\n\n[[scenario]]"),
        "samples: must be a whole number",
    ),
    "fractional samples": (
        _text("[[scenario]]", f"{MC}samples = 5.5\n\n[[scenario]]"),
        "samples: must be a whole number",
    ),
    "largest random_state": (
        _text("[[scenario]]", f"{MC}random_state = {2**63 - 1}\n\n[[scenario]]"),
        "random_state: must be a whole number in [0, 4294967295]",
    ),
    "negative random_state": (
        _text("[[scenario]]", f"{MC}random_state = -1\n\n[[scenario]]"),
        "random_state",
    ),
    "name with newline": (_text('name = "dry"', 'name = "dry\\n"'), "(it names a folder)"),
    "name with slash": (_text('name = "dry"', 'name = "../dry"'), "(it names a folder)"),
    "name terrain": (_text('name = "dry"', 'name = "terrain"'), "'terrain' is reserved"),
    "name TERRAIN": (_text('name = "dry"', 'name = "TERRAIN"'), "is reserved"),
    "name manifest.json": (_text('name = "dry"', 'name = "manifest.json"'), "is reserved"),
    "name report.html": (_text('name = "dry"', 'name = "report.html"'), "is reserved"),
    "description number": (
        _text('name = "dry"', 'name = "dry"\ndescription = 5'),
        "description: must be a non-empty text",
    ),
    "saturation nan": (_text("saturation = 0.0", "saturation = nan"), "got NaN"),
    "recharge inf": (_text("recharge_mm_day = 40.0", "recharge_mm_day = inf"), "got inf"),
    "seismic true": (
        _text("saturation = 0.0", "saturation = 0.0\nseismic_coefficient = true"),
        "seismic_coefficient: must be a number",
    ),
    "breaks decreasing": (
        _text("[classes]", "[classes]\nfs_breaks = [1.5, 1.0]"),
        "strictly increasing",
    ),
    "fs_cap too low": (
        _text(
            "[outputs]\n",
            "[outputs]\nfs_cap = 1\n",
        ),
        "fs_cap",
    ),
    "zones flag text": (
        _text("[outputs]\n", '[outputs]\nzones = "yes"\n'),
        "must be true or false",
    ),
    "key with newline": (_text("[classes]", '[classes]\n"a\\nb" = 1'), "unknown key"),
    "elevation unit": (
        _text('soil_unit_field = "unit"', 'soil_unit_field = "unit"\ndem_elevation_unit = "yd"'),
        'must be "m" or "ft"',
    ),
    "override unknown unit": (
        _text("saturation = 0.0", "saturation = 0.0\n[scenario.soil.Z]\ncohesion_kpa = 1.0"),
        "soil override for unknown unit 'Z'",
    ),
    # keys that would change nothing for this configuration are refused
    "samples with taylor": (
        _text("[[scenario]]", "[reliability]\nsamples = 500\n\n[[scenario]]"),
        'samples: applies to method = "monte_carlo" only',
    ),
    "fs_distribution with monte carlo": (
        _text("[[scenario]]", f'{MC}fs_distribution = "normal"\n\n[[scenario]]'),
        'fs_distribution: applies to method = "taylor"',
    ),
    "zone size without zones": (
        _text("[outputs]\n", "[outputs]\nzones = false\n"),
        "min_zone_area_m2: applies to low-margin zones",
    ),
    "comparison baseline unknown": (
        _text("[[scenario]]", '[comparison]\nbaseline = "drry"\n\n[[scenario]]'),
        "no scenario 'drry' (did you mean dry?)",
    ),
    "comparison pair of one name": (
        _text("[[scenario]]", '[comparison]\npairs = [["dry", "dry"]]\n\n[[scenario]]'),
        "two different names",
    ),
    "old and new classes table": (
        _text("[classes]", "[hazard]\nfs_breaks = [1.0]\n\n[classes]"),
        "give classes only (hazard is its old name)",
    ),
    "diffusivity override without storm": (
        _text("saturation = 0.0", "saturation = 0.0\n[scenario.soil.A]\ndiffusivity_m2_s = 1e-4"),
        "diffusivity_m2_s: applies to storm and rainfall scenarios only",
    ),
    # files the run cannot use
    "soil polygon without unit": (_null_unit, "has no value in field 'unit'"),
    "mirrored DEM": (
        lambda f: _transformed_dem(f, from_origin(500500.0, 5000400.0, -10.0, 10.0)),
        "without rotation or mirroring",
    ),
    "south-up DEM": (
        lambda f: _transformed_dem(f, rasterio.Affine(10.0, 0.0, 500000.0, 0.0, 10.0, 5000000.0)),
        "without rotation or mirroring",
    ),
    "DEM over the cell limit": (_huge_vrt, "at most 2,147,483,647 (2^31 - 1) per run"),
    "DEM not a raster": (_write("dem.tif", b"not a raster"), "dem.tif: cannot read DEM"),
    "saturation above one": (
        lambda f: _saturation(f, np.full((40, 50), 1.7)),
        "m.tif: saturation values must be in [0, 1], found 1.7",
    ),
    "saturation below zero": (
        lambda f: _saturation(f, np.full((40, 50), -0.2)),
        "saturation values must be in [0, 1], found -0.2",
    ),
    "saturation on another grid": (
        lambda f: _saturation(f, np.full((40, 50), 0.5), origin=(900000.0, 6000000.0)),
        "m.tif: saturation raster covers no cell of the DEM",
    ),
    "saturation not a raster": (
        lambda f: (_saturation(f, np.full((4, 5), 0.5)), (f / "m.tif").write_text("x")),
        "m.tif: cannot read saturation raster",
    ),
}


def _recharge_raster(folder, values, origin=(500000.0, 5000400.0), cell=10.0):
    write_raster(folder / "rch.tif", values, "EPSG:32633", from_origin(*origin, cell, cell), None)
    _edit(folder / "scenarios.toml", "recharge_mm_day = 40.0", 'recharge_mm_day = "rch.tif"')


def _storm_raster(folder, values):
    _recharge_raster(folder, np.full((40, 50), 10.0))
    frame = gpd.read_file(folder / "soils.geojson")
    frame.assign(diffusivity_m2_s=1e-4).to_file(folder / "soils.geojson", driver="GeoJSON")
    write_raster(
        folder / "rain.tif",
        values,
        "EPSG:32633",
        from_origin(500000.0, 5000400.0, 10.0, 10.0),
        None,
    )
    _edit(
        folder / "scenarios.toml",
        'name = "dry"\nsaturation = 0.0',
        'name = "dry"\n[scenario.storm]\nrain_mm_h = "rain.tif"\nduration_h = 2.0\n'
        "initial_water_table_depth_m = 1.0",
    )


RAIN_RASTER_INPUTS = {
    "recharge raster half the dem": (
        lambda f: _recharge_raster(f, np.full((40, 25), 20.0)),
        "rch.tif: recharge_mm_day raster does not cover the DEM dem.tif: no value at x = 500255",
    ),
    "recharge raster negative": (
        lambda f: _recharge_raster(f, np.full((40, 50), -3.0)),
        "rch.tif: recharge_mm_day values must be in [0, 10000], found -3",
    ),
    "recharge raster missing": (
        _text("recharge_mm_day = 40.0", 'recharge_mm_day = "nosuch.tif"'),
        "recharge_mm_day: file not found",
    ),
    "storm raster too strong": (
        lambda f: _storm_raster(f, np.full((40, 50), 1500.0)),
        "rain.tif: rain_mm_h values must be in [0, 1000], found 1500",
    ),
    "storm raster holes": (
        lambda f: _storm_raster(f, np.where(np.eye(40, 50) > 0, np.nan, 5.0)),
        "rain.tif: rain_mm_h raster does not cover the DEM dem.tif: no value at x = 500005",
    ),
}
IDF_HEAD = "duration_h,return_period_yr,intensity_mm_h\n"
IDF_GOOD = IDF_HEAD + "1,2,30\n1,10,40\n6,2,10\n6,10,14\n"
RAIN_SCENARIO = (
    '\n[[scenario]]\nname = "r"\n[scenario.rainfall]\ninitial_water_table_depth_m = 1.0\n'
)


def _rainfall(idf=IDF_GOOD, table='idf_table = "idf.csv"\n', scenario=RAIN_SCENARIO):
    def change(folder):
        text = (folder / "scenarios.toml").read_text() + scenario
        if table is not None:
            text += f"\n[rainfall_frequency]\n{table}"
        (folder / "scenarios.toml").write_text(text)
        (folder / "idf.csv").write_text(idf)

    return change


def _gridded(values_by_row, origin=(500000.0, 5000400.0)):
    def change(folder):
        lines = ["duration_h,return_period_yr,intensity_raster_mm_h"]
        for (d, t), values in values_by_row.items():
            name = f"i_{d}_{t}.tif"
            transform = from_origin(*origin, 10.0, 10.0)
            write_raster(folder / name, values, "EPSG:32633", transform, None)
            lines.append(f"{d},{t},{name}")
        _rainfall("\n".join(lines) + "\n")(folder)
        frame = gpd.read_file(folder / "soils.geojson")
        frame.assign(diffusivity_m2_s=1e-4).to_file(folder / "soils.geojson", driver="GeoJSON")

    return change


GRID = {(1, 2): 30.0, (1, 10): 40.0, (6, 2): 10.0, (6, 10): 14.0}
RAINFALL_INPUTS = {
    "gridded idf not rising in a cell": (
        _gridded(
            {k: np.full((40, 50), v) for k, v in GRID.items()}
            | {(1, 10): np.where(np.arange(50) == 7, 20.0, 40.0)[None].repeat(40, 0)}
        ),
        "idf.csv: intensity must rise with return period: i_1_2.tif (30 mm/h) and i_1_10.tif "
        "(20 mm/h) at x = 500075",
    ),
    "gridded idf short of the dem": (
        _gridded({k: np.full((40, 30), v) for k, v in GRID.items()}),
        "i_1_2.tif: design rainfall intensity_mm_h raster does not cover the DEM",
    ),
    "gridded idf in the wrong unit": (
        _gridded({k: np.full((40, 50), v * 40.0) for k, v in GRID.items()}),
        "i_1_2.tif: 1200 mm/h over 1 h at x = 500005, y = 5.0004e+06 is beyond any rain",
    ),
    "gridded idf raster missing": (
        _rainfall("duration_h,return_period_yr,intensity_raster_mm_h\n1,2,nosuch.tif\n"),
        "idf.csv: line 2: intensity_raster_mm_h: file not found",
    ),
    "idf not rising with return period": (
        _rainfall(IDF_GOOD.replace("1,10,40", "1,10,25")),
        "idf.csv: duration 1 h: intensity must rise with return period",
    ),
    "idf not falling with duration": (
        _rainfall(IDF_GOOD.replace("6,2,10", "6,2,35").replace("6,10,14", "6,10,45")),
        "idf.csv: return period 2 yr: intensity must fall with duration",
    ),
    "idf missing a row": (
        _rainfall(IDF_GOOD.replace("6,10,14\n", "")),
        "idf.csv: no row for duration 6 h and return period 10 yr",
    ),
    "idf negative": (_rainfall(IDF_GOOD.replace("6,2,10", "6,2,-1")), "must be a number > 0"),
    "idf two amount columns": (
        _rainfall("duration_h,return_period_yr,intensity_mm_h,depth_mm\n1,2,3,3\n"),
        "one of intensity_mm_h, depth_mm, intensity_raster_mm_h, depth_raster_mm",
    ),
    "rainfall without table": (_rainfall(table=None), "add a [rainfall_frequency] table"),
    "rainfall table unused": (_rainfall(scenario=""), "no scenario uses it"),
    "aep breaks rising": (
        _rainfall(table='idf_table = "idf.csv"\naep_breaks = [0.01, 0.1]\n'),
        "[rainfall_frequency] aep_breaks: must be a list of 1 to 8 falling",
    ),
    "rainfall without water table": (
        _rainfall(scenario='\n[[scenario]]\nname = "r"\n[scenario.rainfall]\nuplift = 1.2\n'),
        "rainfall needs initial_water_table_depth_m",
    ),
    "rainfall without diffusivity": (
        _rainfall(),
        "rainfall scenario 'r' needs diffusivity_m2_s (or moisture_capacity_per_m)",
    ),
}


def _spike(folder):
    with rasterio.open(folder / "dem.tif") as src:
        profile, z = src.profile, src.read(1)
    z[20, 25] = 1e30  # a spike: a vertical slope in the middle of a run
    with rasterio.open(folder / "dem.tif", "w", **profile) as dst:
        dst.write(z, 1)


def _points_as_soils(folder):
    frame = gpd.read_file(folder / "soils.geojson")
    frame.geometry = frame.geometry.centroid
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")


def _two_band_saturation(folder):
    _saturation(folder, np.full((40, 50), 0.5))
    with rasterio.open(folder / "m.tif") as src:
        profile, z = src.profile, src.read(1)
    with rasterio.open(folder / "m.tif", "w", **(profile | {"count": 2})) as dst:
        dst.write(np.stack([z, z]))


RAIN_PATH_INPUTS = {
    "soil units as points": (_points_as_soils, "soil units must be polygons, found Point"),
    "soil table row without unit": (
        lambda f: _soil_table(f, TABLE.format(lab="") + ",silt,3,30,18,1.5,1e-5,\n"),
        "table.csv: data row 3 has no value in column 'unit'",
    ),
    "saturation raster of two bands": (
        _two_band_saturation,
        "m.tif: saturation raster has 2 bands; give a raster of one band",
    ),
    "idf in the wrong unit": (
        _rainfall(
            IDF_GOOD.replace("6,2,10", "6,2,900")
            .replace("6,10,14", "6,10,950")
            .replace("1,2,30", "1,2,1000")
            .replace("1,10,40", "1,10,1100")
        ),
        "idf.csv: duration 1 h, return period 2 yr: 1000 mm/h is beyond any rain",
    ),
    "idf durations in minutes": (
        _rainfall(IDF_GOOD.replace("6,", "1440,")),
        "idf.csv: duration 1440 h is over 1000 h",
    ),
    "dem spike": (_spike, "dem.tif: 1 elevations outside [-11000, 9000] m, e.g. 1e+30 m"),
    "series unknown": (
        _rainfall(table='idf_table = "idf.csv"\nseries = "annual"\n'),
        "[rainfall_frequency] series: must be one of annual_maximum, partial_duration, got",
    ),
    "min slip depth too deep": (
        lambda f: _edit(
            f / "scenarios.toml", "[classes]", "[slip_planes]\nmin_slip_depth_m = 2.0\n\n[classes]"
        ),
        "min_slip_depth_m must be in [0.001, 1] m, got 2",
    ),
    "integer beyond any float": (
        _text("min_zone_area_m2 = 0.0", "min_zone_area_m2 = 1" + "0" * 400),
        "min_zone_area_m2 must be a number in [0, 1e+09], got 10000000000000000000...",
    ),
    "fs_breaks infinite": (
        _text("min_zone_area_m2 = 0.0", "min_zone_area_m2 = 0.0\nfs_breaks = [1.0, inf]"),
        "fs_breaks must be in (0, 1e+06], got inf",
    ),
    "fs_breaks a scalar": (
        _text("min_zone_area_m2 = 0.0", "min_zone_area_m2 = 0.0\nfs_breaks = 1.2"),
        "fs_breaks: must be a list of 1 to 8 increasing numbers",
    ),
    "fs_breaks booleans": (
        _text("min_zone_area_m2 = 0.0", "min_zone_area_m2 = 0.0\nfs_breaks = [true, false]"),
        "fs_breaks: must be a list of 1 to 8 increasing numbers",
    ),
    "fs_breaks nested": (
        _text("min_zone_area_m2 = 0.0", "min_zone_area_m2 = 0.0\nfs_breaks = [[1.0, 1.3]]"),
        "fs_breaks: must be a list of 1 to 8 increasing numbers",
    ),
    "override saturated below moist": (
        lambda f: _edit(
            f / "scenarios.toml",
            "saturation = 0.0\n",
            "saturation = 0.0\n[scenario.soil.A]\nunit_weight_kn_m3 = 22.0\n"
            "saturated_unit_weight_kn_m3 = 20.0\n",
        ),
        "saturated_unit_weight_kn_m3 20 would be below unit_weight_kn_m3 (22); give both",
    ),
}
STORM_HEAD = '\n[[scenario]]\nname = "h"\n[scenario.storm]\ninitial_water_table_depth_m = 1.0\n'
DESIGN = STORM_HEAD + "design_return_period_yr = 10\ndesign_duration_h = 6\n"


def _gauge(record, storm='hyetograph = "gauge.csv"\n'):
    def change(folder):
        (folder / "gauge.csv").write_text(record)
        path = folder / "scenarios.toml"
        path.write_text(path.read_text() + STORM_HEAD + storm)

    return change


HISTORY_INPUTS = {
    "storm with two rains": (
        _gauge("end_h,rain_mm\n1,2\n", 'hyetograph = "gauge.csv"\nrain_mm_h = 5.0\n'),
        "storm needs one rain: rain_mm_h with duration_h, a hyetograph, gauges, a",
    ),
    "duration with a hyetograph": (
        _gauge("end_h,rain_mm\n1,2\n", 'hyetograph = "gauge.csv"\nduration_h = 5.0\n'),
        "duration_h: cannot matter with hyetograph: remove it",
    ),
    "hyetograph gap": (
        _gauge("start_h,end_h,rain_mm\n0,1,2\n2,3,1\n"),
        "gauge.csv: line 3: a gap of 1 h after the previous interval",
    ),
    "hyetograph mixed zones": (
        _gauge("end_time,rain_mm\n2026-12-01T00:00Z,\n2026-12-01T01:00,3\n"),
        "gauge.csv: line 3: '2026-12-01T01:00' mixes times with and without a time zone",
    ),
    "design storm without a table": (
        _rainfall(scenario=DESIGN, table=None),
        "scenario 'h' asks for a design storm: add a [rainfall_frequency] table",
    ),
    "design storm period not tabulated": (
        _rainfall(scenario=DESIGN.replace("= 10\n", "= 50\n", 1)),
        "return_period_yr must be one of the table's (2, 10), got 50",
    ),
    "design storm pattern unknown": (
        _rainfall(scenario=DESIGN + 'pattern = "middle"\n'),
        "pattern: must be one of front, centre, end, got 'middle'",
    ),
    "design storm blocks beyond the table": (
        _rainfall(scenario=DESIGN.replace("design_duration_h = 6", "design_duration_h = 12")),
        "must lie within the table's durations (1 to 6 h): no extrapolation",
    ),
    "block_h without a design storm": (
        _gauge("end_h,rain_mm\n1,2\n", 'hyetograph = "gauge.csv"\nblock_h = 1.0\n'),
        "block_h: cannot matter with hyetograph: remove it",
    ),
    "storm with two initial states": (
        _gauge("end_h,rain_mm\n1,2\n", 'hyetograph = "gauge.csv"\ninitial_recharge_mm_day = 5\n'),
        "storm needs one initial state: initial_water_table_depth_m or initial_recharge_mm_day",
    ),
    "hazard breaks with design storms only": (
        _rainfall(scenario=DESIGN, table='idf_table = "idf.csv"\naep_breaks = [0.1]\n'),
        "[rainfall_frequency] aep_breaks: applies to [scenario.rainfall] scenarios only",
    ),
}
BAD_INPUTS.update(INVENTORY_INPUTS)
BAD_INPUTS.update(HISTORY_INPUTS)
BAD_INPUTS.update(RAIN_PATH_INPUTS)
BAD_INPUTS.update(RAINFALL_INPUTS)
BAD_INPUTS.update(RAIN_RASTER_INPUTS)
BAD_OPTIONS = {
    "scheduler not a url": (["--scheduler", "not a url"], "--scheduler 'not a url'"),
    "scheduler port": (["--scheduler", "tcp://127.0.0.1:99999"], "port 1-65535"),
    "workers negative": (["--workers", "-1"], "--workers -1"),
    "only unknown": (["--only", "nosuch"], "--only nosuch: no such scenario"),
    "out empty": (["--out", ""], "--out '': must name a folder, got an empty text"),
    "cache a file": (["--cache", __file__], "the cache must be a folder, found a file"),
}


def _one_line_error(capsys, argv, fragment):
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1 and err.endswith("\n"), err
    assert "Traceback" not in err
    assert fragment in err, err
    return err


@pytest.mark.parametrize("case", sorted(BAD_INPUTS))
def test_bad_input_is_one_line_and_leaves_outputs_whole(case, sentinel, tmp_path, capsys):
    out, before = sentinel
    toml = _region(tmp_path)
    change, fragment = BAD_INPUTS[case]
    change(tmp_path)
    _one_line_error(capsys, ["check", str(toml)], fragment)  # check catches it too
    err = _one_line_error(capsys, ["run", str(toml), "--out", str(out), "--quiet"], fragment)
    assert _files(out) == before
    assert "test region" not in err  # no line of another file is echoed


@pytest.mark.parametrize("case", sorted(BAD_OPTIONS))
def test_bad_option_is_one_line_and_leaves_outputs_whole(case, sentinel, tmp_path, capsys):
    out, before = sentinel
    toml = _region(tmp_path)
    options, fragment = BAD_OPTIONS[case]
    _one_line_error(capsys, ["run", str(toml), "--out", str(out), "--quiet", *options], fragment)
    assert _files(out) == before


def test_bad_inputs_cover_the_reported_list():
    assert len(BAD_INPUTS) + len(BAD_OPTIONS) >= 40


def test_envelope_command_reads_utf16_and_refuses_latin1(tmp_path, capsys):
    # a spreadsheet's "Unicode text" export is UTF-16 with a byte-order mark
    text = "sigma3_kpa,deviator_kpa\n50,90\n100,160\n200,300\n"
    (tmp_path / "u16.csv").write_bytes(codecs.BOM_UTF16_LE + text.encode("utf-16-le"))
    (tmp_path / "u8.csv").write_text(text)
    assert main(["envelope", str(tmp_path / "u16.csv"), "--json"]) == 0
    from_utf16 = json.loads(capsys.readouterr().out)
    assert main(["envelope", str(tmp_path / "u8.csv"), "--json"]) == 0
    from_utf8 = json.loads(capsys.readouterr().out)
    assert from_utf16["cohesion_kpa"] == from_utf8["cohesion_kpa"]
    (tmp_path / "l1.csv").write_bytes(("# é\n" + text).encode("latin-1"))
    _one_line_error(capsys, ["envelope", str(tmp_path / "l1.csv")], "is not UTF-8 text")


def test_bom_and_odd_names_run(tmp_path):
    # a UTF-8 byte-order mark, "$...$" in the region name and a formula-like unit name
    toml = _region(tmp_path / "r")
    frame = gpd.read_file(tmp_path / "r" / "soils.geojson")
    frame.loc[0, "unit"] = "=HYPERLINK(1)"
    frame.to_file(tmp_path / "r" / "soils.geojson", driver="GeoJSON")
    text = SCENARIO_TEXT_WITH_MAPS.replace("test region", "Ridge $x^2$ & co")
    toml.write_bytes(codecs.BOM_UTF8 + text.encode())
    _run(toml, tmp_path / "out")
    summary = (tmp_path / "out" / "dry" / "summary.csv").read_text()
    assert "'=HYPERLINK(1)" in summary and "\n=HYPERLINK" not in summary.replace(",'=", "")
    assert (tmp_path / "out" / "dry" / "stability_class.png").read_bytes()[:4] == b"\x89PNG"


# ----------------------------------------------------------------------------------------
# caches: damaged entries are recomputed, changed inputs never reuse a stale entry


def _damage(path, how):
    data = path.read_bytes()
    if how == "truncate":
        path.write_bytes(data[: len(data) // 2])
    elif how == "bit-flip":
        i = len(data) // 2
        path.write_bytes(data[:i] + bytes([data[i] ^ 0x10]) + data[i + 1 :])
    else:
        path.unlink()


@pytest.fixture(scope="module")
def clean_run(tmp_path_factory):
    base = tmp_path_factory.mktemp("clean")
    toml = _region(base / "region")
    _run(toml, base / "out")
    return toml, _outputs(base / "out")


CACHED = [
    ("terrain-*", "slope_deg.tif"),
    ("terrain-*", "slope_tan.tif"),
    ("terrain-*", "specific_catchment_area_m.tif"),
    ("terrain-*", "hillshade.tif"),
    ("terrain-*", "entry.json"),
    ("critical_recharge-*", "critical_recharge_mm_day.tif"),
    ("critical_recharge-*", "entry.json"),
]


@pytest.mark.parametrize("how", ["truncate", "bit-flip", "delete"])
@pytest.mark.parametrize(("entry", "name"), CACHED)
def test_damaged_cache_is_recomputed(entry, name, how, clean_run, tmp_path):
    toml, expected = clean_run
    out = tmp_path / "out"
    _run(toml, out)
    targets = list((out / ".cache").glob(f"{entry}/{name}"))
    assert targets
    for target in targets:
        _damage(target, "delete" if name == "entry.json" else how)
    lines = _run(toml, out)
    assert any("recomputing it" in line for line in lines), lines
    assert _outputs(out) == expected
    lines = _run(toml, out)  # the rebuilt entry is whole and reused
    assert not any("recomputing" in line for line in lines)
    assert "terrain: reused from cache (verified)" in " ".join(lines)
    assert _outputs(out) == expected


def _vrt_region(folder):
    """A DEM as a VRT over two GeoTIFF tiles, a soil table and a lab-test file."""
    toml = _region(folder)
    with rasterio.open(folder / "dem.tif") as src:
        z, profile = src.read(1), src.profile
    for name, cols in (("west.tif", slice(0, 25)), ("east.tif", slice(25, 50))):
        part = dict(
            profile, width=25, transform=src.transform * rasterio.Affine.translation(cols.start, 0)
        )
        with rasterio.open(folder / name, "w", **part) as dst:
            dst.write(z[:, cols], 1)
    sources = "".join(
        f'<SimpleSource><SourceFilename relativeToVRT="1">{name}</SourceFilename>'
        "<SourceBand>1</SourceBand>"
        f'<SrcRect xOff="0" yOff="0" xSize="25" ySize="40"/>'
        f'<DstRect xOff="{x}" yOff="0" xSize="25" ySize="40"/></SimpleSource>'
        for name, x in (("west.tif", 0), ("east.tif", 25))
    )
    t = src.transform
    (folder / "dem.vrt").write_text(
        f'<VRTDataset rasterXSize="50" rasterYSize="40"><SRS>EPSG:32633</SRS>'
        f"<GeoTransform>{t.c}, {t.a}, 0, {t.f}, 0, {t.e}</GeoTransform>"
        f'<VRTRasterBand dataType="Float32" band="1"><NoDataValue>-9999</NoDataValue>'
        f"{sources}</VRTRasterBand></VRTDataset>"
    )
    _edit(toml, 'dem = "dem.tif"', 'dem = "dem.vrt"')
    (folder / "lab.csv").write_text("sigma3_kpa,deviator_kpa\n50,85\n100,150\n200,280\n")
    _soil_table(folder, TABLE.format(lab="lab.csv"))
    return toml


def _swap_units(folder):
    frame = gpd.read_file(folder / "soils.geojson")
    frame["unit"] = frame["unit"].map({"A": "B", "B": "A"})
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")


def _raise_east_tile(folder):
    with rasterio.open(folder / "east.tif", "r+") as dst:
        z = dst.read(1)
        y = np.arange(z.shape[0])[:, None]
        dst.write(z + 40.0 * (y / z.shape[0]) ** 2, 1)  # steeper towards the south


CHANGES = {
    "soil map": _swap_units,
    "soil table": lambda f: _edit(f / "table.csv", "B,clay,5,30", "B,clay,1,27"),
    "lab tests": lambda f: _edit(f / "lab.csv", "200,280", "200,250"),
    "VRT source tile": _raise_east_tile,
}


@pytest.mark.parametrize("change", sorted(CHANGES))
def test_changed_input_warm_run_equals_cold_run(change, tmp_path):
    toml = _vrt_region(tmp_path / "region")
    warm = tmp_path / "warm"
    _run(toml, warm)
    before = _outputs(warm)
    CHANGES[change](tmp_path / "region")
    _run(toml, warm)
    _run(toml, tmp_path / "cold")
    after = _outputs(warm)
    assert after != before  # the change reaches the maps
    assert after == _outputs(tmp_path / "cold")


def test_warm_rerun_is_byte_identical_to_a_cold_run(tmp_path):
    toml = _vrt_region(tmp_path / "region")
    _edit(toml, "quicklook_map = false\n", "")  # the maps too
    _run(toml, tmp_path / "a")
    _run(toml, tmp_path / "a")
    _run(toml, tmp_path / "b")
    a, b = _outputs(tmp_path / "a"), _outputs(tmp_path / "b")
    assert a == b
    assert {
        "wet/low_margin_zones.gpkg",
        "wet/stability_class.png",
        "report.html",
        "dry/summary.csv",
    } <= set(a)
    for scenario in ("wet", "dry"):  # tags describe the scenario the file belongs to
        with rasterio.open(tmp_path / "a" / scenario / "critical_recharge_mm_day.tif") as src:
            assert src.tags()["scenario"] == scenario


# ----------------------------------------------------------------------------------------
# the manifest says what the run did


def test_manifest_is_strict_json_and_lists_only_this_run(tmp_path):
    toml = _region(tmp_path / "r")
    out = tmp_path / "out"
    _run(toml, out)
    _run(toml, out, ("only", ["wet"]))
    text = (out / "manifest.json").read_text()
    manifest = json.loads(text, parse_constant=lambda c: pytest.fail(f"bare {c} in manifest"))
    assert manifest["complete"] is True
    assert manifest["scenarios_finished"] == ["wet"] and manifest["scenarios_missing"] == []
    assert manifest["started_utc"] <= manifest["finished_utc"]
    assert manifest["started_utc"].endswith("Z")
    assert not [k for k in manifest["outputs"] if k.startswith("dry/")]
    assert {"terrain/slope_deg.tif", "wet/fs.tif", "report.html"} <= set(manifest["outputs"])
    assert manifest["parameters"]["soil_units"]["A"]["transmissivity_m2_day"] is None


def test_outputs_honour_the_umask(tmp_path):
    toml = _region(tmp_path / "r")
    old = os.umask(0o022)
    try:
        _run(toml, tmp_path / "out")
    finally:
        os.umask(old)
    modes = {k: (tmp_path / "out" / k).stat().st_mode & 0o777 for k in _files(tmp_path / "out")}
    assert set(modes.values()) == {0o644}, modes


# ----------------------------------------------------------------------------------------
# links: nothing outside the output folder is ever written


def test_planted_links_are_never_written_through(tmp_path):
    toml = _region(tmp_path / "r")
    out = tmp_path / "out"
    _run(toml, out)
    victims = tmp_path / "victims"
    victims.mkdir()
    finals = sorted(_files(out))
    temporary = [
        "dry/.fs.part.tif",
        "dry/.fs.cog.tif",
        "dry/.saturation.cog.tif",
        "terrain/.slope_deg.tif.part",
        "dry/.summary.csv",
        "dry/.low_margin_zones.gpkg",
    ]
    for i, name in enumerate(finals + temporary):
        victim = victims / f"v{i}"
        victim.write_text(f"precious {i}")
        (out / name).unlink(missing_ok=True)
        (out / name).symlink_to(victim)
    _run(toml, out)
    assert all(v.read_text() == f"precious {v.name[1:]}" for v in victims.iterdir())
    for name in finals:
        assert not (out / name).is_symlink() and (out / name).is_file(), name


@pytest.mark.parametrize("folder", ["dry", "terrain", ".cache", ".slopescreen.lock"])
def test_linked_folder_or_lock_is_refused(folder, tmp_path, capsys):
    toml = _region(tmp_path / "r")
    out = tmp_path / "out"
    out.mkdir()
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    (out / folder).symlink_to(elsewhere)
    _one_line_error(capsys, ["run", str(toml), "--out", str(out), "--quiet"], "symbolic link")
    assert list(elsewhere.iterdir()) == []


# ----------------------------------------------------------------------------------------
# real processes: two runs on one folder, runs sharing a cache, killed runs


def _cli(*args):
    return [sys.executable, "-m", "slopescreen.cli.main", *map(str, args)]


def _big_region(folder, samples=200):
    """Large enough that a run takes seconds (Monte Carlo probabilities per scenario)."""
    folder.mkdir(parents=True, exist_ok=True)
    _dem(folder / "dem.tif", rows=300, cols=300)
    _polygons(
        folder / "soils.geojson",
        bounds=(500000.0, 4997400.0, 503000.0, 5000400.0),
        cohesion_kpa_sd=1.0,
        friction_deg_sd=2.0,
    )
    toml = folder / "scenarios.toml"
    toml.write_text(
        SCENARIO_TEXT.replace(
            "[[scenario]]",
            f'[reliability]\nmethod = "monte_carlo"\nsamples = {samples}\n\n[[scenario]]',
            1,
        )
        + '\n[[scenario]]\nname = "half"\nsaturation = 0.5\n'
    )
    return toml


def _manifest_agrees(out):
    manifest = json.loads((out / "manifest.json").read_text())
    for name, sha in manifest["outputs"].items():
        import hashlib

        assert hashlib.sha256((out / name).read_bytes()).hexdigest() == sha, name
    return manifest


def test_two_runs_on_one_folder(tmp_path):
    toml = _big_region(tmp_path / "r")
    out = tmp_path / "out"
    procs = [
        subprocess.Popen(
            _cli("run", toml, "--out", out, "--quiet"),
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for _ in range(2)
    ]
    results = [(p.wait(timeout=600), p.stderr.read()) for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 2], results
    refused = next(err for code, err in results if code == 2)
    assert "another slopescreen run is writing to this folder (PID " in refused
    assert "started 20" in refused and "Traceback" not in refused
    assert refused.count("\n") == 1
    assert _manifest_agrees(out)["complete"] is True


def test_two_runs_sharing_one_cache(tmp_path):
    toml = _big_region(tmp_path / "r", samples=50)
    procs = [
        subprocess.Popen(
            _cli("run", toml, "--out", tmp_path / name, "--cache", tmp_path / "cache", "--quiet"),
            stderr=subprocess.PIPE,
            text=True,
            stdout=subprocess.DEVNULL,
        )
        for name in ("a", "b")
    ]
    results = [(p.wait(timeout=600), p.stderr.read()) for p in procs]
    assert [code for code, _ in results] == [0, 0], results
    assert _outputs(tmp_path / "a") == _outputs(tmp_path / "b")


@pytest.fixture(scope="module")
def old_and_new(tmp_path_factory):
    """A region run once (the old outputs), its file edited so that every output changes,
    and run again elsewhere (the new outputs): (folder, old files, new files)."""
    folder = tmp_path_factory.mktemp("killed")
    toml = _big_region(folder / "r")
    assert subprocess.run(_cli("run", toml, "--out", folder / "old", "--quiet")).returncode == 0
    old = _files(folder / "old")
    _edit(toml, "[classes]", "[classes]\nfs_breaks = [1.0, 1.2, 1.4]")  # new classes everywhere
    assert subprocess.run(_cli("run", toml, "--out", folder / "new", "--quiet")).returncode == 0
    return folder, old, _files(folder / "new")


@pytest.mark.parametrize("moment", [0, 1, 2])
def test_killed_rerun_leaves_old_or_new_files_and_says_so(moment, tmp_path, old_and_new):
    import shutil

    folder, old, new = old_and_new
    shutil.copytree(folder / "r", tmp_path / "r")  # the edited file, beside its inputs
    toml = tmp_path / "r" / "scenarios.toml"
    out = tmp_path / "out"
    shutil.copytree(folder / "old", out)  # the old run's folder, its cache and all
    proc = subprocess.Popen(_cli("run", toml, "--out", out, "--quiet"))
    deadline = time.monotonic() + 300
    while time.monotonic() < deadline:
        try:
            state = json.loads((out / "manifest.json").read_text())
        except (OSError, ValueError):
            state = {}
        if state.get("complete") is False and len(state["scenarios_finished"]) >= moment:
            break
        time.sleep(0.005)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    manifest = _manifest_agrees(out)
    assert manifest["complete"] is False, "the run finished before it could be killed"
    assert len(manifest["scenarios_finished"]) >= moment
    assert set(manifest["scenarios_finished"]) | set(manifest["scenarios_missing"]) == {
        "wet",
        "dry",
        "half",
    }
    for name, data in _files(out).items():
        if name not in ("manifest.json", "report.html"):  # these two say the state
            assert data in (old.get(name), new.get(name)), name
    for scenario in manifest["scenarios_finished"]:
        for name in new:
            if name.startswith(f"{scenario}/"):
                assert (out / name).read_bytes() == new[name], name
    report = (out / "report.html").read_bytes()  # the old one, or the "not finished" page
    assert report == old["report.html"] or b"run not finished" in report
    # the next run completes the folder and leaves no work folders behind
    assert subprocess.run(_cli("run", toml, "--out", out, "--quiet")).returncode == 0
    assert _outputs(out) == _outputs(folder / "new")
    assert not [p for p in out.rglob(".slopescreen-tmp-*")]


def test_overlapping_soil_polygons_are_reported_with_the_winner(tmp_path, capsys):
    # two units overlapping by a 50 m strip of the 400 m high region: 2.00 ha on the ground
    toml = _region(tmp_path)
    frame = gpd.read_file(tmp_path / "soils.geojson")
    x0, y0, x1, y1 = frame.total_bounds
    xm = (x0 + x1) / 2
    frame.geometry = [box(x0, y0, xm + 50.0, y1), box(xm, y0, x1, y1)]
    frame.to_file(tmp_path / "soils.geojson", driver="GeoJSON")
    assert main(["check", str(toml)]) == 0
    out = capsys.readouterr().out
    assert "1 pairs of polygons of different soil units overlap (2.00 ha on the ground)" in out
    assert "the later polygon in the file wins" in out


def test_inventory_repairs_and_conventions_are_said(tmp_path, capsys):
    # a null geometry dropped, a self-intersecting polygon repaired, one key for every
    # feature, dates with slashes read day first because a day above 12 shows it
    from shapely.geometry import Polygon

    toml = _region(tmp_path)
    bowtie = Polygon([(500100, 5000100), (500200, 5000200), (500200, 5000100), (500100, 5000200)])
    frame = gpd.GeoDataFrame(
        {"slide_id": ["same", "same", "same"], "when": ["14/03/2019", "02/04/2019", None]},
        geometry=[bowtie, box(500300, 5000100, 500350, 5000150), None],
        crs="EPSG:32633",
    )
    _inventory('key = "slide_id"\ndate_field = "when"\n', frame)(tmp_path)
    assert main(["check", str(toml)]) == 0
    out = capsys.readouterr().out
    assert "1 features without geometry dropped" in out
    assert "1 invalid geometries (self-intersecting polygons, say) repaired" in out
    assert "all 2 features share the key 'same'" in out
    assert "2 dates written with slashes read as day/month/year" in out


def test_a_run_that_fails_midway_leaves_the_previous_run_whole(tmp_path, monkeypatch):
    # a failure only the run can meet (a full disk, say) after its first scenario has been
    # written: the previous run's files come back, byte for byte, and no mixed folder stays
    import slopescreen.maps.region.engine as engine

    toml = _region(tmp_path / "region")
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    before = _files(out)
    real = engine.run_scenario
    calls = []

    def second_fails(*args, **kwargs):
        calls.append(1)
        if len(calls) == 2:
            raise OSError(28, "No space left on device")
        return real(*args, **kwargs)

    monkeypatch.setattr(engine, "run_scenario", second_fails)
    _edit(toml, "recharge_mm_day = 40.0", "recharge_mm_day = 20.0")  # new results to write
    with pytest.raises(OSError, match="No space left"):
        run(toml, out, progress=False, echo=lambda s: None)
    assert len(calls) == 2
    assert _files(out) == before
    assert not [p for p in out.iterdir() if p.name.startswith(".slopescreen-")]
    monkeypatch.setattr(engine, "run_scenario", real)
    run(toml, out, progress=False, echo=lambda s: None)  # the folder is usable again
    assert _files(out) != before
