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
from slopescreen.maps.region.cell_fields import CORE_FIELDS, SD, CellSoil, SoilBlock
from slopescreen.maps.region.config import RainfallFrequency, ReliabilitySpec, Scenario
from slopescreen.maps.region.scenario_schema import UNCERTAIN_FIELDS
from slopescreen.reliability import Spread
from slopescreen.scenario import Storm


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
    soil: CellSoil = field(default_factory=CellSoil)  # soil fields set cell by cell

    @property
    def with_probability(self) -> bool:
        """Probability maps are made: some unit has spreads, or an sd varies by cell."""
        return bool(self.spreads) or self.soil.spreads_by_cell


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
    """For each soil unit of the block with spreads (its own, or an sd that varies by cell):
    its cells (mask), the block at them, its soil values on them (arrays; spreads as
    ``Spread`` centred on each cell's value) and the c'-phi' correlation. The block holds
    each soil field per cell (:mod:`slopescreen.maps.region.cell_fields`)."""
    codes = block["codes"]
    for code in (int(c) for c in np.unique(codes)):
        sel = codes == code
        spreads = job.spreads.get(code, {})
        cell_sd = {
            name: block[name + SD][sel]
            for name in UNCERTAIN_FIELDS
            if name + SD in block and np.isfinite(block[name + SD][sel]).any()
        }
        if not spreads and not cell_sd:
            continue
        sub = (  # cells: the last axis; soil fields looked up by unit stay so
            block.subset(sel)
            if isinstance(block, SoilBlock)
            else {k: v[..., sel] for k, v in block.items()}
        )
        values: dict[str, Any] = {name: sub[name] for name in CORE_FIELDS}
        kinds = job.soil.cell_spreads.get(code, {})
        for name in set(spreads) | set(cell_sd):
            values[name] = centred(spreads.get(name), sub[name], cell_sd.get(name), kinds.get(name))
        rho = job.correlations.get(code, 0.0)
        corr = {("cohesion_kpa", "friction_deg"): rho} if rho else {}
        yield sel, sub, values, corr


def centred(
    unit: Spread | None, mean: np.ndarray, sd: np.ndarray | None, kind: str | None
) -> Spread:
    """A spread on each cell's value ``mean``: the unit's spread keeping its shape (its sd,
    or ``sd`` where that is given per cell), or a normal (or ``kind``) one of sd ``sd``
    (0 where none)."""
    if unit is None:
        sigma = np.nan_to_num(sd, nan=0.0) if sd is not None else np.zeros_like(mean)
        dist = kind or "normal"
    else:
        sigma = np.asarray(unit.sd, float) if sd is None else np.where(np.isfinite(sd), sd, unit.sd)
        dist = unit.distribution
    if dist == "lognormal":  # a positive mean (a cell without roots: as good as none)
        mean = np.maximum(mean, 1e-9)
    if unit is None or dist in ("normal", "lognormal"):
        return Spread(dist, mean, np.broadcast_to(sigma, mean.shape))
    shift = mean - unit.mean
    return Spread(dist, mean, sigma, unit.low + shift, unit.mode + shift, unit.high + shift)


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
