"""Rain from a raster in place of a number (steady recharge, storm intensity): resampled
bilinearly onto the DEM grid from any grid and CRS, and the same physics cell by cell."""

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from rasterio.warp import transform as warp_points
from region_files import _dem, _polygons, write_raster

from slopescreen.hydrology import steady_state_saturation
from slopescreen.maps.region.engine import run
from slopescreen.scenario import cell_transmissivity_m2_day

HEAD = (
    '[region]\nname = "rain"\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n'
    "[classes]\nmin_zone_area_m2 = 0.0\n[outputs]\nquicklook_map = false\nreport = false\n"
)
STORM = "duration_h = 6.0\nlater_h = 12.0\ninitial_water_table_depth_m = 1.0\n"


@pytest.fixture(scope="module")
def region(tmp_path_factory):
    folder = tmp_path_factory.mktemp("rain")
    _dem(folder / "dem.tif")  # 10 m cells, x 500000-500500, y 5000000-5000400, UTM 33N
    _polygons(folder / "soils.geojson", diffusivity_m2_s=1e-4)
    import geopandas as gpd

    frame = gpd.read_file(folder / "soils.geojson")
    frame.assign(diffusivity_m2_s=1e-4).to_file(folder / "soils.geojson", driver="GeoJSON")
    # a ramp in x on 20 m cells reaching beyond the DEM on every side
    x = 499910.0 + 20.0 * np.arange(32)
    ramp = np.repeat((5.0 + 0.05 * (x - 499900.0))[None, :], 26, axis=0)
    write_raster(folder / "ramp.tif", ramp, transform=from_origin(499900.0, 5000460.0, 20.0, 20.0))
    # a constant on a lon/lat grid of about 0.0005 degree cells around the DEM
    lon, lat = warp_points("EPSG:32633", "EPSG:4326", [499900.0, 500600.0], [4999900.0, 5000500.0])
    cell = 0.0005
    shape = (int((lat[1] - lat[0]) / cell) + 2, int((lon[1] - lon[0]) / cell) + 2)
    for name, value in (("flat_rch.tif", 40.0), ("flat_rain.tif", 20.0)):
        write_raster(
            folder / name,
            np.full(shape, value),
            "EPSG:4326",
            from_origin(lon[0] - cell, lat[1] + cell, cell, cell),
        )
    return folder


def _run(region, tmp_path, name, wetness):
    toml = region / f"{name}.toml"
    toml.write_text(f'{HEAD}[[scenario]]\nname = "s"\n{wetness}\n')
    out = tmp_path / name
    run(toml, out, progress=False, echo=lambda s: None)
    return out


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1).astype(float), src.nodata, src.tags()


def test_recharge_ramp_gives_the_steady_saturation_of_each_cells_own_recharge(region, tmp_path):
    out = _run(region, tmp_path, "ramp", 'recharge_mm_day = "ramp.tif"')
    m, nodata, tags = _read(out / "s" / "saturation.tif")
    slope, _, _ = _read(out / "terrain" / "slope_deg.tif")
    sca, _, _ = _read(out / "terrain" / "specific_catchment_area_m.tif")
    # bilinear interpolation reproduces a linear field exactly (analytic), so each DEM
    # cell's recharge is the ramp at its centre
    x = 500005.0 + 10.0 * np.arange(50)
    recharge = np.broadcast_to(5.0 + 0.05 * (x - 499900.0), m.shape)
    ok = m != nodata
    assert ok.sum() > 1500
    t = cell_transmissivity_m2_day(1e-5, np.nan, 1.5, slope[ok])  # both units: K, z as given
    want = steady_state_saturation(recharge[ok], sca[ok], slope[ok], t)
    np.testing.assert_allclose(m[ok], want, rtol=2e-6, atol=1e-6)
    assert 0.05 < m[ok].min() < m[ok].max() <= 1.0  # the ramp shows in the map
    assert "bilinear" in tags["rain_raster"] and "ramp.tif" in tags["rain_raster"]


@pytest.mark.parametrize(
    ("raster", "number"),
    [
        ('recharge_mm_day = "flat_rch.tif"', "recharge_mm_day = 40.0"),
        (
            f'[scenario.storm]\nrain_mm_h = "flat_rain.tif"\n{STORM}',
            f"[scenario.storm]\nrain_mm_h = 20.0\n{STORM}",
        ),
    ],
    ids=["recharge", "storm"],
)
def test_a_constant_raster_on_lon_lat_equals_the_number(region, tmp_path, raster, number):
    # a constant field stays constant under reprojection and bilinear resampling (analytic)
    a, nodata, _ = _read(_run(region, tmp_path, "raster", raster) / "s" / "fs.tif")
    b, _, _ = _read(_run(region, tmp_path, "number", number) / "s" / "fs.tif")
    assert (a != nodata).sum() > 1500
    np.testing.assert_array_equal(a == nodata, b == nodata)
    np.testing.assert_allclose(a, b, rtol=1e-6)
