"""One scenario over the grid: tiles computed (here or on dask workers) and written in
tile order, area tables summed in tile order, then the summary, zones and map.

The per-tile maths lives in :mod:`slopescreen.maps.scenario_tiles`.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from slopescreen import __version__
from slopescreen.hazard import PF_CLASS_NAMES
from slopescreen.maps.cache import building, content_key, usable_entry
from slopescreen.maps.config import Config, Scenario
from slopescreen.maps.grid import Grid
from slopescreen.maps.rasters import RasterSink, all_or_nothing, windows
from slopescreen.maps.scenario_tiles import (
    BETA_CAP,
    CORE_FIELDS,
    NO_FAILURE_CODE,
    Runner,
    TileJob,
    compute_tile,
    serial_runner,
)
from slopescreen.maps.soils import SoilUnits
from slopescreen.maps.summary import summary_rows, write_summary
from slopescreen.maps.terrain_cache import NODATA_F32
from slopescreen.scenario import FAILS_WHEN_DRY, HOLDS_WHEN_SATURATED

RECHARGE = "critical_recharge_mm_day.tif"
# every file a scenario folder can hold; those a run does not write are removed from it
SCENARIO_FILES = (
    "fs.tif",
    "saturation.tif",
    RECHARGE,
    "hazard_class.tif",
    "storm_fs_end.tif",
    "storm_fs_later.tif",
    "storm_failure_depth_m.tif",
    "storm_time_to_failure_h.tif",
    "probability_of_failure.tif",
    "reliability_index.tif",
    "summary.csv",
    "hazard_zones.gpkg",
    "map.png",
)


@dataclass
class ScenarioSummary:
    name: str
    wetness: str
    seismic_coefficient: float
    overrides: dict[str, dict[str, float]]
    class_areas_ha: list[float]  # per FS class, all units
    map_png: Path | None
    warnings: list[str]
    probability_areas_ha: list[float] | None = None  # per probability class
    outputs: list[str] = field(default_factory=list)  # file names in the scenario folder
    description: str = ""
    cut_off_ha: float = 0.0  # mapped area whose upslope area is cut off by a void or edge


def _sinks(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    names: list[str],
    with_probability: bool,
) -> dict[str, RasterSink]:
    from slopescreen.maps.quicklook import colour_table

    base = {
        "slopescreen_version": __version__,
        "scenario": sc.name,
        "wetness": sc.wetness,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
        "ground_geometry": grid.ground.note,
    }

    def f32(name: str, **tags: str) -> RasterSink:
        return RasterSink(out / name, grid, "float32", NODATA_F32, tags=base | tags)

    sinks = {
        "fs": f32(
            "fs.tif",
            units="factor of safety (dimensionless)",
            fs_cap=f"{cfg.fs_cap:g}",
            fs_cap_note=f"FS above {cfg.fs_cap:g}, including flat ground with no driving "
            f"stress, is stored as {cfg.fs_cap:g}",
            **(
                {
                    "fs_when": "minimum over depth and time from the start of the storm to "
                    f"{sc.storm.later_h:g} h (bracketed and refined; see storm_summary)"
                }
                if sc.storm
                else {}
            ),
        ),
        "saturation": f32("saturation.tif", units="saturation ratio m = h_w / z"),
        "hazard": RasterSink(
            out / "hazard_class.tif",
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
    if sc.storm is not None:
        sinks["storm_fs_end"] = f32(
            "storm_fs_end.tif",
            units="minimum FS over depth",
            when=f"at the end of the storm, {sc.storm.duration_h:g} h after it began",
        )
        sinks["storm_fs_later"] = f32(
            "storm_fs_later.tif",
            units="minimum FS over depth",
            when=f"{sc.storm.later_h:g} h after the storm began",
        )
        sinks["storm_failure_depth"] = f32(
            "storm_failure_depth_m.tif",
            units="m, vertical depth of the minimum FS over depth and time (fs.tif)",
        )
        sinks["storm_time_to_failure"] = f32(
            "storm_time_to_failure_h.tif",
            units="hours from the start of the storm until FS first drops below 1",
            code_no_failure=f"{NO_FAILURE_CODE:g} (FS stays >= 1 up to {sc.storm.later_h:g} h)",
        )
    if with_probability:
        conventions = probability_conventions(cfg, sc)
        sinks["probability"] = f32(
            "probability_of_failure.tif", units="P(FS < 1), 0 to 1", **conventions
        )
        sinks["reliability"] = f32(
            "reliability_index.tif",
            units="reliability index beta",
            cap=f"stored within +-{BETA_CAP:g}",
            **conventions,
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
    }


def recharge_tags(sc: Scenario) -> dict[str, str]:
    return {
        "slopescreen_version": __version__,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
        "units": "mm/day of steady recharge bringing FS to 1",
        "code_fails_when_dry": f"{FAILS_WHEN_DRY:g}",
        "code_holds_when_saturated": f"{HOLDS_WHEN_SATURATED:g}",
    }


def recharge_key(units: SoilUnits, sc: Scenario, terrain_key: str) -> str:
    """Content key of a critical-recharge raster: terrain (DEM content), the rasterized soil
    units, every unit's parameters, the seismic load and the program version."""
    parts: list[str | bytes] = [terrain_key, units.codes_sha256, __version__]
    for name in CORE_FIELDS:
        parts += [name, np.ascontiguousarray(units.parameters[name], np.float64).tobytes()]
    parts.append(repr(float(sc.seismic_coefficient)))
    return content_key(*parts)


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
) -> tuple[ScenarioSummary, list[dict[str, object]]]:
    """Write every output of one scenario into ``out``; ``terrain_cache`` is the folder of
    the terrain cache entry, and critical recharge is cached beside it (in its parent)."""
    from slopescreen.maps.quicklook import draw_map
    from slopescreen.maps.zones import hazard_zones, write_zones

    where = f"{cfg.path}: scenario {sc.name}"
    units = soils.with_overrides(sc.soil_overrides, where)
    entry_name = f"critical_recharge-{recharge_key(units, sc, terrain_key)}"
    entry = usable_entry(terrain_cache.parent, entry_name, echo)
    cached = entry is not None
    recharge_file = entry / RECHARGE if entry is not None else None
    job = TileJob(
        grid=grid,
        scenario=sc,
        tables=units.parameters,
        spreads={code: units.unit_spreads(code) for code in units.spreads},
        correlations=units.correlations,
        slope_deg=terrain_dir / "slope_deg.tif",
        slope_tan=terrain_cache / "slope_tan.tif",
        sca=terrain_dir / "specific_catchment_area_m.tif",
        codes=terrain_dir / "soil_unit.tif",
        cut_off=terrain_dir / "catchment_cut_off.tif",
        recharge_cache=recharge_file,
        fs_breaks=cfg.fs_breaks,
        fs_cap=cfg.fs_cap,
        reliability=cfg.reliability,
        n_units=len(units.keys),
        numba_threads=numba_threads,
    )
    with_probability = bool(units.spreads)
    sinks = _sinks(cfg, sc, grid, out, names, with_probability)
    tables, pf_tables, cut_tables = [], [], []
    missing = 0
    with all_or_nothing(*sinks.values()):
        tiles = [(job, rows, cols) for rows, cols in windows(grid)]
        results = runner(compute_tile, tiles)
        for res in progress(results, len(tiles), sc.name):
            for name, sink in sinks.items():
                sink.write(res["rows"], res["cols"], res[name])
            tables.append(res["table"])
            cut_tables.append(res["cut_table"])
            if with_probability:
                pf_tables.append(res["pf_table"])
            missing += res["missing_wetness"]
    if not cached:  # the output holds exactly the cached values; its tags are this scenario's
        info = {"seismic_coefficient": sc.seismic_coefficient, "terrain_key": terrain_key}
        with building(terrain_cache.parent, entry_name, info) as work:
            shutil.copyfile(out / RECHARGE, work / RECHARGE)
    table = np.sum(tables, axis=0)  # in tile order: the same sums whatever ran the tiles
    warnings: list[str] = []
    if missing:
        warnings.append(
            f"scenario {sc.name}: {missing} cells have no value in "
            f"{sc.saturation_raster.name} and are left unmapped"
        )  # type: ignore
    if with_probability:
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
    cut_table = np.sum(cut_tables, axis=0)
    rows_out = summary_rows(
        table, units.keys, names, sc.name, "factor_of_safety", cut_table=cut_table
    )
    pf_areas = None
    if with_probability:
        pf_table = np.sum(pf_tables, axis=0)
        rows_out += summary_rows(
            pf_table, units.keys, list(PF_CLASS_NAMES), sc.name, "probability_of_failure"
        )
        pf_areas = [float(a) / 10_000.0 for a in pf_table[1:, 1:].sum(axis=0)]
    write_summary(rows_out, out / "summary.csv")
    if cfg.hazard_zones:
        zones = hazard_zones(
            out / "hazard_class.tif",
            job.codes,
            grid,
            units.keys,
            names,
            cfg.min_zone_area_m2,
            sc.name,
        )
        write_zones(zones, out / "hazard_zones.gpkg")
    map_png = None
    if cfg.quicklook_map:
        map_png = draw_map(
            out / "map.png",
            grid,
            terrain_dir / "hillshade.tif",
            out / "hazard_class.tif",
            names,
            f"{cfg.region.name}: factor-of-safety classes",
            f"scenario {sc.name} ({sc.wetness})",
        )
    areas = [float(a) / 10_000.0 for a in table[1:, 1:].sum(axis=0)]
    written = {s.target.name for s in sinks.values()} | {"summary.csv"}
    if cfg.hazard_zones:
        written.add("hazard_zones.gpkg")
    if cfg.quicklook_map:
        written.add("map.png")
    for stale in set(SCENARIO_FILES) - written:  # left by an earlier run of another config
        (out / stale).unlink(missing_ok=True)
    outputs = sorted(written)
    return ScenarioSummary(
        sc.name,
        sc.wetness,
        sc.seismic_coefficient,
        sc.soil_overrides,
        areas,
        map_png,
        warnings,
        pf_areas,
        outputs,
        sc.description,
        float(cut_table[1:, 1:].sum()) / 10_000.0,
    ), rows_out
