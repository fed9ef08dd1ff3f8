"""Infinite-slope limit equilibrium with slope-parallel seepage.

Conventions (all functions): slope angle beta in degrees; ``depth_m`` is the VERTICAL
depth z from the ground surface to the slip plane; ``saturation`` m = h_w / z is the
vertical height of the water table above the slip plane divided by z, with seepage
parallel to the slope; stresses in kPa; unit weights in kN/m3.

Equations, per unit horizontal area of a column of soil::

    W       = gamma (1 - m) z + gamma_sat m z + q                 vertical load, kPa
    sigma   = W cos(beta) (cos(beta) - k_h sin(beta))              normal stress on the plane
    tau_d   = W cos(beta) (sin(beta) + k_h cos(beta))              driving shear stress
    u       = gamma_w m z cos^2(beta)                              pore pressure (parallel seepage)
    sigma'  = max(sigma - u, 0)
    FS      = (c' + c_root + sigma' tan(phi')) / tau_d

k_h is a horizontal pseudo-static seismic coefficient acting downslope.

References
----------
Skempton, A.W. & DeLory, F.A. (1957). Stability of natural slopes in London Clay.
Proc. 4th ICSMFE, London, 2, 378-381.
Haefeli, R. (1948). The stability of slopes acted upon by parallel seepage.
Proc. 2nd ICSMFE, Rotterdam, 1, 57-62.
Sidle, R.C. & Ochiai, H. (2006). *Landslides: Processes, Prediction, and Land Use*.
American Geophysical Union, Water Resources Monograph 18 (root cohesion and surcharge
terms of the infinite slope).
Kramer, S.L. (1996). *Geotechnical Earthquake Engineering*, Prentice Hall, sec. 10.6
(pseudo-static infinite slope).
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen.errors import InputError

WATER_UNIT_WEIGHT_KN_M3 = 9.81


class SlipPlaneStresses(NamedTuple):
    """Stresses on the slip plane, kPa (arrays or floats)."""

    normal_kpa: np.ndarray | float
    pore_pressure_kpa: np.ndarray | float
    effective_normal_kpa: np.ndarray | float
    driving_shear_kpa: np.ndarray | float


class Column(NamedTuple):
    """Validated inputs of soil columns (arrays broadcast together; slope in radians),
    shared by the inverse solutions and the storm search."""

    beta: np.ndarray  # radians
    depth_m: np.ndarray
    saturation: np.ndarray
    unit_weight: np.ndarray
    saturated_unit_weight: np.ndarray
    surcharge_kpa: np.ndarray
    seismic: np.ndarray
    water_unit_weight: np.ndarray


def checked_column(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike,
    saturated_unit_weight_kn_m3: ArrayLike | None,
    surcharge_kpa: ArrayLike,
    seismic_coefficient: ArrayLike,
    water_unit_weight_kn_m3: ArrayLike,
) -> Column:
    """The inputs of :func:`slip_plane_stresses`, range-checked once and broadcast."""
    slope = checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True)
    depth = checked("depth_m", depth_m, 0.0)
    gamma = checked("unit_weight_kn_m3", unit_weight_kn_m3, 0.0, low_open=True)
    m = checked("saturation", saturation, 0.0, 1.0)
    gamma_w = checked("water_unit_weight_kn_m3", water_unit_weight_kn_m3, 0.0, low_open=True)
    if saturated_unit_weight_kn_m3 is None:
        gamma_sat = gamma
    else:
        gamma_sat = checked(
            "saturated_unit_weight_kn_m3", saturated_unit_weight_kn_m3, 0.0, low_open=True
        )
    if (np.asarray(gamma_sat) < gamma_w).any():
        lowest = float(np.min(gamma_w))
        raise InputError(
            f"saturated_unit_weight_kn_m3 (or unit_weight_kn_m3 when no saturated value is "
            f"given) must be >= the unit weight of water ({lowest:g} kN/m3), "
            f"got {float(np.min(gamma_sat)):g}"
        )
    q = checked("surcharge_kpa", surcharge_kpa, 0.0)
    k_h = checked("seismic_coefficient", seismic_coefficient, 0.0, 1.0, high_open=True)
    return Column(np.radians(slope), depth, m, gamma, gamma_sat, q, k_h, gamma_w)


def slip_plane_terms(
    cos_b: ArrayLike,
    sin_b: ArrayLike,
    depth_m: ArrayLike,
    unit_weight: ArrayLike,
    saturated_unit_weight: ArrayLike,
    saturation: ArrayLike,
    surcharge_kpa: ArrayLike,
    seismic: ArrayLike,
    water_unit_weight: ArrayLike,
) -> tuple[Any, Any, Any]:
    """(sigma, u, tau_d) on the slip plane: the module's equations in plain arithmetic.

    Written with operators only so that one source serves numpy arrays here and compiled
    scalar kernels in the map engine (numba).
    """
    load = (unit_weight * (1.0 - saturation) + saturated_unit_weight * saturation) * depth_m
    load = load + surcharge_kpa
    sigma = load * cos_b * (cos_b - seismic * sin_b)
    tau = load * cos_b * (sin_b + seismic * cos_b)
    u = water_unit_weight * saturation * depth_m * cos_b * cos_b
    return sigma, u, tau


def resisting_stress(
    cohesion_total: ArrayLike, tan_friction: ArrayLike, sigma: ArrayLike, u: ArrayLike
) -> Any:
    """c' + c_root + max(sigma - u, 0) tan(phi'), in plain arithmetic (see slip_plane_terms)."""
    effective = sigma - u
    return cohesion_total + 0.5 * (effective + abs(effective)) * tan_friction


def stresses_unclipped(col: Column) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """sigma, u, sigma - u (not clipped) and tau_d for a validated column."""
    sigma, u, tau = slip_plane_terms(
        np.cos(col.beta),
        np.sin(col.beta),
        col.depth_m,
        col.unit_weight,
        col.saturated_unit_weight,
        col.saturation,
        col.surcharge_kpa,
        col.seismic,
        col.water_unit_weight,
    )
    return sigma, u, sigma - u, tau


def slip_plane_stresses(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> SlipPlaneStresses:
    """Total normal, pore-pressure, effective normal and driving shear stress on the slip plane.

    See the module docstring for the equations and conventions; arguments as in
    :func:`factor_of_safety`.

    >>> s = slip_plane_stresses(30.0, 2.0, 18.0, 0.5, saturated_unit_weight_kn_m3=20.0)
    >>> [round(float(x), 3) for x in s]
    [28.5, 7.358, 21.143, 16.454]
    """
    col = checked_column(
        slope_deg,
        depth_m,
        unit_weight_kn_m3,
        saturation,
        saturated_unit_weight_kn_m3,
        surcharge_kpa,
        seismic_coefficient,
        water_unit_weight_kn_m3,
    )
    sigma, u, sigma_eff, tau = stresses_unclipped(col)
    return SlipPlaneStresses(
        as_result(sigma), as_result(u), as_result(np.maximum(sigma_eff, 0.0)), as_result(tau)
    )


def factor_of_safety(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Infinite-slope factor of safety FS = (c' + c_root + sigma' tan phi') / tau_d.

    Parameters
    ----------
    slope_deg : slope angle beta, [0, 90) degrees.
    depth_m : vertical depth z of the slip plane, >= 0 m.
    cohesion_kpa : effective cohesion c', >= 0 kPa.
    friction_deg : effective friction angle phi', [0, 90) degrees.
    unit_weight_kn_m3 : unit weight gamma of the soil above the water table, > 0 kN/m3.
    saturation : m = h_w / z, [0, 1].
    saturated_unit_weight_kn_m3 : gamma_sat below the water table (default gamma);
        must be >= water_unit_weight_kn_m3.
    root_cohesion_kpa : apparent cohesion from roots c_root, >= 0 kPa.
    surcharge_kpa : vertical surcharge q per unit horizontal area, >= 0 kPa.
    seismic_coefficient : horizontal pseudo-static coefficient k_h, [0, 1).
    water_unit_weight_kn_m3 : gamma_w, > 0 (default 9.81).

    Returns
    -------
    FS, dimensionless, broadcast over the inputs. Where the driving shear stress is zero
    (flat ground with no seismic load, or zero load) FS is +inf; where both resisting and
    driving stress are zero it is NaN.

    Raises
    ------
    InputError (a ValueError) naming the argument and its allowed range.

    Notes
    -----
    Special cases: dry cohesionless FS = tan(phi')/tan(beta); cohesionless with the water
    table at the surface FS = (gamma_sat - gamma_w)/gamma_sat tan(phi')/tan(beta);
    phi' = 0 gives FS = c' / (gamma z sin(beta) cos(beta)).

    Examples
    --------
    >>> round(factor_of_safety(30.0, 2.0, 0.0, 30.0, 18.0), 6)
    1.0
    >>> factor_of_safety([10.0, 20.0, 30.0], 1.5, 5.0, 32.0, 19.0, 1.0).round(3)
    array([2.74 , 1.376, 0.929])
    """
    col = checked_column(
        slope_deg,
        depth_m,
        unit_weight_kn_m3,
        saturation,
        saturated_unit_weight_kn_m3,
        surcharge_kpa,
        seismic_coefficient,
        water_unit_weight_kn_m3,
    )
    c = checked("cohesion_kpa", cohesion_kpa, 0.0)
    c_root = checked("root_cohesion_kpa", root_cohesion_kpa, 0.0)
    phi = checked("friction_deg", friction_deg, 0.0, 90.0, high_open=True)
    sigma, u, _, tau = stresses_unclipped(col)
    resisting = resisting_stress(c + c_root, np.tan(np.radians(phi)), sigma, u)
    return as_result(ratio_or_inf(resisting, tau))


def ratio_or_inf(resisting: ArrayLike, driving: ArrayLike) -> np.ndarray:
    """resisting / driving with +inf where driving is 0 and NaN where both are 0."""
    resisting, driving = np.broadcast_arrays(
        np.asarray(resisting, float), np.asarray(driving, float)
    )
    out = np.full(resisting.shape, np.inf)
    with np.errstate(over="ignore"):  # a vanishing driving stress overflows to +inf: correct
        np.divide(resisting, driving, out=out, where=driving > 0.0)
    out[(driving <= 0.0) & (resisting <= 0.0)] = np.nan
    return out
