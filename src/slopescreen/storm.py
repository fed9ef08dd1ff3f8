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

import math
from collections.abc import Callable
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen._normal import erfc
from slopescreen.stability import (
    WATER_UNIT_WEIGHT_KN_M3,
    _column,
    factor_of_safety,
    ratio_or_inf,
    resisting_stress,
    slip_plane_terms,
)

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
    seismic_coefficient: ArrayLike = 0.0,
) -> ArrayLike:
    """Factor of safety on a plane at vertical depth Z at time t of a storm (Iverson 2000),
    with an optional horizontal pseudo-static coefficient k_h as in
    :func:`slopescreen.stability.factor_of_safety`.

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
        seismic_coefficient=seismic_coefficient,
    )


GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
DEPTH_REFINE_STEPS = 13  # golden-section steps: bracket of 2 planes shrunk by 0.618^13
DEPTH_BRACKETS = 2  # local minima of the depth scan refined (wetting front, water table)
TIME_REFINE_STEPS = 12
SURFACE_FRACTION = 1e-3  # shallowest plane considered, as a share of the soil depth
CHUNK_CELLS = 16_384  # cells searched at once (bounded memory, cache-friendly)


class StormSummary(NamedTuple):
    """Per column: FS minima over depth (at the start, the end of the storm, the later
    time, and over the whole window from 0 to the later time), where and when they lie,
    and when FS first falls below 1."""

    initial_min_fs: np.ndarray
    end_min_fs: np.ndarray
    end_critical_depth_m: np.ndarray
    later_min_fs: np.ndarray
    time_to_failure_h: np.ndarray  # NaN exactly where window_min_fs >= 1
    window_min_fs: np.ndarray  # minimum over depth and time in [0, later_h]
    window_critical_depth_m: np.ndarray
    window_critical_time_h: np.ndarray


def _golden_minimum(
    fn: Callable[[np.ndarray], np.ndarray],
    lo: np.ndarray,
    hi: np.ndarray,
    steps: int,
) -> tuple[np.ndarray, np.ndarray]:
    """(smallest value seen, where) by golden-section search on [lo, hi], vectorised over
    cells; each step shrinks the bracket by 0.618 and keeps the part holding the lower of
    two interior values."""
    a, b = lo.copy(), hi.copy()
    x1, x2 = b - GOLDEN * (b - a), a + GOLDEN * (b - a)
    f1, f2 = fn(x1), fn(x2)
    best = np.where(f1 <= f2, f1, f2)
    where = np.where(f1 <= f2, x1, x2)
    for _ in range(steps):
        left = f1 <= f2  # the minimum of a unimodal function lies in [a, x2]
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        x_new = np.where(left, b - GOLDEN * (b - a), a + GOLDEN * (b - a))
        f_new = fn(x_new)
        x1, x2, f1, f2 = (
            np.where(left, x_new, x2),
            np.where(left, x1, x_new),
            np.where(left, f_new, f2),
            np.where(left, f1, f_new),
        )
        better = f_new < best
        best = np.where(better, f_new, best)
        where = np.where(better, x_new, where)
    return best, where


class _Columns:
    """Storm inputs of many columns checked once, with FS(Z, t) in plain arithmetic: the
    same equations as :func:`storm_factor_of_safety` (tested equal), for the many
    evaluations of the depth and time search."""

    def __init__(self, duration_h: float, shape: tuple[int, ...], **kw: ArrayLike) -> None:
        col = _column(  # the unit weights and k_h checked as factor_of_safety checks them
            kw["slope_deg"],
            0.0,
            kw["unit_weight_kn_m3"],
            0.0,
            kw.get("saturated_unit_weight_kn_m3"),
            0.0,
            kw.get("seismic_coefficient", 0.0),
            kw.get("water_unit_weight_kn_m3", WATER_UNIT_WEIGHT_KN_M3),
        )
        gamma, gamma_sat, gamma_w = (
            col.unit_weight,
            col.saturated_unit_weight,
            col.water_unit_weight,
        )
        beta, d, ratio, duration, d_hat = _storm_inputs(
            kw["slope_deg"],
            kw["water_table_depth_m"],
            kw["rain_mm_h"],
            duration_h,
            kw["hydraulic_conductivity_m_s"],
            kw["diffusivity_m2_s"],
            kw.get("long_term_infiltration_m_s", 0.0),
        )
        alpha, k_h = col.beta, col.seismic
        c = checked("cohesion_kpa", kw["cohesion_kpa"], 0.0)
        c = c + checked("root_cohesion_kpa", kw.get("root_cohesion_kpa", 0.0), 0.0)
        phi = checked("friction_deg", kw["friction_deg"], 0.0, 90.0, high_open=True)

        def cells(x: ArrayLike) -> np.ndarray:
            return np.broadcast_to(np.asarray(x, float), shape)

        self.beta, self.d, self.ratio = cells(beta), cells(d), cells(ratio)
        self.duration, self.d_hat = cells(duration), cells(d_hat)
        self.cos, self.sin = cells(np.cos(alpha)), cells(np.sin(alpha))
        self.gamma, self.gamma_sat, self.gamma_w = cells(gamma), cells(gamma_sat), cells(gamma_w)
        self.c, self.tan_phi, self.k_h = cells(c), cells(np.tan(np.radians(phi))), cells(k_h)

    def fs(self, z: np.ndarray, t_h: float | np.ndarray) -> np.ndarray:
        """FS at vertical depth z and time t (h); +inf where nothing drives (never NaN)."""
        t = np.asarray(t_h, float) * SECONDS_PER_HOUR
        scale = z * z / self.d_hat
        response = response_function(t / scale) - response_function((t - self.duration) / scale)
        psi = np.minimum((z - self.d) * self.beta + z * self.ratio * response, self.beta * z)
        m = np.clip(np.maximum(psi, 0.0) / (z * self.cos * self.cos), 0.0, 1.0)
        sigma, u, tau = slip_plane_terms(
            self.cos, self.sin, z, self.gamma, self.gamma_sat, m, 0.0, self.k_h, self.gamma_w
        )
        fs = ratio_or_inf(resisting_stress(self.c, self.tan_phi, sigma, u), tau)
        return np.where(np.isnan(fs), np.inf, fs)


def storm_summary(
    *,
    soil_depth_m: ArrayLike,
    later_h: float,
    duration_h: float,
    depth_steps: int = 10,
    time_steps: int = 24,
    **kwargs: ArrayLike,
) -> StormSummary:
    """Minimum FS over depth at the start, the end of the storm and ``later_h``, and over
    depth and time in [0, later_h], with the time FS first falls below 1.

    Over depth, at a given time: planes at Z = soil_depth k/n (k = 1..n) are scanned; the
    bracket of two planes around each of the ``DEPTH_BRACKETS`` lowest local minima of the
    scan (the wetting front and the water table make two) is refined by golden-section
    search (``DEPTH_REFINE_STEPS``: to 3.9e-4 of the soil depth for n = 10), the shallowest
    bracket starting at ``SURFACE_FRACTION`` of the soil depth; the result is never above
    the scan's own minimum. Over time: the same at ``time_steps`` + 1 even times and the
    end of the storm, then the bracket around the lowest refined (``TIME_REFINE_STEPS``:
    to 0.0035 of a time step). Tolerance, tested against a 1,000-plane scan on 10,000
    random cells (tests/test_storm.py): FS within 0.005, and no cell reported holding
    (FS >= 1) whose dense minimum is below 1. The time of failure is interpolated linearly
    in FS between the scanned (or refined) times; it is NaN exactly where ``window_min_fs``
    >= 1, so the two never contradict each other.

    ``kwargs`` are those of :func:`storm_factor_of_safety` except depth and time. Many
    cells are worked through ``CHUNK_CELLS`` at a time, so memory stays bounded.
    """
    soil = checked("soil_depth_m", soil_depth_m, 0.0, low_open=True)
    later = float(checked("later_h", later_h, 0.0))
    end = float(checked("duration_h", duration_h, 0.0))
    if later < end:
        raise ValueError(f"later_h ({later:g}) must not be before the end of the storm ({end:g})")
    shape = np.broadcast_shapes(
        soil.shape, *(np.shape(v) for v in kwargs.values() if v is not None)
    )
    size = math.prod(shape)
    if size <= CHUNK_CELLS:
        return _summary_block(soil, later, end, depth_steps, time_steps, shape, kwargs)
    flat = {
        k: (None if v is None else np.broadcast_to(np.asarray(v, float), shape).ravel())
        for k, v in kwargs.items()
    }
    soil_flat = np.broadcast_to(soil, shape).ravel()
    parts = []
    for start in range(0, size, CHUNK_CELLS):
        part = slice(start, min(start + CHUNK_CELLS, size))
        chunk = {k: (None if v is None else v[part]) for k, v in flat.items()}
        n = part.stop - part.start
        parts.append(
            _summary_block(soil_flat[part], later, end, depth_steps, time_steps, (n,), chunk)
        )
    return StormSummary(*(np.concatenate(f).reshape(shape) for f in zip(*parts, strict=True)))


def _summary_block(
    soil: np.ndarray,
    later: float,
    end: float,
    depth_steps: int,
    time_steps: int,
    shape: tuple[int, ...],
    kwargs: dict[str, ArrayLike],
) -> StormSummary:
    """:func:`storm_summary` for one block of cells."""
    cols = _Columns(end, shape, **kwargs)
    base = np.broadcast_to(soil, shape).astype(float)
    depths = np.multiply.outer((np.arange(depth_steps) + 1.0) / depth_steps, base)

    def min_over_depth(t_h: float | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        fs = cols.fs(depths, t_h)
        local = np.ones(fs.shape, bool)  # local minima of the scan, ends included
        local[1:] &= fs[1:] <= fs[:-1]
        local[:-1] &= fs[:-1] <= fs[1:]
        ranked = np.argsort(np.where(local, fs, np.inf), axis=0, kind="stable")
        best = np.take_along_axis(fs, ranked[:1], axis=0)[0]
        where = np.take_along_axis(depths, ranked[:1], axis=0)[0]
        for k in ranked[: min(DEPTH_BRACKETS, depth_steps)]:
            lo = np.where(k == 0, SURFACE_FRACTION, k / depth_steps) * base
            hi = np.minimum(k + 2, depth_steps) / depth_steps * base
            value, z = _golden_minimum(lambda z: cols.fs(z, t_h), lo, hi, DEPTH_REFINE_STEPS)
            better = value < best
            best, where = np.where(better, value, best), np.where(better, z, where)
        return best, where

    times = np.union1d(np.linspace(0.0, later, time_steps + 1), [end])
    scanned = [min_over_depth(float(t)) for t in times]
    mins = np.stack([m for m, _ in scanned])
    where_z = np.stack([z for _, z in scanned])
    initial = mins[0]
    i_end = int(np.searchsorted(times, end))
    j = np.argmin(mins, axis=0)
    window = np.take_along_axis(mins, j[None], 0)[0]
    t_min = times[j] + 0.0 * window
    z_min = np.take_along_axis(where_z, j[None], 0)[0]
    if times.size > 1:
        t_lo = times[np.maximum(j - 1, 0)] + 0.0 * window
        t_hi = times[np.minimum(j + 1, times.size - 1)] + 0.0 * window
        refined, t_ref = _golden_minimum(
            lambda t: min_over_depth(t)[0], t_lo, t_hi, TIME_REFINE_STEPS
        )
        better = refined < window
        window = np.where(better, refined, window)
        t_min = np.where(better, t_ref, t_min)
        z_min = np.where(better, min_over_depth(t_min)[1], z_min)
    failure = _first_failure(times, mins, window, t_min)
    return StormSummary(
        initial, mins[i_end], where_z[i_end], mins[-1], failure, window, z_min, t_min
    )


def _first_failure(
    times: np.ndarray, mins: np.ndarray, window: np.ndarray, t_min: np.ndarray
) -> np.ndarray:
    """First time FS < 1: between the last scanned time at or above 1 and the first below
    (or the time of the window minimum, when only the refinement found FS < 1), linear in
    FS; NaN where the window minimum is >= 1."""
    below = mins < 1.0
    first = np.argmax(below, axis=0)
    scanned = below.any(axis=0)
    t1 = np.where(scanned, times[first], t_min)
    f1 = np.where(scanned, np.take_along_axis(mins, first[None], 0)[0], window)
    # the last scanned time before t1 (FS >= 1 there unless t1 is the start)
    k0 = np.maximum(np.searchsorted(times, t1, side="left") - 1, 0)
    t0 = times[k0]
    f0 = np.take_along_axis(mins, k0[None], 0)[0]
    with np.errstate(all="ignore"):
        frac = np.clip((f0 - 1.0) / (f0 - f1), 0.0, 1.0)
    t = np.where(f0 < 1.0, t0, t0 + frac * (t1 - t0))
    t = np.where((mins[0] < 1.0), 0.0, t)
    return np.where(window < 1.0, t, np.nan)
