"""Small invented regions written by the tests (a DEM, soil polygons, a scenario file)."""

import geopandas as gpd
import numpy as np
import rasterio
from rasterio.transform import from_origin
from shapely.geometry import box

PARAMS = {
    "cohesion_kpa": 2.0,
    "friction_deg": 30.0,
    "unit_weight_kn_m3": 18.0,
    "depth_m": 1.5,
    "hydraulic_conductivity_m_s": 1e-5,
}


def _dem(path, crs="EPSG:32633", rows=40, cols=50, origin=(500000.0, 5000400.0), cell=10.0):
    y, x = np.mgrid[0:rows, 0:cols].astype(float)
    z = 300.0 - 6.0 * np.abs(x - cols / 2) - 2.0 * y
    kwargs = {"crs": crs} if crs else {}
    with rasterio.open(
        path,
        "w",
        driver="GTiff",
        width=cols,
        height=rows,
        count=1,
        dtype="float32",
        transform=from_origin(*origin, cell, cell),
        nodata=-9999.0,
        **kwargs,
    ) as dst:
        dst.write(z.astype(np.float32), 1)
    return path


def _polygons(
    path, bounds=(500000.0, 5000000.0, 500500.0, 5000400.0), crs="EPSG:32633", **overrides
):
    x0, y0, x1, y1 = bounds
    xm = (x0 + x1) / 2
    rows = [dict(PARAMS, unit="A", **overrides), dict(PARAMS, unit="B", cohesion_kpa=5.0)]
    frame = gpd.GeoDataFrame(rows, geometry=[box(x0, y0, xm, y1), box(xm, y0, x1, y1)], crs=crs)
    frame.to_file(path, driver="GeoJSON")
    return path


SCENARIO_TEXT = """[region]
name = "test region"
dem = "dem.tif"
soil_units = "soils.geojson"
soil_unit_field = "unit"

[classes]
min_zone_area_m2 = 0.0

[outputs]
quicklook_map = false

[[scenario]]
name = "wet"
recharge_mm_day = 40.0

[[scenario]]
name = "dry"
saturation = 0.0
"""


# the same with the PNG maps drawn (about 1 s a figure): for the tests that look at them
SCENARIO_TEXT_WITH_MAPS = SCENARIO_TEXT.replace("[outputs]\nquicklook_map = false\n", "[outputs]\n")


def write_raster(path, z, crs="EPSG:32633", transform=None, nodata=-9999.0):
    """A one-band float32 GeoTIFF (default: 10 m cells in UTM 33N)."""
    transform = transform or from_origin(500000.0, 5000000.0, 10.0, 10.0)
    with rasterio.open(
        path,
        "w",
        driver="GTiff",
        width=z.shape[1],
        height=z.shape[0],
        count=1,
        dtype="float32",
        crs=crs,
        transform=transform,
        nodata=nodata,
    ) as dst:
        dst.write(z.astype(np.float32), 1)
    return path


def write_gauges(folder, name, records, crs="EPSG:4326"):
    """Two gauges, west and east of the test DEM (given in ``crs``), with these records."""
    from pyproj import Transformer
    from shapely.geometry import Point

    to = Transformer.from_crs("EPSG:32633", crs, always_xy=True)
    points = [Point(*to.transform(x, 5000200.0)) for x in (500050.0, 500450.0)]
    import geopandas as gpd

    frame = gpd.GeoDataFrame({"name": ["west", "east"], "record": list(records)},
                             geometry=points, crs=crs)  # fmt: skip
    frame.to_file(folder / name, driver="GPKG")


def write_rain_netcdf(path, values_mm_h, unit="mm h-1", bounds=True, name="rain", crs=32633,
                      more=None):  # fmt: skip
    """A CF file: rain (time, y, x) on 50 m cells over the test DEM and beyond, y rising,
    three hourly steps; ``more``: other precipitation variables by name."""
    import xarray as xr
    from pyproj import CRS

    x = 499875.0 + 50.0 * np.arange(16)
    y = 4999875.0 + 50.0 * np.arange(14)
    times = np.array(["2026-11-30T01:00", "2026-11-30T02:00", "2026-11-30T03:00"], "datetime64[ns]")
    factor = {"kg m-2 s-1": 1.0 / 3600.0}.get(unit, 1.0)

    def field(values, standard_name):
        data = np.stack([np.broadcast_to(v, (y.size, x.size)) for v in values]) * factor
        attrs = {"standard_name": standard_name, "units": unit, "grid_mapping": "crs"}
        return xr.DataArray(data, dims=("time", "y", "x"), attrs=attrs)

    fields = {name: field(values_mm_h, "rainfall_flux" if name == "rain" else "air_temperature")}
    fields |= {k: field(v, "rainfall_flux") for k, v in (more or {}).items()}
    fields["crs"] = xr.DataArray(0, attrs={"crs_wkt": CRS.from_epsg(crs).to_wkt()})
    ds = xr.Dataset(fields, coords={"time": times, "y": y, "x": x})
    if bounds:
        edges = np.stack([times - np.timedelta64(1, "h"), times], axis=1)
        ds["time_bnds"] = xr.DataArray(edges, dims=("time", "nv"))
        ds["time"].attrs["bounds"] = "time_bnds"
        for var in ("time", "time_bnds"):  # one unit for both, as CF asks
            ds[var].encoding["units"] = "hours since 2026-11-30 00:00:00"
    ds.to_netcdf(path)


def storm_region(folder):
    """The test DEM and two soil units with the hydrology storms need."""
    _dem(folder / "dem.tif")
    _polygons(folder / "soils.geojson")
    frame = gpd.read_file(folder / "soils.geojson")
    frame["diffusivity_m2_s"] = 1e-4
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")
    return folder


def storm_fs(region, out, rain, later_h=12.0):
    """FS of a storm scenario on ``storm_region`` with the rain lines ``rain``, run into
    ``out`` (its scenario file beside the region's files)."""
    from slopescreen.maps.region.engine import run

    toml = region / f"{out.name}.toml"
    toml.write_text(
        '[region]\nname = "storm"\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n'
        "[outputs]\nquicklook_map = false\nreport = false\n"
        f'[[scenario]]\nname = "s"\n[scenario.storm]\n{rain}\nlater_h = {later_h}\n'
        "initial_water_table_depth_m = 1.0\n"
    )
    run(toml, out, progress=False, echo=lambda s: None)
    with rasterio.open(out / "s" / "fs.tif") as src:
        return src.read(1)
