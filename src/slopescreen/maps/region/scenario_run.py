"""One scenario over the grid: tiles computed (here or on dask workers) and written in
tile order, area tables summed in tile order, then the summary, zones and map.

The per-tile maths lives in :mod:`slopescreen.maps.region.scenario_tiles`.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen import __version__
from slopescreen.maps.io.cache import building, content_key, usable_entry
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, windows
from slopescreen.maps.outputs.output_names import (
    ANNUAL_PROBABILITY,
    ANNUAL_PROBABILITY_SPREAD,
    CUT_OFF,
    FAILING_AREA,
    FAILING_AREA_MAP,
    FS,
    HAZARD_CLASS,
    HAZARD_CLASS_MAP,
    HAZARD_ZONES,
    HILLSHADE,
    INTENSITY_PATTERN,
    LEGACY_SCENARIO_FILES,
    LOW_MARGIN_ZONES,
    PROBABILITY,
    PROBABILITY_MAP,
    RECHARGE,
    RELIABILITY,
    RETURN_PERIOD,
    RETURN_PERIOD_MAP,
    ROOT_COHESION,
    SATURATION,
    SCA,
    SCENARIO_OUTPUTS,
    SLOPE_DEG,
    SLOPE_TAN,
    SOIL_DEPTH,
    SOIL_DEPTH_MAP,
    SOIL_UNIT,
    STABILITY_CLASS,
    STABILITY_CLASS_MAP,
    STORM_FAILURE_DEPTH,
    STORM_FS_END,
    STORM_FS_LATER,
    STORM_TIME_TO_FAILURE,
    STORM_TIME_TO_FAILURE_MAP,
    SUMMARY,
    THRESHOLDS_MAP,
    intensity_name,
)
from slopescreen.maps.outputs.summary import summary_rows, write_summary
from slopescreen.maps.region.cell_fields import CellSoil, cell_soil, elevation_range
from slopescreen.maps.region.cell_fields import content_key as soil_key
from slopescreen.maps.region.config import Config, Scenario, StormSpec
from slopescreen.maps.region.intensity_tables import table_settings, tables_for, unit_cells
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.maps.region.scenario_tiles import BETA_CAP, compute_tile
from slopescreen.maps.region.soils import SoilUnits
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import CORE_FIELDS, TileJob
from slopescreen.rain_history import HISTORY_FAILURE_PLANES
from slopescreen.scenario import FAILS_WHEN_DRY, HOLDS_WHEN_SATURATED
from slopescreen.stability_classes import PF_CLASS_NAMES
from slopescreen.storm import FAILS_BEFORE_STORM, FAILURE_PLANES, NOT_BY_LATER

# every file a scenario folder can hold; those a run does not write are removed from it
SCENARIO_FILES = (*(f for f, _, _ in SCENARIO_OUTPUTS), *LEGACY_SCENARIO_FILES)


@dataclass
class ScenarioSummary:
    name: str
    wetness: str
    seismic_coefficient: float
    overrides: dict[str, dict[str, float]]
    class_areas_ha: list[float]  # per FS class, all units
    maps: dict[str, Path]  # what each map shows -> its PNG
    warnings: list[str]
    probability_areas_ha: list[float] | None = None  # per probability class
    outputs: list[str] = field(default_factory=list)  # file names in the scenario folder
    description: str = ""
    cut_off_ha: float = 0.0  # mapped area whose upslope area is cut off by a void or edge
    loads: str = ""  # every load that changes the result, in words
    unit_class_areas_ha: list[list[float]] = field(default_factory=list)  # unit x class
    zones: list[dict[str, object]] = field(default_factory=list)  # largest, by area
    hazard_areas_ha: list[float] | None = None  # per hazard class (rainfall scenarios)
    hazard_names: list[str] = field(default_factory=list)
    hazard_spread_areas_ha: list[float] | None = None  # the same with the soil spreads
    runout: Any = None  # RunoutResult of a scenario named in [runout]


def _sinks(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    names: list[str],
    with_probability: bool,
    soil: CellSoil | None = None,
) -> dict[str, RasterSink]:
    from slopescreen.maps.outputs.quicklook import colour_table

    base = {
        "slopescreen_version": __version__,
        "scenario": sc.name,
        "wetness": sc.wetness,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
        "ground_geometry": grid.ground.note,
    }
    if sc.rain_raster is not None:
        base["rain_raster"] = (
            f"{sc.rain_raster.name} ({sc.rain_unit[0]}) resampled bilinearly onto the DEM grid"
        )
    if sc.saturation_raster is not None:
        base["saturation_raster"] = (
            f"{sc.saturation_raster.name} resampled bilinearly onto the DEM grid (any grid, "
            "shift or CRS)"
        )

    depth_source = "the soil units' depth_m"
    if soil is not None and soil.depth:
        depth_source += "; " + "; ".join(sorted({m.text for m in soil.depth.values()}))
    if soil is not None and "depth_m" in soil.rasters:
        depth_source += "; rasters " + ", ".join(
            sorted({p.name for p in soil.rasters["depth_m"].values()})
        )

    def f32(name: str, **tags: str) -> RasterSink:
        return RasterSink(out / name, grid, "float32", NODATA_F32, tags=base | tags)

    sinks = {
        "fs": f32(
            FS,
            units="factor of safety (dimensionless)",
            fs_cap=f"{cfg.fs_cap:g}",
            fs_cap_note=f"FS above {cfg.fs_cap:g}, including flat ground with no driving "
            f"stress, is stored as {cfg.fs_cap:g}",
            **(
                {
                    "fs_when": "minimum over depth and time from the start of the storm to "
                    f"{sc.storm.later_h:g} h (depth bracketed from the shallowest slip plane, "
                    f"{sc.storm.min_slip_depth_m:g} m; time exact; see storm_summary)"
                }
                if sc.storm
                else {}
            ),
        ),
        "saturation": f32(SATURATION, units="saturation ratio m = h_w / z"),
        "soil_depth": f32(SOIL_DEPTH, units="m, vertical soil depth z", source=depth_source),
        "classes": RasterSink(
            out / STABILITY_CLASS,
            grid,
            "uint8",
            0,
            resampling="nearest",
            colormap=colour_table(len(names)),
            tags=base
            | {f"class_{i}": n for i, n in enumerate(names, start=1)}
            | {"class_0": "no data"},
        ),
    }
    sinks["recharge"] = f32(RECHARGE, **recharge_tags(sc))
    if soil is not None and soil.cover is not None:
        sinks["root_cohesion"] = f32(
            ROOT_COHESION,
            units="kPa, root cohesion on the slip plane at the soil's base",
            source=f"land cover {soil.cover.path.name} ({soil.cover.root_profile} profile"
            + (f", year {soil.year}" if soil.year is not None else "")
            + "); cells in no class: their unit's root_cohesion_kpa",
        )
    if sc.storm is not None:
        sinks["storm_fs_end"] = f32(
            STORM_FS_END,
            units="minimum FS over depth",
            when=f"at the end of the storm, {sc.storm.duration_h:g} h after it began",
        )
        sinks["storm_fs_later"] = f32(
            STORM_FS_LATER,
            units="minimum FS over depth",
            when=f"{sc.storm.later_h:g} h after the storm began",
        )
        sinks["storm_failure_depth"] = f32(
            STORM_FAILURE_DEPTH,
            units="m, vertical depth of the minimum FS over depth and time (fs.tif)",
        )
        sinks["storm_time_to_failure"] = f32(
            STORM_TIME_TO_FAILURE,
            units="hours from the start of the storm until FS first drops below 1",
            code_no_failure=f"{NOT_BY_LATER:g} (FS stays >= 1 up to {sc.storm.later_h:g} h)",
            code_fails_before=f"{FAILS_BEFORE_STORM:g} (FS < 1 before the storm begins)",
            method=f"first crossing of FS = 1 on {failure_planes(sc.storm)} planes and the "
            "critical one, bisected in time; the earlier end of the bracket",
        )
    if sc.rainfall is not None and cfg.rainfall_frequency is not None:
        sinks |= rainfall_sinks(cfg, sc, grid, out, base, with_probability)
    if with_probability:
        conventions = probability_conventions(cfg, sc)
        sinks["probability"] = f32(PROBABILITY, units="P(FS < 1), 0 to 1", **conventions)
        sinks["reliability"] = f32(
            RELIABILITY,
            units="reliability index beta",
            cap=f"stored within +-{BETA_CAP:g}",
            **conventions,
        )
    return sinks


def failure_planes(storm: StormSpec) -> int:
    """Planes searched for a storm's first failure (rain in steps or one step)."""
    return HISTORY_FAILURE_PLANES if len(storm.ends_h) > 1 else FAILURE_PLANES


def rainfall_sinks(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    base: dict[str, str],
    with_probability: bool = False,
) -> dict[str, RasterSink]:
    """The rasters of a rainfall-frequency scenario: critical intensity per duration,
    triggering return period, annual probability of failure (with the soil spreads too,
    where given), hazard classes."""
    from slopescreen import rainfall_frequency as rf
    from slopescreen.maps.outputs.quicklook import colour_table

    table = cfg.rainfall_frequency
    assert table is not None and sc.rainfall is not None
    window = f"minimum FS over depth and over the storm and {table.after_h:g} h after it"
    codes = {
        "code_fails_without_rain": "-1 (FS < 1 before any rain)",
        "code_no_intensity": "-2 (no intensity up to K_z brings FS to 1)",
    }

    def f32(name: str, **tags: str) -> RasterSink:
        return RasterSink(out / name, grid, "float32", NODATA_F32, tags=base | tags)

    sinks = {
        f"intensity_{d:g}": f32(
            intensity_name(d),
            units=f"mm/h: the constant intensity of a {d:g}-hour storm bringing the {window} "
            "to 1 (Iverson 2000)",
            **codes,
        )
        for d in table.durations_h
    }
    names = table.hazard_names
    period_codes = {
        "code_more_frequent": f"{rf.MORE_FREQUENT:g} (triggered by rain more frequent than "
        f"{table.return_periods_yr[0]:g} yr)",
        "code_rarer": f"{rf.RARER:g} (no tabulated storm triggers failure)",
        "code_fails_without_rain": f"{rf.FAILS_WITHOUT_RAIN:g}",
        "code_no_intensity": f"{rf.NO_INTENSITY_FAILS:g}",
    }
    frequency = {
        "idf_table": table.idf_table.name
        + (
            f" (gridded: {sum(map(len, table.rasters))} rasters resampled bilinearly onto "
            "the DEM grid)"
            if table.rasters
            else ""
        ),
        "uplift": f"{sc.rainfall.uplift:g}",
        "interpolation": "between table rows the shorter return period of log intensity "
        "linear in log T and intensity linear in the Gumbel variate -ln(-ln(1 - 1/T))",
        "series": table.series
        + ("" if table.series_stated else " (default: series not given in the scenario file)"),
        "min_slip_depth_m": f"{sc.rainfall.min_slip_depth_m:g}",
    }
    sinks["return_period"] = f32(
        RETURN_PERIOD,
        units="years: the most frequent tabulated storm (any duration) that starts failure",
        **period_codes,
        **frequency,
    )
    sinks["annual_probability"] = f32(
        ANNUAL_PROBABILITY,
        units=("p = 1 - exp(-1/T)" if table.series == "partial_duration" else "p = 1/T")
        + " per year",
        more_frequent="the shortest tabulated period's p (a lower bound)",
        rarer="the longest tabulated period's p (an upper bound)",
        **frequency,
    )
    if with_probability:
        how = (
            f"Monte Carlo, {cfg.reliability.samples} samples (random_state "
            f"{cfg.reliability.random_state}): mean of each sample's p(T)"
            if cfg.reliability.method == "monte_carlo"
            else f"Taylor series (Duncan 2000) on the critical intensity, "
            f"{cfg.reliability.fs_distribution}, summed over {rf.BANDS} bands of storm level"
        )
        sinks["annual_probability_spread"] = f32(
            ANNUAL_PROBABILITY_SPREAD,
            units="per year: rainfall frequency and soil spreads together",
            method=how,
            storms="a year's storms of every duration at one return-period level",
            **frequency,
        )
    sinks["hazard_classes"] = RasterSink(
        out / HAZARD_CLASS,
        grid,
        "uint8",
        0,
        resampling="nearest",
        colormap=colour_table(len(names)),
        tags=base | {f"class_{i}": n for i, n in enumerate(names, start=1)} | frequency,
    )
    return sinks


def probability_conventions(cfg: Config, sc: Scenario) -> dict[str, str]:
    """How P_f and beta were obtained, for the raster tags and the report."""
    if sc.storm is not None or cfg.reliability.method == "taylor":
        lognormal = cfg.reliability.fs_distribution == "lognormal"
        out = {
            "method": "taylor",
            "fs_distribution": cfg.reliability.fs_distribution,
            "beta": "ln(F / sqrt(1 + V^2)) / sqrt(ln(1 + V^2)), V = sigma_F / F (Duncan 2000)"
            if lognormal
            else "(F - 1) / sigma_F",
            "p_f": "Phi(-beta)",
            "correlation_model": "c'-phi' correlation used as the Pearson correlation of the "
            "inputs in the variance sum",
            "clipping": "a point mean +- sd outside an input's physical range (c' < 0, say) "
            "is clipped to it; dF is then the slope between the points times 2 sd",
        }
        if sc.storm is not None:
            out["storm"] = "at the critical depth and time of the mean parameters"
        return out
    return {
        "method": "monte_carlo",
        "fs_distribution": "none assumed: P_f is the share of samples with FS < 1",
        "beta": "-Phi^-1(P_f) (generalised reliability index)",
        "p_f": f"share of {cfg.reliability.samples} samples with FS < 1, random_state "
        f"{cfg.reliability.random_state}",
        "correlation_model": "c'-phi' correlation applied to the normal scores (Gaussian "
        "copula); the Pearson correlation of the sampled values can differ a little",
        "clipping": "samples outside an input's physical range (c' < 0, say) are clipped to it",
    }


def recharge_tags(sc: Scenario) -> dict[str, str]:
    return {
        "slopescreen_version": __version__,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
        "units": "mm/day of steady recharge bringing FS to 1",
        "code_fails_when_dry": f"{FAILS_WHEN_DRY:g}",
        "code_holds_when_saturated": f"{HOLDS_WHEN_SATURATED:g}",
    }


def recharge_key(units: SoilUnits, sc: Scenario, terrain_key: str, soil: CellSoil) -> str:
    """Content key of a critical-recharge raster: terrain (DEM content), the rasterized soil
    units, every unit's parameters, the soil fields set cell by cell (every raster's bytes,
    the depth models, land cover and year), the seismic load and the program version."""
    parts: list[str | bytes] = [terrain_key, units.codes_sha256, __version__, soil_key(soil)]
    for name in CORE_FIELDS:
        parts += [name, np.ascontiguousarray(units.parameters[name], np.float64).tobytes()]
    parts.append(repr(float(sc.seismic_coefficient)))
    return content_key(*parts)


def intensity_key(
    units: SoilUnits, sc: Scenario, terrain_key: str, cfg: Config, soil: CellSoil
) -> str:
    """Content key of a rainfall scenario's critical intensities: everything but the
    design-rainfall table, the uplift and the class breaks (a new table or climate scenario
    reuses them): terrain, soil units and parameters, the seismic load, the antecedent
    water table, the durations and window, the search's settings and the program version."""
    from slopescreen import rain_thresholds as rt

    table, spec = cfg.rainfall_frequency, sc.rainfall
    assert table is not None and spec is not None
    parts: list[str | bytes] = [terrain_key, units.codes_sha256, __version__, soil_key(soil)]
    for name in CORE_FIELDS:
        parts += [name, np.ascontiguousarray(units.parameters[name], np.float64).tobytes()]
    parts += [
        repr(float(sc.seismic_coefficient)),
        repr(spec.initial_water_table_depth_m),
        repr(spec.long_term_infiltration_mm_day),
        repr(table.durations_h),
        repr(table.after_h),
        repr((rt.kernel_search().tolist(), spec.min_slip_depth_m, rt.MIN_SLIP_DEPTH_M)),
        repr(table_settings()),
    ]
    return content_key(*parts)


@dataclass
class TileSums:
    """A scenario's area tables summed over its tiles in tile order (the same sums whatever
    ran the tiles), and the cells its wetness raster left without a value."""

    table: np.ndarray
    cut_table: np.ndarray
    pf_table: np.ndarray | None
    hazard_table: np.ndarray | None
    spread_table: np.ndarray | None
    missing: int
    failing: np.ndarray | None = None  # storms: area first below FS 1 per time step (m2)


def _tile_job(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    units: SoilUnits,
    terrain_dir: Path,
    terrain_cache: Path,
    terrain_key: str,
    numba_threads: int,
    echo: Callable[[str], None],
    cell_progress: bool = False,
) -> tuple[TileJob, str, bool, str | None]:
    """(the scenario's tile job, the critical-recharge cache entry's name, whether that
    entry was reused, the critical-intensity entry's name to build or None). Verified cache
    entries are handed to the job; large grids get per-unit intensity tables."""
    soil = cell_soil(units, cfg.region, sc, terrain_dir, elevation_range(cfg.region, grid))
    entry_name = f"critical_recharge-{recharge_key(units, sc, terrain_key, soil)}"
    entry = usable_entry(terrain_cache.parent, entry_name, echo)
    intensity_entry, intensity_cached = None, None
    if sc.rainfall is not None and cfg.rainfall_frequency is not None:
        intensity_entry = f"critical_intensity-{intensity_key(units, sc, terrain_key, cfg, soil)}"
        intensity_cached = usable_entry(terrain_cache.parent, intensity_entry, echo)
        if intensity_cached is not None:
            echo(f"scenario {sc.name}: critical intensities reused from cache (verified)")
    job = TileJob(
        grid=grid,
        scenario=sc,
        tables=units.parameters,
        spreads={code: units.unit_spreads(code) for code in units.spreads},
        correlations=units.correlations,
        slope_deg=terrain_dir / SLOPE_DEG,
        slope_tan=terrain_cache / SLOPE_TAN,
        sca=terrain_dir / SCA,
        codes=terrain_dir / SOIL_UNIT,
        cut_off=terrain_dir / CUT_OFF,
        recharge_cache=entry / RECHARGE if entry is not None else None,
        fs_breaks=cfg.fs_breaks,
        fs_cap=cfg.fs_cap,
        reliability=cfg.reliability,
        n_units=len(units.keys),
        numba_threads=numba_threads,
        rainfall=cfg.rainfall_frequency if sc.rainfall is not None else None,
        intensity_cache=intensity_cached,
        cell_progress=cell_progress,
        soil=soil,
    )
    if sc.rainfall is not None and intensity_cached is None:
        job = replace(job, intensity_tables=tables_for(job, unit_cells(job.codes, grid)))
        if job.intensity_tables:
            codes = {c for t in job.intensity_tables.values() for c in t.units}
            used = sorted(units.keys[code - 1] for code in codes)
            echo(f"scenario {sc.name}: critical intensities from tables for {', '.join(used)}")
    to_build = intensity_entry if intensity_cached is None else None
    return job, entry_name, entry is not None, to_build


def _write_tiles(
    job: TileJob,
    sinks: dict[str, RasterSink],
    runner: Runner,
    progress: Callable[[Iterable, int, str], Iterable],
) -> TileSums:
    """Compute every tile, write its rasters in tile order and sum its area tables."""
    tables: dict[str, list[np.ndarray]] = {
        "table": [],
        "cut_table": [],
        "pf_table": [],
        "hazard_table": [],
        "hazard_spread_table": [],
        "failing_table": [],
    }
    missing = 0
    with all_or_nothing(*sinks.values()):
        tiles = [(job, rows, cols) for rows, cols in windows(job.grid)]
        results = runner(compute_tile, tiles)
        for res in progress(results, len(tiles), job.scenario.name):
            for name, sink in sinks.items():
                sink.write(res["rows"], res["cols"], res[name])
            for name, kept in tables.items():
                if name in res:
                    kept.append(res[name])
            missing += res["missing_wetness"]

    def total(name: str) -> np.ndarray | None:
        return np.sum(tables[name], axis=0) if tables[name] else None

    return TileSums(
        total("table"),  # type: ignore[arg-type]
        total("cut_table"),  # type: ignore[arg-type]
        total("pf_table"),
        total("hazard_table"),
        total("hazard_spread_table"),
        missing,
        total("failing_table"),
    )


def _cache_results(
    cfg: Config,
    sc: Scenario,
    out: Path,
    terrain_cache: Path,
    terrain_key: str,
    recharge_entry: tuple[str, bool],
    intensity_entry: str | None,
) -> None:
    """Keep the scenario's critical recharge and critical intensities as cache entries
    beside the terrain entry, where they were not reused from there."""
    entry_name, reused = recharge_entry
    if not reused:  # the output holds exactly the cached values; its tags are this scenario's
        info = {"seismic_coefficient": sc.seismic_coefficient, "terrain_key": terrain_key}
        with building(terrain_cache.parent, entry_name, info) as work:
            shutil.copyfile(out / RECHARGE, work / RECHARGE)
    if intensity_entry is not None and cfg.rainfall_frequency is not None:
        durations = cfg.rainfall_frequency.durations_h
        info = {"terrain_key": terrain_key, "durations_h": list(durations)}
        with building(terrain_cache.parent, intensity_entry, info) as work:
            for d in durations:
                shutil.copyfile(out / intensity_name(d), work / intensity_name(d))


def _scenario_warnings(cfg: Config, sc: Scenario, units: SoilUnits, missing: int) -> list[str]:
    """Cells without wetness, units without probability, storms by Taylor series only."""
    warnings: list[str] = []
    if missing:
        warnings.append(
            f"scenario {sc.name}: {missing} cells have no value in "
            f"{(sc.saturation_raster or sc.rain_raster).name} and are left unmapped"  # type: ignore[union-attr]
        )
    if units.spreads:
        without = [k for i, k in enumerate(units.keys, start=1) if i not in units.spreads]
        if without:
            warnings.append(
                f"scenario {sc.name}: no probability for soil units without "
                f"spreads: {', '.join(without)}"
            )
        if sc.storm is not None and cfg.reliability.method == "monte_carlo":
            warnings.append(
                f"scenario {sc.name}: storm probability by the Taylor-series "
                "method (Monte Carlo over depth and time is not offered)"
            )
    return warnings


def _hectares(table: np.ndarray) -> list[float]:
    """Hectares per class over the mapped units of an area table (m2)."""
    return [float(a) / 10_000.0 for a in table[1:, 1:].sum(axis=0)]


@dataclass
class ClassAreas:
    """Hectares by class beside the FS classes: probability classes (all units), hazard
    classes (per unit and class) with their names, hazard classes with soil spreads."""

    probability: list[float] | None = None
    hazard: np.ndarray | None = None
    hazard_names: list[str] = field(default_factory=list)
    spread: list[float] | None = None


def _summary(
    cfg: Config, sc: Scenario, unit_keys: list[str], names: list[str], sums: TileSums
) -> tuple[list[dict[str, object]], ClassAreas]:
    """The rows of summary.csv (FS classes, then probability, hazard and hazard-with-spread
    classes where the scenario has them) and the areas the report shows."""
    rows = summary_rows(
        sums.table, unit_keys, names, sc.name, "factor_of_safety", cut_table=sums.cut_table
    )
    areas = ClassAreas()
    if sums.pf_table is not None:
        rows += summary_rows(
            sums.pf_table, unit_keys, list(PF_CLASS_NAMES), sc.name, "probability_of_failure"
        )
        areas.probability = _hectares(sums.pf_table)
    if sums.hazard_table is not None and cfg.rainfall_frequency is not None:
        areas.hazard_names = cfg.rainfall_frequency.hazard_names
        rows += summary_rows(
            sums.hazard_table,
            unit_keys,
            areas.hazard_names,
            sc.name,
            "annual_failure_probability",
        )
        areas.hazard = sums.hazard_table[1:, 1:] / 10_000.0
    if sums.spread_table is not None:
        rows += summary_rows(
            sums.spread_table,
            unit_keys,
            areas.hazard_names,
            sc.name,
            "annual_failure_probability_with_spread",
        )
        areas.spread = _hectares(sums.spread_table)
    return rows, areas


def _zones(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    job: TileJob,
    unit_keys: list[str],
    names: list[str],
    hazard_names: list[str] | None,
    out: Path,
    terrain_dir: Path,
) -> tuple[list[dict[str, object]], set[str]]:
    """Polygons of the two least stable classes (and of the two most frequent hazard
    classes of a rainfall scenario): (the largest zones, the files written)."""
    from slopescreen.maps.outputs.zones import low_margin_zones, write_zones

    zones = low_margin_zones(
        out / STABILITY_CLASS,
        job.codes,
        grid,
        unit_keys,
        names,
        cfg.min_zone_area_m2,
        sc.name,
        terrain_dir / SLOPE_DEG,
    )
    write_zones(zones, out / LOW_MARGIN_ZONES)
    written = {LOW_MARGIN_ZONES}
    if hazard_names is not None:  # the two most frequent hazard classes, the same way
        hazard_zones = low_margin_zones(
            out / HAZARD_CLASS,
            job.codes,
            grid,
            unit_keys,
            hazard_names,
            cfg.min_zone_area_m2,
            sc.name,
            terrain_dir / SLOPE_DEG,
        ).rename(columns={"stability_class": "hazard_class"})
        write_zones(hazard_zones, out / HAZARD_ZONES)
        written.add(HAZARD_ZONES)
    return largest_zones(zones), written


def _failing_series(
    cfg: Config, sc: Scenario, failing: np.ndarray, out: Path, maps: dict[str, Path]
) -> set[str]:
    """failing_area.csv (and its figure): the ground area whose FS has fallen below 1 by
    each time of the storm's window, with the rain falling then (a raster's rain: blank)."""
    from slopescreen.maps.outputs.validation_plots import failing_area_figure
    from slopescreen.maps.region.scenario_tiles import failure_times_h

    storm = sc.storm
    assert storm is not None
    times = failure_times_h(storm.later_h)
    failed_ha = np.cumsum(failing) / 10_000.0  # the first: failing before the storm
    ends = storm.ends_h or (storm.duration_h,)
    steps = storm.steps_mm_h or (storm.rain_mm_h,)
    rows: list[dict[str, object]] = []
    for t, area in zip(times, failed_ha, strict=True):
        k = int(np.searchsorted(ends, t, side="right"))
        rain: object = ""  # a raster's rain varies by cell
        if sc.rain_raster is None:
            rain = steps[k] if k < len(steps) else 0.0
        rows.append({"time_h": round(float(t), 6), "failed_ha": round(float(area), 6),
                     "rain_mm_h": rain})  # fmt: skip
    write_summary(rows, out / FAILING_AREA)
    written = {FAILING_AREA}
    if cfg.quicklook_map:
        rain_steps = None if sc.rain_raster is not None else (np.asarray(ends), np.asarray(steps))
        maps["failing area over time"] = failing_area_figure(
            out / FAILING_AREA_MAP,
            times,
            failed_ha,
            rain_steps,
            f"{cfg.region.name}: scenario {sc.name}: ground area failed (FS first below 1)",
        )
        written.add(FAILING_AREA_MAP)
    return written


def _remove_stale(out: Path, written: set[str]) -> None:
    """Remove the files an earlier run of another configuration left in the folder."""
    for stale in set(SCENARIO_FILES) - written:
        (out / stale).unlink(missing_ok=True)
    for stale in out.glob(INTENSITY_PATTERN):
        if stale.name not in written:
            stale.unlink()


def run_scenario(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    soils: SoilUnits,
    terrain_dir: Path,
    terrain_cache: Path,
    terrain_key: str,
    out: Path,
    names: list[str],
    progress: Callable[[Iterable, int, str], Iterable],
    runner: Runner = serial_runner,
    numba_threads: int = 0,
    echo: Callable[[str], None] = print,
    cell_progress: bool = False,
    inventory: Any = None,
) -> tuple[ScenarioSummary, list[dict[str, object]]]:
    """Write every output of one scenario into ``out``; ``terrain_cache`` is the folder of
    the terrain cache entry, and critical recharge is cached beside it (in its parent).
    ``cell_progress``: a progress bar over the cells of each storm tile (tiles computed in
    this process, on a terminal)."""
    units = soils.with_overrides(sc.soil_overrides, f"{cfg.path}: scenario {sc.name}")
    job, recharge_entry, reused, intensity_entry = _tile_job(
        cfg, sc, grid, units, terrain_dir, terrain_cache, terrain_key, numba_threads, echo,
        cell_progress,
    )  # fmt: skip
    sinks = _sinks(cfg, sc, grid, out, names, job.with_probability, job.soil)
    sums = _write_tiles(job, sinks, runner, progress)
    _cache_results(
        cfg, sc, out, terrain_cache, terrain_key, (recharge_entry, reused), intensity_entry
    )
    rows_out, areas = _summary(cfg, sc, units.keys, names, sums)
    write_summary(rows_out, out / SUMMARY)
    hazard_areas, hazard_names = areas.hazard, areas.hazard_names
    written = {s.target.name for s in sinks.values()} | {SUMMARY}
    largest: list[dict[str, object]] = []
    if cfg.zones:
        with_hazard = hazard_names if hazard_areas is not None else None
        largest, zone_files = _zones(
            cfg, sc, grid, job, units.keys, names, with_hazard, out, terrain_dir
        )
        written |= zone_files
    unit_areas = sums.table[1:, 1:] / 10_000.0
    maps: dict[str, Path] = {}
    if cfg.quicklook_map:
        maps = draw_scenario_maps(cfg, sc, grid, units.keys, names, terrain_dir, out, unit_areas)
        if hazard_areas is not None:
            maps |= draw_rainfall_maps(cfg, sc, grid, units.keys, terrain_dir, out, hazard_areas)
            maps["rainfall thresholds"] = draw_thresholds(cfg, sc, grid, units, terrain_dir, out)
    written |= {p.name for p in maps.values()}
    if sums.failing is not None and sc.storm is not None:
        written |= _failing_series(cfg, sc, sums.failing, out, maps)
    runout = None
    if cfg.runout is not None and sc.name in cfg.runout.scenarios:
        from slopescreen.maps.region.runout_run import runout_outputs

        runout = runout_outputs(cfg, sc, grid, out, terrain_dir, inventory, runner)
        written |= set(runout.files)
        if runout.map is not None:
            maps["run-out reach"] = runout.map
        echo(
            f"scenario {sc.name}: run-out from {runout.source_ha:,.2f} ha of sources reaches "
            f"{runout.reach_ha:,.2f} ha"
            + (f"; {runout.asset_count} assets in reach" if cfg.runout.assets else "")
            + " (an empirical screening estimate)"
        )
    _remove_stale(out, written)
    return ScenarioSummary(
        sc.name,
        sc.wetness,
        sc.seismic_coefficient,
        sc.soil_overrides,
        _hectares(sums.table),
        maps,
        _scenario_warnings(cfg, sc, units, sums.missing),
        areas.probability,
        sorted(written),
        sc.description,
        float(sums.cut_table[1:, 1:].sum()) / 10_000.0,
        sc.loads,
        unit_areas.tolist(),
        largest,
        hazard_areas.sum(axis=0).tolist() if hazard_areas is not None else None,
        hazard_names,
        areas.spread,
        runout,
    ), rows_out


def largest_zones(zones: object, count: int = 10) -> list[dict[str, object]]:
    """The ``count`` largest zones: class, soil unit, ground area, mean slope and where it
    lies: a point inside it (x, y in the DEM's CRS; longitude and latitude)."""
    frame = zones.sort_values("area_m2", ascending=False, kind="stable").head(count)  # type: ignore[attr-defined]
    inside = frame.geometry.representative_point()
    lonlat = inside.to_crs("EPSG:4326") if len(frame) else inside
    return [
        {
            "class_name": str(r.class_name),
            "soil_unit": str(r.soil_unit),
            "area_ha": float(r.area_m2) / 10_000.0,
            "mean_slope_deg": float(r.mean_slope_deg),
            "x": float(p.x),
            "y": float(p.y),
            "lon": float(q.x),
            "lat": float(q.y),
        }
        for r, p, q in zip(frame.itertuples(), inside, lonlat, strict=True)
    ]


def draw_scenario_maps(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    unit_keys: list[str],
    names: list[str],
    terrain_dir: Path,
    out: Path,
    unit_areas: np.ndarray,
) -> dict[str, Path]:
    """Every map of one scenario in the house style; returns {what it shows: PNG path}."""
    from slopescreen.maps.outputs.quicklook import (
        CRITICAL_RECHARGE_SPECIALS,
        MapFrame,
        draw_classes,
        draw_values,
        read_for_map,
        storm_specials,
    )
    from slopescreen.stability_classes import classify_probability

    region = cfg.region.name

    def frame(what: str, inset: bool = False) -> MapFrame:
        return MapFrame(
            grid,
            terrain_dir / HILLSHADE,
            f"{region}: {what}",
            f"scenario {sc.name}: {sc.loads}",
            soil_codes=terrain_dir / SOIL_UNIT,
            zones=out / LOW_MARGIN_ZONES if cfg.zones else None,
            inset=(unit_keys, unit_areas) if inset else None,
        )

    f = frame("factor-of-safety classes (susceptibility, no annual frequency)", inset=True)
    maps = {
        "stability classes": draw_classes(
            out / STABILITY_CLASS_MAP,
            f,
            read_for_map(out / STABILITY_CLASS, f),
            names,
            "factor of safety",
        )
    }
    if (out / PROBABILITY).exists():
        f = frame("probability of failure P(FS < 1) from parameter spread")
        pf = read_for_map(out / PROBABILITY, f).astype(np.float64)
        pf[pf < 0.0] = np.nan
        maps["probability of failure"] = draw_classes(
            out / PROBABILITY_MAP,
            f,
            classify_probability(pf),
            list(PF_CLASS_NAMES),
            "chance that FS < 1",
            "no result (no spread given, or no data)",
        )
    f = frame("critical steady recharge (rain that starts failure)")
    maps["critical recharge"] = draw_values(
        out / RECHARGE.replace(".tif", ".png"),
        f,
        out / RECHARGE,
        "steady recharge bringing FS to 1 (mm/day, log scale)",
        log=True,
        specials=CRITICAL_RECHARGE_SPECIALS,
    )
    f = frame("soil depth of each cell (the depth every FS on this map uses)")
    maps["soil depth"] = draw_values(
        out / SOIL_DEPTH_MAP, f, out / SOIL_DEPTH, "vertical soil depth (m)"
    )
    if sc.storm is not None:
        f = frame("time from the start of the storm until FS falls below 1")
        maps["storm time to failure"] = draw_values(
            out / STORM_TIME_TO_FAILURE_MAP,
            f,
            out / STORM_TIME_TO_FAILURE,
            "hours after the storm began",
            specials=storm_specials(sc.storm.later_h),
            value_range=(0.0, sc.storm.later_h),
        )
    return maps


def draw_rainfall_maps(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    unit_keys: list[str],
    terrain_dir: Path,
    out: Path,
    hazard_areas: np.ndarray,
) -> dict[str, Path]:
    """The hazard-class and return-period maps of a rainfall scenario."""
    from slopescreen.maps.outputs.quicklook import (
        MapFrame,
        draw_classes,
        draw_values,
        read_for_map,
        return_period_specials,
    )

    table = cfg.rainfall_frequency
    assert table is not None

    def frame(what: str, inset: bool = False) -> MapFrame:
        return MapFrame(
            grid,
            terrain_dir / HILLSHADE,
            f"{cfg.region.name}: {what}",
            f"scenario {sc.name}: {sc.loads}; design rain {table.idf_table.name}",
            soil_codes=terrain_dir / SOIL_UNIT,
            inset=(unit_keys, hazard_areas) if inset else None,
        )

    f = frame("hazard: annual probability that rain starts failure", inset=True)
    maps = {
        "hazard classes": draw_classes(
            out / HAZARD_CLASS_MAP,
            f,
            read_for_map(out / HAZARD_CLASS, f),
            table.hazard_names,
            "how often rain starts failure",
        )
    }
    f = frame("return period of the rain that starts failure")
    t0, t1 = table.return_periods_yr[0], table.return_periods_yr[-1]
    maps["triggering return period"] = draw_values(
        out / RETURN_PERIOD_MAP,
        f,
        out / RETURN_PERIOD,
        "return period of the triggering storm (years, log scale)",
        log=True,
        specials=return_period_specials(t0, t1),
        value_range=(t0, t1),
    )
    return maps


def draw_thresholds(
    cfg: Config, sc: Scenario, grid: Grid, units: SoilUnits, terrain_dir: Path, out: Path
) -> Path:
    """rainfall_thresholds.png: each unit's critical intensity against duration at its
    median slope and specific catchment area, over the design-rainfall curves."""
    from slopescreen.maps.outputs.validation_plots import threshold_figure
    from slopescreen.maps.region.unit_medians import SensitivityJob, unit_means, unit_medians
    from slopescreen.rain_thresholds import critical_intensity_mm_h

    table, spec = cfg.rainfall_frequency, sc.rainfall
    assert table is not None and spec is not None
    job = SensitivityJob(
        grid=grid,
        slope_deg=terrain_dir / SLOPE_DEG,
        sca=terrain_dir / SCA,
        saturation=out / SATURATION,
        codes=terrain_dir / SOIL_UNIT,
        tables=units.parameters,
        ranges={},
        recharge_mm_day=None,
        seismic=float(sc.seismic_coefficient),
        fs_breaks=cfg.fs_breaks,
        n_units=len(units.keys),
        soil=cell_soil(units, cfg.region, sc, terrain_dir, elevation_range(cfg.region, grid)),
    )
    medians, steep = unit_medians(job), unit_medians(job, share=0.9)
    means = unit_means(job)  # units whose fields vary by cell: their means stand in
    p = {
        name: np.array([means.get(code, {}).get(name, v) for code, v in enumerate(values)], float)
        for name, values in units.parameters.items()
        if name in CORE_FIELDS
    }
    # one column per unit and slope (median, steepest 10%), all durations vectorised
    labels, codes, slopes, scas = [], [], [], []
    for code, (slope, sca, _) in medians.items():
        for label, slope_deg in (("median", slope), ("steep 10%", steep[code][0])):
            labels.append(f"{units.keys[code - 1]} ({label} slope {slope_deg:.0f} deg)")
            codes.append(code)
            slopes.append(slope_deg)
            scas.append(sca)
    c = np.array(codes, int)
    t_day = p["transmissivity_m2_day"][c]
    columns = np.array(
        [
            critical_intensity_mm_h(
                d,
                after_h=table.after_h,
                slope_deg=np.array(slopes),
                depth_m=p["depth_m"][c],
                cohesion_kpa=p["cohesion_kpa"][c],
                friction_deg=p["friction_deg"][c],
                unit_weight_kn_m3=p["unit_weight_kn_m3"][c],
                saturated_unit_weight_kn_m3=p["saturated_unit_weight_kn_m3"][c],
                root_cohesion_kpa=p["root_cohesion_kpa"][c],
                water_table_depth_m=spec.initial_water_table_depth_m,
                hydraulic_conductivity_m_s=p["hydraulic_conductivity_m_s"][c],
                diffusivity_m2_s=p["diffusivity_m2_s"][c],
                long_term_infiltration_m_s=spec.long_term_infiltration_mm_day / 8.64e7,
                seismic_coefficient=sc.seismic_coefficient,
                specific_catchment_area_m=np.array(scas),
                transmissivity_m2_day=t_day,
                min_slip_depth_m=spec.min_slip_depth_m,
            )
            for d in table.durations_h
        ]
    )  # durations x columns
    thresholds = {label: columns[:, i] for i, label in enumerate(labels)}
    if table.rasters:  # gridded: each raster's median, stated on the plot
        from slopescreen.maps.region.idf_table import regional_intensities

        design = regional_intensities(table.rasters, table.durations_h, table.depth_rasters)
    else:
        design = np.array(table.intensity_mm_h)
    intensity = design * spec.uplift
    return threshold_figure(
        out / THRESHOLDS_MAP,
        table.durations_h,
        thresholds,
        table.return_periods_yr,
        intensity,
        f"{cfg.region.name}: {sc.name}. Critical rain per soil unit at its median and its "
        f"steepest 10% slope (median catchment), water table {spec.initial_water_table_depth_m:g}"
        " m deep" + ("; soil fields set cell by cell at their unit means" if means else ""),
        "median of the gridded design rainfall" if table.rasters else "design rainfall",
    )
