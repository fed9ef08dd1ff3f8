"""Critical rainfall intensity per column for a storm of given duration (numpy only): the
smallest constant intensity that brings the minimum factor of safety, over depth and over
the window from the start of the storm to ``after_h`` after its end, to 1.

It rests on the storm physics of :mod:`slopescreen.storm` (Iverson 2000). At vertical depth
Z the pressure head is psi = (Z - d) beta + Z (I/K_z) G(t*), G = R(t*) - R(t* - T*) H(t* - T*),
capped at beta Z, with infiltration I <= K_z; FS on the plane falls as psi rises (FS is
linear-fractional in the equivalent saturation m = psi / (Z cos^2 alpha)). So at each
depth:

- the saturation that brings FS to 1, m_c(Z), is the exact inverse
  :func:`slopescreen.inverse.critical_saturation`, and psi_c = m_c Z cos^2 alpha;
- G is largest where dG/dt* = r(t*) - r(t* - T*) = 0 with r(t) = exp(-1/t) / (2 sqrt(pi t))
  (the derivative of R): r rises to its peak at t = 2 and falls after, so the root lies in
  (max(T*, 2), T* + 2) and is unique; it is found by bisection to machine precision and
  clipped to the window;
- I_c(Z) = K_z (psi_c - (Z - d) beta) / (Z G_max(Z)) in closed form, valid when
  psi_c <= beta Z (the hydrostatic cap) and I_c <= K_z (the rest would run off).

With ``specific_catchment_area_m`` given, the water table can rise no higher than the steady
state of the same rain (Montgomery & Dietrich 1994 with recharge R = I: m_ss = min(1,
I a / (T sin alpha)), T = K z cos alpha): failure at Z then also needs I >= I_ss(Z), the
intensity whose steady water table gives psi_c at Z. So as the duration grows, I_c tends to
the critical steady recharge of :func:`slopescreen.scenario.critical_recharge_mm_day`
divided by 24 (mm/day to mm/h) where the base of the soil governs; as it shrinks, G_max
tends to 0 and I_c exceeds K_z (code ``NO_INTENSITY_FAILS``).

The minimum over depth is bracketed on ``DEPTH_SCAN`` planes (from ``SURFACE_FRACTION`` of
the soil depth to its base) and refined by golden-section search within the bracket of the
lowest scanned plane (``REFINE_STEPS`` steps: the bracket of two plane spacings shrinks by
0.618^30, about 5e-7); tested against a dense scan of the same closed form and against
bisection on :func:`slopescreen.storm.storm_factor_of_safety`.

References
----------
Iverson, R.M. (2000). Landslide triggering by rain infiltration. Water Resources Research
36(7), 1897-1910.
Montgomery, D.R. & Dietrich, W.E. (1994). A physically based model for the topographic
control on shallow landsliding. Water Resources Research 30(4), 1153-1171.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import checked
from slopescreen.inverse import critical_saturation
from slopescreen.storm import SECONDS_PER_HOUR, _golden_minimum, response_function

FAILS_WITHOUT_RAIN = -1.0  # FS < 1 somewhere before the storm
NO_INTENSITY_FAILS = -2.0  # no intensity up to K_z (or the steady cap) brings FS to 1
DEPTH_SCAN = 48
REFINE_STEPS = 30
SURFACE_FRACTION = 1e-3


def response_rate(t_star: ArrayLike) -> np.ndarray:
    """r(t*) = dR/dt* = exp(-1/t*) / (2 sqrt(pi t*)); 0 for t* <= 0.

    >>> round(float(response_rate(2.0)), 6)
    0.120985
    """
    t = np.asarray(t_star, dtype=float)
    safe = np.where(t > 0.0, t, 1.0)
    return np.where(t > 0.0, np.exp(-1.0 / safe) / (2.0 * np.sqrt(np.pi * safe)), 0.0)


def _peak_time_by_bisection(storm_star: np.ndarray) -> np.ndarray:
    """t* of the peak of G: the root of r(t*) = r(t* - T*) in (max(T*, 2), T* + 2), where
    dG/dt* falls strictly (bisection to machine precision)."""
    lo = np.maximum(storm_star, 2.0)
    hi = storm_star + 2.0
    for _ in range(64):
        mid = 0.5 * (lo + hi)
        rising = response_rate(mid) > response_rate(mid - storm_star)
        lo = np.where(rising, mid, lo)
        hi = np.where(rising, hi, mid)
    return 0.5 * (lo + hi)


# t_peak - T* is a smooth function of log T* (2 for short storms, falling slowly for long
# ones): tabulated once by bisection and interpolated; an error e in the peak's time moves
# G_max by about G'' e^2 / 2 (G' = 0 there): relative 1e-11 at most on this grid (tested)
_LOG_STORM = np.linspace(-10.0, 10.0, 4001)
_PEAK_OFFSET = _peak_time_by_bisection(10.0**_LOG_STORM) - 10.0**_LOG_STORM


def peak_response(storm_star: ArrayLike, window_star: ArrayLike) -> np.ndarray:
    """max of G(t*) = R(t*) - R(t* - T*) H(t* - T*) over 0 <= t* <= window (>= T*): G
    rises to its peak and falls after, so the maximum is at the peak or the window's end.

    >>> round(float(peak_response(1.0, 100.0)), 6) == round(float(
    ...     max(response_function(t) - response_function(t - 1.0) for t in
    ...         np.linspace(1.0, 3.0, 20001))), 6)
    True
    """
    big_t = np.asarray(storm_star, dtype=float)
    window = np.asarray(window_star, dtype=float)
    log_t = np.log10(np.maximum(big_t, 1e-300))
    inside = (log_t >= _LOG_STORM[0]) & (log_t <= _LOG_STORM[-1])
    t_peak = big_t + np.interp(log_t, _LOG_STORM, _PEAK_OFFSET)
    if not inside.all():  # outside the table: bisection
        t_peak = np.where(inside, t_peak, _peak_time_by_bisection(big_t))
    t_peak = np.minimum(t_peak, window)
    return response_function(t_peak) - np.where(
        t_peak > big_t, response_function(t_peak - big_t), 0.0
    )


def _critical_m(z: np.ndarray, p: dict) -> np.ndarray:
    """Saturation bringing FS to 1 on the plane at depth z (raw; NaN where none)."""
    soil = {
        "saturated_unit_weight_kn_m3": p["gamma_sat"],
        "root_cohesion_kpa": p["c_root"],
        "seismic_coefficient": p["seismic"],
    }
    return np.asarray(
        critical_saturation(p["slope"], z, p["c"], p["phi"], p["gamma"], **soil), float
    )


def _at_depth(z: np.ndarray, p: dict, m_c: np.ndarray | None = None) -> np.ndarray:
    """I_c (m/s) at vertical depth z (arrays broadcast with the cells); NaN where none.
    ``m_c`` is the plane's critical saturation where the caller has it already."""
    cos2 = p["cos2"]
    if m_c is None:
        m_c = _critical_m(z, p)
    psi_c = m_c * z * cos2
    psi0 = (z - p["d"]) * p["beta"]
    scale = p["d_hat"] / (z * z)
    g = peak_response(p["duration_s"] * scale, p["window_s"] * scale)
    with np.errstate(divide="ignore", invalid="ignore"):
        i_c = p["k"] * (psi_c - psi0) / (z * g)
        if p["sca"] is not None:  # the steady water table of the same rain, R = I
            need = (psi_c / cos2 - z + p["z_soil"]) / p["z_soil"]  # m_ss giving psi_c at z
            i_ss = need * p["t_m2_s"] * np.sqrt(1.0 - cos2) / p["sca"]
            i_c = np.where(need <= 1.0, np.maximum(i_c, i_ss), np.nan)
    ok = np.isfinite(m_c) & (m_c >= 0.0) & (psi_c <= p["beta"] * z) & (i_c <= p["k"]) & (g > 0)
    return np.where(ok, np.maximum(i_c, 0.0), np.nan)


def critical_intensity_mm_h(
    duration_h: float,
    *,
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    water_table_depth_m: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    after_h: float = 24.0,
    long_term_infiltration_m_s: ArrayLike = 0.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    specific_catchment_area_m: ArrayLike | None = None,
    transmissivity_m2_day: ArrayLike | None = None,
) -> np.ndarray:
    """Smallest constant rain intensity (mm/h) of a storm of ``duration_h`` that brings the
    minimum FS over depth (planes down to ``depth_m``, the soil's base) and over time (from
    the start to ``after_h`` after the end) to 1; ``FAILS_WITHOUT_RAIN`` (-1) where FS is
    already below 1 before the storm, ``NO_INTENSITY_FAILS`` (-2) where no intensity up to
    K_z does. Arguments as in :func:`slopescreen.storm.storm_factor_of_safety`; with
    ``specific_catchment_area_m`` (a/b, m) the steady water table of the same rain caps the
    rise (see the module docstring), T from ``transmissivity_m2_day`` or K z cos(alpha).

    >>> float(critical_intensity_mm_h(12.0, slope_deg=35.0, depth_m=1.5, cohesion_kpa=3.0,
    ...     friction_deg=33.0, unit_weight_kn_m3=19.0, water_table_depth_m=1.5,
    ...     hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=5e-5).round(3))
    25.247
    """
    duration = checked("duration_h", duration_h, 0.0, low_open=True) * SECONDS_PER_HOUR
    after = checked("after_h", after_h, 0.0) * SECONDS_PER_HOUR
    slope = checked("slope_deg", slope_deg, 0.0, 90.0, high_open=True)
    z_soil = checked("depth_m", depth_m, 0.0, low_open=True)
    k = checked("hydraulic_conductivity_m_s", hydraulic_conductivity_m_s, 0.0, low_open=True)
    d0 = checked("diffusivity_m2_s", diffusivity_m2_s, 0.0, low_open=True)
    d = checked("water_table_depth_m", water_table_depth_m, 0.0)
    i_lt = checked("long_term_infiltration_m_s", long_term_infiltration_m_s, 0.0)
    cos2 = np.cos(np.radians(slope)) ** 2
    shape = np.broadcast_shapes(
        *(np.shape(x) for x in (slope, z_soil, k, d0, d, cohesion_kpa, friction_deg))
    )
    p = {
        "slope": slope,
        "cos2": cos2,
        "c": cohesion_kpa,
        "phi": friction_deg,
        "gamma": unit_weight_kn_m3,
        "gamma_sat": saturated_unit_weight_kn_m3,
        "c_root": root_cohesion_kpa,
        "seismic": seismic_coefficient,
        "d": d,
        "beta": cos2 - i_lt / k,
        "k": k,
        "d_hat": 4.0 * d0 * cos2,
        "duration_s": duration,
        "window_s": duration + after,
        "z_soil": z_soil,
        "sca": None,
    }
    if specific_catchment_area_m is not None:
        p["sca"] = checked(
            "specific_catchment_area_m", specific_catchment_area_m, 0.0, low_open=True
        )
        t_day = np.full(shape, np.nan) if transmissivity_m2_day is None else transmissivity_m2_day
        t_m2_s = np.where(
            np.isnan(t_day), k * z_soil * np.sqrt(cos2), np.asarray(t_day, float) / 86400.0
        )
        p["t_m2_s"] = t_m2_s
    # before the storm: FS below 1 on some plane (dry above the water table, wet below)
    fractions = np.linspace(SURFACE_FRACTION, 1.0, DEPTH_SCAN)
    planes = [np.broadcast_to(f * z_soil, shape) for f in fractions]
    fails_now = np.zeros(shape, bool)
    scanned = []
    for z in planes:  # one critical saturation per plane serves both questions
        m_c = _critical_m(z, p)
        m0 = np.clip(np.maximum((z - d) * p["beta"], 0.0) / (z * cos2), 0.0, 1.0)
        fails_now |= np.isfinite(m_c) & (m0 >= m_c)
        scanned.append(_at_depth(z, p, m_c))
    scan = np.stack(scanned)  # (planes, cells...)
    filled = np.where(np.isnan(scan), np.inf, scan)
    best = np.argmin(filled, axis=0)
    lowest = np.take_along_axis(filled, best[None], axis=0)[0]
    step = (1.0 - SURFACE_FRACTION) / (DEPTH_SCAN - 1)
    frac = fractions[best]
    lo = np.maximum(frac - step, SURFACE_FRACTION) * z_soil
    hi = np.minimum(frac + step, 1.0) * z_soil
    refined, _ = _golden_minimum(
        lambda z: np.where(np.isnan(v := _at_depth(z, p)), np.inf, v),
        np.asarray(lo, float),
        np.asarray(hi, float),
        REFINE_STEPS,
    )
    result = np.minimum(lowest, refined) * 1000.0 * SECONDS_PER_HOUR
    out = np.where(np.isfinite(result), result, NO_INTENSITY_FAILS)
    return np.where(fails_now, FAILS_WITHOUT_RAIN, out)
