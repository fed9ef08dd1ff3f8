"""DEMs as delivered: ground slopes, catchments and areas on any projection, lat/lon runs
with zones, voids and cut-off catchments. Surfaces of known ground geometry are made here
with pyproj.Geod on a latitude/longitude grid and warped to other CRSs with rasterio."""

import csv
import json
import math

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from pyproj import CRS, Geod, Proj, Transformer
from rasterio.transform import from_origin
from rasterio.warp import Resampling, calculate_default_transform
from region_files import PARAMS, write_raster
from shapely.geometry import box

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import read_grid
from slopescreen.maps.outputs.quicklook import scale_bar
from slopescreen.maps.region.engine import run
from slopescreen.maps.region.terrain_cache import terrain_products
from slopescreen.maps.terrain.ground import MAX_INTERPOLATION_ERROR, _Measure, ground_geometry

GEOD = Geod(ellps="WGS84")
WEST, NORTH, STEP, ROWS, COLS = 10.40, 49.10, 0.002, 100, 150  # about 22 km x 22 km at 49 N
CENTRE = (WEST + COLS * STEP / 2, NORTH - ROWS * STEP / 2)
PROJECTIONS = {
    "web_mercator": "EPSG:3857",  # map scale about 1.52 here
    "utm_32n": "EPSG:32632",  # 1.1 degrees east of the central meridian
    # conformal, standard parallels far to the south: scale about 1.2, convergence 5 deg
    "lambert_conformal": "+proj=lcc +lat_1=20 +lat_2=25 +lat_0=20 +lon_0=0 +datum=WGS84",
    # equal-area far from its standard parallels and meridian: skewed grid axes
    "albers": "+proj=aea +lat_1=10 +lat_2=15 +lat_0=10 +lon_0=-20 +datum=WGS84",
    "lambert_azimuthal": "+proj=laea +lat_0=20 +lon_0=-30 +datum=WGS84",
    # a state plane grid in US survey feet (Lambert conformal conic): feet, not metres
    "state_plane_feet": "EPSG:2227",
}


def _lonlat_centres():
    lon = WEST + (np.arange(COLS) + 0.5) * STEP
    lat = NORTH - (np.arange(ROWS) + 0.5) * STEP
    return np.meshgrid(lon, lat)


def _plane(slope=0.2, downhill_az=200.0):
    """Elevations falling ``slope`` m per ground metre towards azimuth ``downhill_az``: the
    along-azimuth ground distance from the centre (pyproj.Geod: azimuthal equidistant)."""
    lon, lat = _lonlat_centres()
    az, _, dist = GEOD.inv(np.full(lon.shape, CENTRE[0]), np.full(lon.shape, CENTRE[1]), lon, lat)
    along = dist * np.cos(np.radians(az - downhill_az))
    return 1000.0 - slope * along


def _cone(steep=0.9, radius_m=5000.0, gentle=0.05):
    """A cone steep within ``radius_m`` of the centre, gentle beyond (ground metres)."""
    lon, lat = _lonlat_centres()
    _, _, dist = GEOD.inv(np.full(lon.shape, CENTRE[0]), np.full(lon.shape, CENTRE[1]), lon, lat)
    return 8000.0 - steep * np.minimum(dist, radius_m) - gentle * np.maximum(dist - radius_m, 0)


def _write_lonlat(path, z):
    return write_raster(path, z, "EPSG:4326", from_origin(WEST, NORTH, STEP, STEP))


def _warp(src_path, dst_path, crs):
    """Bilinear warp to ``crs``, no data outside, with exact coordinate transforms (GDAL's
    default approximates them to 1/8 of a cell), onto cells smaller than the source's along
    both axes: GDAL's bilinear kernel then reproduces a linear surface to 0.3 mm here,
    while a coarser target (its kernel widened to average) is off by up to a metre."""
    from rasterio.vrt import WarpedVRT

    with rasterio.open(src_path) as src:
        transform, _, _ = calculate_default_transform(
            src.crs, crs, src.width, src.height, *src.bounds
        )
        transform, width, height = calculate_default_transform(
            src.crs, crs, src.width, src.height, *src.bounds, resolution=0.6 * transform.a
        )
        with WarpedVRT(
            src,
            crs=crs,
            transform=transform,
            width=width,
            height=height,
            resampling=Resampling.bilinear,
            nodata=-9999.0,
            tolerance=1e-6,
        ) as vrt:
            out = vrt.read(1)
    return write_raster(dst_path, out, crs, transform)


def _terrain(path, tmp_path):
    grid = read_grid(path)
    folder, _ = terrain_products(grid, "m", path.stem, tmp_path / "cache", "test", print)
    read = {}
    for name in ("slope_tan", "specific_catchment_area_m", "slope_one_sided", "catchment_cut_off"):
        with rasterio.open(folder / f"{name}.tif") as src:
            read[name] = src.read(1, masked=True)
    return grid, read


@pytest.fixture(scope="module")
def plane_dems(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plane")
    source = _write_lonlat(folder / "lonlat.tif", _plane())
    dems = {"lonlat": source}
    for name, crs in PROJECTIONS.items():
        dems[name] = _warp(source, folder / f"{name}.tif", crs)
    return dems


@pytest.mark.parametrize("name", ["lonlat", *PROJECTIONS])
def test_plane_slope_is_the_ground_slope_in_every_crs(name, plane_dems, tmp_path):
    # Analytic: the plane falls 0.2 m per ground metre; a map-metre slope would be 0.2 times
    # the map scale (about 0.66 of it in Web Mercator here).
    _, t = _terrain(plane_dems[name], tmp_path)
    # interior: three cells or more from the edge of the data (the bilinear warp blends
    # the no-data border into the cells next to it)
    interior = _eroded(~t["slope_tan"].mask, 3)
    assert interior.sum() > 5000
    tan = t["slope_tan"].data[interior]
    assert np.max(np.abs(tan / 0.2 - 1.0)) < 0.005  # within 0.5% on every interior cell
    if name == "lonlat":  # unwarped: the one-sided edge cells are exact too (a plane)
        edge = (t["slope_one_sided"] == 1).filled(False)
        assert edge.sum() == 2 * (ROWS + COLS) - 4
        assert np.max(np.abs(t["slope_tan"].data[edge] / 0.2 - 1.0)) < 0.005


def _eroded(mask, cells):
    out = mask.copy()
    for _ in range(cells):
        shrunk = out.copy()
        shrunk[1:] &= out[:-1]
        shrunk[:-1] &= out[1:]
        shrunk[:, 1:] &= out[:, :-1]
        shrunk[:, :-1] &= out[:, 1:]
        shrunk[[0, -1], :] = False
        shrunk[:, [0, -1]] = False
        out = shrunk
    return out


def _value_at(grid, raster, lon, lat):
    crs = CRS.from_user_input(grid.crs.to_wkt())
    x, y = Transformer.from_crs(crs.geodetic_crs, crs, always_xy=True).transform(lon, lat)
    col, row = ~grid.transform * (x, y)
    return float(raster[int(row), int(col)])


def _upslope_length_m(lon, lat, uphill_az=20.0, step_m=10.0):
    """Ground length from a point up the plane to the edge of the lat/lon box, walked along
    the geodesic with pyproj.Geod."""
    length = 0.0
    while WEST < lon < WEST + COLS * STEP and NORTH - ROWS * STEP < lat < NORTH:
        lon, lat, _ = GEOD.fwd(lon, lat, uphill_az, step_m)
        length += step_m
    return length


def test_plane_catchment_is_the_ground_flow_length_in_every_crs(plane_dems, tmp_path):
    # The specific catchment area of a plane is the upslope flow length to the edge of the
    # data (Tarboton 1997; by continuity), here a ground length of 17.76 km measured with
    # pyproj.Geod, whatever the CRS (a map-metre routing would give 1.52 times it in Web
    # Mercator). The warp itself reproduces the plane to 0.3 mm; what remains is D-infinity's
    # dependence on the angle between the flow and the grid (test_routing: up to 6% on
    # planes 15-30 degrees off the axes): the flow runs 20 degrees off the grid here, and
    # the Lambert azimuthal grid is turned a further 28 degrees. Tolerances: 4% where the
    # grid is within 5 degrees of true north, 7% for the turned grid.
    points = [(CENTRE[0] + dx, CENTRE[1] - 0.05) for dx in (-0.04, 0.0, 0.04)]
    expected = np.array([_upslope_length_m(*p) for p in points])
    assert np.allclose(expected, 17760.0, atol=10.0)
    for name, path in plane_dems.items():
        grid, t = _terrain(path, tmp_path / name)
        got = np.array([_value_at(grid, t["specific_catchment_area_m"], *p) for p in points])
        g0, g1 = grid.ground.convergence_range_deg()
        tolerance = 0.04 if max(abs(g0), abs(g1)) < 5.0 else 0.07
        assert np.allclose(got, expected, rtol=tolerance), (name, got, expected)


def test_ground_lattice_interpolation_error(plane_dems):
    # Between lattice nodes the ground vectors are bilinear; checked here against exact
    # geodesic measurement at random cells of a grid large enough to use the lattice.
    for name in ("utm_32n", "lambert_conformal", "albers", "lambert_azimuthal"):
        with rasterio.open(plane_dems[name]) as src:
            crs = src.crs
            t = src.transform * rasterio.Affine.scale(0.1)  # 10x finer, 10x more cells
            height, width = src.height * 10, src.width * 10
        ground = ground_geometry(t, crs, height, width)
        assert ground.row_step > 1  # on a lattice, not every cell
        assert ground.interpolation_error <= MAX_INTERPOLATION_ERROR
        rng = np.random.default_rng(3)
        rows, cols = rng.integers(0, height, 40), rng.integers(0, width, 40)
        measure = _Measure(t, crs)
        for r, c in zip(rows, cols, strict=True):
            exact_u, exact_v = (w[0, 0] for w in measure(np.array([r]), np.array([c])))
            ue, un, ve, vn = ground.vectors(slice(r, r + 1), slice(c, c + 1))
            got_u = np.array([ue.ravel()[0], un.ravel()[0]])
            got_v = np.array([ve.ravel()[0], vn.ravel()[0]])
            assert np.hypot(*(got_u - exact_u)) / np.hypot(*exact_u) < 1e-5
            assert np.hypot(*(got_v - exact_v)) / np.hypot(*exact_v) < 1e-5


def _centre_vectors(grid):
    r, c = grid.height // 2, grid.width // 2
    crs = CRS.from_user_input(grid.crs.to_wkt())
    x, y = grid.transform * (c + 0.5, r + 0.5)
    lon, lat = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True).transform(x, y)
    ue, un, ve, vn = (
        float(np.ravel(w)[0]) for w in grid.ground.vectors(slice(r, r + 1), slice(c, c + 1))
    )
    k_x = abs(grid.transform.a) / math.hypot(ue, un)
    k_y = abs(grid.transform.e) / math.hypot(ve, vn)
    return crs, lon, lat, k_x, k_y, math.degrees(math.atan2(ve, vn))


def test_map_scale_against_proj_factors(plane_dems):
    # PROJ's own analytic scale factors (pyproj.Proj.get_factors) as the outside reference
    # for the geodesic measurement, on the ellipsoidal conformal projections.
    for name in ("utm_32n", "lambert_conformal"):
        crs, lon, lat, k_x, k_y, gamma = _centre_vectors(read_grid(plane_dems[name]))
        factors = Proj(crs).get_factors(lon, lat)
        assert k_x == pytest.approx(factors.parallel_scale, rel=1e-6), name
        assert k_y == pytest.approx(factors.meridional_scale, rel=1e-6), name
        assert gamma == pytest.approx(factors.meridian_convergence, abs=1e-4), name


def test_web_mercator_scale_on_the_ellipsoid(plane_dems):
    # Web Mercator projects WGS84 latitude and longitude with the spherical formulas, so on
    # the ellipsoid it is not conformal: along a parallel k = a / (N cos phi), along a
    # meridian k = a sec(phi) / M, with N and M the radii of curvature in the prime vertical
    # and the meridian (Snyder 1987, eqs. 4-18 and 4-20; common practice).
    _, _, lat, k_x, k_y, gamma = _centre_vectors(read_grid(plane_dems["web_mercator"]))
    a, e2 = 6378137.0, 0.0066943799901413165  # WGS84
    phi = math.radians(lat)
    w = 1.0 - e2 * math.sin(phi) ** 2
    n, m = a / math.sqrt(w), a * (1.0 - e2) / w**1.5
    assert k_x == pytest.approx(a / (n * math.cos(phi)), rel=1e-6)
    assert k_y == pytest.approx(a / (m * math.cos(phi)), rel=1e-6)
    assert gamma == pytest.approx(0.0, abs=1e-9)
    k0, k1 = read_grid(plane_dems["web_mercator"]).ground.scale_range()
    assert 1.50 < k0 < k1 < 1.54  # about 1 / cos(latitude) at 48.9-49.1 N


def test_scale_bar_is_true_at_the_map_centre(plane_dems):
    for name, path in plane_dems.items():
        grid = read_grid(path)
        bar_m, bar_map = scale_bar(grid)
        crs = CRS.from_user_input(grid.crs.to_wkt())
        x, y = grid.transform * (grid.width / 2, grid.height / 2)
        to_ll = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
        lon0, lat0 = to_ll.transform(x - bar_map / 2, y)
        lon1, lat1 = to_ll.transform(x + bar_map / 2, y)
        _, _, ground = GEOD.inv(lon0, lat0, lon1, lat1)
        assert ground == pytest.approx(bar_m, rel=0.005), name


# ----------------------------------------------------------------------------------------
# whole runs: class and zone areas on the ground, lat/lon end to end


def _cone_region(folder, crs_name):
    folder.mkdir(parents=True, exist_ok=True)
    source = _write_lonlat(folder / "lonlat.tif", _cone())
    dem = (
        source if crs_name == "lonlat" else _warp(source, folder / "dem.tif", PROJECTIONS[crs_name])
    )
    frame = gpd.GeoDataFrame(
        [dict(PARAMS, unit="ROCK", cohesion_kpa=5.0, friction_deg=25.0)],
        geometry=[box(WEST - 0.1, NORTH - 0.4, WEST + 0.5, NORTH + 0.1)],
        crs="EPSG:4326",
    )
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")
    toml = folder / "scenarios.toml"
    toml.write_text(
        f'[region]\nname = "cone"\ndem = "{dem.name}"\nsoil_units = "soils.geojson"\n\n'
        '[classes]\nmin_zone_area_m2 = 0.0\n\n[[scenario]]\nname = "dry"\nsaturation = 0.0\n'
    )
    return toml


def _geodesic_area_m2(frame):
    lonlat = frame.to_crs("EPSG:4326")
    return np.array(
        [abs(GEOD.geometry_area_perimeter(g.segmentize(0.0005))[0]) for g in lonlat.geometry]
    )


@pytest.mark.parametrize("crs_name", ["lonlat", *PROJECTIONS])
def test_class_and_zone_areas_are_ground_areas(crs_name, tmp_path):
    toml = _cone_region(tmp_path / "r", crs_name)
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    zones = gpd.read_file(out / "dry" / "low_margin_zones.gpkg")
    assert len(zones) >= 1
    geodesic = _geodesic_area_m2(zones)  # pyproj.Geod on the written polygons
    assert np.allclose(zones["area_m2"], geodesic, rtol=0.005)
    with open(out / "dry" / "summary.csv") as handle:
        rows = [r for r in csv.DictReader(handle) if r["soil_unit"] == "ALL"]
    classes_12 = 10_000 * sum(float(r["area_ha"]) for r in rows if int(r["class"]) <= 2)
    assert classes_12 == pytest.approx(geodesic.sum(), rel=0.005)
    # the steep disc of 5 km radius, on the ground in every CRS (cells of 150-220 m: 3%)
    assert classes_12 == pytest.approx(math.pi * 5000.0**2, rel=0.03)
    manifest = json.loads((out / "manifest.json").read_text())
    note = manifest["terrain"]["ground_geometry"]
    report = (out / "report.html").read_text()
    assert note in report
    with rasterio.open(out / "dry" / "fs.tif") as src:
        assert src.tags()["ground_geometry"] == note
    if crs_name == "web_mercator":
        assert "map scale 1.5" in note and "corrected to the ground" in note
        k0, k1 = manifest["terrain"]["map_scale_range"]
        assert 1.5 < k0 < k1 < 1.56


def test_lonlat_run_with_zones_writes_every_output(tmp_path):
    toml = _cone_region(tmp_path / "r", "lonlat")
    out = tmp_path / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["complete"] is True
    wanted = {
        "terrain/slope_deg.tif",
        "terrain/specific_catchment_area_m.tif",
        "terrain/catchment_cut_off.tif",
        "terrain/slope_one_sided.tif",
        "dry/fs.tif",
        "dry/low_margin_zones.gpkg",
        "dry/stability_class.png",
        "terrain/soil_unit.png",
        "dry/summary.csv",
        "report.html",
    }
    assert wanted <= set(manifest["outputs"])
    assert len(gpd.read_file(out / "dry" / "low_margin_zones.gpkg")) >= 1
    assert "geographic CRS" in manifest["terrain"]["ground_geometry"]


# ----------------------------------------------------------------------------------------
# CRSs without a datum or without an inverse


def test_local_crs_is_taken_at_scale_one(tmp_path):
    wkt = (
        'LOCAL_CS["site grid",LOCAL_DATUM["site",0],UNIT["metre",1],AXIS["X",EAST],AXIS["Y",NORTH]]'
    )
    z = 100.0 + 0.3 * np.arange(30)[None, :] * 5.0 + np.zeros((20, 1))
    path = write_raster(tmp_path / "site.tif", z, wkt, from_origin(0.0, 100.0, 5.0, 5.0))
    grid = read_grid(path)
    assert "local CRS without a datum" in grid.ground.note and "scale 1" in grid.ground.note
    assert np.allclose(grid.ground.cell_area_m2(slice(0, 20), slice(0, 30)), 25.0)


def test_crs_without_inverse_is_refused():
    t = from_origin(0.0, 1e5, 1000.0, 1000.0)
    with pytest.raises(InputError, match="cannot convert it to latitude and longitude"):
        ground_geometry(t, CRS.from_proj4("+proj=airy +datum=WGS84"), 20, 20)
    beyond = from_origin(6.5e6, 1e5, 1000.0, 1000.0)  # past the visible hemisphere
    with pytest.raises(InputError, match="latitude and longitude"):
        ground_geometry(beyond, CRS.from_proj4("+proj=ortho +lat_0=0 +lon_0=0"), 20, 20)


# ----------------------------------------------------------------------------------------
# voids and cut-off catchments


def _pyramid(size=41, cell=10.0, void=None):
    r, c = np.mgrid[0:size, 0:size].astype(float)
    mid = (size - 1) / 2
    z = 500.0 - 0.5 * cell * np.maximum(np.abs(r - mid), np.abs(c - mid))
    if void is not None:
        z[void] = np.nan
    return z


def test_cut_off_marks_exactly_the_cells_below_a_void(tmp_path):
    # A pyramid: four planar faces, each draining straight out through its own edge, so no
    # edge drains inwards. A void on the south face, rows 26-28 and columns 18-22: ground
    # there drains due south, so exactly the cells below it in those columns, down to the
    # edge, have part of their upslope area in the void.
    void = (slice(26, 29), slice(18, 23))
    z = _pyramid(void=void)
    path = write_raster(tmp_path / "void.tif", np.nan_to_num(z, nan=-9999.0))
    _, t = _terrain(path, tmp_path)
    flagged = (t["catchment_cut_off"] == 1).filled(False)
    expected = np.zeros(z.shape, bool)
    expected[29:, 18:23] = True
    assert np.array_equal(flagged, expected)
    # next to the void and on the edges the slope is one-sided, and still the plane's
    one_sided = (t["slope_one_sided"] == 1).filled(False)
    assert one_sided[25, 18:23].all() and one_sided[29, 18:23].all() and one_sided[0].all()
    faces = ~np.isnan(z)
    faces[np.abs(np.subtract.outer(np.arange(41), np.arange(41))) <= 1] = False  # ridges
    faces[np.abs(np.add.outer(np.arange(41), np.arange(41)) - 40) <= 1] = False
    # 5 m per 10 m cell of the map; UTM's scale 0.9996 on its central meridian (common
    # practice) makes the ground cell 10 / 0.9996 m
    expected = 0.5 * 0.9996
    assert np.allclose(t["slope_tan"].filled(np.nan)[faces & one_sided], expected, rtol=1e-6)


def test_no_cut_off_where_every_edge_drains_outwards(tmp_path):
    path = write_raster(tmp_path / "pyramid.tif", _pyramid())
    _, t = _terrain(path, tmp_path)
    assert (t["catchment_cut_off"] == 0).all()


def test_run_reports_voids_and_cut_off_share(tmp_path):
    folder = tmp_path / "r"
    folder.mkdir()
    z = _pyramid(void=(slice(26, 29), slice(18, 23)))
    transform = from_origin(500000.0, 5000410.0, 10.0, 10.0)
    write_raster(folder / "dem.tif", np.nan_to_num(z, nan=-9999.0), transform=transform)
    gpd.GeoDataFrame(
        [dict(PARAMS, unit="A")], geometry=[box(499000, 4999000, 501000, 5001000)], crs=32633
    ).to_file(folder / "soils.geojson", driver="GeoJSON")
    (folder / "s.toml").write_text(
        '[region]\nname = "pyramid"\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n\n'
        '[[scenario]]\nname = "dry"\nsaturation = 0.0\n'
    )
    lines = []
    run(folder / "s.toml", tmp_path / "out", progress=False, echo=lines.append)
    assert any("15 no-data cells (0.15 ha" in line for line in lines), lines
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["terrain"]["dem_no_data"] == {
        "cells": 15,
        "area_ha": pytest.approx(0.15, rel=1e-3),
    }
    with open(tmp_path / "out" / "dry" / "summary.csv") as handle:
        rows = [r for r in csv.DictReader(handle) if r["soil_unit"] == "ALL"]
    cut_ha = sum(float(r["area_ha"]) * float(r["percent_catchment_cut_off"]) / 100 for r in rows)
    assert cut_ha == pytest.approx(12 * 5 * 100 / 10_000 * 0.9996**-2, rel=1e-3)
    assert "drain from beyond a no-data cell" in (tmp_path / "out" / "report.html").read_text()


def test_geographic_rows_have_their_own_north_south_length():
    # A 0.01-degree grid over 2 degrees of latitude: the ground length of a row step follows
    # the meridian's curvature row by row (pyproj.Geod as the reference), not one value
    # taken at mid-latitude (1.5e-4 relative over this span).
    rows, step = 200, 0.01
    ground = ground_geometry(from_origin(10.0, 50.0, step, step), CRS.from_epsg(4326), rows, 3)
    lat = 50.0 - (np.arange(rows) + 0.5) * step
    _, _, expected = GEOD.inv(
        np.full(rows, 10.0), lat - step / 2, np.full(rows, 10.0), lat + step / 2
    )
    _, _, _, vn = ground.vectors(slice(0, rows), slice(0, 3))
    assert np.allclose(np.ravel(vn), expected, rtol=1e-9)
    assert expected.max() / expected.min() - 1.0 > 1e-4
