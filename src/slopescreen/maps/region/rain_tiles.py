"""The rainfall-frequency part of a scenario's tile: critical intensity per tabulated
duration (from the verified cache, the per-unit tables or the kernel), the frequency step
(return period, annual probability, hazard class) and, with soil spreads, the annual
probability over both (:mod:`slopescreen.maps.region.rain_spread`)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from slopescreen.maps.io.rasters import read_block
from slopescreen.maps.outputs.output_names import intensity_name
from slopescreen.maps.region.config import RainfallFrequency
from slopescreen.maps.region.tile_job import CORE_FIELDS

if TYPE_CHECKING:
    from slopescreen.maps.region.tile_job import TileJob


def rainfall_tile(
    job: TileJob,
    block: dict[str, np.ndarray],
    rows: slice,
    cols: slice,
    valid: np.ndarray,
    dry_probability: np.ndarray | None = None,
) -> dict[str, np.ndarray]:
    """Critical intensity per tabulated duration (mm/h, codes -1 and -2; from the verified
    cache where there is one), the triggering return period, the annual probability of
    failure and the hazard class of a tile's cells (see :mod:`slopescreen.rain_thresholds`,
    :mod:`slopescreen.rainfall_frequency`). Intensities enter the frequency step as float32,
    as stored, so a cached rerun gives the same bytes as a computed one."""
    from slopescreen import rainfall_frequency as rf
    from slopescreen.maps.region.intensity_tables import by_kernel, critical_intensity

    spec, table = job.scenario.rainfall, job.rainfall
    assert spec is not None and table is not None
    c = block["codes"]
    soil = {name: block[name] for name in CORE_FIELDS}  # each cell's soil fields
    out: dict[str, np.ndarray] = {}
    if table.rasters:  # gridded design rainfall: (durations, return periods, cells)
        from slopescreen.maps.region.idf_table import gridded_block

        design = gridded_block(
            table.rasters, table.durations_h, table.depth_rasters, job.grid, rows, cols
        )[:, :, valid]
    else:
        design = np.array(table.intensity_mm_h)
    where = None
    if job.intensity_tables and job.intensity_cache is None:
        from slopescreen.maps.region.intensity_tables import table_coordinates

        where = table_coordinates(block["tan"], block["sca"])
    for duration in table.durations_h:
        if job.intensity_cache is not None:
            cached = read_block(job.intensity_cache / intensity_name(duration), rows, cols)
            out[f"intensity_{duration:g}"] = cached[valid].astype(np.float64)
            continue
        intensity = critical_intensity(
            job, duration, block["tan"], block["sca"], c, job.intensity_tables, where, soil
        )
        out[f"intensity_{duration:g}"] = intensity.astype(np.float32).astype(np.float64)
    found = np.array([out[f"intensity_{d:g}"] for d in table.durations_h])
    if design.ndim == 3:  # gridded design rainfall: each cell its own table
        per_duration = [
            rf.return_period_yr(found[row], table.return_periods_yr, design[row], spec.uplift)
            for row in range(len(table.durations_h))
        ]
        period = rf.triggering_return_period_yr(per_duration)
    else:
        base = _frequency_step(found, design * spec.uplift, table)
        period = base["return_period"]

    def critical_at(durations_h: np.ndarray, cells: np.ndarray) -> np.ndarray:
        # the cells searched have a critical intensity at some duration: they hold before
        # rain, which does not depend on the duration
        tan, sca = block["tan"][cells], block["sca"][cells]
        each = np.arange(tan.size, dtype=np.int64)
        part = {name: v[cells] for name, v in soil.items()}
        return by_kernel(job, durations_h, tan, sca, each, part, holds_before_rain=True)

    refined = rf.refined_return_period_yr(
        period, found, table.durations_h, table.return_periods_yr, design, critical_at,
        spec.uplift,
    )  # fmt: skip
    if design.ndim == 3 or not np.array_equal(refined, period):
        out["return_period"] = refined
        out["annual_probability"] = rf.annual_probability(
            refined, table.return_periods_yr[0], table.series, table.return_periods_yr[-1]
        )
        out["hazard_classes"] = rf.hazard_class(
            out["annual_probability"], table.aep_breaks, refined, table.reach_yr
        )
    else:
        out |= base
    if job.spreads and dry_probability is not None:
        spread = _annual_with_spread(job, block, design, found, dry_probability)
        out["annual_probability_spread"] = spread
        classes = rf.hazard_class(spread, table.aep_breaks)
        if (beyond := table.reach_yr) is not None:  # below the table's reach: beyond it
            floor = rf.annual_exceedance(beyond, table.series)
            classes = np.where(spread < floor, len(table.aep_breaks) + 2, classes)
        out["hazard_classes_spread"] = classes.astype(np.uint8)
    return out


def _frequency_step(
    found: np.ndarray, design: np.ndarray, table: RainfallFrequency
) -> dict[str, np.ndarray]:
    """Return period, annual probability and hazard class of cells from their critical
    intensities (durations, cells): the compiled one-pass kernel."""
    from slopescreen import rainfall_frequency as rf
    from slopescreen.maps.region.kernels import frequency_by_cell

    n = found.shape[1]
    period, p, cls = np.empty(n), np.empty(n), np.empty(n, np.uint8)
    periods = np.asarray(table.return_periods_yr, float)
    bounds = [
        float(rf.annual_exceedance(periods[0], table.series)),
        float(rf.annual_exceedance(periods[-1], table.series)),
        float(table.series == "partial_duration"),
        float(table.reach_yr is not None),
    ]
    frequency_by_cell(  # the breaks were checked when the scenario file was read
        found,
        np.log(periods),
        rf.gumbel_variate(periods),
        np.log(design),
        np.array(bounds),
        np.asarray(table.aep_breaks, float),
        np.array([rf.MORE_FREQUENT, rf.RARER, rf.FAILS_WITHOUT_RAIN, rf.NO_INTENSITY_FAILS]),
        period,
        p,
        cls,
    )
    return {"return_period": period, "annual_probability": p, "hazard_classes": cls}


def _annual_with_spread(
    job: TileJob,
    block: dict[str, np.ndarray],
    design: np.ndarray,
    mean_intensity: np.ndarray,
    dry_probability: np.ndarray,
) -> np.ndarray:
    """Annual probability of failure with the soil spreads, unit by unit (NaN for units
    without spreads): :mod:`slopescreen.maps.region.rain_spread`."""
    from slopescreen.maps.region.rain_spread import annual_probability_with_spread
    from slopescreen.maps.region.tile_job import units_with_spreads

    result = np.full(block["codes"].shape, np.nan)
    for sel, sub, values, corr in units_with_spreads(job, block):
        result[sel] = annual_probability_with_spread(
            job,
            sub,
            values,
            corr,
            design[:, :, sel] if design.ndim == 3 else design,
            mean_intensity[:, sel],
            dry_probability[sel],
        )
    return result
