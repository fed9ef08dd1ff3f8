"""Back-analysis of failed slopes (numpy only): the value of one parameter that brings the
infinite-slope FS to 1 at a cell where a landslide happened, the other parameters held.

Each parameter is solved by the core's inverse solutions (:mod:`slopescreen.inverse`) or,
for the steady recharge, by :func:`slopescreen.scenario.critical_recharge_mm_day`. A cell
has *no solution* where no physical value of the parameter brings FS to 1 (NaN here):

- ``cohesion_kpa``, ``root_cohesion_kpa``: the value needed is below 0 (the slope holds
  with none at all) or the ground is flat;
- ``friction_deg``: the angle needed is not in (0, 90) degrees;
- ``depth_m``: no depth between the shallowest slip plane (``min_slip_depth_m``) and the
  upper end of the soil-depth range (:data:`slopescreen.ranges.RANGES`, 50 m) reaches
  FS = 1;
- ``saturation``: the ratio needed is not in [0, 1] (fails dry, or holds saturated);
- ``recharge_mm_day``: the cell fails even when dry or holds even when saturated.

Back-analysis of failures is common practice for checking strength parameters; the
values describe the state at failure under the assumed wetness, not the soil alone.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.errors import InputError
from slopescreen.inverse import (
    critical_depth,
    critical_saturation,
    required_cohesion_kpa,
    required_friction_deg,
)
from slopescreen.ranges import RANGES
from slopescreen.storm import MIN_SLIP_DEPTH_M

# parameter -> label with unit
PARAMETERS: dict[str, str] = {
    "cohesion_kpa": "effective cohesion c' (kPa)",
    "friction_deg": "effective friction angle phi' (degrees)",
    "root_cohesion_kpa": "root cohesion (kPa)",
    "depth_m": "vertical depth of the slip plane (m)",
    "saturation": "saturation ratio m",
    "recharge_mm_day": "steady recharge (mm/day)",
}


def value_at_failure(
    parameter: str,
    slope_deg: ArrayLike,
    saturation: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    *,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    depth_m: ArrayLike,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    hydraulic_conductivity_m_s: ArrayLike = np.nan,
    transmissivity_m2_day: ArrayLike = np.nan,
    seismic_coefficient: float = 0.0,
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M,
    **_ignored: Any,
) -> np.ndarray:
    """The value of ``parameter`` (one of :data:`PARAMETERS`) at which FS = 1, NaN where
    none is physical (see the module docstring). ``saturation`` (m) is the wetness held
    for every parameter but ``saturation`` and ``recharge_mm_day``, which replace it;
    ``specific_catchment_area_m`` (m) is used for ``recharge_mm_day`` only.

    >>> float(value_at_failure("cohesion_kpa", 35.0, 1.0, 100.0, cohesion_kpa=8.0,
    ...     friction_deg=30.0, unit_weight_kn_m3=19.0, depth_m=1.0).round(3))
    5.367
    """
    if parameter not in PARAMETERS:
        raise InputError(f"parameter {parameter!r}: must be one of {', '.join(PARAMETERS)}")
    common = dict(
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        seismic_coefficient=seismic_coefficient,
    )
    with np.errstate(all="ignore"):
        if parameter in ("cohesion_kpa", "root_cohesion_kpa"):
            total = np.asarray(
                required_cohesion_kpa(
                    slope_deg, depth_m, friction_deg, unit_weight_kn_m3, saturation, **common
                ),
                float,
            )
            other = root_cohesion_kpa if parameter == "cohesion_kpa" else cohesion_kpa
            value = total - np.asarray(other, float)
            return np.where(value >= 0.0, value, np.nan)
        if parameter == "friction_deg":
            phi = np.asarray(
                required_friction_deg(
                    slope_deg,
                    depth_m,
                    cohesion_kpa,
                    unit_weight_kn_m3,
                    saturation,
                    root_cohesion_kpa=root_cohesion_kpa,
                    **common,
                ),
                float,
            )
            return np.where((phi > 0.0) & (phi < 90.0), phi, np.nan)
        if parameter == "depth_m":
            z = np.asarray(
                critical_depth(
                    slope_deg,
                    cohesion_kpa,
                    friction_deg,
                    unit_weight_kn_m3,
                    saturation,
                    root_cohesion_kpa=root_cohesion_kpa,
                    **common,
                ),
                float,
            )
            deepest = RANGES["depth_m"][1]
            return np.where((z >= min_slip_depth_m) & (z <= deepest), z, np.nan)
        if parameter == "saturation":
            m = np.asarray(
                critical_saturation(
                    slope_deg,
                    depth_m,
                    cohesion_kpa,
                    friction_deg,
                    unit_weight_kn_m3,
                    root_cohesion_kpa=root_cohesion_kpa,
                    **common,
                ),
                float,
            )
            return np.where((m >= 0.0) & (m <= 1.0), m, np.nan)
        from slopescreen.scenario import critical_recharge_mm_day

        r = critical_recharge_mm_day(
            slope_deg,
            specific_catchment_area_m,
            cohesion_kpa=cohesion_kpa,
            friction_deg=friction_deg,
            unit_weight_kn_m3=unit_weight_kn_m3,
            depth_m=depth_m,
            root_cohesion_kpa=root_cohesion_kpa,
            hydraulic_conductivity_m_s=hydraulic_conductivity_m_s,
            transmissivity_m2_day=transmissivity_m2_day,
            **common,
        )
        return np.where(np.asarray(r) >= 0.0, r, np.nan)


def summary_by_group(values: ArrayLike, groups: ArrayLike) -> dict[int, dict[str, float]]:
    """Per group code: cells, cells with no solution (NaN), median and quartiles of the
    rest (numpy's linear percentiles; NaN where no cell has a solution).

    >>> summary_by_group([1.0, 2.0, 3.0, np.nan], [1, 1, 1, 1])[1]["median"]
    2.0
    """
    v = np.asarray(values, float).ravel()
    g = np.asarray(groups).ravel()
    out: dict[int, dict[str, float]] = {}
    for code in np.unique(g):
        sel = v[g == code]
        ok = sel[np.isfinite(sel)]
        q1, med, q3 = np.percentile(ok, [25, 50, 75]) if ok.size else (np.nan,) * 3
        out[int(code)] = {
            "cells": int(sel.size),
            "no_solution": int(sel.size - ok.size),
            "median": float(med),
            "q1": float(q1),
            "q3": float(q3),
        }
    return out
