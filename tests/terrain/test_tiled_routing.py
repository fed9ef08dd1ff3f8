"""Routing tile by tile against routing the whole grid at once, and flat steps against an
independent distance transform."""

import numpy as np
import pytest

from slopescreen.maps.region.runners import serial_runner
from slopescreen.maps.terrain import flow_kernels, routing
from slopescreen.maps.terrain.tiled_routing import ArraySource, Layout, fill_tiles, route_array

U = 2.0**-53  # float64 unit roundoff


def _rough(rng, rows=120, cols=90, integers=False, holes=False):
    z = rng.normal(size=(rows, cols)).cumsum(0).cumsum(1) * 0.1 + rng.normal(size=(rows, cols))
    if integers:
        z = np.round(z)  # many equal elevations: flats spanning tiles
    if holes:
        z[rng.random(z.shape) < 0.03] = np.nan
    return z


def _tiled_fill(z, size, tmp_path):
    """The filled surface the tiles route on, read back from their work files."""
    layout = Layout(*z.shape, size)
    folder = tmp_path / f"fill{size}"
    folder.mkdir()
    fill_tiles(ArraySource(z), layout, folder, serial_runner)
    out = np.empty(z.shape)
    for t in layout.tiles():
        out[t.r0 : t.r1, t.c0 : t.c1] = np.load(folder / f"t{t.index}-z.npy")
    return out


def _corner_basins():
    """A bowl spanning many tiles whose only way out is one cell on a tile corner: a square
    ridge (one cell wide, rows and columns 8 and 55) at 50 with a single notch at 20 on
    cell (8, 32), the first cell of a tile for tiles of 4, 8 or 16 cells; inside, ground
    at 10 to 11; outside, ground falling from 8 to 5 at the grid's edge."""
    n = 64
    y, x = np.mgrid[0:n, 0:n].astype(float)
    z = 5.0 + 0.4 * np.minimum(np.minimum(y, x), np.minimum(n - 1 - y, n - 1 - x))
    inside = (y > 8) & (y < 55) & (x > 8) & (x < 55)
    z[inside] = 10.0 + 0.02 * np.hypot(y - 31.5, x - 31.5)[inside]
    ridge = ((y == 8) | (y == 55) | (x == 8) | (x == 55)) & (y >= 8) & (y <= 55)
    z[ridge & (x >= 8) & (x <= 55)] = 50.0
    z[8, 32] = 20.0
    return z, inside


def test_corner_notch_case_is_what_it_says():
    z, inside = _corner_basins()
    filled = routing.fill_depressions(z)
    assert np.all(filled[inside] == 20.0)  # the whole bowl fills to the notch (analytic)
    assert np.all(filled[~inside] == z[~inside])  # and nothing else is raised


@pytest.mark.parametrize("size", [4, 8, 16, 7])
def test_tiled_fill_equals_whole_grid_fill_through_a_corner(size, tmp_path):
    # Barnes (2016): per-tile basins, a graph of the passes between them within and
    # across tile edges, each tile raised to its basins' levels gives the whole-grid fill
    # bit for bit (size 7: the notch inside a tile's border instead)
    z, _ = _corner_basins()
    np.testing.assert_array_equal(_tiled_fill(z, size, tmp_path), routing.fill_depressions(z))


def test_a_pit_drains_diagonally_across_the_corner_of_four_tiles(tmp_path):
    # the pit's only low way out is the diagonal step from the last cell of one tile to the
    # first cell of the tile diagonally below it; its pass is max(1, 0) = 1, so nothing is
    # raised (analytic), tile by tile as on the whole grid
    z = np.full((8, 8), 10.0)
    z[1:4, 1:4] = 1.0
    z[4:, 4] = 0.0
    z[4, 4:] = 0.0
    np.testing.assert_array_equal(routing.fill_depressions(z), z)
    np.testing.assert_array_equal(_tiled_fill(z, 4, tmp_path), z)


def test_tiled_fill_equals_whole_grid_fill_on_rough_ground(tmp_path):
    rng = np.random.default_rng(1)
    for trial in range(4):
        z = _rough(rng, integers=trial % 2 == 1, holes=trial >= 2)
        (tmp_path / f"{trial}").mkdir()
        for size in (7, 30):
            tiled = _tiled_fill(z, size, tmp_path / f"{trial}")
            np.testing.assert_array_equal(tiled, routing.fill_depressions(z))


def test_tiled_area_equals_whole_grid_within_summation_order(tmp_path):
    # Same receivers and shares; the areas differ only by the order of summation. Both are
    # sums of positive terms, each an area times at most L shares (L <= number of cells),
    # with at most 9 roundings a step and one a round: the stated bound of
    # slopescreen.maps.terrain.tiled_routing, relative difference <= 2 (9 L + R + 1) u.
    rng = np.random.default_rng(2)
    for trial in range(4):
        z = _rough(rng, integers=trial % 2 == 1, holes=trial >= 2)
        sources = (rng.random(z.shape) < 0.01).astype(np.uint8)
        lattice = routing.uniform_lattice(10.0, 10.0, *z.shape)
        area, sca, flags = routing.route(z, lattice, sources)
        bound = 2 * (9 * z.size + 1) * U
        for size in (6, 17, 40):
            folder = tmp_path / f"{trial}-{size}"
            folder.mkdir()
            t_area, t_sca, t_flags, info = route_array(
                z, lattice, size, folder, serial_runner, sources
            )
            ok = np.isfinite(z)
            assert np.array_equal(np.isnan(t_area), ~ok)
            rel = np.abs(t_area[ok] - area[ok]) / area[ok]
            assert rel.max() <= bound + 2 * info["flow_rounds"] * U, (trial, size, rel.max())
            np.testing.assert_allclose(t_sca[ok], sca[ok], rtol=1e-6)
            np.testing.assert_array_equal(t_flags, flags)
            assert info["flow_rounds"] > 1  # flow did cross tile edges


def _lake(n=60):
    """A level lake (elevation 5) in hills, draining only through its west shore."""
    y, x = np.mgrid[0:n, 0:n].astype(float)
    z = 10.0 + 0.1 * np.hypot(y - n / 2, x - n / 2)
    lake = (np.abs(y - n / 2) < n / 3) & (np.abs(x - n / 2) < n / 3)
    z[lake] = 5.0
    west = int(n / 2 - n / 3)
    z[:, : west + 1] = np.minimum(z[:, : west + 1], 5.0 - 0.01 * (west + 1 - x[:, : west + 1]))
    return z, lake


def test_flat_steps_equal_the_chessboard_distance():
    # Outside reference: scipy.ndimage.distance_transform_cdt (chessboard metric) is the
    # 8-connected step count to the nearest drain cell across the level lake
    from scipy import ndimage

    z, lake = _lake()
    framed, valid = routing.framed(z)
    routing.fill_framed(framed, valid)
    steps = np.full(framed.shape, flow_kernels.NO_STEPS, np.int32)
    routing.flat_steps(framed, valid, steps)
    lower = np.zeros(z.shape, bool)  # lake cells next to lower ground: the drains
    padded = np.pad(z, 1, constant_values=np.inf)
    for dr in (-1, 0, 1):
        for dc in (-1, 0, 1):
            lower |= padded[1 + dr : 61 + dr, 1 + dc : 61 + dc] < z
    drains = lake & lower
    reference = ndimage.distance_transform_cdt(~drains, metric="chessboard")
    np.testing.assert_array_equal(steps[1:-1, 1:-1][lake], reference[lake])
    assert reference[lake].max() > 30


def test_a_lake_across_many_tiles_routes_as_one(tmp_path):
    z, lake = _lake()
    lattice = routing.uniform_lattice(10.0, 10.0, *z.shape)
    area, _, _ = routing.route(z, lattice)
    t_area, _, _, info = route_array(z, lattice, 9, tmp_path, serial_runner)
    assert info["flat_rounds"] >= 4  # steps crossed several tiles to reach the shore
    np.testing.assert_allclose(t_area, area, rtol=2 * (9 * z.size + info["flow_rounds"] + 1) * U)
    # every lake cell drains: the lake's area leaves through the west shore
    assert np.nansum(area[lake]) > 0 and np.isfinite(area).all()
