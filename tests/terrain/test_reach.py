"""The reach sweep on analytic terrain: a plane running onto flat ground stops at the
distance the angle of reach (or the energy line) allows, a plane steeper than the angle
reaches the edge and says so, flow is conserved, a very large exponent follows the
steepest path and a cone spreads symmetrically."""

import math

import numpy as np
import pytest

from slopescreen.maps.terrain.reach import spread_reach

CELL = 10.0


def _run(z, sources, tan_alpha, margin=0.0, exponent=1.0, tan_phi=-1.0, max_energy=math.inf,
         min_mass=0.0):  # fmt: skip
    mass = np.zeros(z.shape)
    room = np.full(z.shape, -np.inf)
    ta = np.full(z.shape, np.inf)
    for r, c in sources:
        mass[r, c] = 1.0 / len(sources)
        room[r, c] = margin
        ta[r, c] = tan_alpha
    steps = np.full(z.shape, CELL)
    share = np.zeros(z.shape)
    cut = np.zeros(z.shape, np.uint8)
    worst = np.full(z.shape, np.inf)
    stopped, dropped = spread_reach(
        z, steps, steps, mass, room, ta, np.zeros(z.shape), exponent, tan_phi, max_energy,
        min_mass, share, cut, worst,
    )  # fmt: skip
    return (share > 0).astype(np.uint8), cut, share, stopped, dropped


def _plane_onto_flat(rows=41, cols=80, plane_cols=21, tan_theta=0.5):
    """A plane falling east at tan(theta) for plane_cols columns, then flat ground."""
    x = np.arange(cols) * CELL
    edge = (plane_cols - 1) * CELL
    z = np.where(x <= edge, tan_theta * (edge - x), 0.0)
    return np.tile(z, (rows, 1)), tan_theta * edge


def test_a_plane_onto_flat_ground_stops_where_the_angle_of_reach_says():
    # analytic: from the top of the source, the flow travels L = H / tan(alpha) on the
    # ground (the line of the angle of reach meets the flat there); on the axis it takes
    # steps of 10 m, so the last cell reached is the last whose centre is within L
    z, height = _plane_onto_flat()
    tan_alpha = 0.3
    reached, *_ = _run(z, [(20, 0)], tan_alpha, exponent=1e6)
    last = int(np.flatnonzero(reached[20])[-1])
    assert last == math.floor(height / tan_alpha / CELL)
    assert reached[20, : last + 1].all()
    # the energy line alone (no angle limit): E = g (H - L tan(phi)) is spent at the same
    # L = H / tan(phi) (a friction-limited block from rest)
    tan_phi = 0.25
    reached, *_ = _run(z, [(20, 0)], 1e-9, margin=1e12, exponent=1e6, tan_phi=tan_phi)
    assert int(np.flatnonzero(reached[20])[-1]) == math.floor(height / tan_phi / CELL)
    # a speed cap shortens the run: capped at 10 m/s the block stops sooner
    capped, *_ = _run(z, [(20, 0)], 1e-9, margin=1e12, exponent=1e6, tan_phi=tan_phi,
                      max_energy=50.0)  # fmt: skip
    assert np.flatnonzero(capped[20])[-1] < np.flatnonzero(reached[20])[-1]


def test_a_plane_steeper_than_the_angle_reaches_the_edge_and_says_so():
    x = np.arange(40) * CELL
    z = np.tile(0.6 * (x.max() - x), (9, 1))
    reached, cut, *_ = _run(z, [(4, 0)], tan_alpha=0.3, exponent=1e6)
    assert reached[4, -1] == 1 and cut[4, -1] == 1  # the flow had room to go on


def test_flow_is_conserved_and_a_large_exponent_follows_the_steepest_path():
    rng = np.random.default_rng(6)
    y, x = np.mgrid[0:60, 0:60] * CELL
    z = 400.0 - 0.35 * x - 0.2 * y + rng.normal(0.0, 0.3, x.shape)
    sources = [(5, 5), (10, 3), (2, 30)]
    reached, _, _, stopped, dropped = _run(z, sources, tan_alpha=0.15, exponent=1.0)
    assert stopped + dropped == pytest.approx(1.0, abs=1e-12)  # every source's flow once
    assert reached.sum() > 3 * 20
    # exponent 1e6: the reach of one source is its steepest-descent path, cell by cell
    reached, *_ = _run(z, [(5, 5)], tan_alpha=1e-6, margin=1e9, exponent=1e6)
    path = {(5, 5)}
    r, c = 5, 5
    while True:
        best, nxt = 0.0, None
        for dr, dc in ((-1, 0), (-1, 1), (0, 1), (1, 1), (1, 0), (1, -1), (0, -1), (-1, -1)):
            rr, cc = r + dr, c + dc
            if 0 <= rr < 60 and 0 <= cc < 60:
                t = (z[r, c] - z[rr, cc]) / (CELL * math.hypot(dr, dc))
                if t > best:
                    best, nxt = t, (rr, cc)
        if nxt is None:
            break
        path.add(nxt)
        r, c = nxt
    assert set(zip(*np.nonzero(reached), strict=True)) == path


def test_a_cone_spreads_symmetrically():
    # a cone 50 m high and 100 m in radius on flat ground: from its top the flow spreads the
    # same way in every direction of the grid's symmetry, and along the axes it stops where
    # the angle of reach meets the flat, H / tan(alpha) = 200 m from the top
    y, x = (np.mgrid[-30:31, -30:31] * CELL).astype(float)
    z = 300.0 + 0.5 * np.maximum(100.0 - np.hypot(x, y), 0.0)
    reached, _, mass, *_ = _run(z, [(30, 30)], tan_alpha=0.25, exponent=1.1)
    for other in (reached[::-1], reached[:, ::-1], reached.T):
        assert (other == reached).all()
    assert mass == pytest.approx(mass.T, abs=1e-12)
    assert mass == pytest.approx(mass[::-1, ::-1], abs=1e-12)
    assert int(np.flatnonzero(reached[30])[-1]) == 30 + 20
