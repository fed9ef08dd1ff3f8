"""Horn slope against GDAL's own gdaldem, analytic planes and a geographic grid."""

import math
import shutil
import subprocess

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import write_raster

from slopescreen.maps.io.grid import read_dem
from slopescreen.maps.terrain.slope import grid_gradient, hillshade, slope_deg

_write = write_raster


def _rough_dem():
    y, x = np.mgrid[0:80, 0:90].astype(float)
    return 200 + 30 * np.sin(x / 9.0) * np.cos(y / 13.0) + 0.8 * x + 0.05 * (x * y) ** 1.1


@pytest.mark.skipif(
    shutil.which("gdaldem") is None,
    reason="gdaldem is not installed: sudo apt-get install gdal-bin (.ci/run installs it)",
)
def test_slope_matches_gdaldem(tmp_path):
    # Outside reference: GDAL's own `gdaldem slope` (Horn 1981 is its default algorithm).
    z = _rough_dem().astype(np.float32)
    dem = _write(tmp_path / "dem.tif", z)
    out = tmp_path / "slope.tif"
    subprocess.run(["gdaldem", "slope", str(dem), str(out), "-q"], check=True)
    with rasterio.open(out) as src:
        ref = src.read(1, masked=True)
    ours = slope_deg(z.astype(np.float64), 10.0, 10.0)
    interior = ~ref.mask & np.isfinite(ours)
    assert interior.sum() == (z.shape[0] - 2) * (z.shape[1] - 2)
    assert np.max(np.abs(ours[interior] - ref.data[interior])) < 1e-3
    assert np.isnan(ours[0]).all() and np.isnan(ours[:, -1]).all()  # edges: no data, as GDAL


def test_inclined_plane_slope_and_nodata_propagation():
    # Analytic: a plane rising 0.3 m per m east and 0.4 m per m south has slope atan(0.5).
    y, x = np.mgrid[0:20, 0:25].astype(float)
    z = 0.3 * x * 5.0 - 0.4 * (-(y * 5.0))
    s = slope_deg(z, 5.0, 5.0)
    assert np.allclose(s[1:-1, 1:-1], math.degrees(math.atan(0.5)), atol=1e-10)
    z[10, 10] = np.nan
    s = slope_deg(z, 5.0, 5.0)
    assert np.isnan(s[9:12, 9:12]).all() and np.isfinite(s[8, 8])


def test_hillshade_flat_ground_value():
    # Flat ground under a sun 45 degrees high: 255 cos(45 deg) (Burrough & McDonnell 1998).
    shade = hillshade(np.zeros((5, 5)), 10.0, 10.0)
    assert shade[2, 2] == round(1 + 254 * math.cos(math.radians(45.0)))
    assert shade[0, 0] == 0  # edge: no data


def test_hillshade_full_shadow_is_data_not_no_data():
    # a face dipping south-east at atan(tan(60) sqrt(2)) = 67.8 degrees, away from a sun 45
    # degrees high in the north-west, lies in shadow: cos 45 cos 67.8 - sin 45 sin 67.8 < 0
    # (common practice: the brightness is clipped at its darkest value)
    x = np.arange(7.0) * 10.0
    z = np.add.outer(np.zeros(7), -x * math.tan(math.radians(60.0)))  # falls to the east
    z = z - np.add.outer(np.arange(7.0) * 10.0 * math.tan(math.radians(60.0)), np.zeros(7))
    shade = hillshade(z, 10.0, 10.0)
    assert shade[3, 3] == 1  # darkest brightness, still a data value


def test_geographic_dem_uses_metric_spacing(tmp_path):
    # A plane rising 0.2 m per metre to the east, laid on a 0.0005-degree grid at 45 N: the
    # slope must be atan(0.2) whatever the degree spacing, which only works if each row is
    # measured in metres (pyproj's geodesic as the reference for the row spacing).
    from pyproj import Geod

    rows, cols, step = 30, 40, 0.0005
    transform = from_origin(10.0, 45.0 + rows * step / 2, step, step)
    lat = 45.0 + rows * step / 2 - (np.arange(rows) + 0.5) * step
    geod = Geod(ellps="WGS84")
    _, _, dx = geod.inv(np.full(rows, 10.0), lat, np.full(rows, 10.0 + step), lat)
    x_m = np.outer(dx, np.arange(cols))
    path = _write(tmp_path / "geo.tif", 100.0 + 0.2 * x_m, crs="EPSG:4326", transform=transform)
    grid, z = read_dem(path)
    assert grid.geographic
    ue, un, ve, _ = grid.ground.vectors(slice(0, rows), slice(0, cols))
    assert np.allclose(np.hypot(ue, un).ravel(), dx, rtol=1e-9)
    assert np.allclose(un, 0.0, atol=1e-9) and np.allclose(ve, 0.0, atol=1e-9)
    dz_dcol, dz_drow_up, _ = grid_gradient(z)
    g_e, g_n = grid.ground.ground_gradient(slice(0, rows), slice(0, cols), dz_dcol, dz_drow_up)
    s = np.degrees(np.arctan(np.hypot(g_e, g_n)))
    assert np.allclose(s, math.degrees(math.atan(0.2)), atol=0.01)  # edges one-sided


def test_feet_are_converted(tmp_path):
    z = np.add.outer(np.zeros(6), np.arange(6.0) * 10.0)
    path = _write(tmp_path / "ft.tif", z)
    _, metres = read_dem(path, "ft")
    assert metres[0, 1] == pytest.approx(10.0 * 0.3048)  # international foot, common practice
