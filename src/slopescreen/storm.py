"""Transient pressure head and factor of safety during and after a storm (numpy only).

The linearised solution of Richards' equation for a shallow, initially wet soil on a slope
(Iverson 2000). With Z the vertical depth, d the initial (steady) water-table depth,
alpha the slope angle, K_z the saturated vertical hydraulic conductivity, D_0 the
hydraulic diffusivity, I_Z the infiltration rate during a storm of duration T::

    beta   = cos^2(alpha) - I_LT / K_z               (I_LT: long-term infiltration, default 0)
    D_hat  = 4 D_0 cos^2(alpha)
    t*     = t / (Z^2 / D_hat),  T* = T / (Z^2 / D_hat)
    R(t*)  = sqrt(t*/pi) exp(-1/t*) - erfc(1/sqrt(t*))
    psi    = (Z - d) beta + Z (I_Z / K_z) [R(t*) - R(t* - T*) H(t* - T*)]

capped so that psi <= beta Z (no more than hydrostatic with the water table at the ground
surface). Infiltration cannot exceed K_z: I_Z = min(rain, K_z); the rest runs off.

The factor of safety at depth Z follows the same paper's infinite-slope form,
FS = tan(phi)/tan(alpha) + (c' - psi gamma_w tan(phi)) / (gamma Z sin(alpha) cos(alpha)),
computed here with :func:`slopescreen.stability.factor_of_safety` and the equivalent
saturation m = max(psi, 0) / (Z cos^2(alpha)): suction above the water table (psi < 0) is
neglected, a conservative choice.

Validity (Iverson 2000): soil depth small against the slope's length scale, initially wet
soil near a steady state; the response is for a single storm of uniform intensity.

Reference
---------
Iverson, R.M. (2000). Landslide triggering by rain infiltration. Water Resources Research
36(7), 1897-1910.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen._normal import erfc
from slopescreen.stability import WATER_UNIT_WEIGHT_KN_M3, factor_of_safety

SECONDS_PER_HOUR = 3600.0


def response_function(t_star: ArrayLike) -> np.ndarray:
    """Iverson's R(t*) = sqrt(t*/pi) exp(-1/t*) - erfc(1/sqrt(t*)); R = 0 for t* <= 0.

    >>> round(float(response_function(1.0)), 4)
    0.0503
    """
    t = np.asarray(t_star, dtype=float)
    safe = np.where(t > 0.0, t, 1.0)
    r = np.sqrt(safe / np.pi) * np.exp(-1.0 / safe) - erfc(1.0 / np.sqrt(safe))
    return np.where(t > 0.0, r, 0.0)


def _storm_inputs(
    slope_deg: ArrayLike,
    water_table_depth_m: ArrayLike,
    rain_mm_h: ArrayLike,
    duration_h: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike,
) -> tuple[np.ndarray, ...]:
    alpha = np.radians(checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True))
    d = checked("water_table_depth_m", water_table_depth_m, 0.0)
    rain = checked("rain_mm_h", rain_mm_h, 0.0, 1000.0) / 1000.0 / SECONDS_PER_HOUR
    duration = checked("duration_h", duration_h, 0.0) * SECONDS_PER_HOUR
    k = checked("hydraulic_conductivity_m_s", hydraulic_conductivity_m_s, 0.0, low_open=True)
    d0 = checked("diffusivity_m2_s", diffusivity_m2_s, 0.0, low_open=True)
    i_lt = checked("long_term_infiltration_m_s", long_term_infiltration_m_s, 0.0)
    cos2 = np.cos(alpha) ** 2
    beta = cos2 - i_lt / k
    if (beta < 0.0).any():
        raise ValueError("long_term_infiltration_m_s must not exceed K cos^2(slope)")
    return beta, d, np.minimum(rain, k) / k, duration, 4.0 * d0 * cos2


def pressure_head_m(
    depth_m: ArrayLike,
    time_h: ArrayLike,
    *,
    slope_deg: ArrayLike,
    water_table_depth_m: ArrayLike,
    rain_mm_h: ArrayLike,
    duration_h: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike = 0.0,
) -> ArrayLike:
    """Pressure head psi (m of water) at vertical depth Z and time t (Iverson 2000).

    Parameters
    ----------
    depth_m : vertical depth Z below the ground, > 0 m.
    time_h : time since the storm began, >= 0 h.
    slope_deg : slope angle alpha, [0, 90) degrees.
    water_table_depth_m : initial vertical depth d of the water table, >= 0 m.
    rain_mm_h : rainfall intensity, [0, 1000] mm/h; infiltration is capped at K_z.
    duration_h : storm duration T, >= 0 h.
    hydraulic_conductivity_m_s : saturated vertical conductivity K_z, > 0 m/s.
    diffusivity_m2_s : hydraulic diffusivity D_0, > 0 m2/s.
    long_term_infiltration_m_s : I_LT of the initial steady state, >= 0 m/s (default 0).

    >>> round(pressure_head_m(1.0, 0.0, slope_deg=30.0, water_table_depth_m=0.5,
    ...       rain_mm_h=10.0, duration_h=2.0, hydraulic_conductivity_m_s=1e-5,
    ...       diffusivity_m2_s=1e-4), 4)
    0.375
    """
    z = checked("depth_m", depth_m, 0.0, low_open=True)
    t = checked("time_h", time_h, 0.0) * SECONDS_PER_HOUR
    beta, d, ratio, duration, d_hat = _storm_inputs(
        slope_deg,
        water_table_depth_m,
        rain_mm_h,
        duration_h,
        hydraulic_conductivity_m_s,
        diffusivity_m2_s,
        long_term_infiltration_m_s,
    )
    scale = z * z / d_hat
    response = response_function(t / scale) - response_function((t - duration) / scale)
    psi = (z - d) * beta + z * ratio * response
    return as_result(np.minimum(psi, beta * z))


def equivalent_saturation(
    pressure_head_m: ArrayLike, depth_m: ArrayLike, slope_deg: ArrayLike
) -> np.ndarray:
    """m = max(psi, 0) / (Z cos^2 alpha), within [0, 1]: the slope-parallel water table that
    gives pressure head psi on the plane at vertical depth Z (suction neglected)."""
    cos2 = np.cos(np.radians(np.asarray(slope_deg, float))) ** 2
    psi = np.maximum(np.asarray(pressure_head_m, float), 0.0)
    return np.clip(psi / (np.asarray(depth_m, float) * cos2), 0.0, 1.0)


def storm_factor_of_safety(
    depth_m: ArrayLike,
    time_h: ArrayLike,
    *,
    slope_deg: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    water_table_depth_m: ArrayLike,
    rain_mm_h: ArrayLike,
    duration_h: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike = 0.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Factor of safety on a plane at vertical depth Z at time t of a storm (Iverson 2000).

    With ``saturated_unit_weight_kn_m3`` left at None (one unit weight, as in the paper) this
    is exactly FS = tan(phi)/tan(alpha) + (c' - psi gamma_w tan(phi))/(gamma Z sin cos) with
    psi >= 0.

    >>> round(storm_factor_of_safety(1.0, 0.0, slope_deg=30.0, cohesion_kpa=2.0,
    ...       friction_deg=33.0, unit_weight_kn_m3=19.0, water_table_depth_m=0.5,
    ...       rain_mm_h=10.0, duration_h=2.0, hydraulic_conductivity_m_s=1e-5,
    ...       diffusivity_m2_s=1e-4), 4)
    1.0775
    """
    psi = np.asarray(
        pressure_head_m(
            depth_m,
            time_h,
            slope_deg=slope_deg,
            water_table_depth_m=water_table_depth_m,
            rain_mm_h=rain_mm_h,
            duration_h=duration_h,
            hydraulic_conductivity_m_s=hydraulic_conductivity_m_s,
            diffusivity_m2_s=diffusivity_m2_s,
            long_term_infiltration_m_s=long_term_infiltration_m_s,
        )
    )
    m = equivalent_saturation(psi, depth_m, slope_deg)
    return factor_of_safety(
        slope_deg,
        depth_m,
        cohesion_kpa,
        friction_deg,
        unit_weight_kn_m3,
        m,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
        water_unit_weight_kn_m3=water_unit_weight_kn_m3,
    )


class StormSummary(NamedTuple):
    """Per column: FS minima over depth, where, and when FS first falls below 1."""

    initial_min_fs: np.ndarray
    end_min_fs: np.ndarray
    end_critical_depth_m: np.ndarray
    later_min_fs: np.ndarray
    time_to_failure_h: np.ndarray  # NaN: FS stays >= 1 up to the later time


def storm_summary(
    *,
    soil_depth_m: ArrayLike,
    later_h: float,
    duration_h: float,
    depth_steps: int = 20,
    time_steps: int = 96,
    **kwargs: ArrayLike,
) -> StormSummary:
    """Scan depths Z = soil_depth k/n (k = 1..n) and times 0..later_h for each column.

    ``kwargs`` are those of :func:`storm_factor_of_safety` except depth and time. The time
    of failure is interpolated linearly between scan steps (resolution later_h/time_steps).
    """
    soil = checked("soil_depth_m", soil_depth_m, 0.0, low_open=True)
    later = float(checked("later_h", later_h, 0.0))
    end = float(checked("duration_h", duration_h, 0.0))
    if later < end:
        raise ValueError(f"later_h ({later:g}) must not be before the end of the storm ({end:g})")
    fractions = (np.arange(depth_steps) + 1.0) / depth_steps
    shape = np.broadcast_shapes(
        soil.shape, *(np.shape(v) for v in kwargs.values() if v is not None)
    )
    depths = np.multiply.outer(fractions, np.broadcast_to(soil, shape))

    def min_over_depth(t_h: float) -> tuple[np.ndarray, np.ndarray]:
        fs = np.asarray(storm_factor_of_safety(depths, t_h, duration_h=end, **kwargs))
        fs = np.where(np.isnan(fs), np.inf, fs)
        k = np.argmin(fs, axis=0)
        return np.take_along_axis(fs, k[None], axis=0)[0], np.take_along_axis(
            depths, k[None], axis=0
        )[0]

    initial, _ = min_over_depth(0.0)
    end_fs, end_depth = min_over_depth(end)
    later_fs, _ = min_over_depth(later)
    failure = np.where(initial < 1.0, 0.0, np.nan)
    previous_t, previous = 0.0, initial
    for t in np.linspace(0.0, later, time_steps + 1)[1:]:
        current = end_fs if t == end else min_over_depth(float(t))[0]
        crossed = np.isnan(failure) & (current < 1.0)
        if crossed.any():
            with np.errstate(all="ignore"):
                frac = np.where(np.isfinite(previous), (previous - 1.0) / (previous - current), 1.0)
            failure = np.where(
                crossed, previous_t + np.clip(frac, 0.0, 1.0) * (t - previous_t), failure
            )
        previous_t, previous = float(t), current
    return StormSummary(initial, end_fs, end_depth, later_fs, failure)
