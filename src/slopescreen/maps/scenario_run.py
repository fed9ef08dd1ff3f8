"""One scenario over the grid, block by block: rasters, area tables, zones and map."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path

import numpy as np

from slopescreen import __version__
from slopescreen.errors import InputError
from slopescreen.hazard import PF_CLASS_NAMES, classify_probability
from slopescreen.maps.config import Config, Scenario
from slopescreen.maps.grid import Grid
from slopescreen.maps.rasters import RasterSink, read_block, windows
from slopescreen.maps.soils import SoilUnits
from slopescreen.maps.summary import add_areas, summary_rows, write_summary
from slopescreen.maps.terrain_cache import NODATA_F32
from slopescreen.reliability import reliability_fosm, reliability_monte_carlo
from slopescreen.scenario import (
    FAILS_WHEN_DRY,
    HOLDS_WHEN_SATURATED,
    Storm,
    evaluate_cells,
    scenario_fs,
)
from slopescreen.storm import storm_summary

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
BETA_CAP = 10.0  # reliability index stored within +-10 (P_f 0 or 1 gives +-inf)
NO_FAILURE_CODE = -1.0  # time-to-failure code: FS stays >= 1 up to the later time


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
    outputs: list[str] = field(default_factory=list)


def core_storm(sc: Scenario) -> Storm | None:
    if sc.storm is None:
        return None
    st = sc.storm
    return Storm(
        rain_mm_h=st.rain_mm_h,
        duration_h=st.duration_h,
        later_h=st.later_h,
        water_table_depth_m=st.initial_water_table_depth_m,
        long_term_infiltration_m_s=st.long_term_infiltration_mm_day / 1000 / 86400,
    )


def _wetness(sc: Scenario, block: dict[str, np.ndarray]) -> dict[str, object]:
    if sc.storm is not None:
        return {"storm": core_storm(sc)}
    if sc.recharge_mm_day is not None:
        return {"recharge_mm_day": sc.recharge_mm_day}
    if sc.saturation_raster is not None:
        return {"saturation": block["saturation"]}
    return {"saturation": sc.saturation}


def _check_storm_soils(units: SoilUnits, sc: Scenario, where: str) -> None:
    if sc.storm is None:
        return
    for code, key in enumerate(units.keys, start=1):
        for name in ("hydraulic_conductivity_m_s", "diffusivity_m2_s"):
            if np.isnan(units.parameters[name][code]):
                extra = " (or moisture_capacity_per_m)" if name == "diffusivity_m2_s" else ""
                raise InputError(
                    f"{where}: storm scenario {sc.name!r} needs {name}{extra} for soil unit {key!r}"
                )


def cell_results(
    block: dict[str, np.ndarray], units: SoilUnits, sc: Scenario, breaks: tuple[float, ...]
) -> dict[str, np.ndarray]:
    """Every per-cell output of the scenario for the cells of one block."""
    codes = block["codes"]
    params = {name: units.lookup(name, codes) for name in CORE_FIELDS}
    res = evaluate_cells(
        block["slope"],
        block["sca"],
        seismic_coefficient=sc.seismic_coefficient,
        fs_breaks=breaks,
        **params,
        **_wetness(sc, block),
    )
    out = {
        "fs": res.factor_of_safety,
        "saturation": res.saturation,
        "recharge": res.critical_recharge_mm_day,
        "hazard": res.hazard_class,
    }
    storm = core_storm(sc)
    if storm is not None:
        summary = storm_summary(
            soil_depth_m=params["depth_m"],
            later_h=storm.later_h,
            duration_h=storm.duration_h,
            depth_steps=storm.depth_steps,
            time_steps=storm.time_steps,
            slope_deg=block["slope"],
            water_table_depth_m=storm.water_table_depth_m,
            rain_mm_h=storm.rain_mm_h,
            long_term_infiltration_m_s=storm.long_term_infiltration_m_s,
            **{
                k: params[k]
                for k in (
                    "cohesion_kpa",
                    "friction_deg",
                    "unit_weight_kn_m3",
                    "saturated_unit_weight_kn_m3",
                    "root_cohesion_kpa",
                    "hydraulic_conductivity_m_s",
                    "diffusivity_m2_s",
                )
            },
        )
        out["storm_fs_later"] = summary.later_min_fs
        out["storm_failure_depth"] = summary.end_critical_depth_m
        out["storm_time_to_failure"] = np.where(
            np.isnan(summary.time_to_failure_h), NO_FAILURE_CODE, summary.time_to_failure_h
        )
    return out


def _fs_only(seismic: float, wetness: dict[str, object], **params: object) -> np.ndarray:
    return scenario_fs(seismic_coefficient=seismic, **wetness, **params)[0]  # type: ignore


def probability(
    block: dict[str, np.ndarray], units: SoilUnits, sc: Scenario, cfg: Config
) -> tuple[np.ndarray, np.ndarray]:
    """(P_f, reliability index) for the block's cells; NaN for units without spreads."""
    codes = block["codes"]
    pf = np.full(codes.shape, np.nan)
    beta = np.full(codes.shape, np.nan)
    rel = cfg.reliability
    method = "taylor" if sc.storm is not None else rel.method
    for code in np.unique(codes):
        spreads = units.unit_spreads(int(code))
        if not spreads:
            continue
        sel = codes == code
        sub = {k: v[sel] for k, v in block.items()}
        values: dict[str, object] = {
            name: float(units.parameters[name][code]) for name in CORE_FIELDS
        }
        values.update(spreads)
        values["slope_deg"] = sub["slope"]
        values["specific_catchment_area_m"] = sub["sca"]
        fs_of = partial(_fs_only, sc.seismic_coefficient, _wetness(sc, sub))
        rho = units.correlations.get(int(code), 0.0)
        corr = {("cohesion_kpa", "friction_deg"): rho} if rho else {}
        if method == "monte_carlo":
            res = reliability_monte_carlo(
                fs_of, values, corr, samples=rel.samples, random_state=rel.random_state
            )
        else:
            res = reliability_fosm(fs_of, values, corr, fs_distribution=rel.fs_distribution)
        pf[sel] = res.probability_of_failure
        beta[sel] = np.clip(res.reliability_index, -BETA_CAP, BETA_CAP)
    return pf, beta


def _sinks(
    cfg: Config, sc: Scenario, grid: Grid, out: Path, names: list[str], with_probability: bool
) -> dict[str, RasterSink]:
    from slopescreen.maps.quicklook import colour_table

    base = {
        "slopescreen_version": __version__,
        "scenario": sc.name,
        "wetness": sc.wetness,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
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
            **({"fs_when": "minimum over depth at the end of the storm"} if sc.storm else {}),
        ),
        "saturation": f32("saturation.tif", units="saturation ratio m = h_w / z"),
        "recharge": f32(
            "critical_recharge_mm_day.tif",
            units="mm/day of steady recharge bringing FS to 1",
            code_fails_when_dry=f"{FAILS_WHEN_DRY:g}",
            code_holds_when_saturated=f"{HOLDS_WHEN_SATURATED:g}",
        ),
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
    if sc.storm is not None:
        sinks["storm_fs_later"] = f32(
            "storm_fs_later.tif",
            units="minimum FS over depth",
            when=f"{sc.storm.later_h:g} h after the storm began",
        )
        sinks["storm_failure_depth"] = f32(
            "storm_failure_depth_m.tif",
            units="m, vertical depth of the minimum FS at the end of the storm",
        )
        sinks["storm_time_to_failure"] = f32(
            "storm_time_to_failure_h.tif",
            units="hours from the start of the storm until FS first drops below 1",
            code_no_failure=f"{NO_FAILURE_CODE:g} (FS stays >= 1 up to {sc.storm.later_h:g} h)",
        )
    if with_probability:
        method = "taylor" if sc.storm is not None else cfg.reliability.method
        sinks["probability"] = f32(
            "probability_of_failure.tif", units="P(FS < 1), 0 to 1", method=method
        )
        sinks["reliability"] = f32(
            "reliability_index.tif",
            units="reliability index beta",
            method=method,
            cap=f"stored within +-{BETA_CAP:g}",
        )
    return sinks


def run_scenario(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    soils: SoilUnits,
    terrain_dir: Path,
    out: Path,
    names: list[str],
    progress: Callable[[Iterable, int, str], Iterable],
) -> tuple[ScenarioSummary, list[dict[str, object]]]:
    from slopescreen.maps.quicklook import draw_map
    from slopescreen.maps.zones import hazard_zones, write_zones

    where = f"{cfg.path}: scenario {sc.name}"
    units = soils.with_overrides(sc.soil_overrides, where)
    _check_storm_soils(units, sc, where)
    with_probability = bool(units.spreads)
    sinks = _sinks(cfg, sc, grid, out, names, with_probability)
    table = np.zeros((len(units.keys) + 1, len(names) + 1))
    pf_table = np.zeros((len(units.keys) + 1, len(PF_CLASS_NAMES) + 1))
    warnings: list[str] = []
    saturation_src = None
    if sc.saturation_raster is not None:
        from slopescreen.maps.engine import open_saturation

        saturation_src = open_saturation(sc.saturation_raster, grid)
    hazard_full = np.zeros(grid.shape, np.uint8) if cfg.hazard_zones or cfg.quicklook_map else None
    missing_wetness = 0
    try:
        blocks = list(windows(grid))
        for rows, cols in progress(blocks, len(blocks), sc.name):
            slope = read_block(terrain_dir / "slope_deg.tif", rows, cols).astype(np.float64)
            sca = read_block(terrain_dir / "specific_catchment_area_m.tif", rows, cols)
            codes = units.codes[rows, cols]
            valid = (codes > 0) & (slope != NODATA_F32) & (sca != NODATA_F32)
            m = None
            if saturation_src is not None:
                from rasterio.windows import Window

                window = Window(0, rows.start, grid.width, rows.stop - rows.start)
                m = saturation_src.read(1, window=window).astype(np.float64)  # type: ignore
                missing_wetness += int((valid & ~np.isfinite(m)).sum())
                valid &= np.isfinite(m)
            block = {
                "slope": slope[valid],
                "sca": sca[valid].astype(np.float64),
                "codes": codes[valid],
            }
            if m is not None:
                block["saturation"] = m[valid]
                bad = (block["saturation"] < 0.0) | (block["saturation"] > 1.0)
                if bad.any():
                    raise InputError(
                        f"{sc.saturation_raster}: saturation values must be in "
                        f"[0, 1], found {float(block['saturation'][bad][0]):g}"
                    )
            values = cell_results(block, units, sc, cfg.fs_breaks)
            values["fs"] = np.minimum(values["fs"], cfg.fs_cap)
            if "storm_fs_later" in values:
                values["storm_fs_later"] = np.minimum(values["storm_fs_later"], cfg.fs_cap)
            if with_probability:
                values["probability"], values["reliability"] = probability(block, units, sc, cfg)
            for name, sink in sinks.items():
                full = (
                    np.zeros(codes.shape, np.uint8)
                    if name == "hazard"
                    else np.full(codes.shape, NODATA_F32, np.float32)
                )
                full[valid] = (
                    np.nan_to_num(values[name], nan=NODATA_F32)
                    if name != "hazard"
                    else values[name]
                )
                sink.write(rows, cols, full)
            cell_area = grid.cell_area_rows_m2[rows]
            classes = np.zeros(codes.shape, np.uint8)
            classes[valid] = values["hazard"]
            add_areas(table, codes * valid, classes, cell_area)
            if with_probability:
                pf_classes = np.zeros(codes.shape, np.uint8)
                pf_classes[valid] = classify_probability(values["probability"])
                add_areas(pf_table, codes * valid, pf_classes, cell_area)
            if hazard_full is not None:
                hazard_full[rows, cols] = classes
        for sink in sinks.values():
            sink.close()
    except BaseException:
        for sink in sinks.values():
            sink.discard()
        raise
    finally:
        if saturation_src is not None:
            saturation_src.close()  # type: ignore[attr-defined]
    if missing_wetness:
        warnings.append(
            f"scenario {sc.name}: {missing_wetness} cells have no value in "
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
    rows_out = summary_rows(table, units.keys, names, sc.name, "factor_of_safety")
    pf_areas = None
    if with_probability:
        rows_out += summary_rows(
            pf_table, units.keys, list(PF_CLASS_NAMES), sc.name, "probability_of_failure"
        )
        pf_areas = [float(a) / 10_000.0 for a in pf_table[1:, 1:].sum(axis=0)]
    write_summary(rows_out, out / "summary.csv")
    if cfg.hazard_zones and hazard_full is not None:
        zones = hazard_zones(
            hazard_full, units.codes, grid, units.keys, names, cfg.min_zone_area_m2, sc.name
        )
        write_zones(zones, out / "hazard_zones.gpkg")
    map_png = None
    if cfg.quicklook_map and hazard_full is not None:
        shade = read_block(
            terrain_dir / "hillshade.tif", slice(0, grid.height), slice(0, grid.width)
        )
        map_png = draw_map(
            out / "map.png",
            grid,
            shade,
            hazard_full,
            names,
            f"{cfg.region.name}: factor-of-safety classes",
            f"scenario {sc.name} ({sc.wetness})",
        )
    areas = [float(a) / 10_000.0 for a in table[1:, 1:].sum(axis=0)]
    return ScenarioSummary(
        sc.name,
        sc.wetness,
        sc.seismic_coefficient,
        sc.soil_overrides,
        areas,
        map_png,
        warnings,
        pf_areas,
        sorted(s.target.name for s in sinks.values()),
    ), rows_out
