"""Real terrain in small: every scenario kind on DEMs with flat ground, cliffs, voids,
islands, tiny and constant grids, integer voids, feet, ESRI ASCII grids and VRT mosaics.

Each DEM is generated here (nothing stored). A run completes with sane outputs (FS
finite or at the cap where data exist, no data where none, codes where the physics has
no answer) or refuses in one line; never NaN between the project's functions, never a
RuntimeWarning (the suite turns warnings into errors) and never a traceback.
"""

import subprocess
import sys

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from shapely.geometry import box

from slopescreen.errors import InputError
from slopescreen.maps.engine import run
from slopescreen.rainfall_frequency import idf_formula

X0, Y0, CELL = 500000.0, 5000400.0, 10.0

SOIL_TABLE = """unit,cohesion_kpa,cohesion_kpa_sd,friction_deg,friction_deg_sd,unit_weight_kn_m3,\
saturated_unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s,diffusivity_m2_s
A,0.0,,34.0,2.0,17.0,19.0,1.2,1e-5,5e-5
B,3.0,1.0,31.0,2.0,18.0,20.0,2.0,3e-6,2e-5
"""

SCENARIOS = """[region]
name = "gauntlet"
dem = "{dem}"
dem_elevation_unit = "{unit}"
soil_units = "soils.geojson"
soil_unit_field = "unit"
soil_table = "soils.csv"

[outputs]
quicklook_map = {maps}
report = {maps}

[reliability]
method = "{method}"
{samples}

[[scenario]]
name = "dry"
saturation = 0.1

[[scenario]]
name = "wet_raster"
saturation_raster = "wet.tif"

[[scenario]]
name = "steady"
recharge_mm_day = 20.0

[[scenario]]
name = "storm"
[scenario.storm]
rain_mm_h = 25.0
duration_h = 12.0
later_h = 36.0
initial_water_table_depth_m = 0.8

[[scenario]]
name = "rain"
[scenario.rainfall]
initial_water_table_depth_m = 0.8

[[scenario]]
name = "rain_more"
[scenario.rainfall]
initial_water_table_depth_m = 0.8
uplift = 1.2

[rainfall_frequency]
idf_table = "idf.csv"
series = "annual_maximum"
after_h = 12.0

[comparison]
baseline = "dry"
pairs = [["dry", "steady"], ["rain", "rain_more"]]
"""


def _surface(rows, cols):
    """A valley with a lake (flat), a cliff steeper than 60 degrees and a one-cell island."""
    y, x = np.mgrid[0:rows, 0:cols].astype(float)
    z = 200.0 + 4.0 * np.abs(x - cols / 2) + 1.5 * y
    if rows >= 12 and cols >= 12:
        z[2:6, 2:6] = z[2:6, 2:6].min()  # a lake: perfectly flat
        z[:, -3:] += 60.0  # a cliff: 60 m in one 10 m cell
    return z


def _dems(tmp):
    """name -> (DEM file, elevation unit); every DEM covers the same soil polygons."""
    out = {}

    def tif(name, z, dtype="float32", nodata=-9999.0, unit="m"):
        path = tmp / f"{name}.tif"
        with rasterio.open(
            path, "w", driver="GTiff", width=z.shape[1], height=z.shape[0], count=1,
            dtype=dtype, crs="EPSG:32633", transform=from_origin(X0, Y0, CELL, CELL),
            nodata=nodata,
        ) as dst:  # fmt: skip
            dst.write(z.astype(dtype), 1)
        out[name] = (path.name, unit)
        return path

    z = _surface(30, 36)
    tif("valley_lake_cliff", z)
    voids = z.copy()
    voids[10:14, 10:20] = -9999.0  # a void
    voids[20, :] = -9999.0
    voids[22:25, 30:33] = -9999.0
    voids[23, 31] = z[23, 31]  # a single-cell island inside a void
    tif("voids_and_island", voids)
    tif("one_row", _surface(1, 36))
    tif("one_column", _surface(30, 1))
    tif("three_by_three", _surface(3, 3))
    tif("constant", np.full((30, 36), 123.0))
    ints = np.round(z).astype(np.int16)
    ints[5:8, 20:25] = -32768
    tif("int16_voids", ints, dtype="int16", nodata=-32768)
    tif("feet", z / 0.3048, unit="ft")
    # ESRI ASCII grid of the same surface
    asc = tmp / "ascii.asc"
    header = (f"ncols {z.shape[1]}\nnrows {z.shape[0]}\nxllcorner {X0}\n"
              f"yllcorner {Y0 - z.shape[0] * CELL}\ncellsize {CELL}\nNODATA_value -9999\n")  # fmt: skip
    asc.write_text(header + "\n".join(" ".join(f"{v:.3f}" for v in r) for r in z) + "\n")
    (tmp / "ascii.prj").write_text(rasterio.crs.CRS.from_epsg(32633).to_wkt())
    out["esri_ascii"] = (asc.name, "m")
    # a VRT mosaic of two halves
    left = tmp / "left.tif"
    right = tmp / "right.tif"
    for path, part, x_off in ((left, z[:, :18], 0), (right, z[:, 18:], 18)):
        with rasterio.open(
            path, "w", driver="GTiff", width=part.shape[1], height=part.shape[0], count=1,
            dtype="float32", crs="EPSG:32633",
            transform=from_origin(X0 + x_off * CELL, Y0, CELL, CELL), nodata=-9999.0,
        ) as dst:  # fmt: skip
            dst.write(part.astype("float32"), 1)
    vrt = tmp / "mosaic.vrt"
    vrt.write_text(_vrt(z.shape, [(left.name, 0), (right.name, 18)], (18, 18)))
    out["vrt_mosaic"] = (vrt.name, "m")
    return out


def _vrt(shape, sources, widths):
    rows, cols = shape
    parts = "".join(
        f"""<SimpleSource><SourceFilename relativeToVRT="1">{name}</SourceFilename>
<SourceBand>1</SourceBand><SrcRect xOff="0" yOff="0" xSize="{w}" ySize="{rows}"/>
<DstRect xOff="{off}" yOff="0" xSize="{w}" ySize="{rows}"/></SimpleSource>"""
        for (name, off), w in zip(sources, widths, strict=True)
    )
    wkt = rasterio.crs.CRS.from_epsg(32633).to_wkt().replace('"', "&quot;")
    return (
        f'<VRTDataset rasterXSize="{cols}" rasterYSize="{rows}"><SRS>{wkt}</SRS>'
        f"<GeoTransform>{X0}, {CELL}, 0, {Y0}, 0, -{CELL}</GeoTransform>"
        f'<VRTRasterBand dataType="Float32" band="1"><NoDataValue>-9999</NoDataValue>'
        f"{parts}</VRTRasterBand></VRTDataset>"
    )


@pytest.fixture(scope="module")
def gauntlet(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("gauntlet")
    dems = _dems(tmp)
    xm = X0 + 18 * CELL
    frame = gpd.GeoDataFrame(
        {"unit": ["A", "B"]},
        geometry=[box(X0 - 50, Y0 - 400, xm, Y0 + 50), box(xm, Y0 - 400, X0 + 500, Y0 + 50)],
        crs="EPSG:32633",
    )
    frame.to_file(tmp / "soils.geojson", driver="GeoJSON")
    (tmp / "soils.csv").write_text(SOIL_TABLE)
    with rasterio.open(
        tmp / "wet.tif", "w", driver="GTiff", width=60, height=50, count=1, dtype="float32",
        crs="EPSG:32633", transform=from_origin(X0 - 50, Y0 + 50, 10.0, 10.0), nodata=-1.0,
    ) as dst:  # fmt: skip
        dst.write(np.full((50, 60), 0.6, np.float32), 1)
    durations, periods = [1.0, 6.0, 24.0], [2.0, 10.0, 100.0]
    grid = idf_formula(durations, periods, 30.0, 0.2, 0.3, 0.75)
    rows = ["duration_h,return_period_yr,intensity_mm_h"] + [
        f"{d:g},{t:g},{grid[i, j]:.4f}" for i, d in enumerate(durations)
        for j, t in enumerate(periods)
    ]  # fmt: skip
    (tmp / "idf.csv").write_text("\n".join(rows) + "\n")
    return tmp, dems


def _scenario_file(tmp, name, dem, unit, method="taylor", maps=False):
    samples = "samples = 200\nrandom_state = 3" if method == "monte_carlo" else ""
    text = SCENARIOS.format(dem=dem, unit=unit, method=method, samples=samples,
                            maps=str(maps).lower())  # fmt: skip
    path = tmp / f"{name}_{method}.toml"
    path.write_text(text)
    return path


CASES = [
    "valley_lake_cliff", "voids_and_island", "one_row", "one_column", "three_by_three",
    "constant", "int16_voids", "feet", "esri_ascii", "vrt_mosaic",
]  # fmt: skip


@pytest.mark.parametrize("name", CASES)
def test_every_scenario_kind_runs_on_real_terrain(gauntlet, name):
    tmp, dems = gauntlet
    dem, unit = dems[name]
    maps = name in ("valley_lake_cliff", "constant")  # figures and report on two of them
    config = _scenario_file(tmp, name, dem, unit, maps=maps)
    out = tmp / f"out_{name}"
    try:
        run(config, out, progress=False, echo=lambda s: None)
    except InputError as exc:  # a DEM that cannot be used: one line saying why
        assert "\n" not in str(exc) and len(str(exc)) < 400
        assert name in ("one_row", "one_column", "three_by_three"), str(exc)
        return
    with rasterio.open(tmp / dem) as src:
        has_data = src.read_masks(1) > 0
    for scenario in ("dry", "wet_raster", "steady", "storm", "rain", "rain_more"):
        with rasterio.open(out / scenario / "fs.tif") as src:
            fs = src.read(1, masked=True)
            cap = float(src.tags()["fs_cap"])
        assert not np.isnan(fs.compressed()).any()
        assert (fs.compressed() > 0).all() and (fs.compressed() <= cap).all()
        assert fs.count() > 0 and fs.count() <= has_data.sum()
        with rasterio.open(out / scenario / "probability_of_failure.tif") as src:
            pf = src.read(1, masked=True).compressed()
        assert ((pf >= 0) & (pf <= 1)).all()
    with rasterio.open(out / "storm" / "storm_time_to_failure_h.tif") as src:
        ttf = src.read(1, masked=True).compressed()
    assert ((ttf >= 0) | (ttf == -1) | (ttf == -2)).all()
    with rasterio.open(out / "rain" / "annual_failure_probability.tif") as src:
        p = src.read(1, masked=True).compressed()
    assert ((p >= 0) & (p <= 1)).all()
    if name in ("valley_lake_cliff", "constant"):
        assert (out / "report.html").exists()
        assert (out / "storm" / "storm_time_to_failure_h.png").exists()
    if name == "constant":  # flat everywhere: nothing fails, FS at the cap
        with rasterio.open(out / "storm" / "fs.tif") as src:
            assert (src.read(1, masked=True).compressed() == cap).all()


def test_monte_carlo_and_check_on_flat_and_cliff_terrain(gauntlet):
    tmp, dems = gauntlet
    dem, unit = dems["valley_lake_cliff"]
    config = _scenario_file(tmp, "mc", dem, unit, method="monte_carlo")
    run(config, tmp / "out_mc", progress=False, echo=lambda s: None)
    with rasterio.open(tmp / "out_mc" / "storm" / "probability_of_failure.tif") as src:
        pf = src.read(1, masked=True).compressed()
    assert pf.size > 0 and ((pf >= 0) & (pf <= 1)).all()
    # the shell: check and run end with exit 0 and no traceback on a DEM with voids
    dem, unit = dems["int16_voids"]
    config = _scenario_file(tmp, "shell", dem, unit)
    done = subprocess.run(
        [sys.executable, "-m", "slopescreen.cli.main", "check", str(config)],
        capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert "Traceback" not in done.stderr + done.stdout
