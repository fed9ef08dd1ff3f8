"""Inverse infinite-slope solutions: the value of one input that brings FS to a target.

Each function takes the same arguments as :func:`slopescreen.stability.factor_of_safety`
except the one it solves for, plus ``target_fs`` (default 1.0), and broadcasts over arrays.
Plugging the result back into ``factor_of_safety`` gives ``target_fs`` wherever a solution
exists. Where none exists the result is NaN (never an exception from a root finder); each
docstring says when.

Method: along depth and saturation the stresses on the slip plane are linear, so
FS = (C + max(S0 + S1 x, 0) tan phi') / (T0 + T1 x) is solved in closed form on each side
of the zero-effective-stress kink. Along the slope angle the stresses are trigonometric in
2 beta, and FS = target reduces to P sin(2 beta) + Q cos(2 beta) = R, solved exactly.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen.stability import (
    WATER_UNIT_WEIGHT_KN_M3,
    checked_column,
    factor_of_safety,
    stresses_unclipped,
)

_TOL = 1e-12


def _strength_terms(
    cohesion_kpa: ArrayLike,
    root_cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    target_fs: ArrayLike,
) -> tuple[np.ndarray, ...]:
    c = checked("cohesion_kpa", cohesion_kpa, 0.0)
    c_root = checked("root_cohesion_kpa", root_cohesion_kpa, 0.0)
    tan_phi = np.tan(np.radians(checked("friction_deg", friction_deg, 0.0, 90.0, high_open=True)))
    target = checked("target_fs", target_fs, 0.0, low_open=True)
    return c + c_root, tan_phi, target


def _solve_linear(
    c_total: np.ndarray,
    tan_phi: np.ndarray,
    target: np.ndarray,
    s0: np.ndarray,
    s1: np.ndarray,
    t0: np.ndarray,
    t1: np.ndarray,
) -> np.ndarray:
    """x solving c_total + max(s0 + s1 x, 0) tan_phi = target (t0 + t1 x); NaN if none."""
    with np.errstate(all="ignore"):
        x_open = (target * t0 - c_total - s0 * tan_phi) / (s1 * tan_phi - target * t1)
        x_shut = (c_total - target * t0) / (target * t1)
        scale = np.maximum(np.abs(s0) + np.abs(s1 * x_open), 1.0)
        # a root is real only where the driving stress is positive (FS defined there)
        open_ok = (
            np.isfinite(x_open) & (s0 + s1 * x_open >= -1e-9 * scale) & (t0 + t1 * x_open > 0.0)
        )
        shut_ok = (
            np.isfinite(x_shut)
            & (s0 + s1 * x_shut <= 1e-9 * np.maximum(np.abs(s0), 1.0))
            & (t0 + t1 * x_shut > 0.0)
        )
    return np.where(open_ok, x_open, np.where(shut_ok, x_shut, np.nan))


def _linear_in(unknown: str, **column_args: ArrayLike | None) -> tuple[np.ndarray, ...]:
    """(s0, s1, t0, t1): sigma - u = s0 + s1 x and tau_d = t0 + t1 x along ``unknown`` = x.

    Both are linear in depth and in saturation, so two evaluations fix them exactly.
    """
    (s0, t0), (s_1, t_1) = (
        stresses_unclipped(checked_column(**column_args, **{unknown: x}))[2:] for x in (0.0, 1.0)
    )
    return s0, s_1 - s0, t0, t_1 - t0


def critical_saturation(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    *,
    target_fs: ArrayLike = 1.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Saturation ratio m = h_w / z at which FS equals ``target_fs``.

    Returns the raw solution of the (linear in m) equilibrium: a value below 0 means the
    slope is below the target even when dry; above 1 means it stays above the target even
    when fully saturated; +inf on flat ground without seismic load (nothing drives a
    slide, however wet). NaN where FS does not depend on m (e.g. phi' = 0 with
    gamma_sat = gamma, or zero depth) or no m gives the target.

    >>> round(critical_saturation(30.0, 2.0, 5.0, 35.0, 18.0, saturated_unit_weight_kn_m3=20.0), 4)
    0.8372
    >>> critical_saturation(0.0, 2.0, 0.0, 35.0, 18.0)
    inf
    """
    c_total, tan_phi, target = _strength_terms(
        cohesion_kpa, root_cohesion_kpa, friction_deg, target_fs
    )
    coefficients = _linear_in(
        "saturation",
        slope_deg=slope_deg,
        depth_m=depth_m,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        surcharge_kpa=surcharge_kpa,
        seismic_coefficient=seismic_coefficient,
        water_unit_weight_kn_m3=water_unit_weight_kn_m3,
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        m = _solve_linear(c_total, tan_phi, target, *coefficients)
    return as_result(np.where(_undriven(slope_deg, seismic_coefficient), np.inf, m))


def _undriven(slope_deg: ArrayLike, seismic_coefficient: ArrayLike) -> np.ndarray:
    """Flat ground without seismic load: no driving stress on any plane."""
    return (np.asarray(slope_deg, float) == 0.0) & (np.asarray(seismic_coefficient, float) == 0.0)


def critical_depth(
    slope_deg: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    target_fs: ArrayLike = 1.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Vertical depth z (m) of the slip plane at which FS equals ``target_fs``.

    With cohesion FS falls with depth towards the cohesionless value, so the critical depth
    is the shallowest plane that reaches the target. +inf on flat ground without seismic
    load (no plane is driven). NaN where no depth >= 0 does: the slope stays above the
    target at every depth (e.g. cohesionless soil with tan(phi')/tan(beta) above the
    target, where FS does not depend on depth) or is below it at every depth.

    >>> round(critical_depth(25.0, 9.6, 15.0, 15.7, target_fs=2.0), 3)
    1.12
    """
    c_total, tan_phi, target = _strength_terms(
        cohesion_kpa, root_cohesion_kpa, friction_deg, target_fs
    )
    coefficients = _linear_in(
        "depth_m",
        slope_deg=slope_deg,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturation=saturation,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        surcharge_kpa=surcharge_kpa,
        seismic_coefficient=seismic_coefficient,
        water_unit_weight_kn_m3=water_unit_weight_kn_m3,
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        z = _solve_linear(c_total, tan_phi, target, *coefficients)
    z = np.where(z >= 0.0, z, np.nan)
    return as_result(np.where(_undriven(slope_deg, seismic_coefficient), np.inf, z))


def required_cohesion_kpa(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    target_fs: ArrayLike = 1.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Effective cohesion c' (kPa) that brings FS to ``target_fs``.

    c' = target tau_d - c_root - sigma' tan(phi'). A value <= 0 means friction (and roots)
    alone already reach the target: no cohesion is needed; so on flat ground without
    seismic load (no driving stress) the value is -sigma' tan(phi') - c_root <= 0.

    >>> round(required_cohesion_kpa(35.0, 1.0, 30.0, 19.0, 1.0), 3)
    5.367
    """
    zero, tan_phi, target = _strength_terms(0.0, root_cohesion_kpa, friction_deg, target_fs)
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
    _, _, sigma_eff, tau = stresses_unclipped(col)
    c = target * tau - zero - np.maximum(sigma_eff, 0.0) * tan_phi
    return as_result(c)


def required_friction_deg(
    slope_deg: ArrayLike,
    depth_m: ArrayLike,
    cohesion_kpa: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    target_fs: ArrayLike = 1.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Effective friction angle phi' (degrees) that brings FS to ``target_fs``.

    tan(phi') = (target tau_d - c' - c_root) / sigma'. A value <= 0 means cohesion (and
    roots) alone already reach the target: no friction is needed (flat ground without
    seismic load included: the value is then <= 0). NaN where sigma' <= 0 (friction
    carries nothing: the plane is fully unloaded by water or by the seismic load).

    >>> round(required_friction_deg(35.0, 1.0, 5.367, 19.0, 1.0), 2)
    30.0
    """
    c_total, _, target = _strength_terms(cohesion_kpa, root_cohesion_kpa, 0.0, target_fs)
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
    _, _, sigma_eff, tau = stresses_unclipped(col)
    with np.errstate(all="ignore"):
        phi = np.degrees(np.arctan((target * tau - c_total) / sigma_eff))
    return as_result(np.where(sigma_eff > 0.0, phi, np.nan))


def _first_root(
    p: np.ndarray, q: np.ndarray, r: np.ndarray, low: np.ndarray, high: np.ndarray
) -> np.ndarray:
    """Smallest x in [low, high] with p sin x + q cos x = r; NaN where none."""
    amplitude = np.hypot(p, q)
    with np.errstate(all="ignore"):
        ratio = r / amplitude
    ratio = np.where(np.abs(ratio) <= 1.0 + _TOL, np.clip(ratio, -1.0, 1.0), np.nan)
    base = np.arcsin(ratio)
    shift = np.arctan2(q, p)
    candidates = []
    for turn in (-2.0 * np.pi, 0.0, 2.0 * np.pi):
        for branch in (base, np.pi - base):
            x = branch - shift + turn
            inside = (x >= low - 1e-12) & (x <= high + 1e-12)
            candidates.append(np.where(inside, np.clip(x, low, high), np.inf))
    best = np.min(np.stack(np.broadcast_arrays(*candidates)), axis=0)
    return np.where(np.isfinite(best), best, np.nan)


def critical_slope_deg(
    depth_m: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    saturation: ArrayLike = 0.0,
    *,
    target_fs: ArrayLike = 1.0,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    surcharge_kpa: ArrayLike = 0.0,
    seismic_coefficient: ArrayLike = 0.0,
    water_unit_weight_kn_m3: ArrayLike = WATER_UNIT_WEIGHT_KN_M3,
) -> ArrayLike:
    """Smallest slope angle beta (degrees) at which FS falls to ``target_fs``.

    With c' > 0 and a fixed vertical depth, FS(beta) is not monotonic: it falls from +inf on
    flat ground to a minimum and rises again towards 90 degrees as the column's load on the
    plane shrinks. This returns the first crossing. 0 where FS is already at or below the
    target on flat ground (possible with a seismic coefficient); NaN where the minimum of
    FS stays above the target (no slope fails).

    Notes
    -----
    With x = 2 beta, W the vertical load, A = W - gamma_w m z, C = c' + c_root, t = tan phi'
    and F the target, the equilibrium with sigma' > 0 is
    (F W + t W k) sin x + (F W k - t A) cos x = 2C + t A - F W k,
    and on steep planes where the seismic term drives sigma' to zero (tan beta > A/(W k))
    F W sin x + F W k cos x = 2C - F W k.

    >>> round(critical_slope_deg(1.0, 0.0, 30.0, 18.0), 6)
    30.0
    """
    c_total, tan_phi, target = _strength_terms(
        cohesion_kpa, root_cohesion_kpa, friction_deg, target_fs
    )
    flat = checked_column(
        0.0,
        depth_m,
        unit_weight_kn_m3,
        saturation,
        saturated_unit_weight_kn_m3,
        surcharge_kpa,
        seismic_coefficient,
        water_unit_weight_kn_m3,
    )
    load, _, drained, _ = stresses_unclipped(flat)  # at beta = 0: W, u, W - u
    k = flat.seismic
    with np.errstate(all="ignore"):
        kink = np.where(k > 0.0, 2.0 * np.arctan(drained / (load * k)), np.pi)
    kink = np.where(np.isnan(kink), 0.0, kink)
    pi = np.full(np.shape(kink), np.pi)
    fw = target * load
    x_open = _first_root(
        fw + tan_phi * load * k,
        fw * k - tan_phi * drained,
        2.0 * c_total + tan_phi * drained - fw * k,
        0.0,
        np.minimum(kink, pi),
    )
    x_shut = _first_root(fw, fw * k, 2.0 * c_total - fw * k, kink, pi)
    x = np.where(np.isnan(x_open), x_shut, x_open)
    beta = np.degrees(x / 2.0)
    beta = np.where(beta >= 90.0 - 1e-9, np.nan, beta)
    fs_flat = factor_of_safety(
        0.0,
        depth_m,
        cohesion_kpa,
        friction_deg,
        unit_weight_kn_m3,
        saturation,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
        surcharge_kpa=surcharge_kpa,
        seismic_coefficient=seismic_coefficient,
        water_unit_weight_kn_m3=water_unit_weight_kn_m3,
    )
    beta = np.where(np.asarray(fs_flat) <= target, 0.0, beta)
    return as_result(beta)
