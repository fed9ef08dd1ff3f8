"""Per-cell screening of one scenario: wetness, factor of safety, critical recharge, class.

The map engine calls these block by block with 1-D arrays of the cells that have data; they
are numpy-only and broadcast, so they also serve single slopes.

Wetness is one of: a saturation ratio (uniform or per cell); steady recharge with
m = min(1, R (a/b) / (T sin beta)) (see :mod:`slopescreen.hydrology`), T from
``transmissivity_m2_day`` where given, else T = K z cos(beta); or a design storm (see
:mod:`slopescreen.storm`), for which FS is the minimum over depth and time up to the
storm's later time.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.hydrology import (
    recharge_for_saturation_mm_day,
    steady_state_saturation,
    transmissivity_m2_day,
)
from slopescreen.inverse import critical_saturation
from slopescreen.rain_history import (
    history_factor_of_safety,
    history_pressure_head_m,
    history_summary,
)
from slopescreen.stability import factor_of_safety
from slopescreen.stability_classes import DEFAULT_FS_BREAKS, classify
from slopescreen.storm import (
    MIN_SLIP_DEPTH_M,
    StormSummary,
    equivalent_saturation,
    pressure_head_m,
    storm_factor_of_safety,
)

FAILS_WHEN_DRY = -1.0  # critical-recharge code: FS < 1 with no water at all
HOLDS_WHEN_SATURATED = -2.0  # critical-recharge code: FS >= 1 even with m = 1


@dataclass(frozen=True)
class Storm:
    """A storm: uniform rain for a duration, or rain in steps (``ends_h`` and
    ``steps_mm_h``, :mod:`slopescreen.rain_history`; then ``duration_h`` is the last end),
    judged at its end and at a later time."""

    rain_mm_h: float
    duration_h: float
    later_h: float
    water_table_depth_m: float  # initial, vertical
    long_term_infiltration_m_s: float = 0.0
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M  # shallowest slip plane considered
    ends_h: tuple[float, ...] = ()  # rain in steps: each step's end (h)
    steps_mm_h: tuple[float, ...] = ()  # and its rain (mm/h)


class CellResults(NamedTuple):
    saturation: np.ndarray
    factor_of_safety: np.ndarray
    critical_recharge_mm_day: np.ndarray
    stability_class: np.ndarray


def transmissivity_m2_day_from(
    hydraulic_conductivity_m_s: ArrayLike, depth_m: ArrayLike, slope_deg: ArrayLike
) -> np.ndarray:
    """T = K z cos(beta) where K is given (> 0), NaN where it is not."""
    k = np.asarray(hydraulic_conductivity_m_s, dtype=float)
    safe_k = np.where(np.isfinite(k) & (k > 0.0), k, 1.0)
    t = np.asarray(transmissivity_m2_day(safe_k, depth_m, slope_deg), dtype=float)
    return np.where(np.isfinite(k) & (k > 0.0), t, np.nan)


def cell_transmissivity_m2_day(
    k: ArrayLike, t: ArrayLike, depth_m: ArrayLike, slope: np.ndarray
) -> np.ndarray:
    """T per cell: the given transmissivity ``t`` (m2/day) where it is a number, else
    T = K z cos(beta) from the conductivity ``k`` (m/s)."""
    t_given = np.asarray(t, dtype=float)
    return np.where(np.isnan(t_given), transmissivity_m2_day_from(k, depth_m, slope), t_given)


def storm_response(
    slope_deg: ArrayLike,
    storm: Storm,
    *,
    depth_m: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    end_only: bool = False,
    seismic_coefficient: float = 0.0,
    summarise: Callable[..., StormSummary] | None = None,
    **soil: ArrayLike | None,
) -> tuple[StormSummary, np.ndarray]:
    """The storm search of :func:`slopescreen.storm.storm_summary` for cells, up to the
    storm's ``later_h`` (or, with ``end_only``, just the end of the storm), and the
    equivalent saturation on the basal plane at the end of the storm.
    ``soil``: cohesion, friction, unit weights, root cohesion; ``seismic_coefficient`` acts
    throughout the storm. ``summarise``: another search with the arguments of
    :func:`slopescreen.rain_history.history_summary` and the same result (the map engine's
    compiled one); by default the numpy core's."""
    hydro = _storm_hydrology(slope_deg, storm, hydraulic_conductivity_m_s, diffusivity_m2_s)
    search = dict(
        soil_depth_m=depth_m,
        later_h=storm.duration_h if end_only else storm.later_h,
        min_slip_depth_m=storm.min_slip_depth_m,
        seismic_coefficient=seismic_coefficient,
    )
    if storm.ends_h:  # rain in steps
        rain = dict(ends_h=storm.ends_h, rain_mm_h=storm.steps_mm_h)
        psi = history_pressure_head_m(depth_m, storm.duration_h, **rain, **hydro)
    else:
        rain = dict(rain_mm_h=storm.rain_mm_h, duration_h=storm.duration_h)
        psi = pressure_head_m(depth_m, storm.duration_h, **rain, **hydro)
    steps = (  # a constant storm is one step (history_summary: storm_summary itself)
        rain
        if storm.ends_h
        else dict(ends_h=[storm.duration_h], rain_mm_h=np.asarray(storm.rain_mm_h)[None])
    )
    res = (summarise or history_summary)(**search, **steps, **hydro, **soil)
    m = equivalent_saturation(psi, depth_m, slope_deg)
    return res, np.broadcast_to(m, np.shape(res.end_min_fs))


def _storm_hydrology(
    slope_deg: ArrayLike,
    storm: Storm,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
) -> dict[str, ArrayLike]:
    """The column's hydrology for the storm functions, the rain apart."""
    return dict(
        slope_deg=slope_deg,
        water_table_depth_m=storm.water_table_depth_m,
        hydraulic_conductivity_m_s=hydraulic_conductivity_m_s,
        diffusivity_m2_s=diffusivity_m2_s,
        long_term_infiltration_m_s=storm.long_term_infiltration_m_s,
    )


def storm_fs_at(
    slope_deg: ArrayLike,
    storm: Storm,
    depth_fraction: ArrayLike,
    time_h: ArrayLike,
    *,
    depth_m: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    seismic_coefficient: float = 0.0,
    **soil: ArrayLike | None,
) -> np.ndarray:
    """FS on the plane at ``depth_fraction`` of the soil depth at ``time_h`` of a storm:
    the critical plane and time found with the mean parameters, at which the Taylor-series
    probability of a storm scenario is evaluated (Duncan 2000 evaluates the critical surface
    of the mean values). ``soil``: cohesion, friction, unit weights, root cohesion."""
    soil = {k: v for k, v in soil.items() if k != "transmissivity_m2_day"}
    z = np.asarray(depth_fraction, float) * np.asarray(depth_m, float)
    t = np.asarray(time_h, float)
    column = _storm_hydrology(slope_deg, storm, hydraulic_conductivity_m_s, diffusivity_m2_s)
    column |= dict(seismic_coefficient=seismic_coefficient, **soil)
    if storm.ends_h:  # rain in steps
        fs = history_factor_of_safety(
            z,
            t,
            ends_h=storm.ends_h,
            rain_mm_h=storm.steps_mm_h,
            **column,  # type: ignore[arg-type]
        )
    else:
        fs = storm_factor_of_safety(
            z,
            t,
            rain_mm_h=storm.rain_mm_h,
            duration_h=storm.duration_h,
            **column,  # type: ignore[arg-type]
        )
    return np.asarray(fs, dtype=float)


def scenario_fs(
    slope_deg: ArrayLike,
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
    diffusivity_m2_s: ArrayLike = np.nan,
    saturation: ArrayLike | None = None,
    recharge_mm_day: float | None = None,
    storm: Storm | None = None,
    seismic_coefficient: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """(FS, saturation m) of cells under one scenario's wetness; see the module docstring.

    For a storm, FS is the minimum over depth and time from the start of the storm to its
    ``later_h`` (the value of ``fs.tif``) and m the equivalent saturation
    max(psi, 0) / (z cos^2 beta) on the basal plane at the end of the storm.
    """
    slope = np.asarray(slope_deg, dtype=float)
    soil = dict(
        cohesion_kpa=cohesion_kpa,
        friction_deg=friction_deg,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
    )
    if storm is not None:
        res, m = storm_response(
            slope,
            storm,
            depth_m=depth_m,
            hydraulic_conductivity_m_s=hydraulic_conductivity_m_s,
            diffusivity_m2_s=diffusivity_m2_s,
            seismic_coefficient=seismic_coefficient,
            **soil,
        )
        return res.window_min_fs, m
    if recharge_mm_day is not None:
        t = cell_transmissivity_m2_day(
            hydraulic_conductivity_m_s, transmissivity_m2_day, depth_m, slope
        )
        m = np.asarray(
            steady_state_saturation(recharge_mm_day, specific_catchment_area_m, slope, t),
            dtype=float,
        )
    elif saturation is not None:
        m = np.asarray(saturation, dtype=float)
    else:
        raise ValueError("give saturation, recharge_mm_day or storm")
    fs = np.asarray(
        factor_of_safety(
            slope, depth_m, saturation=m, seismic_coefficient=seismic_coefficient, **soil
        )
    )
    return fs, np.broadcast_to(m, fs.shape)


def critical_recharge_mm_day(
    slope_deg: ArrayLike,
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
    **_ignored: object,
) -> np.ndarray:
    """Steady recharge (mm/day) that brings FS to 1, or the codes -1 (fails even when dry)
    and -2 (holds even when saturated). It does not depend on a scenario's wetness."""
    slope = np.asarray(slope_deg, dtype=float)
    soil = dict(
        cohesion_kpa=cohesion_kpa,
        friction_deg=friction_deg,
        unit_weight_kn_m3=unit_weight_kn_m3,
        saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
        root_cohesion_kpa=root_cohesion_kpa,
        seismic_coefficient=seismic_coefficient,
    )
    fs_dry = np.asarray(factor_of_safety(slope, depth_m, saturation=0.0, **soil))
    fs_wet = np.asarray(factor_of_safety(slope, depth_m, saturation=1.0, **soil))
    m_crit = np.asarray(critical_saturation(slope, depth_m, target_fs=1.0, **soil))
    t = cell_transmissivity_m2_day(
        hydraulic_conductivity_m_s, transmissivity_m2_day, depth_m, slope
    )
    with np.errstate(all="ignore"):
        recharge = np.asarray(
            recharge_for_saturation_mm_day(
                np.nan_to_num(m_crit), specific_catchment_area_m, slope, t
            ),
            dtype=float,
        )
    recharge = np.where(fs_dry < 1.0, FAILS_WHEN_DRY, recharge)
    return np.where((fs_dry >= 1.0) & (fs_wet >= 1.0), HOLDS_WHEN_SATURATED, recharge)


def evaluate_cells(
    slope_deg: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    *,
    fs_breaks: ArrayLike = DEFAULT_FS_BREAKS,
    **kwargs: object,
) -> CellResults:
    """Screen cells for one scenario: saturation, FS, critical recharge and stability class.

    Keyword arguments as :func:`scenario_fs`; see :func:`critical_recharge_mm_day`.
    """
    fs, m = scenario_fs(slope_deg, specific_catchment_area_m, **kwargs)  # type: ignore[arg-type]
    recharge = critical_recharge_mm_day(slope_deg, specific_catchment_area_m, **kwargs)  # type: ignore[arg-type]
    return CellResults(m, fs, recharge, classify(fs, fs_breaks))
