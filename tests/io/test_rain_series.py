"""Rain on a grid in steps: a CF NetCDF file and a folder of rasters named by time, read,
converted by their stated unit, resampled onto the DEM grid, and replayed by a storm."""

from __future__ import annotations

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from region_files import storm_fs, storm_region, write_rain_netcdf

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import read_grid
from slopescreen.maps.io.rain_series import read_series, series_on_tile

RECORD_MM_H = (5.0, 30.0, 10.0)  # three hourly steps


@pytest.fixture(scope="module")
def region(tmp_path_factory):
    folder = storm_region(tmp_path_factory.mktemp("series"))
    (folder / "record.csv").write_text(
        "end_h,rain_mm_h\n" + "".join(f"{k + 1},{v}\n" for k, v in enumerate(RECORD_MM_H))
    )
    return folder


def _fs(region, tmp_path, name, rain):
    return storm_fs(region, tmp_path / name, rain, later_h=8.0)


def test_a_uniform_netcdf_series_is_the_gauge_record(region, tmp_path):
    # the same rain everywhere, in kg m-2 s-1 (1 kg m-2 of water is 1 mm: common practice)
    # with time bounds, or in mm h-1 with times marking the ends: the record's factor of
    # safety (bilinear resampling of a constant field is that constant, to rounding)
    write_rain_netcdf(region / "flux.nc", RECORD_MM_H, unit="kg m-2 s-1")
    write_rain_netcdf(region / "rate.nc", RECORD_MM_H, bounds=False)
    record = _fs(region, tmp_path, "record", 'hyetograph = "record.csv"')
    for name in ("flux.nc", "rate.nc"):
        series = _fs(region, tmp_path, name.split(".")[0], f'rain_series = "{name}"')
        np.testing.assert_allclose(series, record, rtol=1e-6)


def test_a_folder_of_rasters_by_time_in_depths(region, tmp_path):
    folder = region / "radar"
    folder.mkdir(exist_ok=True)
    transform = from_origin(499850.0, 5000550.0, 50.0, 50.0)
    profile = dict(driver="GTiff", width=16, height=14, count=1, dtype="float32",
                   crs="EPSG:32633", transform=transform)  # fmt: skip
    for hour, depth_mm in enumerate(RECORD_MM_H, start=1):  # 1-hour steps: mm = mm/h
        with rasterio.open(folder / f"radar_2026-11-30T{hour:02d}:00.tif", "w", **profile) as dst:
            dst.write(np.full((1, 14, 16), depth_mm, np.float32))
    record = _fs(region, tmp_path, "record", 'hyetograph = "record.csv"')
    series = _fs(region, tmp_path, "folder", 'rain_series = "radar"\nrain_series_unit = "mm"')
    np.testing.assert_allclose(series, record, rtol=1e-6)


def test_a_ramp_is_resampled_exactly(region, tmp_path):
    # bilinear interpolation reproduces a field linear in x and y exactly (analytic), so
    # the rain on each DEM cell is the ramp at its centre, whatever the two grids
    path = tmp_path / "ramp.nc"
    x = 499875.0 + 50.0 * np.arange(16)
    y = 4999875.0 + 50.0 * np.arange(14)
    ramp = 10.0 + 0.02 * (x[None, :] - 499875.0) + 0.01 * (y[:, None] - 4999875.0)
    write_rain_netcdf(path, [ramp, ramp, ramp])
    series = read_series(path)
    grid = read_grid(region / "dem.tif")
    steps = series_on_tile(series, grid, slice(0, 40), slice(0, 50))
    cx = 500000.0 + 10.0 * (np.arange(50) + 0.5)
    cy = 5000400.0 - 10.0 * (np.arange(40) + 0.5)
    expected = 10.0 + 0.02 * (cx[None, :] - 499875.0) + 0.01 * (cy[:, None] - 4999875.0)
    np.testing.assert_allclose(steps[1], expected, rtol=1e-9)


def test_nearest_resampling_gives_each_cell_its_grid_cells_rain(region, tmp_path):
    # "nearest": a DEM cell takes the value of the rain grid cell holding its centre
    path = tmp_path / "blocks.nc"
    values = np.arange(14 * 16, dtype=float).reshape(14, 16)  # every grid cell its own
    write_rain_netcdf(path, [values, values, values])
    grid = read_grid(region / "dem.tif")
    steps = series_on_tile(read_series(path), grid, slice(0, 40), slice(0, 50), "nearest")
    cx = 500000.0 + 10.0 * (np.arange(50) + 0.5)
    cy = 5000400.0 - 10.0 * (np.arange(40) + 0.5)
    col = np.floor((cx - 499850.0) / 50.0).astype(int)  # the grid's cells: 50 m from 499850
    row = np.floor((cy - 4999850.0) / 50.0).astype(int)  # y rising with the row index
    np.testing.assert_array_equal(steps[0], values[row[:, None], col[None, :]])


@pytest.mark.parametrize(
    ("make", "message"),
    [
        (lambda p: write_rain_netcdf(p, RECORD_MM_H, unit="inch"), "units 'inch'"),
        (
            lambda p: write_rain_netcdf(p, RECORD_MM_H, name="t2m"),
            "no variable with a precipitation",
        ),
        (lambda p: write_rain_netcdf(p, (5.0, -1.0, 0.0)), "beyond 0 to 1000 mm/h"),
    ],
)
def test_bad_netcdf_is_refused_in_one_line(tmp_path, make, message):
    path = tmp_path / "bad.nc"
    make(path)
    with pytest.raises(InputError) as caught:
        read_series(path)
    assert message in str(caught.value) and str(path) in str(caught.value)
    assert "\n" not in str(caught.value)


def test_a_folder_needs_its_unit_and_distinct_times(tmp_path):
    folder = tmp_path / "radar"
    folder.mkdir()
    profile = dict(driver="GTiff", width=2, height=2, count=1, dtype="float32",
                   crs="EPSG:32633", transform=from_origin(0.0, 100.0, 50.0, 50.0))  # fmt: skip
    for name in ("a_20261130T0100.tif", "b_2026-11-30T01:00.tif"):
        with rasterio.open(folder / name, "w", **profile) as dst:
            dst.write(np.ones((1, 2, 2), np.float32))
    with pytest.raises(InputError, match="rain_series_unit"):
        read_series(folder)
    with pytest.raises(InputError, match="two rasters for 2026-11-30T01:00"):
        read_series(folder, unit="mm_h")


def test_the_manifest_hashes_the_series(region, tmp_path):
    # the NetCDF file the rain was read from, by its SHA-256 (hashlib, common practice)
    import hashlib
    import json

    write_rain_netcdf(region / "hashed.nc", RECORD_MM_H)
    storm_fs(region, tmp_path / "hashed", 'rain_series = "hashed.nc"', later_h=8.0)
    hashes = json.loads((tmp_path / "hashed" / "manifest.json").read_text())["inputs_sha256"]
    expected = hashlib.sha256((region / "hashed.nc").read_bytes()).hexdigest()
    assert hashes["storm_rain:s:hashed.nc"] == expected
