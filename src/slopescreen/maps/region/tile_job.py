"""The job of one scenario's tile: what a tile computation needs (small and picklable, no
arrays of the grid), the soil parameters the core takes, the scenario's storm for the core,
the units with spreads of a tile, and the sum of tile results in tile order.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.maps.io.grid import Grid
from slopescreen.maps.region.config import RainfallFrequency, ReliabilitySpec, Scenario
from slopescreen.reliability import Spread
from slopescreen.scenario import Storm

# soil parameters the core takes
CORE_FIELDS = (
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "depth_m",
    "saturated_unit_weight_kn_m3",
    "root_cohesion_kpa",
    "hydraulic_conductivity_m_s",
    "transmissivity_m2_day",
    "diffusivity_m2_s",
)


@dataclass(frozen=True)
class TileJob:
    """What a tile computation needs; small and picklable (no arrays of the grid)."""

    grid: Grid
    scenario: Scenario
    tables: dict[str, np.ndarray]  # soil parameters by unit code, overrides applied
    spreads: dict[int, dict[str, Spread]]
    correlations: dict[int, float]
    slope_deg: Path
    slope_tan: Path
    sca: Path
    codes: Path
    cut_off: Path  # catchment_cut_off.tif: 1 where the upslope area is cut off
    recharge_cache: Path | None  # verified critical recharge for these terrain, soils and load
    fs_breaks: tuple[float, ...]
    fs_cap: float
    reliability: ReliabilitySpec
    n_units: int
    numba_threads: int = 0  # 0: numba's default (all cores)
    rainfall: RainfallFrequency | None = None  # the design-rainfall table (rainfall scenarios)
    intensity_cache: Path | None = None  # verified critical intensities (rainfall scenarios)
    # tables of critical intensity by duration on large grids (intensity_tables.UnitTables)
    intensity_tables: dict[float, Any] = field(default_factory=dict)
    cell_progress: bool = False  # a progress bar over the cells of each storm tile


def core_storm(sc: Scenario, block: dict[str, np.ndarray] | None = None) -> Storm | None:
    """The scenario's storm for the core, with what a tile's ``block`` gives per cell: the
    rain (``rain``, a raster), the rain in steps (``rain_steps`` (steps, cells), from
    gauges) and the water table before the storm (``water_table``, from a steady
    recharge)."""
    if sc.storm is None:
        return None
    st, block = sc.storm, block or {}
    return Storm(
        rain_mm_h=block.get("rain", st.rain_mm_h),  # type: ignore[arg-type]
        duration_h=st.duration_h,
        later_h=st.later_h,
        water_table_depth_m=block.get("water_table", st.initial_water_table_depth_m),  # type: ignore[arg-type]
        long_term_infiltration_m_s=st.long_term_infiltration_mm_day / 1000 / 86400,
        min_slip_depth_m=st.min_slip_depth_m,
        ends_h=st.ends_h,
        steps_mm_h=block.get("rain_steps", st.steps_mm_h),  # type: ignore[arg-type]
    )


def units_with_spreads(
    job: TileJob, block: dict[str, np.ndarray]
) -> Iterator[tuple[np.ndarray, dict[str, np.ndarray], dict[str, Any], dict]]:
    """For each soil unit of the block that has spreads: its cells (mask), the block at
    them, its soil values (numbers, spreads as ``Spread``) and the c'-phi' correlation."""
    codes = block["codes"]
    for code in np.unique(codes):
        spreads = job.spreads.get(int(code))
        if not spreads:
            continue
        sel = codes == code
        values: dict[str, Any] = {name: float(job.tables[name][code]) for name in CORE_FIELDS}
        values.update(spreads)
        rho = job.correlations.get(int(code), 0.0)
        corr = {("cohesion_kpa", "friction_deg"): rho} if rho else {}
        yield sel, {k: v[..., sel] for k, v in block.items()}, values, corr  # cells: last axis


def add_tile(total: dict[Any, Any], result: dict[Any, Any]) -> None:
    """Add one tile's sums to ``total`` (arrays and numbers added, tuples element by
    element); called in tile order, so the sums are the same whatever ran the tiles."""
    for key, value in result.items():
        if key not in total:
            total[key] = value
        elif isinstance(value, tuple):
            total[key] = tuple(a + b for a, b in zip(total[key], value, strict=True))
        else:
            total[key] = total[key] + value


def summed_tiles(results: Iterable[dict[Any, Any]]) -> dict[Any, Any]:
    """Tile results summed by :func:`add_tile`, in the order given (tile order)."""
    total: dict[Any, Any] = {}
    for res in results:
        add_tile(total, res)
    return total
