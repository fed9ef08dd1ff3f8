"""Critical intensities of a rainfall scenario's cells: by the compiled kernel cell by cell,
or, on large grids, interpolated from a table per soil unit and duration.

Within a soil unit, the critical intensity of a duration depends on the cell's slope and
specific catchment area only. A table holds it on a grid of slope (``SLOPE_STEP_DEG``) and
log10 SCA (``LOG_SCA_STEP``); a cell takes the bilinear interpolation of its table cell's
four nodes. The error is checked a posteriori: the kernel is also run at the centre of
every table cell, and a table cell whose centre is off by more than ``TOLERANCE``
(relative) is flagged, as is one whose corners and centre do not all hold values or all
the same code (failure before rain, no intensity failing; an unflagged cell of a code
takes it). Cells in flagged table cells and outside the table get the kernel itself. Tested
against the kernel on 10^4 random cells. A table costs :func:`node_count` kernel calls,
so it is used only for units with at least ``MIN_CELLS_PER_NODE`` times as many cells.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.maps.io.grid import Grid

SLOPE_STEP_DEG = 0.1
LOG_SCA_STEP = 0.05
SLOPE_RANGE_DEG = (0.0, 80.0)
LOG_SCA_RANGE = (-1.0, 6.0)  # 0.1 m to 1000 km
TOLERANCE = 1e-3
MIN_CELLS_PER_NODE = 10


@dataclass(frozen=True)
class IntensityTable:
    values: np.ndarray  # (log10 SCA nodes, slope nodes), mm/h with the kernel's codes
    flagged: np.ndarray  # (table cells): centre off by more than TOLERANCE
    origin: np.ndarray  # (slope deg, log10 SCA) of the first node
    step: np.ndarray  # (slope deg, log10 SCA) spacing


def _nodes() -> tuple[np.ndarray, np.ndarray]:
    slopes = np.arange(SLOPE_RANGE_DEG[0], SLOPE_RANGE_DEG[1] + SLOPE_STEP_DEG / 2, SLOPE_STEP_DEG)
    logs = np.arange(LOG_SCA_RANGE[0], LOG_SCA_RANGE[1] + LOG_SCA_STEP / 2, LOG_SCA_STEP)
    return slopes, logs


def node_count() -> int:
    """Kernel calls a table costs: its nodes and the centres of its cells."""
    slopes, logs = _nodes()
    return slopes.size * logs.size + (slopes.size - 1) * (logs.size - 1)


def by_kernel(
    job: Any,
    duration_h: float | np.ndarray,
    tan: np.ndarray,
    sca: np.ndarray,
    codes: np.ndarray,
    parameters: dict[str, np.ndarray] | None = None,
    holds_before_rain: bool = False,
) -> np.ndarray:
    """Critical intensity (mm/h, codes -1 and -2) of cells by the compiled kernel, the soil
    parameters looked up by code in ``parameters`` (default: the job's soil table);
    ``duration_h`` one duration for all cells or one per cell; ``holds_before_rain``: the
    caller knows no cell fails before rain (the search for it is skipped)."""
    from slopescreen import rain_thresholds as rt
    from slopescreen.maps.region.kernels import critical_intensity_by_unit

    spec, table = job.scenario.rainfall, job.rainfall
    t = job.tables if parameters is None else parameters
    out = np.empty(tan.size)
    duration_s = np.atleast_1d(np.asarray(duration_h, np.float64)) * 3600.0
    search = rt.kernel_search()
    if holds_before_rain:
        search[0] = 0  # no planes for the minimum before rain: the kernel skips it
    critical_intensity_by_unit(
        duration_s,
        duration_s + table.after_h * 3600.0,
        tan,
        sca,
        codes,
        t["depth_m"],
        t["cohesion_kpa"] + t["root_cohesion_kpa"],
        np.tan(np.radians(t["friction_deg"])),
        t["unit_weight_kn_m3"],
        t["saturated_unit_weight_kn_m3"],
        t["hydraulic_conductivity_m_s"],
        t["diffusivity_m2_s"],
        t["transmissivity_m2_day"],
        spec.initial_water_table_depth_m,
        spec.long_term_infiltration_mm_day / 1000.0 / 86400.0,
        float(job.scenario.seismic_coefficient),
        9.81,
        search,
        spec.min_slip_depth_m,
        rt.LOG_STORM,
        rt.PEAK_OFFSET,
        rt.FAILS_WITHOUT_RAIN,
        rt.NO_INTENSITY_FAILS,
        out,
    )
    return out


def build_table(job: Any, code: int, duration_h: float) -> IntensityTable:
    """The table of one soil unit and duration, with its a-posteriori check."""
    slopes, logs = _nodes()
    tt, ll = np.meshgrid(slopes, logs)
    codes = np.full(tt.size, code, np.uint16)
    tan = np.tan(np.radians(tt)).astype(np.float32).ravel()
    values = by_kernel(job, duration_h, tan, (10.0**ll).astype(np.float32).ravel(), codes)
    values = values.reshape(tt.shape)
    ct, cl = np.meshgrid(slopes[:-1] + SLOPE_STEP_DEG / 2, logs[:-1] + LOG_SCA_STEP / 2)
    centre = by_kernel(
        job,
        duration_h,
        np.tan(np.radians(ct)).astype(np.float32).ravel(),
        (10.0**cl).astype(np.float32).ravel(),
        codes[: ct.size],
    ).reshape(ct.shape)
    corners = np.stack([values[:-1, :-1], values[:-1, 1:], values[1:, :-1], values[1:, 1:]])
    mean = corners.mean(axis=0)  # bilinear at the centre
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.abs(mean - centre) > TOLERANCE * np.abs(centre)
    # a table cell with a code at a corner answers only when its four corners and its
    # centre hold the same code (the cell then takes it)
    same = (corners == corners[0]).all(axis=0) & (centre == corners[0])
    coded = (corners.min(axis=0) < 0.0) | (centre < 0.0)
    flagged = np.where(coded, ~same, off)
    return IntensityTable(
        values,
        flagged,
        np.array([slopes[0], logs[0]]),
        np.array([SLOPE_STEP_DEG, LOG_SCA_STEP]),
    )


@dataclass(frozen=True)
class UnitTables:
    """The tables of one duration, indexed by soil unit code (one copy for every tile)."""

    values: np.ndarray  # (codes, log10 SCA nodes, slope nodes)
    flagged: np.ndarray  # (codes, table cells)
    has: np.ndarray  # (codes,): the unit has a table
    origin: np.ndarray
    step: np.ndarray

    @property
    def units(self) -> list[int]:
        return [int(code) for code in np.flatnonzero(self.has)]


def stack_tables(tables: dict[tuple[int, float], IntensityTable]) -> dict[float, UnitTables]:
    """Per-unit tables ((code, duration) -> table) stacked by duration, once."""
    out = {}
    for duration in sorted({d for _, d in tables}):
        mine = {code: t for (code, d), t in tables.items() if d == duration}
        first = next(iter(mine.values()))
        size = max(mine) + 1
        values = np.zeros((size, *first.values.shape))
        flagged = np.ones((size, *first.flagged.shape), bool)
        has = np.zeros(size, bool)
        for code, t in mine.items():
            values[code], flagged[code], has[code] = t.values, t.flagged, True
        out[duration] = UnitTables(values, flagged, has, first.origin, first.step)
    return out


def critical_intensity(
    job: Any,
    duration_h: float,
    tan: np.ndarray,
    sca: np.ndarray,
    codes: np.ndarray,
    tables: dict[float, UnitTables],
    where: tuple[np.ndarray, np.ndarray] | None = None,
    soil: dict[str, np.ndarray] | None = None,
) -> np.ndarray:
    """Critical intensity (mm/h, codes) of cells: from their unit's table where there is
    one, by the kernel elsewhere and where a table cannot answer. ``where``: the cells'
    (slope degrees, log10 SCA) when the caller has them (:func:`table_coordinates`);
    ``soil``: each cell's soil fields for the kernel (default: the unit's, by code)."""
    from slopescreen.maps.region.kernels import intensity_from_table

    def kernel(part: np.ndarray | slice) -> np.ndarray:
        if soil is None:
            return by_kernel(job, duration_h, tan[part], sca[part], codes[part])
        cells = {name: v[part] for name, v in soil.items()}
        each = np.arange(tan[part].size, dtype=np.int64)
        return by_kernel(job, duration_h, tan[part], sca[part], each, cells)

    mine = tables.get(duration_h)
    if mine is None:
        return kernel(slice(None))
    slope_deg, log_sca = where if where is not None else table_coordinates(tan, sca)
    out = np.empty(tan.size)
    exact = np.zeros(tan.size, bool)
    intensity_from_table(
        slope_deg,
        log_sca,
        codes,
        mine.values,
        mine.flagged,
        mine.has,
        mine.origin,
        mine.step,
        out,
        exact,
    )
    if exact.any():
        out[exact] = kernel(exact)
    return out


def table_coordinates(tan: np.ndarray, sca: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(slope degrees, log10 SCA) of cells, computed once for every duration."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return (
            np.degrees(np.arctan(tan.astype(np.float64))),
            np.log10(np.where(sca > 0, sca, np.nan).astype(np.float64)),
        )


def table_settings() -> tuple[float, ...]:
    """What decides the tables and their use (part of the intensity cache's key)."""
    return (SLOPE_STEP_DEG, LOG_SCA_STEP, *SLOPE_RANGE_DEG, *LOG_SCA_RANGE, TOLERANCE,
            MIN_CELLS_PER_NODE)  # fmt: skip


def unit_cells(codes: Path, grid: Grid) -> dict[int, int]:
    """Cells per soil unit code, counted tile by tile; {} on grids too small for a table."""
    from slopescreen.maps.io.rasters import read_block, windows

    if grid.width * grid.height < MIN_CELLS_PER_NODE * node_count():
        return {}
    counts = np.zeros(1, np.int64)
    for rows, cols in windows(grid):
        found = np.bincount(read_block(codes, rows, cols).ravel())
        counts = np.pad(counts, (0, max(0, found.size - counts.size)))
        counts[: found.size] += found
    return {code: int(n) for code, n in enumerate(counts) if code > 0 and n > 0}


def tables_for(job: Any, unit_cells: dict[int, int]) -> dict[float, UnitTables]:
    """Tables for the units with at least ``MIN_CELLS_PER_NODE`` cells per node, stacked
    by duration; none for a unit whose soil fields vary by cell (one table cannot stand
    for them: its cells go to the kernel)."""
    varying = job.soil.varying_units()
    return stack_tables(
        {
            (code, d): build_table(job, code, d)
            for code, cells in unit_cells.items()
            if cells >= MIN_CELLS_PER_NODE * node_count() and code not in varying
            for d in job.rainfall.durations_h
        }
    )
