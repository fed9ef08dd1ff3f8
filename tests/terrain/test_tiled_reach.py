"""The reach sweep tile by tile gives what one sweep of the whole grid gives: the same cells
reached, angles, worst source values and cut-off flags, the shares to the summation order;
and the same bytes whatever runs the tiles."""

import math

import numpy as np
import pytest

from slopescreen.maps.region.runners import serial_runner, threaded_runner
from slopescreen.maps.terrain.reach import spread_reach
from slopescreen.maps.terrain.tiled_reach import ArrayStates, SweepRules, reach_array

CELL = 10.0


def _terrain():
    """A rough slope falling south-east into a level valley floor that spans several tiles,
    with a hole of no data and a ridge: flow crosses tile edges both ways on the flat."""
    rng = np.random.default_rng(11)
    y, x = np.mgrid[0:70, 0:90] * CELL
    z = 300.0 - 0.45 * x - 0.3 * y + rng.normal(0.0, 0.8, x.shape)
    z = np.maximum(z, 60.0)  # the floor: level ground
    z[30:34, 40:45] = np.nan
    return z


def _sources(z, cells, tan_alpha):
    mass = np.zeros(z.shape)
    margin = np.full(z.shape, -np.inf)
    ta = np.full(z.shape, np.inf)
    worst = np.full(z.shape, np.inf)
    for k, (r, c) in enumerate(cells):
        mass[r, c] = 1.0 / len(cells)
        margin[r, c] = 0.0
        ta[r, c] = tan_alpha[k % len(tan_alpha)]
        worst[r, c] = 0.5 + 0.1 * k
    return ArrayStates(mass, margin, ta, worst)


def _whole(z, states, rules):
    mass, margin, ta, worst = (a.copy() for a in states._fields())
    share = np.zeros(z.shape)
    cut = np.zeros(z.shape, np.uint8)
    spread_reach(
        z, np.full(z.shape, CELL), np.full(z.shape, CELL), mass, margin, ta, np.zeros(z.shape),
        rules.exponent, rules.tan_phi, rules.max_energy, rules.min_mass, share, cut, worst,
    )  # fmt: skip
    return {"share": share, "tan_alpha": ta, "worst": worst, "cut": cut}


CASES = [
    SweepRules(exponent=1.3, tan_phi=-1.0, max_energy=math.inf, min_mass=0.0),
    SweepRules(exponent=4.0, tan_phi=math.tan(math.radians(6.0)), max_energy=200.0, min_mass=1e-4),
]


@pytest.mark.parametrize("rules", CASES)
@pytest.mark.parametrize("size", [13, 40])
def test_tiles_give_the_whole_grid_sweep(tmp_path, rules, size):
    z = _terrain()
    states = _sources(z, [(3, 4), (10, 2), (5, 30), (40, 6), (20, 20)], [0.12, 0.2, 0.08])
    whole = _whole(z, states, rules)
    tiled, rounds = reach_array(z, CELL, CELL, states, rules, size, tmp_path, serial_runner)
    reached = whole["share"] > 0
    assert reached.sum() > 500  # the flow runs far across the tiles and onto the floor
    assert rounds > 2
    assert np.array_equal(tiled["share"] > 0, reached)
    np.testing.assert_allclose(tiled["share"], whole["share"], rtol=1e-12, atol=0)
    for name in ("tan_alpha", "worst", "cut"):
        assert np.array_equal(tiled[name][reached], whole[name][reached]), name


def test_a_flat_floor_carries_the_reach_across_tiles(tmp_path):
    # a plane onto flat ground (analytic stop at H / tan(alpha), see test_reach), cut into
    # tiles of 7 cells: the run over the flat crosses several tile edges
    x = np.arange(60) * CELL
    edge = 19 * CELL
    z = np.tile(np.where(x <= edge, 0.5 * (edge - x), 0.0), (15, 1))
    states = _sources(z, [(7, 0)], [0.3])
    tiled, rounds = reach_array(z, CELL, CELL, states, CASES[0], 7, tmp_path, serial_runner)
    last = int(np.flatnonzero(tiled["share"][7] > 0)[-1])
    assert last == math.floor(0.5 * edge / 0.3 / CELL)
    assert rounds >= last // 7  # one round per tile edge crossed at least


def test_threads_give_the_same_bytes(tmp_path):
    z = _terrain()
    states = _sources(z, [(3, 4), (5, 30), (20, 20)], [0.1])
    rules = CASES[1]
    a, _ = reach_array(z, CELL, CELL, states, rules, 12, _made(tmp_path / "a"), serial_runner)
    b, _ = reach_array(z, CELL, CELL, states, rules, 12, _made(tmp_path / "b"), threaded_runner)
    for name in a:
        assert a[name].tobytes() == b[name].tobytes(), name


def _made(folder):
    folder.mkdir()
    return folder
