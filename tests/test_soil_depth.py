"""Soil depth models and root cohesion against analytic cases of their published forms."""

import math

import numpy as np
import pytest

from slopescreen.errors import InputError
from slopescreen.root_cohesion import (
    root_cohesion_after_harvest_kpa,
    root_cohesion_at_depth_kpa,
    weakest_year_after_harvest,
)
from slopescreen.soil_depth import (
    elevation_linear_depth_m,
    laplacian_per_m,
    slope_linear_depth_m,
    soil_production_depth_m,
)


def test_slope_linear_depth_between_and_beyond_its_ends():
    # common practice: z_gentle up to the gentle slope, z_steep from the steep one, linear
    # between (midway: the mean of the two)
    slopes = np.array([0.0, 10.0, 25.0, 40.0, 70.0])
    z = slope_linear_depth_m(slopes, 10.0, 40.0, 2.0, 0.5)
    assert z.tolist() == pytest.approx([2.0, 2.0, 1.25, 0.5, 0.5], abs=1e-12)
    # linear: equal slope steps give equal depth steps
    inner = slope_linear_depth_m(np.linspace(10.0, 40.0, 7), 10.0, 40.0, 2.0, 0.5)
    assert np.diff(inner) == pytest.approx(np.full(6, -0.25), abs=1e-12)
    with pytest.raises(InputError, match="steep_slope_deg"):
        slope_linear_depth_m(20.0, 30.0, 20.0, 2.0, 0.5)


def test_elevation_linear_depth_is_saulniers_form():
    # Saulnier, Beven & Obled (1997): h = h_max - (z - z_min) / (z_max - z_min) (h_max - h_min)
    z = np.array([50.0, 100.0, 130.0, 200.0, 260.0])
    h = elevation_linear_depth_m(z, 100.0, 200.0, 3.0, 0.5)
    hand = 3.0 - (np.clip(z, 100.0, 200.0) - 100.0) / 100.0 * (3.0 - 0.5)
    assert h == pytest.approx(hand, abs=1e-12)
    assert h[0] == 3.0 and h[-1] == 0.5  # beyond the range: the nearer end


@pytest.mark.parametrize("radius_m", [40.0, 150.0, 600.0])
def test_soil_production_on_a_paraboloid_is_uniform_and_equals_the_closed_form(radius_m):
    # Heimsath et al. (1997), Dietrich et al. (1995): steady soil where production
    # P0 exp(-h/h0) rho_r/rho_s balances linear creep K (-laplacian z). On a paraboloid
    # z = -(x^2 + y^2) / (2R) the laplacian is -2/R everywhere, so the depth is uniform,
    # h* = h0 ln(P0 rho_r R / (2 rho_s K)) (analytic).
    p0, ratio, k, h0 = 2.5e-4, 1.8, 4e-3, 0.45
    cell = 5.0
    y, x = (np.mgrid[-30:31, -30:31] * cell).astype(float)
    z = 500.0 - (x**2 + y**2) / (2.0 * radius_m)
    lap = laplacian_per_m(z, cell, cell)
    assert lap == pytest.approx(np.full(lap.shape, -2.0 / radius_m), rel=1e-9)
    depth = soil_production_depth_m(lap, p0, ratio, k, h0, 0.01, 10.0)
    closed = h0 * math.log(p0 * ratio * radius_m / (2.0 * k))
    assert np.ptp(depth) < 1e-9
    assert depth[0, 0] == pytest.approx(min(max(closed, 0.01), 10.0), rel=1e-9)


def test_soil_production_fills_hollows_and_floors_ridges():
    # hollows and planar ground (laplacian >= 0) fill to the maximum; a ridge sharper
    # than the soil can cover keeps the floor
    lap = np.array([0.2, 0.0, -1e-6, -10.0])
    h = soil_production_depth_m(lap, 3e-4, 2.0, 5e-3, 0.5, 0.2, 1.5)
    assert h.tolist() == pytest.approx([1.5, 1.5, 1.5, 0.2])


def test_laplacian_uses_ground_steps_and_treats_voids_as_level():
    # the five-point stencil: exact on a quadratic; unequal steps across rows and columns
    # (a lat/lon grid); a missing neighbour counts as level with the centre, never NaN
    y, x = np.mgrid[0:5, 0:5].astype(float)
    z = 3.0 * (x * 7.0) ** 2 + 0.5 * (y * 11.0) ** 2
    lap = laplacian_per_m(z, 7.0, 11.0)
    assert lap == pytest.approx(np.full((3, 3), 2 * 3.0 + 2 * 0.5), rel=1e-12)
    z[0, 2] = np.nan
    lap = laplacian_per_m(z, 7.0, 11.0)
    assert np.isfinite(lap).all()
    # one row-neighbour missing: only the other's difference is left on that axis
    centre, below = z[1, 2], z[2, 2]
    across = (z[1, 1] + z[1, 3] - 2 * centre) / 49.0
    assert lap[0, 1] == pytest.approx(across + (below - centre) / 121.0, rel=1e-12)


def test_root_cohesion_after_harvest_full_weakest_and_regrown():
    # Sidle (1991) form: exponential decay of the old roots plus sigmoid regrowth; C(0) is
    # the stand's value, C(inf) the regrown value, and the weakest year is where the dense
    # reference (every 0.001 year) has its minimum
    full, regrown = 7.0, 5.0
    assert root_cohesion_after_harvest_kpa(0.0, full, regrown) == pytest.approx(full)
    assert root_cohesion_after_harvest_kpa(-3.0, full, regrown) == full  # before the cut
    assert root_cohesion_after_harvest_kpa(400.0, full, regrown) == pytest.approx(regrown)
    t = np.arange(0.0, 60.0, 0.001)
    dense = np.asarray(root_cohesion_after_harvest_kpa(t, full, regrown))
    year, least = weakest_year_after_harvest(full, regrown)
    assert least <= dense.min() + 1e-12
    assert year == pytest.approx(t[np.argmin(dense)], abs=2e-3)
    # the defaults' documented weakest year (the module docstring: 9.75 years, 18%)
    year, least = weakest_year_after_harvest()
    assert year == pytest.approx(9.75, abs=0.01) and least == pytest.approx(0.181, abs=1e-3)
    # no regrowth: the cohesion falls for good
    assert weakest_year_after_harvest(5.0, 0.0) == (math.inf, 0.0)


def test_root_cohesion_with_depth():
    # step: the full value to the rooting depth, none below; exponential: C exp(-z / d_r)
    z = np.array([0.0, 0.8, 1.0, 1.2])
    assert root_cohesion_at_depth_kpa(5.0, z, 1.0).tolist() == [5.0, 5.0, 5.0, 0.0]
    e = root_cohesion_at_depth_kpa(5.0, z, 1.0, "exponential")
    assert e == pytest.approx(5.0 * np.exp(-z), rel=1e-12)
    with pytest.raises(InputError, match="step, exponential"):
        root_cohesion_at_depth_kpa(5.0, 1.0, 1.0, "linear")
