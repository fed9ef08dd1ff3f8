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
state of the rain added to the initial water table (Montgomery & Dietrich 1994 is linear in
recharge: m_ss = m_0 + I a / (T sin alpha), T = K z cos alpha, m_0 the initial table's
share of the soil depth), never below the initial state: failure at Z then also needs
I >= I_ss(Z), the intensity whose steady rise above m_0 gives psi_c at Z. The cap only
removes water, so it never lowers I_c. As the duration shrinks, G_max tends to 0 and I_c
exceeds K_z (code ``NO_INTENSITY_FAILS``); as it grows without bound from a table at the
base, I_c tends to the critical steady recharge of
:func:`slopescreen.scenario.critical_recharge_mm_day` divided by 24 (slowly: Iverson's
response has no lateral inflow).

The minimum over depth is :func:`slopescreen.storm.depth_minimum` on ``DEPTH_SCAN`` planes
from the shallowest slip plane (``min_slip_depth_m``, the storm's) to the base, the
``DEPTH_BRACKETS`` lowest local minima refined by golden section (``REFINE_STEPS``); "fails
before any rain" is the storm search's own initial minimum, so storms and critical
intensities agree. Tested against a dense scan of the same closed form, against bisection
on :func:`slopescreen.storm.storm_factor_of_safety`, and against the storm search on 3,000
random cells (tests/test_storm_search.py).

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

from slopescreen import storm
from slopescreen._checks import checked
from slopescreen.inverse import critical_saturation
from slopescreen.storm import (
    DEPTH_BRACKETS as DEPTH_BRACKETS_FS,
)
from slopescreen.storm import (
    DEPTH_PLANES,
    DEPTH_REFINE_STEPS,
    MIN_SLIP_DEPTH_M,
    SECONDS_PER_HOUR,
    StormColumns,
    depth_minimum,
    peak_response,
)

# the peak of the response lives with the storm physics; its documented import paths here
LOG_STORM = storm.LOG_STORM
PEAK_OFFSET = storm.PEAK_OFFSET
_peak_time_by_bisection = storm._peak_time_by_bisection
response_function = storm.response_function
response_rate = storm.response_rate

FAILS_WITHOUT_RAIN = -1.0  # FS < 1 somewhere before the storm
NO_INTENSITY_FAILS = -2.0  # no intensity up to K_z (or the steady cap) brings FS to 1
DEPTH_SCAN = 24  # planes from the shallowest slip depth to the soil base, both included
DEPTH_BRACKETS = 3  # lowest local minima of the scan refined
REFINE_STEPS = 24  # golden-section steps in each bracket of two plane spacings


def kernel_search() -> np.ndarray:
    """The depth searches as the compiled twin takes them: (planes, brackets, steps) of the
    storm's initial minimum, then of the intensity."""
    return np.array([DEPTH_PLANES, DEPTH_BRACKETS_FS, DEPTH_REFINE_STEPS, DEPTH_SCAN,
                     DEPTH_BRACKETS, REFINE_STEPS], np.int64)  # fmt: skip


def _critical_m(z: np.ndarray, p: dict) -> np.ndarray:
    """Saturation bringing FS to 1 on the plane at depth z (raw; NaN where none)."""
    soil = {
        "saturated_unit_weight_kn_m3": p["gamma_sat"],
        "root_cohesion_kpa": p["c_root"],
        "seismic_coefficient": p["seismic"],
    }
    with np.errstate(divide="ignore", invalid="ignore"):  # flat ground: no solution (NaN)
        m_c = critical_saturation(p["slope"], z, p["c"], p["phi"], p["gamma"], **soil)
    return np.asarray(m_c, float)


def _at_depth(z: np.ndarray, p: dict, m_c: np.ndarray | None = None) -> np.ndarray:
    """I_c (m/s) at vertical depth z (arrays broadcast with the cells); +inf where none.
    ``m_c`` is the plane's critical saturation where the caller has it already."""
    cos2 = p["cos2"]
    if m_c is None:
        m_c = _critical_m(z, p)
    psi_c = m_c * z * cos2
    psi0 = (z - p["d"]) * p["beta"]
    scale = p["d_hat"] / (z * z)
    g = peak_response(p["duration_s"] * scale, p["window_s"] * scale)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # g -> 0: none
        i_c = p["k"] * (psi_c - psi0) / (z * g)
        if p["sca"] is not None:  # the steady water table of the rain added to the initial
            need = (psi_c / cos2 - z + p["z_soil"]) / p["z_soil"]  # m_ss giving psi_c at z
            rise = np.maximum(need - p["m0"], 0.0)
            i_ss = rise * p["t_m2_s"] * np.sqrt(1.0 - cos2) / p["sca"]
            i_c = np.where(need <= 1.0, np.maximum(i_c, i_ss), np.nan)
        ok = np.isfinite(m_c) & (m_c >= 0.0) & (psi_c <= p["beta"] * z) & (i_c <= p["k"])
    return np.where(ok & (g > 0), np.maximum(i_c, 0.0), np.inf)


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
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M,
) -> np.ndarray:
    """Smallest constant rain intensity (mm/h) of a storm of ``duration_h`` that brings the
    minimum FS over depth (slip planes from ``min_slip_depth_m``, or the soil depth if
    shallower, to ``depth_m``, the soil's base) and over time (from the start to
    ``after_h`` after the end) to 1; ``FAILS_WITHOUT_RAIN`` (-1) where FS is already below
    1 before the storm, ``NO_INTENSITY_FAILS`` (-2) where no intensity up to K_z does (flat
    ground included). Arguments as in :func:`slopescreen.storm.storm_factor_of_safety`;
    with ``specific_catchment_area_m`` (a/b, m) the steady water table of the same rain
    added to the initial one caps the rise (see the module docstring), T from
    ``transmissivity_m2_day`` or K z cos(alpha).

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
    shallowest = float(checked("min_slip_depth_m", min_slip_depth_m, 0.0, low_open=True))
    shape = np.broadcast_shapes(
        *(
            np.shape(x)
            for x in (
                slope,
                z_soil,
                k,
                d0,
                d,
                i_lt,
                cohesion_kpa,
                friction_deg,
                unit_weight_kn_m3,
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                seismic_coefficient,
                specific_catchment_area_m,
                transmissivity_m2_day,
            )
            if x is not None
        )
    )

    def cells(x: ArrayLike) -> np.ndarray:
        return np.broadcast_to(np.asarray(x, float), shape)

    cos2 = np.cos(np.radians(slope)) ** 2
    p = {
        "slope": cells(slope),
        "cos2": cells(cos2),
        "c": cells(cohesion_kpa),
        "phi": cells(friction_deg),
        "gamma": cells(unit_weight_kn_m3),
        "gamma_sat": None
        if saturated_unit_weight_kn_m3 is None
        else cells(saturated_unit_weight_kn_m3),
        "c_root": cells(root_cohesion_kpa),
        "seismic": cells(seismic_coefficient),
        "d": cells(d),
        "beta": cells(cos2 - i_lt / k),
        "k": cells(k),
        "d_hat": cells(4.0 * d0 * cos2),
        "duration_s": duration,
        "window_s": duration + after,
        "z_soil": cells(z_soil),
        "m0": cells(np.clip((z_soil - d) / z_soil, 0.0, 1.0)),
        "sca": None,
    }
    if specific_catchment_area_m is not None:
        p["sca"] = cells(
            checked("specific_catchment_area_m", specific_catchment_area_m, 0.0, low_open=True)
        )
        t_day = np.full(shape, np.nan) if transmissivity_m2_day is None else transmissivity_m2_day
        p["t_m2_s"] = cells(
            np.where(
                np.isnan(t_day), k * z_soil * np.sqrt(cos2), np.asarray(t_day, float) / 86400.0
            )
        )
    top = np.minimum(shallowest, p["z_soil"])

    # before the storm: the storm search's own initial minimum (the same planes and steps)
    before = StormColumns(
        0.0,
        0.0,
        shape,
        slope_deg=slope,
        cohesion_kpa=cohesion_kpa,
        friction_deg=friction_deg,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
        seismic_coefficient=seismic_coefficient,
        water_table_depth_m=d,
        rain_mm_h=0.0,
        hydraulic_conductivity_m_s=k,
        diffusivity_m2_s=d0,
        long_term_infiltration_m_s=i_lt,
    )
    initial, _ = depth_minimum(lambda z: before.fs(z, 0.0), top, p["z_soil"])
    best, _ = depth_minimum(
        lambda z: _at_depth(z, p), top, p["z_soil"], DEPTH_SCAN, DEPTH_BRACKETS, REFINE_STEPS
    )
    result = best * 1000.0 * SECONDS_PER_HOUR
    out = np.where(np.isfinite(result), result, NO_INTENSITY_FAILS)
    return np.where(initial < 1.0, FAILS_WITHOUT_RAIN, out)
