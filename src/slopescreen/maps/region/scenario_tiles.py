"""The per-tile maths of a scenario: every per-cell output and area table of one tile.

Every tile is computed by :func:`compute_tile` from files on disk and a small picklable
:class:`TileJob`, so the same function runs in this process or on dask workers; results are
written and summed in tile order (see :mod:`slopescreen.maps.region.scenario_run`), so a
distributed run gives the same bytes as a serial one.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import partial
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.rasters import read_block, read_on_grid
from slopescreen.maps.outputs.summary import add_areas
from slopescreen.maps.region.cell_fields import SoilBlock
from slopescreen.maps.region.config import Scenario
from slopescreen.maps.region.soils import SoilUnits
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import CORE_FIELDS, TileJob, core_storm, units_with_spreads
from slopescreen.reliability import reliability_fosm, reliability_monte_carlo
from slopescreen.scenario import (
    critical_recharge_mm_day,
    storm_fs_at,
    storm_response,
)
from slopescreen.stability_classes import PF_CLASS_NAMES, classify, classify_probability
from slopescreen.storm import FAILS_BEFORE_STORM

BETA_CAP = 10.0  # reliability index stored within +-10 (P_f 0 or 1 gives +-inf)


def check_storm_soils(units: SoilUnits, sc: Scenario, where: str) -> None:
    if sc.storm is None and sc.rainfall is None:
        return
    kind = "storm" if sc.storm is not None else "rainfall"

    def given(name: str, code: int) -> bool:  # a number, or a raster cell by cell
        return not np.isnan(units.parameters[name][code]) or units.raster(name, code) is not None

    for code, key in enumerate(units.keys, start=1):
        for name in ("hydraulic_conductivity_m_s", "diffusivity_m2_s"):
            derived = name == "diffusivity_m2_s" and all(
                given(n, code) for n in ("hydraulic_conductivity_m_s", "moisture_capacity_per_m")
            )  # D0 = K / C0 cell by cell
            if not given(name, code) and not derived:
                extra = " (or moisture_capacity_per_m)" if name == "diffusivity_m2_s" else ""
                raise InputError(
                    f"{where}: {kind} scenario {sc.name!r} needs {name}{extra} for soil unit "
                    f"{key!r}"
                )


def fs_fast(seismic: float, tan_slope: np.ndarray, saturation: Any, **p: Any) -> np.ndarray:
    """FS of cells by the compiled kernel (parameters may be arrays of samples)."""
    from slopescreen.maps.region.kernels import fs_ufunc

    tan_phi = np.tan(np.radians(np.asarray(p["friction_deg"], float)))
    gamma = np.asarray(p["unit_weight_kn_m3"], float)
    gamma_sat = p.get("saturated_unit_weight_kn_m3")
    return fs_ufunc(
        tan_slope,
        p["depth_m"],
        np.asarray(p["cohesion_kpa"], float) + np.asarray(p.get("root_cohesion_kpa", 0.0), float),
        tan_phi,
        gamma,
        gamma if gamma_sat is None else gamma_sat,
        saturation,
        seismic,
        9.81,
    )


def _fs_for_probability(sc: Scenario, block: dict[str, np.ndarray], **p: Any) -> np.ndarray:
    """FS of a unit's cells for the reliability methods (samples broadcast over cells)."""
    if sc.storm is not None:  # at the critical plane and time of the mean parameters
        p.pop("specific_catchment_area_m")
        storm = core_storm(sc, block)
        assert storm is not None
        return storm_fs_at(
            p.pop("slope_deg"),
            storm,
            block["storm_depth_fraction"],
            block["storm_time_h"],
            seismic_coefficient=sc.seismic_coefficient,
            **p,
        )
    slope = p.pop("slope_deg")
    sca = p.pop("specific_catchment_area_m")
    if sc.steady_recharge:
        from slopescreen.hydrology import steady_state_saturation
        from slopescreen.scenario import cell_transmissivity_m2_day

        t = cell_transmissivity_m2_day(
            p.get("hydraulic_conductivity_m_s", np.nan),
            p.get("transmissivity_m2_day", np.nan),
            p["depth_m"],
            slope,
        )
        rain = block["rain"] if "rain" in block else sc.recharge_mm_day
        m = steady_state_saturation(rain, sca, slope, t)
    else:
        m = block["saturation"]
    return fs_fast(sc.seismic_coefficient, block["tan"], m, **p)


def probability(job: TileJob, block: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """(P_f, reliability index) for a tile's cells; NaN for units without spreads."""
    sc, rel = job.scenario, job.reliability
    codes = block["codes"]
    pf = np.full(codes.shape, np.nan)
    beta = np.full(codes.shape, np.nan)
    method = "taylor" if sc.storm is not None else rel.method
    for sel, sub, values, corr in units_with_spreads(job, block):
        values["slope_deg"] = sub["slope"]
        values["specific_catchment_area_m"] = sub["sca"]
        fs_of = partial(_fs_for_probability, sc, sub)
        if method == "monte_carlo":
            res = reliability_monte_carlo(
                fs_of, values, corr, samples=rel.samples, random_state=rel.random_state
            )
        else:
            res = reliability_fosm(fs_of, values, corr, fs_distribution=rel.fs_distribution)
        pf[sel] = res.probability_of_failure
        beta[sel] = np.clip(res.reliability_index, -BETA_CAP, BETA_CAP)
    return pf, beta


@dataclass(frozen=True)
class TileInputs:
    """One tile's inputs as plain arrays (read by :func:`read_tile`), so the arithmetic of
    :func:`tile_values` and :func:`area_tables` runs without files."""

    tan: np.ndarray  # tan(slope), NODATA_F32 where there is no terrain
    sca: np.ndarray  # specific catchment area (m), NODATA_F32 where there is none
    codes: np.ndarray  # soil-unit codes, 0 for none
    cut_off: np.ndarray  # True where part of the upslope area is beyond the DEM
    cell_area_m2: np.ndarray | float  # ground area of the tile's cells
    slope_deg: np.ndarray | None = None  # read when storms or spreads need it
    saturation: np.ndarray | None = None  # the saturation raster on the tile
    rain: np.ndarray | None = None  # the rain or recharge raster on the tile, in its range
    gauge_weights: np.ndarray | None = None  # (gauges, rows, cols): each cell's share
    rain_steps: np.ndarray | None = None  # (steps, rows, cols) mm/h: a rain series
    rows: slice | None = None  # where the tile lies (soil fields read cell by cell)
    cols: slice | None = None


def read_tile(job: TileJob, rows: slice, cols: slice) -> TileInputs:
    """The tile's terrain, soil units and wetness rasters from disk."""
    sc = job.scenario
    rain = None
    if sc.rain_raster is not None:  # checked to cover every DEM cell before the run
        key, low, high = sc.rain_unit
        rain = np.clip(
            read_on_grid(sc.rain_raster, job.grid, key, (low, high), rows, cols), low, high
        )
    return TileInputs(
        tan=read_block(job.slope_tan, rows, cols),
        sca=read_block(job.sca, rows, cols),
        codes=read_block(job.codes, rows, cols),
        cut_off=read_block(job.cut_off, rows, cols) == 1,
        cell_area_m2=job.grid.ground.cell_area_m2(rows, cols),
        slope_deg=(
            read_block(job.slope_deg, rows, cols)
            if sc.storm is not None or job.with_probability
            else None
        ),
        saturation=(
            None
            if sc.saturation_raster is None
            else read_on_grid(sc.saturation_raster, job.grid, "saturation", (0.0, 1.0), rows, cols)
        ),
        rain=rain,
        gauge_weights=_gauge_weights(job, rows, cols),
        rain_steps=_series_steps(job, rows, cols),
        rows=rows,
        cols=cols,
    )


def _series_steps(job: TileJob, rows: slice, cols: slice) -> np.ndarray | None:
    """A rain series on the tile, (steps, rows, cols) in mm/h; None without one."""
    storm = job.scenario.storm
    if storm is None or storm.rain_series is None:
        return None
    from slopescreen.maps.io.rain_series import series_on_tile

    return series_on_tile(storm.rain_series, job.grid, rows, cols, storm.series_resampling)


def _gauge_weights(job: TileJob, rows: slice, cols: slice) -> np.ndarray | None:
    """Each cell's share of each gauge on the tile (gauges, rows, cols), from ground
    distances to the gauges (:mod:`slopescreen.maps.region.gauge_rain`); None without
    gauges."""
    storm = job.scenario.storm
    if storm is None or storm.gauges is None:
        return None
    from pyproj import CRS, Transformer

    from slopescreen.maps.region.gauge_rain import gauge_weights
    from slopescreen.maps.terrain.ground import ground_distances_m

    grid_crs = CRS.from_user_input(job.grid.crs.to_wkt())  # type: ignore[attr-defined]
    to_grid = Transformer.from_crs(CRS.from_wkt(storm.gauge_crs), grid_crs, always_xy=True)
    x, y = to_grid.transform(*np.array(storm.gauge_xy, float).T)
    distance = ground_distances_m(job.grid.transform, job.grid.crs, rows, cols, x, y)
    return gauge_weights(distance, storm.gauge_weighting, storm.gauge_power)


def mapped_cells(tile: TileInputs) -> tuple[np.ndarray, np.ndarray, int]:
    """(cells with terrain and a soil unit, those of them that also have wetness, how many
    of the first lack the wetness raster's value)."""
    terrain_ok = (tile.codes > 0) & (tile.tan != NODATA_F32) & (tile.sca != NODATA_F32)
    valid = terrain_ok.copy()
    missing = 0
    steps = (  # NaN where some step of a rain series has no value
        None
        if tile.rain_steps is None
        else np.where(np.isfinite(tile.rain_steps).all(axis=0), 0.0, np.nan)
    )
    for wetness in (tile.saturation, tile.rain, steps):  # one wetness key: at most one
        if wetness is not None:
            missing = int((valid & ~np.isfinite(wetness)).sum())
            valid &= np.isfinite(wetness)
    return terrain_ok, valid, missing


def _storm_values(
    job: TileJob, block: dict[str, np.ndarray], params: dict[str, np.ndarray]
) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """(FS, saturation, storm rasters) of a storm scenario's cells; the critical plane and
    time go into ``block`` for the probability."""
    sc = job.scenario
    if sc.storm is not None and sc.storm.initial_recharge_mm_day is not None:
        block["water_table"] = _initial_water_table(job, block)
    from slopescreen.maps.region.storm_kernels import compiled_summary

    storm = core_storm(sc, block)
    assert storm is not None
    cells = int(block["codes"].size)
    with _cell_bar(job, cells) as bar:
        summary, m = storm_response(
            block["slope"],
            storm,
            seismic_coefficient=float(sc.seismic_coefficient),
            summarise=partial(compiled_summary, progress=bar.update),
            **{k: v for k, v in params.items() if k != "transmissivity_m2_day"},
        )
    block["storm_depth_fraction"] = summary.window_critical_depth_m / params["depth_m"]
    block["storm_time_h"] = summary.window_critical_time_h
    values = {
        "storm_fs_end": np.minimum(summary.end_min_fs, job.fs_cap),
        "storm_fs_later": np.minimum(summary.later_min_fs, job.fs_cap),
        "storm_failure_depth": summary.window_critical_depth_m,
        "storm_time_to_failure": np.asarray(summary.time_to_failure_h),
    }
    return summary.window_min_fs, m, values


def _cell_bar(job: TileJob, cells: int) -> Any:
    """A progress bar over a tile's cells (shown where the job asks for one: a run in this
    process on a terminal), for the searches that take long per cell (storms)."""
    from tqdm import tqdm

    return tqdm(
        total=cells,
        desc=f"{job.scenario.name}: storm, cells of this tile",
        unit="cell",
        unit_scale=True,
        disable=not job.cell_progress,
        leave=False,
    )


def _initial_water_table(job: TileJob, block: dict[str, np.ndarray]) -> np.ndarray:
    """The water table before the storm, cell by cell: the saturated thickness m z of a
    steady recharge (the steady scenarios' model, :mod:`slopescreen.hydrology`) below the
    surface of the soil of depth z: d = z (1 - m)."""
    from slopescreen.maps.region.kernels import steady_saturation_by_unit

    storm = job.scenario.storm
    assert storm is not None and storm.initial_recharge_mm_day is not None
    m = np.empty(block["codes"].size)
    codes, t = _lookup(block)
    steady_saturation_by_unit(
        np.array([storm.initial_recharge_mm_day], float),
        block["tan"],
        block["sca"],
        codes,
        t["depth_m"],
        t["hydraulic_conductivity_m_s"],
        t["transmissivity_m2_day"],
        m,
    )
    return block["depth_m"] * (1.0 - m)


def _lookup(block: dict[str, np.ndarray]) -> tuple[np.ndarray, Any]:
    """(look-up codes, tables) for the kernels: the unit codes and tables where no soil
    field varies by cell, else every cell its own entry of the per-cell fields."""
    if isinstance(block, SoilBlock) and block.by_unit:
        return block["codes"], block.tables
    return np.arange(block["codes"].size, dtype=np.int64), block


def _steady_saturation(
    job: TileJob, block: dict[str, np.ndarray], saturation: np.ndarray | None
) -> np.ndarray:
    """Saturation m of the cells of a scenario without a storm."""
    from slopescreen.maps.region.kernels import steady_saturation_by_unit

    sc = job.scenario
    m = np.empty(block["codes"].size)
    if sc.steady_recharge:
        codes, t = _lookup(block)
        steady_saturation_by_unit(
            block["rain"] if "rain" in block else np.array([sc.recharge_mm_day], float),
            block["tan"],
            block["sca"],
            codes,
            t["depth_m"],
            t["hydraulic_conductivity_m_s"],
            t["transmissivity_m2_day"],
            m,
        )
    elif sc.rainfall is not None:  # before the rain: the water table d below the ground
        depth = block["depth_m"]
        m = np.clip((depth - sc.rainfall.initial_water_table_depth_m) / depth, 0.0, 1.0)
    elif saturation is not None:
        m = saturation
        bad = (m < 0.0) | (m > 1.0)
        if bad.any():
            raise InputError(
                f"{sc.saturation_raster}: saturation values must be in [0, 1], "
                f"found {float(m[bad][0]):g}"
            )
    else:
        m[:] = sc.saturation
    return m


def _steady_fs(job: TileJob, block: dict[str, np.ndarray], m: np.ndarray) -> np.ndarray:
    """FS of the cells by the compiled kernel: soil fields looked up by unit, or each
    cell's own where some field varies by cell."""
    from slopescreen.maps.region.kernels import fs_by_unit

    fs = np.empty(block["codes"].size)
    codes, t = _lookup(block)
    fs_by_unit(
        block["tan"],
        codes,
        m,
        t["depth_m"],
        t["cohesion_kpa"] + t["root_cohesion_kpa"],
        np.tan(np.radians(t["friction_deg"])),
        t["unit_weight_kn_m3"],
        t["saturated_unit_weight_kn_m3"],
        float(job.scenario.seismic_coefficient),
        9.81,
        fs,
    )
    return fs


def tile_values(
    job: TileJob,
    tile: TileInputs,
    valid: np.ndarray,
    soil: SoilBlock | None = None,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """(block, values): the inputs at the valid cells, and every per-cell output there
    (storm rasters, classes, FS capped, saturation, probability and reliability index,
    soil depth). ``soil``: each soil field on the valid cells (default: read by
    :func:`soil_on`)."""
    sc = job.scenario
    c = tile.codes[valid]
    soil = soil if soil is not None else soil_on(job, tile, valid)
    block = SoilBlock(soil, codes=c, tables=soil.tables if isinstance(soil, SoilBlock) else None)
    block |= {"tan": tile.tan[valid], "sca": tile.sca[valid], "codes": c}
    if tile.rain is not None:
        block["rain"] = tile.rain[valid]
    if tile.rain_steps is not None:
        block["rain_steps"] = tile.rain_steps[:, valid]
    if tile.gauge_weights is not None and sc.storm is not None:
        rain = np.asarray(sc.storm.gauge_rain, float).T  # (steps, gauges)
        block["rain_steps"] = rain @ tile.gauge_weights[:, valid]
    if tile.slope_deg is not None:
        block["slope"] = tile.slope_deg[valid].astype(np.float64)
    values: dict[str, np.ndarray] = {}
    if sc.storm is not None:
        params = {name: block[name] for name in CORE_FIELDS}
        fs, m, values = _storm_values(job, block, params)
    else:
        saturation = None if tile.saturation is None else tile.saturation[valid]
        m = _steady_saturation(job, block, saturation)
        fs = _steady_fs(job, block, m)
    block["saturation"] = np.broadcast_to(m, (c.size,))
    values["classes"] = classify(fs, job.fs_breaks)
    values["fs"] = np.minimum(fs, job.fs_cap)
    values["saturation"] = block["saturation"]
    values["soil_depth"] = block["depth_m"]
    if job.soil.cover is not None:
        values["root_cohesion"] = block["root_cohesion_kpa"]
    if job.with_probability:
        values["probability"], values["reliability"] = probability(job, block)
    return block, values


def soil_on(job: TileJob, tile: TileInputs, cells: np.ndarray) -> SoilBlock:
    """Each soil field on the tile's ``cells`` (mask), cell by cell
    (:func:`slopescreen.maps.region.cell_fields.soil_cells`)."""
    from slopescreen.maps.region.cell_fields import soil_cells

    rows = tile.rows or slice(0, tile.codes.shape[0])
    cols = tile.cols or slice(0, tile.codes.shape[1])
    return soil_cells(job.soil, job.tables, job.grid, rows, cols, tile.codes, cells)


def full_rasters(values: dict[str, np.ndarray], valid: np.ndarray) -> dict[str, np.ndarray]:
    """Each per-cell output on the whole tile: classes as uint8 (0 off the valid cells), the
    rest float32 with NODATA_F32."""
    out = {}
    for name, v in values.items():
        whole = name in ("classes", "hazard_classes", "hazard_classes_spread")
        full = (
            np.zeros(valid.shape, np.uint8)
            if whole
            else np.full(valid.shape, NODATA_F32, np.float32)
        )
        full[valid] = v if whole else np.nan_to_num(v, nan=NODATA_F32)
        out[name] = full
    return out


def area_tables(
    job: TileJob,
    tile: TileInputs,
    valid: np.ndarray,
    rasters: dict[str, np.ndarray],
    probability: np.ndarray | None = None,
) -> dict[str, np.ndarray]:
    """Ground areas per soil unit and class of the tile: FS classes (all cells and those
    with cut-off catchments), hazard classes (with and without spreads), probability
    classes. Takes the whole-tile class rasters of :func:`full_rasters` and the probability
    of failure at the valid cells (NaN for units without spreads)."""
    codes, cell_area = tile.codes, tile.cell_area_m2
    out = {}
    table = np.zeros((job.n_units + 1, len(job.fs_breaks) + 2))
    add_areas(table, codes * valid, rasters["classes"], cell_area)
    out["table"] = table
    cut_table = np.zeros_like(table)
    add_areas(cut_table, codes * (valid & tile.cut_off), rasters["classes"], cell_area)
    out["cut_table"] = cut_table
    # one column per hazard class and one for no data (code 0)
    n_hazard = 0 if job.rainfall is None else len(job.rainfall.hazard_names) + 1
    for name, key in (
        ("hazard_classes", "hazard_table"),
        ("hazard_classes_spread", "hazard_spread_table"),
    ):
        if name in rasters:
            hazard_table = np.zeros((job.n_units + 1, n_hazard))
            add_areas(hazard_table, codes * valid, rasters[name], cell_area)
            out[key] = hazard_table
    if probability is not None:
        pf_table = np.zeros((job.n_units + 1, len(PF_CLASS_NAMES) + 1))
        pf_classes = np.zeros(codes.shape, np.uint8)
        pf_classes[valid] = classify_probability(probability)
        add_areas(pf_table, codes * valid, pf_classes, cell_area)
        out["pf_table"] = pf_table
    if job.scenario.storm is not None:
        out["failing_table"] = failing_areas(
            rasters["storm_time_to_failure"][valid],
            np.broadcast_to(cell_area, codes.shape)[valid],
            job.scenario.storm.later_h,
        )
    return out


FAILURE_BINS = 240  # time steps of the failing-area series over [0, later]


def failure_times_h(later_h: float) -> np.ndarray:
    """The edges of the failing-area series' time steps: 0 to ``later_h`` in equal steps."""
    return np.linspace(0.0, later_h, FAILURE_BINS + 1)


def failing_areas(time_to_failure_h: np.ndarray, area_m2: np.ndarray, later_h: float) -> np.ndarray:
    """Ground area (m2) whose FS first falls below 1 in each of ``FAILURE_BINS`` equal
    steps of [0, later], after the area failing before the storm (code -2): a cumulative
    sum gives the area failed by each time."""
    before = float(area_m2[time_to_failure_h == FAILS_BEFORE_STORM].sum())
    timed = time_to_failure_h >= 0.0
    counts, _ = np.histogram(
        time_to_failure_h[timed],
        failure_times_h(later_h),
        weights=area_m2[timed],
    )
    return np.concatenate(([before], counts))


def compute_tile(job: TileJob, rows: slice, cols: slice) -> dict[str, Any]:
    """Every per-cell output of one scenario on one tile, with its area tables.

    Critical recharge does not depend on wetness: it covers every cell with terrain and a
    soil unit (read from the verified cache when there is one), so a cached raster serves
    any scenario with the same terrain, soils and seismic load.
    """
    if job.numba_threads:
        import numba

        numba.set_num_threads(job.numba_threads)
    tile = read_tile(job, rows, cols)
    terrain_ok, valid, missing = mapped_cells(tile)
    soil = soil_on(job, tile, terrain_ok)  # every cell with terrain and a unit
    inner = valid[terrain_ok]
    on_valid = soil if inner.all() else soil.subset(inner)
    block, values = tile_values(job, tile, valid, on_valid)
    if job.scenario.rainfall is not None and job.rainfall is not None:
        from slopescreen.maps.region.rain_tiles import rainfall_tile

        values |= rainfall_tile(job, block, rows, cols, valid, values.get("probability"))
    out: dict[str, Any] = {"rows": rows, "cols": cols, "missing_wetness": missing}
    out |= full_rasters(values, valid)
    out["recharge"] = (
        read_block(job.recharge_cache, rows, cols)
        if job.recharge_cache is not None
        else _recharge_tile(job, rows, cols, terrain_ok, tile, soil)
    )
    tables = area_tables(job, tile, valid, out, values.get("probability"))
    out.pop("hazard_classes_spread", None)
    return out | tables


def _recharge_tile(
    job: TileJob,
    rows: slice,
    cols: slice,
    cells: np.ndarray,
    tile: TileInputs,
    soil: SoilBlock,
) -> np.ndarray:
    """Critical recharge (mm/day) on the tile's cells with terrain and a soil unit, with
    their soil fields ``soil`` (the slope read once: the tile's own where storms or spreads
    read it already)."""
    params = {name: soil[name] for name in CORE_FIELDS}
    slope_deg = tile.slope_deg
    if slope_deg is None:
        slope_deg = read_block(job.slope_deg, rows, cols)
    slope = slope_deg[cells].astype(np.float64)
    recharge = critical_recharge_mm_day(
        slope, tile.sca[cells], seismic_coefficient=job.scenario.seismic_coefficient, **params
    )
    full = np.full(tile.codes.shape, NODATA_F32, np.float32)
    full[cells] = np.nan_to_num(recharge, nan=NODATA_F32)
    return full
