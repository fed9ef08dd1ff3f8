"""Real terrain in small: every scenario kind on DEMs with flat ground, cliffs, voids,
islands, tiny and constant grids, integer voids, feet, ESRI ASCII grids and VRT mosaics,
and on two real DEMs that matplotlib ships in its package (a 3-arc-second int16 grid of
the Jacksboro fault and a coastal topography-bathymetry grid with the sea), both in
geographic coordinates.

Each DEM is generated here from those (nothing stored). A run completes with sane outputs (FS
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
from shapely.geometry import Point, box

from slopescreen.errors import InputError
from slopescreen.maps.region.engine import run
from slopescreen.rainfall_frequency import idf_formula

X0, Y0, CELL = 500000.0, 5000400.0, 10.0

# B's cohesion from a raster (a global grid), its depth from slope; A's depth from soil
# production on the DEM's own curvature; roots from a global land-cover raster
SOIL_TABLE = """unit,cohesion_kpa,cohesion_kpa_sd,friction_deg,friction_deg_sd,unit_weight_kn_m3,\
saturated_unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s,diffusivity_m2_s
A,0.0,,34.0,2.0,17.0,19.0,1.2,1e-5,5e-5
B,cohesion.tif,1.0,31.0,2.0,18.0,20.0,2.0,3e-6,2e-5
"""

SCENARIOS = """[region]
name = "gauntlet"
dem = "{dem}"
dem_elevation_unit = "{unit}"
soil_units = "{soils}"
soil_unit_field = "unit"
soil_table = "soils.csv"

[outputs]
quicklook_map = {maps}
report = {maps}

[reliability]
method = "{method}"
{samples}

[[soil_depth]]
model = "soil_production"
units = ["A"]
production_m_yr = 3e-4
creep_diffusivity_m2_yr = 0.005
production_depth_m = 0.5
max_depth_m = 2.0

[[soil_depth]]
model = "slope_linear"
units = ["B"]
gentle_slope_deg = 5.0
steep_slope_deg = 45.0
gentle_depth_m = 2.5
steep_depth_m = 0.5

[land_cover]
path = "cover.tif"
table = "cover.csv"
year = 2024

[[scenario]]
name = "dry"
saturation = 0.1

[[scenario]]
name = "wet_raster"
saturation_raster = "{wet}"

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
name = "gauge"
[scenario.storm]
hyetograph = "gauge.csv"
later_h = 24.0
initial_recharge_mm_day = 15.0

[[scenario]]
name = "gauges"
[scenario.storm]
gauges = "gauges.gpkg"
later_h = 24.0
initial_water_table_depth_m = 0.8

[[scenario]]
name = "radar"
[scenario.storm]
rain_series = "radar.nc"
rain_series_resampling = "nearest"
later_h = 24.0
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

[runout]
scenarios = ["steady", "storm", "gauges"]
fs_below = 1.6
friction_angle_deg = 8.0
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
        _raster(tmp / f"{name}.tif", z, X0, Y0, CELL, dtype, nodata, "EPSG:32633")
        out[name] = (f"{name}.tif", unit)

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
              f"yllcorner {Y0 - z.shape[0] * CELL}\ncellsize {CELL}\n"
              "NODATA_value -9999\n")  # fmt: skip
    asc.write_text(header + "\n".join(" ".join(f"{v:.3f}" for v in r) for r in z) + "\n")
    (tmp / "ascii.prj").write_text(rasterio.crs.CRS.from_epsg(32633).to_wkt())
    out["esri_ascii"] = (asc.name, "m")
    # a VRT mosaic of two halves
    left = tmp / "left.tif"
    right = tmp / "right.tif"
    for path, part, x_off in ((left, z[:, :18], 0), (right, z[:, 18:], 18)):
        _raster(path, part, X0 + x_off * CELL, Y0, CELL, "float32", -9999.0, "EPSG:32633")
    vrt = tmp / "mosaic.vrt"
    vrt.write_text(_vrt(z.shape, [(left.name, 0), (right.name, 18)], (18, 18)))
    out["vrt_mosaic"] = (vrt.name, "m")
    out.update(_real_dems(tmp))
    return out


def _real_dems(tmp):
    """Two real DEMs from matplotlib's sample data, written as GeoTIFFs in EPSG:4326."""
    from matplotlib import cbook

    out = {}
    fault = np.load(cbook.get_sample_data("jacksboro_fault_dem.npz", asfileobj=False))
    z = fault["elevation"][:120, :140]  # int16, 3 arc-seconds (about 75 x 90 m)
    north = float(max(fault["ymin"], fault["ymax"]))
    west, step = float(fault["xmin"]), float(fault["dx"])
    _geographic(tmp / "real_fault.tif", z, west, north, step, "int16", -32768)
    out["real_fault"] = ("real_fault.tif", "m")
    coast = np.load(cbook.get_sample_data("topobathy.npz", asfileobj=False))
    topo, lon, lat = coast["topo"], coast["longitude"] - 360.0, coast["latitude"]
    if lat[0] < lat[-1]:  # rows from north to south
        topo, lat = topo[::-1], lat[::-1]
    step = float(abs(lon[1] - lon[0]))
    west, north = float(lon[0]) - step / 2, float(lat[0]) + step / 2
    sea = np.where(topo < 0.0, 0.0, topo)  # the sea as flat ground at sea level
    _geographic(tmp / "real_coast_sea.tif", sea, west, north, step, "float32", -9999.0)
    out["real_coast_sea"] = ("real_coast_sea.tif", "m")
    void = np.where(topo < 0.0, -9999.0, topo)  # the sea as no data
    _geographic(tmp / "real_coast_void.tif", void, west, north, step, "float32", -9999.0)
    out["real_coast_void"] = ("real_coast_void.tif", "m")
    return out


def _geographic(path, z, west, north, step, dtype, nodata):
    _raster(path, z, west, north, step, dtype, nodata, "EPSG:4326")


def _raster(path, z, west, north, step, dtype, nodata, crs):
    with rasterio.open(
        path, "w", driver="GTiff", width=z.shape[1], height=z.shape[0], count=1,
        dtype=dtype, crs=crs, transform=from_origin(west, north, step, step), nodata=nodata,
    ) as dst:  # fmt: skip
        dst.write(z.astype(dtype), 1)


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
    for name in ("real_fault", "real_coast_sea", "real_coast_void"):
        with rasterio.open(tmp / dems[name][0]) as src:
            x0, y0, x1, y1 = src.bounds
        xm = (x0 + x1) / 2
        gpd.GeoDataFrame(
            {"unit": ["A", "B"]}, geometry=[box(x0, y0, xm, y1), box(xm, y0, x1, y1)],
            crs="EPSG:4326",
        ).to_file(tmp / f"soils_{name}.geojson", driver="GeoJSON")  # fmt: skip
        _geographic(tmp / f"wet_{name}.tif", np.full((20, 20), 0.6), x0, y1,
                    (x1 - x0) / 19.0, "float32", -1.0)  # fmt: skip
    (tmp / "soils.csv").write_text(SOIL_TABLE)
    header = SOIL_TABLE.splitlines()[0].split(",")
    keep = [i for i, name in enumerate(header) if not name.endswith("_sd")]
    plain = [",".join(line.split(",")[i] for i in keep) for line in SOIL_TABLE.splitlines()]
    lon, lat = np.meshgrid(np.arange(-179.5, 180.0), np.arange(89.5, -90.0, -1.0))
    cohesion = 2.0 + 3.0 * (np.sin(np.radians(lon)) + 1.0) / 2.0  # 2 to 5 kPa by longitude
    _geographic(tmp / "cohesion.tif", cohesion, -180.0, 90.0, 1.0, "float32", -9999.0)
    cover = np.where(np.floor(lon) % 2 == 0, 1.0, 2.0)  # forest and grass in strips
    cover[lat < -60.0] = 0.0  # no class: the units' roots
    _geographic(tmp / "cover.tif", cover, -180.0, 90.0, 1.0, "float32", 0.0)
    (tmp / "cover.csv").write_text(
        "class,root_cohesion_kpa,root_cohesion_kpa_sd,rooting_depth_m,harvest_year\n"
        "1,5.0,1.5,1.5,2015\n2,1.0,,0.4,\n"
    )
    (tmp / "cover_plain.csv").write_text(  # no spread on the roots either
        "class,root_cohesion_kpa,rooting_depth_m,harvest_year\n1,5.0,1.5,2015\n2,1.0,0.4,\n"
    )
    (tmp / "soils_plain.csv").write_text("\n".join(plain) + "\n")  # no spreads
    wet = np.full((50, 60), 0.6)
    _raster(tmp / "wet.tif", wet, X0 - 50, Y0 + 50, 10.0, "float32", -1.0, "EPSG:32633")
    durations, periods = [1.0, 6.0, 24.0], [2.0, 10.0, 100.0]
    grid = idf_formula(durations, periods, 30.0, 0.2, 0.3, 0.75)
    rows = ["duration_h,return_period_yr,intensity_mm_h"] + [
        f"{d:g},{t:g},{grid[i, j]:.4f}" for i, d in enumerate(durations)
        for j, t in enumerate(periods)
    ]  # fmt: skip
    (tmp / "idf.csv").write_text("\n".join(rows) + "\n")
    (tmp / "gauge.csv").write_text("end_h,rain_mm\n3,6\n5,40\n8,9\n")  # rain in steps
    (tmp / "gauge2.csv").write_text("end_h,rain_mm\n2,20\n6,10\n")
    gpd.GeoDataFrame(  # two gauges in longitude and latitude, far from some of the DEMs
        {"name": ["north", "south"], "record": ["gauge.csv", "gauge2.csv"]},
        geometry=[Point(15.0, 45.2), Point(15.1, 45.0)], crs="EPSG:4326",
    ).to_file(tmp / "gauges.gpkg", driver="GPKG")  # fmt: skip
    _global_rain(tmp / "radar.nc")
    return tmp, dems


def _global_rain(path):
    """A CF rain series on a 1-degree grid over the whole globe (covers every DEM here):
    three hourly steps, more rain to the east."""
    import xarray as xr

    lon, lat = np.arange(-179.5, 180.0), np.arange(-89.5, 90.0)
    east = np.clip((lon[None, :] + 180.0) / 18.0, 0.0, 30.0) * np.ones((lat.size, 1))
    rain = np.stack([east, 2.0 * east, 0.5 * east]) / 3600.0  # kg m-2 s-1
    ds = xr.Dataset(
        {"pr": (("time", "lat", "lon"), rain,
                {"standard_name": "precipitation_flux", "units": "kg m-2 s-1"})},
        coords={
            "time": np.array(["2026-11-30T01", "2026-11-30T02", "2026-11-30T03"],
                             "datetime64[ns]"),
            "lat": ("lat", lat, {"standard_name": "latitude"}),
            "lon": ("lon", lon, {"standard_name": "longitude"}),
        },
    )  # fmt: skip
    ds.to_netcdf(path)


def _scenario_file(tmp, name, dem, unit, method="taylor", maps=False):
    samples = "samples = 200\nrandom_state = 3" if method == "monte_carlo" else ""
    soils = f"soils_{name}.geojson" if name.startswith("real_") else "soils.geojson"
    text = SCENARIOS.format(dem=dem, unit=unit, method=method, samples=samples,
                            maps=str(maps).lower(), soils=soils,
                            wet=soils.replace("soils", "wet").replace(".geojson", ".tif"),
                            )  # fmt: skip
    path = tmp / f"{name}_{method}.toml"
    path.write_text(text)
    return path


CASES = [
    "valley_lake_cliff", "voids_and_island", "one_row", "one_column", "three_by_three",
    "constant", "int16_voids", "feet", "esri_ascii", "vrt_mosaic", "real_fault",
    "real_coast_sea", "real_coast_void",
]  # fmt: skip


def test_rain_scenarios_without_spreads_on_flat_and_cliff_terrain(gauntlet):
    tmp, dems = gauntlet
    dem, unit = dems["valley_lake_cliff"]
    config = _scenario_file(tmp, "plain", dem, unit)
    text = config.read_text().replace('"soils.csv"', '"soils_plain.csv"')
    config.write_text(text.replace('"cover.csv"', '"cover_plain.csv"'))
    run(config, tmp / "out_plain", progress=False, echo=lambda s: None)
    assert not (tmp / "out_plain" / "rain" / "probability_of_failure.tif").exists()
    with rasterio.open(tmp / "out_plain" / "rain" / "annual_failure_probability.tif") as src:
        p = src.read(1, masked=True).compressed()
    assert p.size > 0 and ((p >= 0) & (p <= 1)).all()


@pytest.mark.parametrize("name", CASES)
def test_every_scenario_kind_runs_on_real_terrain(gauntlet, name, monkeypatch):
    from slopescreen.maps.region import runout_tiles

    monkeypatch.setattr(runout_tiles, "RUNOUT_TILE", 16)  # run-out across tile edges too
    tmp, dems = gauntlet
    dem, unit = dems[name]
    maps = name in ("constant", "real_coast_sea")  # figures on two: flat, and lat/lon with sea
    config = _scenario_file(tmp, name, dem, unit, maps=maps)
    out = tmp / f"out_{name}"
    try:
        run(config, out, progress=False, echo=lambda s: None)
    except InputError as exc:  # a DEM that cannot be used: one line saying why
        assert "\n" not in str(exc) and len(str(exc)) < 400
        assert name in ("one_row", "one_column"), str(exc)
        assert "must be at least 3 x 3 cells" in str(exc)
        return
    assert name not in ("one_row", "one_column")
    with rasterio.open(tmp / dem) as src:
        has_data = src.read_masks(1) > 0
    kinds = ("dry", "wet_raster", "steady", "storm", "gauge", "gauges", "radar", "rain")
    for scenario in (*kinds, "rain_more"):
        with rasterio.open(out / scenario / "fs.tif") as src:
            fs = src.read(1, masked=True)
            cap = float(src.tags()["fs_cap"])
        for field, (low, high) in (("soil_depth_m", (0.05, 2.5)), ("root_cohesion_kpa", (0, 5))):
            with rasterio.open(out / scenario / f"{field}.tif") as src:
                v = src.read(1, masked=True)
            assert v.count() == fs.count() and ((v >= low) & (v <= high)).all(), field
        assert not np.isnan(fs.compressed()).any()
        assert (fs.compressed() > 0).all() and (fs.compressed() <= cap).all()
        assert fs.count() > 0 and fs.count() <= has_data.sum()
        with rasterio.open(out / scenario / "probability_of_failure.tif") as src:
            pf = src.read(1, masked=True).compressed()
        assert ((pf >= 0) & (pf <= 1)).all()
    for scenario in ("steady", "storm", "gauges"):  # run-out: codes and shares, never NaN
        with rasterio.open(out / scenario / "runout_reach.tif") as src:
            reach = src.read(1, masked=True)
        with rasterio.open(out / scenario / "runout_source_share.tif") as src:
            share = src.read(1, masked=True)
        assert reach.count() == share.count() == has_data.sum()
        assert set(np.unique(reach.compressed())) <= {0, 1}
        assert ((share.compressed() >= 0) & (share.compressed() <= 1)).all()
        assert ((share.compressed() > 0) == (reach.compressed() == 1)).all()
    for storm in ("storm", "gauge", "gauges", "radar"):
        with rasterio.open(out / storm / "storm_time_to_failure_h.tif") as src:
            ttf = src.read(1, masked=True).compressed()
        assert ((ttf >= 0) | (ttf == -1) | (ttf == -2)).all()
    with rasterio.open(out / "rain" / "annual_failure_probability.tif") as src:
        p = src.read(1, masked=True).compressed()
    assert ((p >= 0) & (p <= 1)).all()
    if maps:
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


@pytest.mark.parametrize("name", ["valley_lake_cliff", "constant"])
def test_every_command_runs_on_flat_and_cliff_terrain(gauntlet, name, tmp_path):
    # run, check, score, backcalc, calibrate and sensitivity through the shell: exit 0 (or
    # one line), never a traceback; slides on the lake, the cliff and the slopes
    from slopescreen.cli.main import main

    tmp, dems = gauntlet
    dem, unit = dems[name]
    config = _scenario_file(tmp, f"cmd_{name}", dem, unit)
    out = tmp_path / "out"
    slides = gpd.GeoDataFrame(
        {"slide_id": [f"S{i}" for i in range(6)]},
        geometry=gpd.points_from_xy(
            X0 + CELL * np.array([3.5, 4.5, 10.5, 25.5, 34.5, 30.5]),
            Y0 - CELL * np.array([3.5, 4.5, 20.5, 12.5, 8.5, 25.5]),
        ),
        crs="EPSG:32633",
    )
    slides.to_file(tmp_path / "slides.geojson", driver="GeoJSON")
    inv = ["--inventory", str(tmp_path / "slides.geojson")]
    assert main(["run", str(config), "--out", str(out), "--quiet"]) == 0
    assert main(["check", str(config)]) == 0
    assert main(["score", str(config), "--out", str(out), "--quiet", *inv]) == 0
    for parameter in ("cohesion_kpa", "depth_m", "saturation"):
        argv = ["backcalc", str(config), "--out", str(out), "--scenario", "steady",
                "--parameter", parameter, *inv]  # fmt: skip
        assert main(argv) == 0
    argv = ["calibrate", str(config), "--out", str(out), "--scenario", "steady", *inv]
    code = main(argv)
    assert code in (0, 2)  # a unit with no slide cell is refused in one line, say
    assert main(["sensitivity", str(config), "--out", str(out), "--scenario", "steady"]) == 0
    summary = (out / "validation").iterdir()
    assert any(p.name.startswith("backcalc_steady_depth_m") for p in summary)
