"""Compiled per-cell kernels for the map engine (numba).

The physics is not written again here: the kernels compile the core's own arithmetic
(:func:`slopescreen.stability.slip_plane_terms`, :func:`slopescreen.stability.resisting_stress`) into one fused pass per cell, run on all
cores. Inputs are validated by the map engine before they get here (soil table ranges,
terrain), as the core functions would.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from slopescreen.stability import resisting_stress, slip_plane_terms

_terms = numba.njit(inline="always")(slip_plane_terms)
_resisting = numba.njit(inline="always")(resisting_stress)

_SIGNATURES = ["f8(f8, f8, f8, f8, f8, f8, f8, f8, f8)"]


@numba.vectorize(_SIGNATURES, target="parallel", cache=True)
def fs_ufunc(
    slope_deg,
    depth_m,
    cohesion_total_kpa,
    friction_deg,
    unit_weight,  # noqa: ANN001, ANN201
    saturated_unit_weight,
    saturation,
    seismic,
    water_unit_weight,
):
    """Factor of safety per cell, as :func:`slopescreen.stability.factor_of_safety` (no
    surcharge): +inf with no driving stress, NaN with neither driving nor resisting."""
    beta = math.radians(slope_deg)
    cos_b, sin_b = math.cos(beta), math.sin(beta)
    sigma, u, tau = _terms(
        cos_b,
        sin_b,
        depth_m,
        unit_weight,
        saturated_unit_weight,
        saturation,
        0.0,
        seismic,
        water_unit_weight,
    )
    resisting = _resisting(cohesion_total_kpa, math.tan(math.radians(friction_deg)), sigma, u)
    if tau > 0.0:
        return resisting / tau
    return math.inf if resisting > 0.0 else math.nan


def fs_cells(
    slope_deg: np.ndarray,
    depth_m: np.ndarray,
    cohesion_total_kpa: np.ndarray,
    friction_deg: np.ndarray,
    unit_weight: np.ndarray,
    saturated_unit_weight: np.ndarray,
    saturation: np.ndarray,
    seismic: float,
    water_unit_weight: float = 9.81,
) -> np.ndarray:
    """FS for cells (broadcasting like numpy)."""
    return fs_ufunc(
        slope_deg,
        depth_m,
        cohesion_total_kpa,
        friction_deg,
        unit_weight,
        saturated_unit_weight,
        saturation,
        seismic,
        water_unit_weight,
    )
