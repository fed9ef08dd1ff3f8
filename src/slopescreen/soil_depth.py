"""Soil depth from terrain: three published depth models and the ground Laplacian they use
(numpy only).

Soil depth z enters both the driving and the resisting terms of the infinite slope, and a
constant depth per unit is the weakest assumption of a screening map. These models set z
cell by cell from the terrain:

- **linear in slope** (the common screening form): a depth at gentle slopes, another at
  steep slopes, linear in the slope angle between them;
- **linear in elevation** (Saulnier, Beven & Obled 1997): deepest at the lowest ground,
  thinnest at the highest, linear between;
- **steady soil production and linear creep** (Heimsath et al. 1997; Dietrich et al. 1995):
  on convex ground the soil produced from rock, P0 exp(-h/h0) (rho_r/rho_s), balances the
  divergence of the creep flux K (-laplacian z), so h* = h0 ln(P0 (rho_r/rho_s) /
  (K (-laplacian z))); hollows and planar ground (laplacian z >= 0) fill to a stated
  maximum.

Every result is clipped to [min_depth_m, max_depth_m]: each model's own bounds, stated by
the caller.

References
----------
Saulnier, G.-M., Beven, K. & Obled, C. (1997). Including spatially variable effective soil
depths in TOPMODEL. Journal of Hydrology 202, 158-172.
Heimsath, A.M., Dietrich, W.E., Nishiizumi, K. & Finkel, R.C. (1997). The soil production
function and landscape equilibrium. Nature 388, 358-361.
Dietrich, W.E., Reiss, R., Hsu, M.-L. & Montgomery, D.R. (1995). A process-based model for
colluvial soil depth and shallow landsliding using digital elevation data. Hydrological
Processes 9, 383-400.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked


def slope_linear_depth_m(
    slope_deg: ArrayLike,
    gentle_slope_deg: float,
    steep_slope_deg: float,
    gentle_depth_m: float,
    steep_depth_m: float,
) -> ArrayLike:
    """Soil depth linear in the slope angle (common practice for screening).

    z = z_gentle where beta <= beta_gentle, z_steep where beta >= beta_steep, and between
    them z = z_gentle + (beta - beta_gentle) / (beta_steep - beta_gentle) (z_steep - z_gentle).

    Parameters
    ----------
    slope_deg : slope angle beta, [0, 90) degrees.
    gentle_slope_deg, steep_slope_deg : the slopes bounding the linear part, degrees,
        0 <= gentle < steep < 90.
    gentle_depth_m, steep_depth_m : the depths there, > 0 m (usually gentle > steep).

    >>> slope_linear_depth_m([5.0, 20.0, 45.0], 10.0, 40.0, 2.0, 0.5)
    array([2. , 1.5, 0.5])
    """
    beta = checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True)
    lo = float(checked("gentle_slope_deg", gentle_slope_deg, 0.0, 90.0, high_open=True))
    hi = float(checked("steep_slope_deg", steep_slope_deg, lo, 90.0, low_open=True, high_open=True))
    z_lo = float(checked("gentle_depth_m", gentle_depth_m, 0.0, low_open=True))
    z_hi = float(checked("steep_depth_m", steep_depth_m, 0.0, low_open=True))
    share = np.clip((beta - lo) / (hi - lo), 0.0, 1.0)
    return as_result(z_lo + share * (z_hi - z_lo))


def elevation_linear_depth_m(
    elevation_m: ArrayLike,
    low_elevation_m: float,
    high_elevation_m: float,
    low_depth_m: float,
    high_depth_m: float,
) -> ArrayLike:
    """Soil depth linear in elevation (Saulnier, Beven & Obled 1997).

    h = h_max - (z - z_min) / (z_max - z_min) (h_max - h_min), with h_max the depth at the
    lowest elevation z_min (``low_depth_m``) and h_min at the highest z_max
    (``high_depth_m``); elevations beyond [z_min, z_max] take the depth at the nearer end.

    Parameters
    ----------
    elevation_m : ground elevation, m.
    low_elevation_m, high_elevation_m : z_min < z_max, m (usually the DEM's range).
    low_depth_m, high_depth_m : the depths at z_min and z_max, > 0 m.

    >>> elevation_linear_depth_m([100.0, 150.0, 200.0], 100.0, 200.0, 3.0, 1.0)
    array([3., 2., 1.])
    """
    z = np.asarray(elevation_m, float)
    z0 = float(checked("low_elevation_m", low_elevation_m))
    z1 = float(checked("high_elevation_m", high_elevation_m, z0, low_open=True))
    h0 = float(checked("low_depth_m", low_depth_m, 0.0, low_open=True))
    h1 = float(checked("high_depth_m", high_depth_m, 0.0, low_open=True))
    share = np.clip((z - z0) / (z1 - z0), 0.0, 1.0)
    return as_result(h0 - share * (h0 - h1))


def soil_production_depth_m(
    laplacian_per_m: ArrayLike,
    production_m_yr: float,
    density_ratio: float,
    creep_diffusivity_m2_yr: float,
    production_depth_m: float,
    min_depth_m: float,
    max_depth_m: float,
) -> ArrayLike:
    """Steady soil depth where exponential soil production balances linear creep
    (Heimsath et al. 1997; Dietrich et al. 1995).

    With soil production P = P0 exp(-h/h0) (rho_r / rho_s) and creep flux q = -K grad z,
    a steady soil satisfies P0 exp(-h/h0) (rho_r/rho_s) = -K laplacian z, so on convex ground
    (laplacian z < 0)::

        h* = h0 ln(P0 (rho_r/rho_s) / (K (-laplacian z)))

    clipped to [min_depth_m, max_depth_m]; hollows and planar ground (laplacian z >= 0),
    where creep brings soil in, take max_depth_m.

    Parameters
    ----------
    laplacian_per_m : laplacian of the ground surface d2z/dx2 + d2z/dy2 in ground metres,
        1/m (negative on convex ground; a paraboloid of radius R at its top: -2/R).
    production_m_yr : P0, soil production from bare rock, > 0 m/yr.
    density_ratio : rho_r / rho_s, rock over soil bulk density, > 0 (about 1.5-2).
    creep_diffusivity_m2_yr : K, > 0 m2/yr.
    production_depth_m : h0, the depth scale of production's decline, > 0 m.
    min_depth_m, max_depth_m : the bounds, 0 < min <= max, m.

    >>> round(soil_production_depth_m(-2.0 / 50.0, 2e-4, 2.0, 4e-3, 0.5, 0.05, 3.0), 4)
    0.4581
    """
    lap = np.asarray(laplacian_per_m, float)
    p0 = float(checked("production_m_yr", production_m_yr, 0.0, low_open=True))
    ratio = float(checked("density_ratio", density_ratio, 0.0, low_open=True))
    k = float(checked("creep_diffusivity_m2_yr", creep_diffusivity_m2_yr, 0.0, low_open=True))
    h0 = float(checked("production_depth_m", production_depth_m, 0.0, low_open=True))
    low = float(checked("min_depth_m", min_depth_m, 0.0, low_open=True))
    high = float(checked("max_depth_m", max_depth_m, low))
    with np.errstate(divide="ignore", invalid="ignore"):
        h = h0 * np.log(p0 * ratio / (k * -lap))
    h = np.where(lap < 0.0, h, high)  # hollows, planar ground: filled to the maximum
    return as_result(np.clip(np.nan_to_num(h, nan=high), low, high))


def laplacian_per_m(
    elevation_m: ArrayLike, column_step_m: ArrayLike, row_step_m: ArrayLike
) -> np.ndarray:
    """Laplacian d2z/dx2 + d2z/dy2 of a grid of elevations (1/m), the five-point stencil in
    ground metres, on the cells inside a one-cell frame (the result is two rows and two
    columns smaller than the grid).

    ``column_step_m`` and ``row_step_m``: ground length of one column and one row step,
    numbers or arrays broadcastable to the result (on a lat/lon grid the column step shrinks
    with latitude). A neighbour without data (NaN) counts as level with the centre, so the
    stencil never carries NaN beyond the cells that have none themselves. The stencil is
    exact for a quadratic surface (a paraboloid z = -(x^2 + y^2) / (2R) gives -2/R).

    >>> z = -np.add.outer(np.arange(-2, 3) ** 2, np.arange(-2, 3) ** 2) * 10.0 ** 2 / 100.0
    >>> float(laplacian_per_m(z, 10.0, 10.0)[1, 1])  # R = 50 m: -2 / R
    -0.04
    """
    z = np.asarray(elevation_m, float)
    centre = z[1:-1, 1:-1]

    def side(part: np.ndarray) -> np.ndarray:
        return np.where(np.isnan(part), centre, part) - centre

    across = side(z[1:-1, :-2]) + side(z[1:-1, 2:])
    along = side(z[:-2, 1:-1]) + side(z[2:, 1:-1])
    return (
        across / np.asarray(column_step_m, float) ** 2 + along / np.asarray(row_step_m, float) ** 2
    )
