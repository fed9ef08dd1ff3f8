"""Terrain derivatives on a raster grid: slope by Horn (1981) and a hillshade (numpy only).

Cell spacing may differ between rows (a geographic grid measured in metres row by row):
``dx_m`` is the east-west spacing, a scalar or one value per row; ``dy_m`` the north-south
spacing. Rows run from north to south, as in a north-up raster.

References
----------
Horn, B.K.P. (1981). Hill shading and the reflectance map. Proceedings of the IEEE 69(1),
14-47.
Burrough, P.A. & McDonnell, R.A. (1998). *Principles of Geographical Information Systems*.
Oxford University Press, ch. 8 (hillshade).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike


def _window(z: np.ndarray) -> tuple[np.ndarray, ...]:
    """The 3x3 neighbours a..i of every interior cell (a b c / d e f / g h i, north up)."""
    return (
        z[:-2, :-2], z[:-2, 1:-1], z[:-2, 2:],
        z[1:-1, :-2], z[1:-1, 2:],
        z[2:, :-2], z[2:, 1:-1], z[2:, 2:],
    )  # fmt: skip


def horn_gradient(
    elevation_m: ArrayLike, dx_m: ArrayLike, dy_m: float
) -> tuple[np.ndarray, np.ndarray]:
    """East and north components of the surface gradient by Horn's 3x3 finite difference.

    dz/dx = ((c + 2f + i) - (a + 2d + g)) / (8 dx); dz/dy (north) = ((a + 2b + c) -
    (g + 2h + i)) / (8 dy). Edge cells and cells next to NaN are NaN.

    Parameters
    ----------
    elevation_m : 2-D elevations, m, NaN for no data.
    dx_m : east-west spacing, m: scalar or one value per row (> 0).
    dy_m : north-south spacing, m (> 0).
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    dz_dcol, dz_drow_up, one_sided = grid_gradient(z)  # Horn where the window is full
    dx = np.broadcast_to(np.asarray(dx_m, dtype=np.float64).reshape(-1, 1), (z.shape[0], 1))
    gx = np.where(one_sided, np.nan, dz_dcol / dx)
    gy = np.where(one_sided, np.nan, dz_drow_up / dy_m)
    return gx, gy


def _pair(low: np.ndarray, mid: np.ndarray, high: np.ndarray) -> np.ndarray:
    """Change per cell step from ``low`` to ``high`` across ``mid``: central where both
    ends have data, one-sided (to or from ``mid``) where one end has none, else NaN."""
    central = (high - low) / 2.0
    upper = high - mid
    lower = mid - low
    return np.where(np.isfinite(central), central, np.where(np.isfinite(upper), upper, lower))


def grid_gradient(elevation_m: ArrayLike) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Change of elevation per column step (towards the right) and per row step upwards,
    by Horn's 3x3 weights, with one-sided differences where the window is incomplete.

    Each of the three rows of the window (weights 1, 2, 1) gives a difference across the
    cell: central where both ends have data, else one-sided from the middle cell of that
    row; the rows that give one are averaged with their weights (likewise for columns).
    With a full window this is Horn (1981) exactly. A cell whose window touches no data or
    the grid's edge thus keeps a slope from the neighbours it has; it never uses a no-data
    value. Returns (dz_dcol, dz_drow_up, one_sided): NaN where the cell has no data or no
    difference exists along an axis; ``one_sided`` marks cells with an incomplete window.

    >>> z = np.add.outer(np.zeros(3), np.arange(3.0))  # rises 1 per column
    >>> gc, gu, one_sided = grid_gradient(z)
    >>> float(gc[0, 0]), float(gu[0, 0]), bool(one_sided[0, 0]), bool(one_sided[1, 1])
    (1.0, 0.0, True, False)
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    p = np.pad(z, 1, constant_values=np.nan)
    a, b, c, d, f, g, h, i = _window(p)
    has = np.isfinite(z)
    full = has.copy()
    for n in (a, b, c, d, f, g, h, i):
        full &= np.isfinite(n)
    with np.errstate(invalid="ignore"):
        dz_dcol = ((c + 2.0 * f + i) - (a + 2.0 * d + g)) / 8.0  # Horn where the window is full
        dz_drow_up = ((a + 2.0 * b + c) - (g + 2.0 * h + i)) / 8.0
    part = np.nonzero(has & ~full)  # the rest, one-sided, cell by cell of the few there are
    if part[0].size:
        n = [x[part] for x in (a, b, c, d, z, f, g, h, i)]
        dz_dcol[part] = _weighted((_pair(n[0], n[1], n[2]), _pair(n[3], n[4], n[5]),
                                   _pair(n[6], n[7], n[8])))  # fmt: skip
        dz_drow_up[part] = _weighted((_pair(n[6], n[3], n[0]), _pair(n[7], n[4], n[1]),
                                      _pair(n[8], n[5], n[2])))  # fmt: skip
    dz_dcol[~has] = np.nan
    dz_drow_up[~has] = np.nan
    return dz_dcol, dz_drow_up, has & ~full


def _weighted(parts: tuple[np.ndarray, ...]) -> np.ndarray:
    """Average of the rows' (or columns') differences with Horn's weights 1, 2, 1, over
    those that exist; NaN where none does."""
    total = np.zeros(parts[0].shape)
    weight = np.zeros(parts[0].shape)
    for w, part in zip((1.0, 2.0, 1.0), parts, strict=True):
        ok = np.isfinite(part)
        total += np.where(ok, w * part, 0.0)
        weight += np.where(ok, w, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(weight > 0, total / weight, np.nan)


def hillshade_from_gradient(
    gradient_east: ArrayLike,
    gradient_north: ArrayLike,
    azimuth_deg: float = 315.0,
    altitude_deg: float = 45.0,
) -> np.ndarray:
    """Hillshade brightness 1-255 (uint8) from the ground gradient (dz/d east, dz/d north),
    as :func:`hillshade`; 0 marks no data only (ground in full shadow is 1)."""
    gx = np.asarray(gradient_east, dtype=np.float64)
    gy = np.asarray(gradient_north, dtype=np.float64)
    slope = np.arctan(np.hypot(gx, gy))
    aspect = np.arctan2(-gx, -gy)  # downslope direction, clockwise from north
    zenith = np.radians(90.0 - altitude_deg)
    azimuth = np.radians(azimuth_deg)
    shade = np.cos(zenith) * np.cos(slope) + np.sin(zenith) * np.sin(slope) * np.cos(
        azimuth - aspect
    )
    out = np.clip(np.rint(np.nan_to_num(shade * 254.0, nan=-1.0)) + 1.0, 1.0, 255.0)
    return np.where(np.isnan(shade), 0, out).astype(np.uint8)


def slope_deg(elevation_m: ArrayLike, dx_m: ArrayLike, dy_m: float) -> np.ndarray:
    """Slope angle in degrees, atan(|grad z|), by Horn (1981); NaN on edges and next to NaN.

    >>> z = np.add.outer(np.zeros(4), np.arange(4.0) * 10.0)  # rises 10 m per 10 m cell
    >>> slope_deg(z, 10.0, 10.0)[1, 1]
    np.float64(45.0)
    """
    gx, gy = horn_gradient(elevation_m, dx_m, dy_m)
    return np.degrees(np.arctan(np.hypot(gx, gy)))


def hillshade(
    elevation_m: ArrayLike,
    dx_m: ArrayLike,
    dy_m: float,
    azimuth_deg: float = 315.0,
    altitude_deg: float = 45.0,
) -> np.ndarray:
    """Hillshade brightness 0-255 (uint8; 0 also marks no data) for a light source.

    brightness = 255 (cos(zenith) cos(slope) + sin(zenith) sin(slope) cos(azimuth - aspect)),
    with aspect the downslope direction clockwise from north (Burrough & McDonnell 1998).
    """
    gx, gy = horn_gradient(elevation_m, dx_m, dy_m)
    return hillshade_from_gradient(gx, gy, azimuth_deg, altitude_deg)
