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
from slopescreen.maps.cache import building, content_key, usable_entry
from slopescreen.maps.config import Config, Scenario
from slopescreen.maps.grid import Grid
from slopescreen.maps.output_names import LEGACY_SCENARIO_FILES, SCENARIO_OUTPUTS
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
from slopescreen.stability_classes import PF_CLASS_NAMES

RECHARGE = "critical_recharge_mm_day.tif"
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
        "classes": RasterSink(
            out / "stability_class.tif",
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
    from slopescreen.maps.zones import low_margin_zones, write_zones

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
    largest: list[dict[str, object]] = []
    if cfg.zones:
        zones = low_margin_zones(
            out / "stability_class.tif",
            job.codes,
            grid,
            units.keys,
            names,
            cfg.min_zone_area_m2,
            sc.name,
            terrain_dir / "slope_deg.tif",
        )
        write_zones(zones, out / "low_margin_zones.gpkg")
        largest = largest_zones(zones)
    unit_areas = table[1:, 1:] / 10_000.0
    maps: dict[str, Path] = {}
    if cfg.quicklook_map:
        maps = draw_scenario_maps(cfg, sc, grid, units.keys, names, terrain_dir, out, unit_areas)
    areas = [float(a) / 10_000.0 for a in table[1:, 1:].sum(axis=0)]
    written = {s.target.name for s in sinks.values()} | {"summary.csv"}
    written |= {p.name for p in maps.values()}
    if cfg.zones:
        written.add("low_margin_zones.gpkg")
    for stale in set(SCENARIO_FILES) - written:  # left by an earlier run of another config
        (out / stale).unlink(missing_ok=True)
    outputs = sorted(written)
    return ScenarioSummary(
        sc.name,
        sc.wetness,
        sc.seismic_coefficient,
        sc.soil_overrides,
        areas,
        maps,
        warnings,
        pf_areas,
        outputs,
        sc.description,
        float(cut_table[1:, 1:].sum()) / 10_000.0,
        sc.loads,
        unit_areas.tolist(),
        largest,
    ), rows_out


def largest_zones(zones: object, count: int = 10) -> list[dict[str, object]]:
    """The ``count`` largest zones: class, soil unit, ground area and mean slope."""
    frame = zones.sort_values("area_m2", ascending=False, kind="stable").head(count)  # type: ignore[attr-defined]
    return [
        {
            "class_name": str(r.class_name),
            "soil_unit": str(r.soil_unit),
            "area_ha": float(r.area_m2) / 10_000.0,
            "mean_slope_deg": float(r.mean_slope_deg),
        }
        for r in frame.itertuples()
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
    from slopescreen.maps.palette import HOLDS_HEX
    from slopescreen.maps.quicklook import (
        CRITICAL_RECHARGE_SPECIALS,
        MapFrame,
        Special,
        draw_classes,
        draw_values,
        read_for_map,
    )
    from slopescreen.stability_classes import classify_probability

    region = cfg.region.name

    def frame(what: str, inset: bool = False) -> MapFrame:
        return MapFrame(
            grid,
            terrain_dir / "hillshade.tif",
            f"{region}: {what}",
            f"scenario {sc.name}: {sc.loads}",
            soil_codes=terrain_dir / "soil_unit.tif",
            zones=out / "low_margin_zones.gpkg" if cfg.zones else None,
            inset=(unit_keys, unit_areas) if inset else None,
        )

    f = frame("factor-of-safety classes (susceptibility, no annual frequency)", inset=True)
    maps = {
        "stability classes": draw_classes(
            out / "stability_class.png",
            f,
            read_for_map(out / "stability_class.tif", f),
            names,
            "factor of safety",
        )
    }
    if (out / "probability_of_failure.tif").exists():
        f = frame("probability of failure P(FS < 1) from parameter spread")
        pf = read_for_map(out / "probability_of_failure.tif", f).astype(np.float64)
        pf[pf < 0.0] = np.nan
        maps["probability of failure"] = draw_classes(
            out / "probability_of_failure.png",
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
    if sc.storm is not None:
        f = frame("time from the start of the storm until FS falls below 1")
        maps["storm time to failure"] = draw_values(
            out / "storm_time_to_failure_h.png",
            f,
            out / "storm_time_to_failure_h.tif",
            "hours after the storm began",
            specials=(
                Special(NO_FAILURE_CODE, HOLDS_HEX, f"holds to {sc.storm.later_h:g} h (code -1)"),
            ),
            value_range=(0.0, sc.storm.later_h),
        )
    return maps
