"""Spreadsheet cell functions for slopescreen (xlwings user-defined functions).

Every function here is a thin wrapper: it turns cell values into numbers or arrays, calls
the slopescreen core, and turns the answer back into cells. No physics lives here.

Conventions for all functions:

- a single cell or a range may be given for any numeric argument; ranges broadcast like
  numpy arrays and the result spills as an array of the same shape;
- an empty optional cell takes the default shown in the argument's description;
- bad input returns one readable text in the cell, starting with ``#SLOPESCREEN``,
  naming the argument and its allowed range, instead of raising;
- "no solution" marks an inverse value that does not exist (see the core docstrings),
  "no driving stress" a factor of safety on flat ground.

Screening level only: not a slope design. Verify on site and defer to local codes and
licensed geotechnical practice.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import xlwings as xw

import slopescreen as core
from slopescreen.ranges import check_ranges

ERROR_PREFIX = "#SLOPESCREEN"
NO_SOLUTION = "no solution"
NO_DRIVING_STRESS = "no driving stress"
_REQUIRED = object()


def _is_empty(cell: Any) -> bool:
    if cell is None or (isinstance(cell, str) and not cell.strip()):
        return True
    if isinstance(cell, list | tuple):
        flat = np.asarray(cell, dtype=object).ravel()
        return all(_is_empty(c) for c in flat)
    return False


def _value(name: str, cell: Any, default: Any) -> Any:
    """Cell value(s) as a float or float array; empty cells give ``default``."""
    if _is_empty(cell):
        if default is _REQUIRED:
            raise core.InputError(f"{name}: the cell is empty; a number is required")
        return default
    if isinstance(cell, list | tuple):
        grid = np.asarray(cell, dtype=object)
        if any(_is_empty(c) for c in grid.ravel()):
            raise core.InputError(f"{name}: the range has an empty cell; fill every cell")
        try:
            arr = grid.astype(float)
        except (TypeError, ValueError):
            raise core.InputError(f"{name}: the range holds text; numbers are required") from None
        return float(arr.ravel()[0]) if arr.size == 1 else arr
    if isinstance(cell, bool):
        raise core.InputError(f"{name}: TRUE/FALSE given; a number is required")
    try:
        return float(cell)
    except (TypeError, ValueError):
        raise core.InputError(f"{name}: {cell!r} is not a number") from None


def _cell(x: float, nan_text: str) -> float | str:
    if np.isnan(x):
        return nan_text
    if np.isinf(x):
        return NO_DRIVING_STRESS
    return float(x)


def _to_cells(result: Any, nan_text: str = NO_SOLUTION) -> Any:
    arr = np.asarray(result, dtype=float)
    if arr.size == 1:
        return _cell(float(arr.ravel()[0]), nan_text)
    grid = arr.reshape(arr.shape[0], -1) if arr.ndim != 1 else arr.reshape(1, -1)
    return [[_cell(v, nan_text) for v in row] for row in grid]


def _error(exc: Exception) -> str:
    return f"{ERROR_PREFIX}: {exc}"


def _call(
    fn: Callable[..., Any],
    cells: dict[str, tuple[Any, Any]],
    convert: Callable[[Any], Any] = _to_cells,
) -> Any:
    """Convert ``cells`` {core argument: (cell, default)}, call ``fn``, convert back."""
    try:
        kwargs = {name: _value(name, cell, default) for name, (cell, default) in cells.items()}
        check_ranges(kwargs)  # the same ranges as the shell and the soil table
        return convert(fn(**kwargs))
    except ValueError as exc:  # core.InputError is a ValueError
        return _error(exc)


def _ranges(*names: str) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Declare arguments as 2-D ranges so a column stays a column when the result spills."""

    def wrap(func: Callable[..., Any]) -> Callable[..., Any]:
        for name in reversed(names):
            func = xw.arg(name, ndim=2)(func)
        return func

    return wrap


_SOIL = (
    "saturated_unit_weight_kn_m3",
    "root_cohesion_kpa",
    "surcharge_kpa",
    "seismic_coefficient",
    "water_unit_weight_kn_m3",
)


def _soil(
    saturated_unit_weight_kn_m3: Any,
    root_cohesion_kpa: Any,
    surcharge_kpa: Any,
    seismic_coefficient: Any,
    water_unit_weight_kn_m3: Any,
) -> dict[str, tuple[Any, Any]]:
    """The optional soil/load cells shared by the slope functions, with their defaults."""
    return {
        "saturated_unit_weight_kn_m3": (saturated_unit_weight_kn_m3, None),
        "root_cohesion_kpa": (root_cohesion_kpa, 0.0),
        "surcharge_kpa": (surcharge_kpa, 0.0),
        "seismic_coefficient": (seismic_coefficient, 0.0),
        "water_unit_weight_kn_m3": (water_unit_weight_kn_m3, 9.81),
    }


@xw.func
@_ranges(
    "slope_deg",
    "depth_m",
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "saturation",
    *_SOIL,
)
def SS_FS(
    slope_deg,
    depth_m,
    cohesion_kpa,
    friction_deg,
    unit_weight_kn_m3,
    saturation=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
    surcharge_kpa=None,
    seismic_coefficient=None,
    water_unit_weight_kn_m3=None,
):
    """Infinite-slope factor of safety. Depth is vertical; saturation m = hw/z (default 0)."""
    return _call(
        core.factor_of_safety,
        {
            "slope_deg": (slope_deg, _REQUIRED),
            "depth_m": (depth_m, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturation": (saturation, 0.0),
            **_soil(
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                surcharge_kpa,
                seismic_coefficient,
                water_unit_weight_kn_m3,
            ),
        },
    )


@xw.func
@_ranges(
    "slope_deg", "depth_m", "cohesion_kpa", "friction_deg", "unit_weight_kn_m3", "target_fs", *_SOIL
)
def SS_CRIT_SATURATION(
    slope_deg,
    depth_m,
    cohesion_kpa,
    friction_deg,
    unit_weight_kn_m3,
    target_fs=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
    surcharge_kpa=None,
    seismic_coefficient=None,
    water_unit_weight_kn_m3=None,
):
    """Saturation ratio m giving FS = target (default 1); <0 fails dry, >1 holds saturated."""
    return _call(
        core.critical_saturation,
        {
            "slope_deg": (slope_deg, _REQUIRED),
            "depth_m": (depth_m, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "target_fs": (target_fs, 1.0),
            **_soil(
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                surcharge_kpa,
                seismic_coefficient,
                water_unit_weight_kn_m3,
            ),
        },
    )


@xw.func
@_ranges(
    "slope_deg",
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "saturation",
    "target_fs",
    *_SOIL,
)
def SS_CRIT_DEPTH(
    slope_deg,
    cohesion_kpa,
    friction_deg,
    unit_weight_kn_m3,
    saturation=None,
    target_fs=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
    surcharge_kpa=None,
    seismic_coefficient=None,
    water_unit_weight_kn_m3=None,
):
    """Vertical depth (m) of the slip plane at which FS = target (default 1)."""
    return _call(
        core.critical_depth,
        {
            "slope_deg": (slope_deg, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturation": (saturation, 0.0),
            "target_fs": (target_fs, 1.0),
            **_soil(
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                surcharge_kpa,
                seismic_coefficient,
                water_unit_weight_kn_m3,
            ),
        },
    )


@xw.func
@_ranges(
    "depth_m",
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "saturation",
    "target_fs",
    *_SOIL,
)
def SS_CRIT_SLOPE(
    depth_m,
    cohesion_kpa,
    friction_deg,
    unit_weight_kn_m3,
    saturation=None,
    target_fs=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
    surcharge_kpa=None,
    seismic_coefficient=None,
    water_unit_weight_kn_m3=None,
):
    """Smallest slope angle (deg) at which FS falls to target (default 1)."""
    return _call(
        core.critical_slope_deg,
        {
            "depth_m": (depth_m, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturation": (saturation, 0.0),
            "target_fs": (target_fs, 1.0),
            **_soil(
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                surcharge_kpa,
                seismic_coefficient,
                water_unit_weight_kn_m3,
            ),
        },
    )


@xw.func
@_ranges(
    "slope_deg", "depth_m", "friction_deg", "unit_weight_kn_m3", "saturation", "target_fs", *_SOIL
)
def SS_REQ_COHESION(
    slope_deg,
    depth_m,
    friction_deg,
    unit_weight_kn_m3,
    saturation=None,
    target_fs=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
    surcharge_kpa=None,
    seismic_coefficient=None,
    water_unit_weight_kn_m3=None,
):
    """Cohesion c' (kPa) that brings FS to target (default 1); <=0 means none is needed."""
    return _call(
        core.required_cohesion_kpa,
        {
            "slope_deg": (slope_deg, _REQUIRED),
            "depth_m": (depth_m, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturation": (saturation, 0.0),
            "target_fs": (target_fs, 1.0),
            **_soil(
                saturated_unit_weight_kn_m3,
                root_cohesion_kpa,
                surcharge_kpa,
                seismic_coefficient,
                water_unit_weight_kn_m3,
            ),
        },
    )


@xw.func
@_ranges("normal_stress_kpa", "cohesion_kpa", "friction_deg", "pore_pressure_kpa")
def SS_SHEAR_STRENGTH(normal_stress_kpa, cohesion_kpa, friction_deg, pore_pressure_kpa=None):
    """Mohr-Coulomb strength c' + max(sigma - u, 0) tan(phi'), kPa."""
    return _call(
        core.shear_strength_kpa,
        {
            "normal_stress_kpa": (normal_stress_kpa, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "pore_pressure_kpa": (pore_pressure_kpa, 0.0),
        },
    )


@xw.func
@_ranges("total_stress_kpa", "pore_pressure_kpa")
def SS_EFF_STRESS(total_stress_kpa, pore_pressure_kpa):
    """Effective stress sigma - u, kPa."""
    return _call(
        core.effective_stress_kpa,
        {
            "total_stress_kpa": (total_stress_kpa, _REQUIRED),
            "pore_pressure_kpa": (pore_pressure_kpa, _REQUIRED),
        },
    )


def _field(index: int) -> Callable[[Any], Any]:
    return lambda result: _to_cells(result[index])


@xw.func
@_ranges("sigma3_kpa", "sigma1_kpa")
def SS_MOHR_CENTRE(sigma3_kpa, sigma1_kpa):
    """Centre of the Mohr circle (sigma1 + sigma3)/2, kPa."""
    return _call(
        core.mohr_circle,
        {"sigma1_kpa": (sigma1_kpa, _REQUIRED), "sigma3_kpa": (sigma3_kpa, _REQUIRED)},
        _field(0),
    )


@xw.func
@_ranges("sigma3_kpa", "sigma1_kpa")
def SS_MOHR_RADIUS(sigma3_kpa, sigma1_kpa):
    """Radius of the Mohr circle (sigma1 - sigma3)/2, kPa."""
    return _call(
        core.mohr_circle,
        {"sigma1_kpa": (sigma1_kpa, _REQUIRED), "sigma3_kpa": (sigma3_kpa, _REQUIRED)},
        _field(1),
    )


@xw.func
@_ranges("friction_deg")
def SS_PLANE_ANGLE(friction_deg):
    """Failure-plane angle from the major principal plane, 45 + phi'/2 degrees."""
    return _call(core.failure_plane_angle_deg, {"friction_deg": (friction_deg, _REQUIRED)})


def _pairs(result: Any) -> Any:
    normal, shear = (np.asarray(v, dtype=float).ravel() for v in result)
    return [[float(n), float(s)] for n, s in zip(normal, shear, strict=True)]


@xw.func
@_ranges("sigma3_eff_kpa", "sigma1_eff_kpa", "friction_deg")
def SS_PLANE_STRESSES(sigma3_eff_kpa, sigma1_eff_kpa, friction_deg):
    """Effective normal and shear stress on the failure plane: one row [normal, shear] per test."""
    return _call(
        core.failure_plane_stresses,
        {
            "sigma1_eff_kpa": (sigma1_eff_kpa, _REQUIRED),
            "sigma3_eff_kpa": (sigma3_eff_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
        },
        _pairs,
    )


def _fit_table(fit: core.EnvelopeFit) -> list[list[Any]]:
    def number(x: float) -> float | str:
        return float(x) if np.isfinite(x) else "n/a (2 tests)"

    return [
        ["cohesion_kpa", float(fit.cohesion_kpa)],
        ["friction_deg", float(fit.friction_deg)],
        ["cohesion_se_kpa", number(fit.cohesion_se_kpa)],
        ["friction_se_deg", number(fit.friction_se_deg)],
        ["r2", float(fit.r2)],
        ["n", fit.n],
        ["warnings", "; ".join(fit.warnings) or "none"],
    ]


@xw.func
@_ranges("sigma3_kpa", "sigma1_kpa", "pore_pressure_kpa")
def SS_ENVELOPE(sigma3_kpa, sigma1_kpa, pore_pressure_kpa=None):
    """Fit c', phi' to triaxial tests (total stresses at failure, optional pore pressures).

    Returns a 7 x 2 labelled table: cohesion, friction, their standard errors, r2, n, warnings.
    """
    return _call(
        core.fit_envelope,
        {
            "sigma3_kpa": (sigma3_kpa, _REQUIRED),
            "sigma1_kpa": (sigma1_kpa, _REQUIRED),
            "pore_pressure_kpa": (pore_pressure_kpa, None),
        },
        _fit_table,
    )


@xw.func
@_ranges("normal_kpa", "shear_kpa")
def SS_DIRECT_SHEAR(normal_kpa, shear_kpa):
    """Fit c', phi' to direct-shear tests; returns the same 7 x 2 table as SS_ENVELOPE."""
    return _call(
        core.fit_direct_shear,
        {"normal_kpa": (normal_kpa, _REQUIRED), "shear_kpa": (shear_kpa, _REQUIRED)},
        _fit_table,
    )


# --- probability of failure and design storms -----------------------------------------------


def _text(name: str, cell: Any, default: str, allowed: tuple[str, ...]) -> str:
    if _is_empty(cell):
        return default
    value = str(cell[0][0] if isinstance(cell, list) else cell).strip().lower()
    if value not in allowed:
        raise core.InputError(f"{name}: {value!r}; allowed: {', '.join(allowed)}")
    return value


def _reliability(
    field: str,
    slope_deg,
    depth_m,
    cohesion_kpa,
    cohesion_sd_kpa,
    friction_deg,
    friction_sd_deg,
    unit_weight_kn_m3,
    saturation,
    c_phi_correlation,
    method,
    samples,
    random_state,
    saturated_unit_weight_kn_m3,
    root_cohesion_kpa,
) -> Any:
    from slopescreen.reliability import Spread, slope_reliability

    try:
        cells = {
            "slope_deg": (slope_deg, _REQUIRED),
            "depth_m": (depth_m, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "cohesion_sd_kpa": (cohesion_sd_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "friction_sd_deg": (friction_sd_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturation": (saturation, 0.0),
            "c_phi_correlation": (c_phi_correlation, 0.0),
            "samples": (samples, 1000.0),
            "random_state": (random_state, 0.0),
            "saturated_unit_weight_kn_m3": (saturated_unit_weight_kn_m3, None),
            "root_cohesion_kpa": (root_cohesion_kpa, 0.0),
        }
        v = {name: _value(name, cell, default) for name, (cell, default) in cells.items()}
        check_ranges(v)  # names cohesion_sd_kpa, friction_sd_deg and the rest
        how = _text("method", method, "taylor", ("taylor", "monte_carlo"))
        values = {
            "slope_deg": v["slope_deg"],
            "depth_m": v["depth_m"],
            "unit_weight_kn_m3": v["unit_weight_kn_m3"],
            "saturation": v["saturation"],
            "saturated_unit_weight_kn_m3": v["saturated_unit_weight_kn_m3"],
            "root_cohesion_kpa": v["root_cohesion_kpa"],
            "cohesion_kpa": Spread.normal(v["cohesion_kpa"], v["cohesion_sd_kpa"]),
            "friction_deg": Spread.normal(v["friction_deg"], v["friction_sd_deg"]),
        }
        result = slope_reliability(
            values,
            {("cohesion_kpa", "friction_deg"): v["c_phi_correlation"]},
            method=how,
            samples=int(v["samples"]),
            random_state=int(v["random_state"]),
        )
        return _to_cells(getattr(result, field))
    except ValueError as exc:
        return _error(exc)


_PF_ARGS = (
    "slope_deg",
    "depth_m",
    "cohesion_kpa",
    "cohesion_sd_kpa",
    "friction_deg",
    "friction_sd_deg",
    "unit_weight_kn_m3",
    "saturation",
    "c_phi_correlation",
    "samples",
    "random_state",
    "saturated_unit_weight_kn_m3",
    "root_cohesion_kpa",
)


@xw.func
@_ranges(*_PF_ARGS)
def SS_PF(
    slope_deg,
    depth_m,
    cohesion_kpa,
    cohesion_sd_kpa,
    friction_deg,
    friction_sd_deg,
    unit_weight_kn_m3,
    saturation=None,
    c_phi_correlation=None,
    method=None,
    samples=None,
    random_state=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
):
    """Probability that FS < 1 with normal c' and phi' (method "taylor" or "monte_carlo")."""
    return _reliability(
        "probability_of_failure",
        slope_deg,
        depth_m,
        cohesion_kpa,
        cohesion_sd_kpa,
        friction_deg,
        friction_sd_deg,
        unit_weight_kn_m3,
        saturation,
        c_phi_correlation,
        method,
        samples,
        random_state,
        saturated_unit_weight_kn_m3,
        root_cohesion_kpa,
    )


@xw.func
@_ranges(*_PF_ARGS)
def SS_BETA(
    slope_deg,
    depth_m,
    cohesion_kpa,
    cohesion_sd_kpa,
    friction_deg,
    friction_sd_deg,
    unit_weight_kn_m3,
    saturation=None,
    c_phi_correlation=None,
    method=None,
    samples=None,
    random_state=None,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
):
    """Reliability index beta for the same inputs as SS_PF."""
    return _reliability(
        "reliability_index",
        slope_deg,
        depth_m,
        cohesion_kpa,
        cohesion_sd_kpa,
        friction_deg,
        friction_sd_deg,
        unit_weight_kn_m3,
        saturation,
        c_phi_correlation,
        method,
        samples,
        random_state,
        saturated_unit_weight_kn_m3,
        root_cohesion_kpa,
    )


def _storm_cells(
    slope_deg,
    water_table_depth_m,
    rain_mm_h,
    duration_h,
    hydraulic_conductivity_m_s,
    diffusivity_m2_s,
) -> dict[str, tuple[Any, Any]]:
    return {
        "slope_deg": (slope_deg, _REQUIRED),
        "water_table_depth_m": (water_table_depth_m, _REQUIRED),
        "rain_mm_h": (rain_mm_h, _REQUIRED),
        "duration_h": (duration_h, _REQUIRED),
        "hydraulic_conductivity_m_s": (hydraulic_conductivity_m_s, _REQUIRED),
        "diffusivity_m2_s": (diffusivity_m2_s, _REQUIRED),
    }


_STORM_ARGS = (
    "slope_deg",
    "water_table_depth_m",
    "rain_mm_h",
    "duration_h",
    "hydraulic_conductivity_m_s",
    "diffusivity_m2_s",
)


@xw.func
@_ranges("depth_m", "time_h", *_STORM_ARGS)
def SS_STORM_HEAD(
    slope_deg,
    depth_m,
    time_h,
    water_table_depth_m,
    rain_mm_h,
    duration_h,
    hydraulic_conductivity_m_s,
    diffusivity_m2_s,
):
    """Pressure head (m) at vertical depth and time of a storm (Iverson 2000 linear solution)."""
    from slopescreen.storm import pressure_head_m

    return _call(
        pressure_head_m,
        {
            "depth_m": (depth_m, _REQUIRED),
            "time_h": (time_h, _REQUIRED),
            **_storm_cells(
                slope_deg,
                water_table_depth_m,
                rain_mm_h,
                duration_h,
                hydraulic_conductivity_m_s,
                diffusivity_m2_s,
            ),
        },
    )


@xw.func
@_ranges(
    "depth_m",
    "time_h",
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    *_STORM_ARGS,
    "saturated_unit_weight_kn_m3",
    "root_cohesion_kpa",
)
def SS_STORM_FS(
    slope_deg,
    depth_m,
    time_h,
    cohesion_kpa,
    friction_deg,
    unit_weight_kn_m3,
    water_table_depth_m,
    rain_mm_h,
    duration_h,
    hydraulic_conductivity_m_s,
    diffusivity_m2_s,
    saturated_unit_weight_kn_m3=None,
    root_cohesion_kpa=None,
):
    """Factor of safety at vertical depth and time of a storm (Iverson 2000)."""
    from slopescreen.storm import storm_factor_of_safety

    return _call(
        storm_factor_of_safety,
        {
            "depth_m": (depth_m, _REQUIRED),
            "time_h": (time_h, _REQUIRED),
            "cohesion_kpa": (cohesion_kpa, _REQUIRED),
            "friction_deg": (friction_deg, _REQUIRED),
            "unit_weight_kn_m3": (unit_weight_kn_m3, _REQUIRED),
            "saturated_unit_weight_kn_m3": (saturated_unit_weight_kn_m3, None),
            "root_cohesion_kpa": (root_cohesion_kpa, 0.0),
            **_storm_cells(
                slope_deg,
                water_table_depth_m,
                rain_mm_h,
                duration_h,
                hydraulic_conductivity_m_s,
                diffusivity_m2_s,
            ),
        },
    )


# --- roots ------------------------------------------------------------------------------------


@xw.func
@_ranges("years_since_harvest", "root_cohesion_kpa", "regrown_root_cohesion_kpa")
def SS_ROOTS_AFTER_CUT(years_since_harvest, root_cohesion_kpa, regrown_root_cohesion_kpa=None):
    """Root cohesion (kPa) some years after a clear-cut: decay of the old roots plus
    regrowth of new ones (Sidle 1991 forms, the default constants)."""
    from slopescreen.root_cohesion import root_cohesion_after_harvest_kpa

    def after(years_since_harvest, root_cohesion_kpa, regrown_root_cohesion_kpa):
        return root_cohesion_after_harvest_kpa(
            years_since_harvest, root_cohesion_kpa, regrown_root_cohesion_kpa
        )

    return _call(
        after,
        {
            "years_since_harvest": (years_since_harvest, _REQUIRED),
            "root_cohesion_kpa": (root_cohesion_kpa, _REQUIRED),
            "regrown_root_cohesion_kpa": (regrown_root_cohesion_kpa, None),
        },
    )


@xw.func
@_ranges("root_cohesion_kpa", "depth_m", "rooting_depth_m")
def SS_ROOTS_AT_DEPTH(root_cohesion_kpa, depth_m, rooting_depth_m, profile=None):
    """Root cohesion (kPa) on a slip plane at a depth: none below the rooting depth
    ("step", the default) or declining as exp(-depth / rooting depth) ("exponential")."""
    from slopescreen.root_cohesion import root_cohesion_at_depth_kpa

    shape = "step" if _is_empty(profile) else str(profile).strip().lower()

    def at_depth(root_cohesion_kpa, depth_m, rooting_depth_m):
        return root_cohesion_at_depth_kpa(root_cohesion_kpa, depth_m, rooting_depth_m, shape)

    return _call(
        at_depth,
        {
            "root_cohesion_kpa": (root_cohesion_kpa, _REQUIRED),
            "depth_m": (depth_m, _REQUIRED),
            "rooting_depth_m": (rooting_depth_m, _REQUIRED),
        },
    )
