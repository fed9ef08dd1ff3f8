"""Per-cell screening of one scenario: wetness, factor of safety, critical recharge, class.

The map engine calls :func:`evaluate_cells` block by block with 1-D arrays of the cells
that have data; it is numpy-only and broadcasts, so it also serves single slopes.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.hazard import DEFAULT_FS_BREAKS, classify
from slopescreen.hydrology import (
    recharge_for_saturation_mm_day,
    steady_state_saturation,
    transmissivity_m2_day,
)
from slopescreen.inverse import critical_saturation
from slopescreen.stability import factor_of_safety

FAILS_WHEN_DRY = -1.0  # critical-recharge code: FS < 1 with no water at all
HOLDS_WHEN_SATURATED = -2.0  # critical-recharge code: FS >= 1 even with m = 1


class CellResults(NamedTuple):
    saturation: np.ndarray
    factor_of_safety: np.ndarray
    critical_recharge_mm_day: np.ndarray
    hazard_class: np.ndarray


def evaluate_cells(
    slope_deg: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    *,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    depth_m: ArrayLike,
    saturated_unit_weight_kn_m3: ArrayLike,
    root_cohesion_kpa: ArrayLike = 0.0,
    hydraulic_conductivity_m_s: ArrayLike = np.nan,
    transmissivity_m2_day: ArrayLike = np.nan,
    saturation: ArrayLike | None = None,
    recharge_mm_day: float | None = None,
    seismic_coefficient: float = 0.0,
    fs_breaks: ArrayLike = DEFAULT_FS_BREAKS,
) -> CellResults:
    """Screen cells for one scenario.

    Wetness is either ``saturation`` (uniform or per cell) or steady ``recharge_mm_day``
    with m = min(1, R (a/b) / (T sin beta)) (see :mod:`slopescreen.hydrology`). T comes from
    ``transmissivity_m2_day`` where given, else T = K z cos(beta).

    The critical recharge is the steady recharge that brings FS to 1, in mm/day, or the
    code -1 (fails even when dry) or -2 (holds even when saturated).
    """
    slope = np.asarray(slope_deg, dtype=float)
    sca = np.asarray(specific_catchment_area_m, dtype=float)
    soil = dict(
        cohesion_kpa=cohesion_kpa,
        friction_deg=friction_deg,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
        seismic_coefficient=seismic_coefficient,
    )
    t_given = np.asarray(transmissivity_m2_day, dtype=float)
    k = np.asarray(hydraulic_conductivity_m_s, dtype=float)
    t = np.where(
        np.isnan(t_given),
        np.asarray(transmissivity_m2_day_from(k, depth_m, slope)),
        t_given,
    )
    if recharge_mm_day is not None:
        m = np.asarray(steady_state_saturation(recharge_mm_day, sca, slope, t), dtype=float)
    elif saturation is not None:
        m = np.broadcast_to(np.asarray(saturation, dtype=float), slope.shape)
    else:
        raise ValueError("give saturation or recharge_mm_day")

    def fs_at(m_value: ArrayLike) -> np.ndarray:
        return np.asarray(factor_of_safety(slope, depth_m, saturation=m_value, **soil))

    fs = fs_at(m)
    fs_dry, fs_wet = fs_at(0.0), fs_at(1.0)
    m_crit = np.asarray(critical_saturation(slope, depth_m, target_fs=1.0, **soil))
    with np.errstate(all="ignore"):
        recharge = np.asarray(
            recharge_for_saturation_mm_day(np.nan_to_num(m_crit), sca, slope, t), dtype=float
        )
    recharge = np.where(fs_dry < 1.0, FAILS_WHEN_DRY, recharge)
    recharge = np.where((fs_dry >= 1.0) & (fs_wet >= 1.0), HOLDS_WHEN_SATURATED, recharge)
    return CellResults(m, fs, recharge, classify(fs, fs_breaks))


def transmissivity_m2_day_from(
    hydraulic_conductivity_m_s: ArrayLike, depth_m: ArrayLike, slope_deg: ArrayLike
) -> np.ndarray:
    """T = K z cos(beta) where K is given (> 0), NaN where it is not."""
    k = np.asarray(hydraulic_conductivity_m_s, dtype=float)
    safe_k = np.where(np.isfinite(k) & (k > 0.0), k, 1.0)
    t = np.asarray(transmissivity_m2_day(safe_k, depth_m, slope_deg), dtype=float)
    return np.where(np.isfinite(k) & (k > 0.0), t, np.nan)
