"""Wetness from rainfall: steady-state topographic saturation ratio (numpy only).

Steady recharge R over the specific catchment area a/b drains downslope through the soil
with transmissivity T; the water table rises until the flux fits::

    T = K z cos(beta)                      (soil thickness normal to the slope = z cos beta)
    m = min(1, R (a/b) / (T sin(beta)))

References
----------
Beven, K.J. & Kirkby, M.J. (1979). A physically based, variable contributing area model of
basin hydrology. Hydrological Sciences Bulletin 24(1), 43-69.
O'Loughlin, E.M. (1986). Prediction of surface saturation zones in natural catchments by
topographic analysis. Water Resources Research 22(5), 794-804.
Montgomery, D.R. & Dietrich, W.E. (1994). A physically based model for the topographic
control on shallow landsliding. Water Resources Research 30(4), 1153-1171.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked

SECONDS_PER_DAY = 86400.0


def transmissivity_m2_day(
    hydraulic_conductivity_m_s: ArrayLike, depth_m: ArrayLike, slope_deg: ArrayLike
) -> ArrayLike:
    """Soil transmissivity T = K z cos(beta), in m2/day.

    Parameters
    ----------
    hydraulic_conductivity_m_s : saturated hydraulic conductivity K, > 0 m/s.
    depth_m : vertical soil depth z, >= 0 m.
    slope_deg : slope angle, [0, 90) degrees.

    >>> round(transmissivity_m2_day(1e-5, 1.0, 0.0), 4)
    0.864
    """
    k = checked("hydraulic_conductivity_m_s", hydraulic_conductivity_m_s, 0.0, low_open=True)
    z = checked("depth_m", depth_m, 0.0)
    beta = np.radians(checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True))
    return as_result(k * SECONDS_PER_DAY * z * np.cos(beta))


def wetness_ratio(
    recharge_m_day: ArrayLike, sca_m: ArrayLike, sin_b: ArrayLike, transmissivity_m2_day: ArrayLike
) -> ArrayLike:
    """R (a/b) / (T sin beta) in plain arithmetic (unclipped; the caller caps it at 1 and
    handles T sin beta = 0). One source for numpy arrays and the map engine's kernels."""
    return recharge_m_day * sca_m / (transmissivity_m2_day * sin_b)


def steady_state_saturation(
    recharge_mm_day: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    slope_deg: ArrayLike,
    transmissivity_m2_day: ArrayLike,
) -> ArrayLike:
    """Saturation ratio m = min(1, R (a/b) / (T sin beta)) for steady recharge.

    Parameters
    ----------
    recharge_mm_day : steady recharge R, >= 0 mm/day.
    specific_catchment_area_m : upslope area per unit contour width a/b, > 0 m.
    slope_deg : slope angle, [0, 90) degrees; flat cells (0) saturate (m = 1) when R > 0.
    transmissivity_m2_day : T, > 0 m2/day.

    >>> round(steady_state_saturation(20.0, 100.0, 30.0, 8.0), 3)
    0.5
    """
    r = checked("recharge_mm_day", recharge_mm_day, 0.0) / 1000.0
    sca = checked("specific_catchment_area_m", specific_catchment_area_m, 0.0, low_open=True)
    beta = np.radians(checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True))
    t = checked("transmissivity_m2_day", transmissivity_m2_day, 0.0, low_open=True)
    sin_b = np.sin(beta)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.where(
            t * sin_b > 0.0, wetness_ratio(r, sca, sin_b, t), np.where(r * sca > 0.0, 1.0, 0.0)
        )
    return as_result(np.minimum(m, 1.0))


def recharge_for_saturation_mm_day(
    saturation: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    slope_deg: ArrayLike,
    transmissivity_m2_day: ArrayLike,
) -> ArrayLike:
    """Steady recharge (mm/day) that raises the water table to saturation m (inverse).

    R = 1000 m T sin(beta) / (a/b); ``saturation`` may be any real m here (no clipping),
    so this also maps a critical saturation to a critical recharge.

    >>> round(recharge_for_saturation_mm_day(0.5, 100.0, 30.0, 8.0), 3)
    20.0
    """
    m = checked("saturation", saturation)
    sca = checked("specific_catchment_area_m", specific_catchment_area_m, 0.0, low_open=True)
    beta = np.radians(checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True))
    t = checked("transmissivity_m2_day", transmissivity_m2_day, 0.0, low_open=True)
    return as_result(1000.0 * m * t * np.sin(beta) / sca)
