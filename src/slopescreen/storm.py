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
from functools import partial
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen._normal import erfc
from slopescreen.stability import (
    WATER_UNIT_WEIGHT_KN_M3,
    checked_column,
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


def storm_inputs(
    slope_deg: ArrayLike,
    water_table_depth_m: ArrayLike,
    rain_mm_h: ArrayLike,
    duration_h: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike,
) -> tuple[np.ndarray, ...]:
    """The checked inputs of the solution in SI units: (beta, d, I_Z / K_z, T in s,
    D_hat = 4 D_0 cos^2(alpha))."""
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
    beta, d, ratio, duration, d_hat = storm_inputs(
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


def response_rate(t_star: ArrayLike) -> np.ndarray:
    """r(t*) = dR/dt* = exp(-1/t*) / (2 sqrt(pi t*)); 0 for t* <= 0.

    >>> round(float(response_rate(2.0)), 6)
    0.120985
    """
    t = np.asarray(t_star, dtype=float)
    safe = np.where(t > 0.0, t, 1.0)
    return np.where(t > 0.0, np.exp(-1.0 / safe) / (2.0 * np.sqrt(np.pi * safe)), 0.0)


def _peak_time_by_bisection(storm_star: np.ndarray) -> np.ndarray:
    """t* of the peak of G = R(t*) - R(t* - T*) H(t* - T*): the root of r(t*) = r(t* - T*)
    in (max(T*, 2), T* + 2), where dG/dt* falls strictly (bisection to machine precision);
    r rises to its peak at t* = 2 and falls after, so the root is unique."""
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
LOG_STORM = np.linspace(-10.0, 10.0, 4001)
PEAK_OFFSET = _peak_time_by_bisection(10.0**LOG_STORM) - 10.0**LOG_STORM


def peak_time(storm_star: ArrayLike, window_star: ArrayLike) -> np.ndarray:
    """t* in [0, window] (window >= T*) where G(t*) is largest: its peak, or the window's
    end when the peak comes later (G rises to its peak and falls after)."""
    big_t = np.asarray(storm_star, dtype=float)
    log_t = np.log10(np.maximum(big_t, 1e-300))
    inside = (log_t >= LOG_STORM[0]) & (log_t <= LOG_STORM[-1])
    t_peak = big_t + np.interp(log_t, LOG_STORM, PEAK_OFFSET)
    if not inside.all():  # outside the table: bisection
        t_peak = np.where(inside, t_peak, _peak_time_by_bisection(big_t))
    return np.minimum(t_peak, np.asarray(window_star, dtype=float))


def peak_response(storm_star: ArrayLike, window_star: ArrayLike) -> np.ndarray:
    """max of G(t*) = R(t*) - R(t* - T*) H(t* - T*) over 0 <= t* <= window (>= T*).

    >>> round(float(peak_response(1.0, 100.0)), 6) == round(float(
    ...     max(response_function(t) - response_function(t - 1.0) for t in
    ...         np.linspace(1.0, 3.0, 20001))), 6)
    True
    """
    big_t = np.asarray(storm_star, dtype=float)
    t_peak = peak_time(big_t, window_star)
    return response_function(t_peak) - np.where(
        t_peak > big_t, response_function(t_peak - big_t), 0.0
    )


GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
MIN_SLIP_DEPTH_M = 0.05  # shallowest slip plane considered (m): thinner skins are ignored
DEPTH_PLANES = 12  # planes scanned from the shallowest slip depth to the soil base
# local minima of the scan refined: FS over depth has at most two under a storm (the
# wetting front and the water table, Iverson 2000), one of them possibly at an end
DEPTH_BRACKETS = 2
DEPTH_REFINE_STEPS = 16  # golden-section steps: a bracket of two plane spacings x 0.618^16
TIME_BISECTION_STEPS = 16  # first failure on each plane: to the window / 2^16
FAILURE_PLANES = 24  # planes searched for the first failure (cells that fail only)
NOT_BY_LATER = -1.0  # time-to-failure code: FS stays >= 1 up to the later time
FAILS_BEFORE_STORM = -2.0  # time-to-failure code: FS < 1 before any rain
CHUNK_CELLS = 16_384  # cells searched at once (bounded memory, cache-friendly)


class StormSummary(NamedTuple):
    """Per column: FS minima over depth (at the start, the end of the storm, the later
    time, and over the whole window from 0 to the later time), where and when they lie,
    and when FS first falls below 1 (or a code)."""

    initial_min_fs: np.ndarray
    end_min_fs: np.ndarray
    end_critical_depth_m: np.ndarray
    later_min_fs: np.ndarray
    time_to_failure_h: np.ndarray  # codes NOT_BY_LATER, FAILS_BEFORE_STORM
    window_min_fs: np.ndarray  # minimum over depth and time in [0, later_h]
    window_critical_depth_m: np.ndarray
    window_critical_time_h: np.ndarray


def golden_minimum(
    fn: Callable[[np.ndarray], np.ndarray],
    lo: np.ndarray,
    hi: np.ndarray,
    steps: int,
) -> tuple[np.ndarray, np.ndarray]:
    """(smallest value seen, where) by golden-section search on [lo, hi], vectorised over
    cells; each step shrinks the bracket by 0.618 and keeps the part holding the lower of
    two interior values. ``fn`` must not return NaN (+inf where there is no value)."""
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


def slip_planes(
    shallowest_m: ArrayLike, soil_depth_m: ArrayLike, planes: int = DEPTH_PLANES
) -> np.ndarray:
    """``planes`` depths evenly from the shallowest slip plane to the soil base, both
    included: shape (planes, cells...).

    >>> slip_planes(0.05, 1.05, 3).tolist()
    [0.05, 0.55, 1.05]
    """
    lo, hi = np.asarray(shallowest_m, float), np.asarray(soil_depth_m, float)
    return lo + np.multiply.outer(np.arange(planes) / (planes - 1.0), hi - lo)


def depth_minimum(
    fn: Callable[[np.ndarray], np.ndarray],
    shallowest_m: ArrayLike,
    soil_depth_m: ArrayLike,
    planes: int = DEPTH_PLANES,
    brackets: int = DEPTH_BRACKETS,
    steps: int = DEPTH_REFINE_STEPS,
) -> tuple[np.ndarray, np.ndarray]:
    """(minimum, depth) of ``fn`` (cells -> values, +inf where none, never NaN) over slip
    planes from ``shallowest_m`` to ``soil_depth_m``, both included.

    The scan of :func:`slip_planes` starts at the stated shallowest depth itself, so a
    minimum at that bound (a saturated skin on a cohesionless soil) is read exactly, not
    approached from a coarse plane below it; the bracket of two plane spacings around each
    of the ``brackets`` lowest local minima of the scan (ends included; fewer where the scan
    has fewer, and none where its values are +inf) is refined by golden-section search.
    The result is never above the scan's own minimum.
    """
    lo = np.asarray(shallowest_m, float)
    hi = np.asarray(soil_depth_m, float)
    zs = slip_planes(lo, hi, planes)
    values = fn(zs)
    local = np.ones(values.shape, bool)  # local minima of the scan, ends included
    local[1:] &= values[1:] <= values[:-1]
    local[:-1] &= values[:-1] <= values[1:]
    keys = np.where(local, values, np.inf)
    ranked = np.argsort(keys, axis=0, kind="stable")
    best = np.take_along_axis(values, ranked[:1], axis=0)[0]
    where = np.take_along_axis(zs, ranked[:1], axis=0)[0]
    for k in ranked[: min(brackets, planes)]:
        found = np.isfinite(np.take_along_axis(keys, k[None], axis=0)[0])  # a local minimum
        if not found.any():
            break
        a = np.take_along_axis(zs, np.maximum(k - 1, 0)[None], axis=0)[0]
        b = np.take_along_axis(zs, np.minimum(k + 1, planes - 1)[None], axis=0)[0]
        value, z = golden_minimum(fn, a, b, steps)
        better = found & (value < best)
        best, where = np.where(better, value, best), np.where(better, z, where)
    return best, where


_COLUMN_KEYS = {
    "slope_deg", "cohesion_kpa", "friction_deg", "unit_weight_kn_m3", "water_table_depth_m",
    "rain_mm_h", "hydraulic_conductivity_m_s", "diffusivity_m2_s",
    "long_term_infiltration_m_s", "saturated_unit_weight_kn_m3", "root_cohesion_kpa",
    "water_unit_weight_kn_m3", "seismic_coefficient",
}  # fmt: skip


class StormColumns:
    """Storm inputs of many columns checked once, with FS(Z, t) in plain arithmetic: the
    same equations as :func:`storm_factor_of_safety` (tested equal), for the many
    evaluations of the depth search; and the peak of the pressure head over the window at
    each depth in closed form."""

    def __init__(
        self, duration_h: float, later_h: float, shape: tuple[int, ...], **kw: ArrayLike
    ) -> None:
        col = checked_column(  # the unit weights and k_h checked as factor_of_safety checks them
            kw["slope_deg"],
            0.0,
            kw["unit_weight_kn_m3"],
            0.0,
            kw.get("saturated_unit_weight_kn_m3"),
            0.0,
            kw.get("seismic_coefficient", 0.0),
            kw.get("water_unit_weight_kn_m3", WATER_UNIT_WEIGHT_KN_M3),
        )
        beta, d, ratio, duration, d_hat = storm_inputs(
            kw["slope_deg"],
            kw["water_table_depth_m"],
            kw["rain_mm_h"],
            duration_h,
            kw["hydraulic_conductivity_m_s"],
            kw["diffusivity_m2_s"],
            kw.get("long_term_infiltration_m_s", 0.0),
        )
        c = checked("cohesion_kpa", kw["cohesion_kpa"], 0.0)
        c = c + checked("root_cohesion_kpa", kw.get("root_cohesion_kpa", 0.0), 0.0)
        phi = checked("friction_deg", kw["friction_deg"], 0.0, 90.0, high_open=True)

        def cells(x: ArrayLike) -> np.ndarray:
            return np.broadcast_to(np.asarray(x, float), shape)

        self.beta, self.d, self.ratio = cells(beta), cells(d), cells(ratio)
        self.duration, self.d_hat = cells(duration), cells(d_hat)
        self.window = later_h * SECONDS_PER_HOUR
        self.cos, self.sin = cells(np.cos(col.beta)), cells(np.sin(col.beta))
        self.gamma = cells(col.unit_weight)
        self.gamma_sat = cells(col.saturated_unit_weight)
        self.gamma_w = cells(col.water_unit_weight)
        self.c, self.tan_phi = cells(c), cells(np.tan(np.radians(phi)))
        self.k_h = cells(col.seismic)

    def subset(self, cells: np.ndarray) -> StormColumns:
        """The same columns restricted to ``cells`` (a boolean mask over the cells)."""
        sub = type(self).__new__(type(self))
        for name, value in vars(self).items():
            sub.__dict__[name] = value[cells] if isinstance(value, np.ndarray) else value
        return sub

    def fs_at_head(self, z: np.ndarray, psi: np.ndarray) -> np.ndarray:
        """FS on the plane at depth z under pressure head psi; +inf where nothing drives."""
        m = np.clip(np.maximum(psi, 0.0) / (z * self.cos * self.cos), 0.0, 1.0)
        sigma, u, tau = slip_plane_terms(
            self.cos, self.sin, z, self.gamma, self.gamma_sat, m, 0.0, self.k_h, self.gamma_w
        )
        fs = ratio_or_inf(resisting_stress(self.c, self.tan_phi, sigma, u), tau)
        return np.where(np.isnan(fs), np.inf, fs)

    def _head_of(self, z: np.ndarray, response: np.ndarray) -> np.ndarray:
        """psi = (Z - d) beta + Z (I_Z/K_z) G, capped at beta Z, for a response G."""
        return np.minimum((z - self.d) * self.beta + z * self.ratio * response, self.beta * z)

    def head(self, z: np.ndarray, t_h: float | np.ndarray) -> np.ndarray:
        t = np.asarray(t_h, float) * SECONDS_PER_HOUR
        scale = z * z / self.d_hat
        response = response_function(t / scale) - response_function((t - self.duration) / scale)
        return self._head_of(z, response)

    def fs(self, z: np.ndarray, t_h: float | np.ndarray) -> np.ndarray:
        """FS at vertical depth z and time t (h); +inf where nothing drives (never NaN)."""
        return self.fs_at_head(z, self.head(z, t_h))

    def peak_time_h(self, z: np.ndarray) -> np.ndarray:
        """When the pressure head at depth z is highest within [0, later]."""
        scale = z * z / self.d_hat
        return peak_time(self.duration / scale, self.window / scale) * scale / SECONDS_PER_HOUR

    def peak_fs(self, z: np.ndarray) -> np.ndarray:
        """The lowest FS on the plane at depth z over [0, later]: FS falls as the head
        rises, and the head is highest at :meth:`peak_time_h` (exact in time)."""
        scale = self.d_hat / (z * z)
        g = peak_response(self.duration * scale, self.window * scale)
        return self.fs_at_head(z, self._head_of(z, g))


def storm_summary(
    *,
    soil_depth_m: ArrayLike,
    later_h: float,
    duration_h: float,
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M,
    **kwargs: ArrayLike,
) -> StormSummary:
    """Minimum FS over depth at the start, the end of the storm and ``later_h``, and over
    depth and time in [0, later_h], with the time FS first falls below 1.

    Depth: slip planes from ``min_slip_depth_m`` (or the soil depth, if shallower) to the
    soil base, by :func:`depth_minimum` (``DEPTH_PLANES`` planes, the ``DEPTH_BRACKETS``
    lowest local minima refined). Time: exact. At each depth the pressure head rises to one
    peak and falls after (G = R(t*) - R(t* - T*) has one maximum), and FS on a plane falls
    as the head rises, so the lowest FS of a plane over the window is FS at the head's
    peak (:func:`peak_time`, clipped to the window): the window minimum is a minimum over
    depth alone. It is also never above the minima at the start, the end and the later
    time. Tolerance, tested against a dense reference (1,000 planes x 200 times on 10^4
    random cells, c' = 0 included, slopes to 60 degrees, storms of 0.01 to 1,000 h,
    tests/test_storm_search.py): FS within 0.005 above the reference, and no cell reported
    holding (FS >= 1) whose reference minimum is below 1.

    Time to failure: on each scanned plane and the critical one, the head rises until its
    peak, so FS crosses 1 at most once before it; the crossing is bisected
    (``TIME_BISECTION_STEPS``) and the earliest plane's earlier bracket end is reported
    (never later than the crossing on those planes). Codes: ``NOT_BY_LATER`` (-1) exactly
    where ``window_min_fs`` >= 1, ``FAILS_BEFORE_STORM`` (-2) exactly where
    ``initial_min_fs`` < 1. Flat cells (slope 0) hold: FS +inf, the codes, finite depths
    and times; never NaN.

    ``kwargs`` are those of :func:`storm_factor_of_safety` except depth and time. Many
    cells are worked through ``CHUNK_CELLS`` at a time, so memory stays bounded.

    >>> s = storm_summary(soil_depth_m=1.5, later_h=36.0, duration_h=12.0, slope_deg=35.0,
    ...     cohesion_kpa=3.0, friction_deg=33.0, unit_weight_kn_m3=19.0,
    ...     water_table_depth_m=1.5, rain_mm_h=30.0, hydraulic_conductivity_m_s=1e-5,
    ...     diffusivity_m2_s=5e-5)
    >>> round(float(s.window_min_fs), 3), round(float(s.time_to_failure_h), 1)
    (0.971, 12.7)
    """
    soil = checked("soil_depth_m", soil_depth_m, 0.0, low_open=True)
    later = float(checked("later_h", later_h, 0.0))
    end = float(checked("duration_h", duration_h, 0.0))
    shallowest = float(checked("min_slip_depth_m", min_slip_depth_m, 0.0, low_open=True))
    if later < end:
        raise ValueError(f"later_h ({later:g}) must not be before the end of the storm ({end:g})")
    unknown = set(kwargs) - _COLUMN_KEYS
    if unknown:
        raise TypeError(f"storm_summary got unexpected arguments {sorted(unknown)}")
    shape = np.broadcast_shapes(
        soil.shape, *(np.shape(v) for v in kwargs.values() if v is not None)
    )
    if math.prod(shape) <= CHUNK_CELLS:
        return _summary_block(soil, later, end, shallowest, shape, kwargs)

    def block(chunk: dict[str, np.ndarray | None], part: slice) -> StormSummary:
        soil_part = chunk.pop("soil_depth_m")
        n = part.stop - part.start
        return _summary_block(soil_part, later, end, shallowest, (n,), chunk)  # type: ignore[arg-type]

    return summary_in_chunks(shape, CHUNK_CELLS, {"soil_depth_m": soil, **kwargs}, block)


def summary_in_chunks(
    shape: tuple[int, ...],
    chunk_cells: int,
    arrays: dict[str, ArrayLike | None],
    block: Callable[[dict[str, np.ndarray | None], slice], StormSummary],
) -> StormSummary:
    """A summary of many cells worked through ``chunk_cells`` at a time (bounded memory):
    each of ``arrays`` broadcast to ``shape`` and flattened, ``block`` called on each
    part of it (with the part's slice of the flattened cells), the parts joined in order."""
    size = math.prod(shape)
    flat = {
        k: (None if v is None else np.broadcast_to(np.asarray(v, float), shape).ravel())
        for k, v in arrays.items()
    }
    parts = []
    for start in range(0, size, chunk_cells):
        part = slice(start, min(start + chunk_cells, size))
        parts.append(block({k: (None if v is None else v[part]) for k, v in flat.items()}, part))
    return StormSummary(*(np.concatenate(f).reshape(shape) for f in zip(*parts, strict=True)))


def _summary_block(
    soil: np.ndarray,
    later: float,
    end: float,
    shallowest: float,
    shape: tuple[int, ...],
    kwargs: dict[str, ArrayLike],
) -> StormSummary:
    """:func:`storm_summary` for one block of cells."""
    cols = StormColumns(end, later, shape, **kwargs)
    base = np.broadcast_to(soil, shape).astype(float)
    return columns_summary(cols, base, shallowest, end, later, partial(_first_failure, cols))


FirstFailure = Callable[
    [np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray], np.ndarray
]  # (todo, top, base, z_min, t_min) -> first time FS < 1 on the cells todo


def columns_summary(
    cols: StormColumns,
    base: np.ndarray,
    shallowest: float,
    end: float,
    later: float,
    first_failure: FirstFailure,
) -> StormSummary:
    """The summary of columns under a storm or a rainfall history: minima over depth at
    the start, at ``end`` and at ``later``, over depth and time (the plane's lowest FS,
    :meth:`StormColumns.peak_fs`, kept no higher than the fixed-time minima), and the time
    to failure with its codes, by ``first_failure`` on the cells that need it."""
    top = np.minimum(shallowest, base)

    def at(t_h: float) -> tuple[np.ndarray, np.ndarray]:
        return depth_minimum(lambda z: cols.fs(z, t_h), top, base)

    initial, z_initial = at(0.0)
    end_fs, z_end = at(end)
    later_fs, z_later = at(later) if later > end else (end_fs, z_end)
    window, z_min = depth_minimum(cols.peak_fs, top, base)
    t_min = cols.peak_time_h(z_min)
    for value, z, t in ((later_fs, z_later, later), (end_fs, z_end, end), (initial, z_initial, 0)):
        lower = value < window  # a fixed-time search found lower: keep the window consistent
        window = np.where(lower, value, window)
        z_min, t_min = np.where(lower, z, z_min), np.where(lower, t, t_min)
    failure = np.where(window < 1.0, np.inf, NOT_BY_LATER)
    failure = np.where(initial < 1.0, FAILS_BEFORE_STORM, failure)
    todo = np.isinf(failure)
    if todo.any():
        failure[todo] = first_failure(todo, top, base, z_min, t_min)
    return StormSummary(initial, end_fs, z_end, later_fs, failure, window, z_min, t_min)


def _first_failure(
    cols: StormColumns,
    todo: np.ndarray,
    top: np.ndarray,
    base: np.ndarray,
    z_min: np.ndarray,
    t_min: np.ndarray,
) -> np.ndarray:
    """First time FS < 1 on the cells ``todo`` (FS >= 1 at the start, < 1 at the window
    minimum (z_min, t_min)): on a plane FS falls until the head's peak, so the crossing
    before the peak is bisected (the earlier end of the bracket kept); the earliest of
    ``FAILURE_PLANES`` planes and the critical one, then golden-section search over depth
    around the earliest plane."""
    sub = cols.subset(todo)

    def crossing(z: np.ndarray, hi: np.ndarray | None = None) -> np.ndarray:
        hi = sub.peak_time_h(z) if hi is None else hi
        failing = sub.fs(z, hi) < 1.0
        lo = np.zeros_like(hi)
        for _ in range(TIME_BISECTION_STEPS):
            mid = 0.5 * (lo + hi)
            below = sub.fs(z, mid) < 1.0
            hi, lo = np.where(below, mid, hi), np.where(below, lo, mid)
        return np.where(failing, lo, np.inf)

    zs = slip_planes(top[todo], base[todo], FAILURE_PLANES)
    times = crossing(zs)
    k = np.argmin(times, axis=0)
    a = np.take_along_axis(zs, np.maximum(k - 1, 0)[None], axis=0)[0]
    b = np.take_along_axis(zs, np.minimum(k + 1, FAILURE_PLANES - 1)[None], axis=0)[0]
    refined, _ = golden_minimum(crossing, a, b, DEPTH_REFINE_STEPS // 2)
    critical = crossing(z_min[todo], t_min[todo].copy())  # FS < 1 at the minimum's time
    return np.minimum(np.minimum(times.min(axis=0), refined), critical)
