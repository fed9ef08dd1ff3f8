"""One scenario over the grid, tile by tile: rasters, area tables, zones and map.

Every tile is computed by :func:`compute_tile` from files on disk and a small picklable
:class:`TileJob`, so the same function runs in this process or on dask workers; results are
written and summed in tile order, so a distributed run gives the same bytes as a serial one.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen import __version__
from slopescreen.errors import InputError
from slopescreen.hazard import PF_CLASS_NAMES, classify, classify_probability
from slopescreen.maps.config import Config, ReliabilitySpec, Scenario
from slopescreen.maps.grid import Grid
from slopescreen.maps.rasters import RasterSink, all_or_nothing, read_block, windows
from slopescreen.maps.soils import SoilUnits
from slopescreen.maps.summary import add_areas, summary_rows, write_summary
from slopescreen.maps.terrain_cache import NODATA_F32
from slopescreen.reliability import Spread, reliability_fosm, reliability_monte_carlo
from slopescreen.scenario import (
    FAILS_WHEN_DRY,
    HOLDS_WHEN_SATURATED,
    Storm,
    critical_recharge_mm_day,
    scenario_fs,
    storm_response,
)

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
Runner = Callable[[Callable[..., dict], list[tuple]], Iterator[dict]]


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
    recharge_cache: Path | None  # critical recharge already computed for these soils
    fs_breaks: tuple[float, ...]
    fs_cap: float
    reliability: ReliabilitySpec
    n_units: int
    numba_threads: int = 0  # 0: numba's default (all cores)


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


def check_storm_soils(units: SoilUnits, sc: Scenario, where: str) -> None:
    if sc.storm is None:
        return
    for code, key in enumerate(units.keys, start=1):
        for name in ("hydraulic_conductivity_m_s", "diffusivity_m2_s"):
            if np.isnan(units.parameters[name][code]):
                extra = " (or moisture_capacity_per_m)" if name == "diffusivity_m2_s" else ""
                raise InputError(
                    f"{where}: storm scenario {sc.name!r} needs {name}{extra} for soil unit {key!r}"
                )


def _fs_fast(seismic: float, tan_slope: np.ndarray, saturation: Any, **p: Any) -> np.ndarray:
    """FS of cells by the compiled kernel (parameters may be arrays of samples)."""
    from slopescreen.maps.kernels import fs_ufunc

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
    if sc.storm is not None:
        return scenario_fs(
            p.pop("slope_deg"),
            p.pop("specific_catchment_area_m"),
            storm=core_storm(sc),
            seismic_coefficient=sc.seismic_coefficient,
            **p,
        )[0]
    slope = p.pop("slope_deg")
    sca = p.pop("specific_catchment_area_m")
    if sc.recharge_mm_day is not None:
        from slopescreen.hydrology import steady_state_saturation
        from slopescreen.scenario import cell_transmissivity_m2_day

        t = cell_transmissivity_m2_day(
            p.get("hydraulic_conductivity_m_s", np.nan),
            p.get("transmissivity_m2_day", np.nan),
            p["depth_m"],
            slope,
        )
        m = steady_state_saturation(sc.recharge_mm_day, sca, slope, t)
    else:
        m = block["saturation"]
    return _fs_fast(sc.seismic_coefficient, block["tan"], m, **p)


def probability(job: TileJob, block: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """(P_f, reliability index) for a tile's cells; NaN for units without spreads."""
    sc, rel = job.scenario, job.reliability
    codes = block["codes"]
    pf = np.full(codes.shape, np.nan)
    beta = np.full(codes.shape, np.nan)
    method = "taylor" if sc.storm is not None else rel.method
    for code in np.unique(codes):
        spreads = job.spreads.get(int(code))
        if not spreads:
            continue
        sel = codes == code
        sub = {k: v[sel] for k, v in block.items()}
        values: dict[str, object] = {name: float(job.tables[name][code]) for name in CORE_FIELDS}
        values.update(spreads)
        values["slope_deg"] = sub["slope"]
        values["specific_catchment_area_m"] = sub["sca"]
        fs_of = partial(_fs_for_probability, sc, sub)
        rho = job.correlations.get(int(code), 0.0)
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


def compute_tile(job: TileJob, rows: slice, cols: slice) -> dict[str, Any]:
    """Every per-cell output of one scenario on one tile, with its area tables."""
    from slopescreen.maps.kernels import fs_by_unit, steady_saturation_by_unit

    if job.numba_threads:
        import numba

        numba.set_num_threads(job.numba_threads)
    sc = job.scenario
    tan = read_block(job.slope_tan, rows, cols)
    sca = read_block(job.sca, rows, cols)
    codes = read_block(job.codes, rows, cols)
    valid = (codes > 0) & (tan != NODATA_F32) & (sca != NODATA_F32)
    out: dict[str, Any] = {"rows": rows, "cols": cols, "missing_wetness": 0}
    m_grid = None
    if sc.saturation_raster is not None:
        from slopescreen.maps.engine import read_saturation

        m_grid = read_saturation(job.scenario.saturation_raster, job.grid, rows, cols)
        out["missing_wetness"] = int((valid & ~np.isfinite(m_grid)).sum())
        valid &= np.isfinite(m_grid)
    c = codes[valid]
    block = {"tan": tan[valid], "sca": sca[valid], "codes": c}
    t = job.tables
    n = c.size
    values: dict[str, np.ndarray] = {}
    if sc.storm is not None or job.spreads or job.recharge_cache is None:
        block["slope"] = read_block(job.slope_deg, rows, cols)[valid].astype(np.float64)
    params = (
        {name: t[name][c] for name in CORE_FIELDS}
        if (sc.storm is not None or job.recharge_cache is None)
        else {}
    )
    if sc.storm is not None:
        storm = core_storm(sc)
        assert storm is not None
        summary, m = storm_response(
            block["slope"],
            storm,
            **{k: v for k, v in params.items() if k != "transmissivity_m2_day"},
        )
        fs = summary.end_min_fs
        values["storm_fs_later"] = np.minimum(summary.later_min_fs, job.fs_cap)
        values["storm_failure_depth"] = summary.end_critical_depth_m
        values["storm_time_to_failure"] = np.where(
            np.isnan(summary.time_to_failure_h), NO_FAILURE_CODE, summary.time_to_failure_h
        )
    else:
        m = np.empty(n)
        if sc.recharge_mm_day is not None:
            steady_saturation_by_unit(
                float(sc.recharge_mm_day),
                block["tan"],
                block["sca"],
                c,
                t["depth_m"],
                t["hydraulic_conductivity_m_s"],
                t["transmissivity_m2_day"],
                m,
            )
        elif m_grid is not None:
            m = m_grid[valid]
            bad = (m < 0.0) | (m > 1.0)
            if bad.any():
                raise InputError(
                    f"{sc.saturation_raster}: saturation values must be in [0, 1], "
                    f"found {float(m[bad][0]):g}"
                )
        else:
            m[:] = sc.saturation
        fs = np.empty(n)
        fs_by_unit(
            block["tan"],
            c,
            m,
            t["depth_m"],
            t["cohesion_kpa"] + t["root_cohesion_kpa"],
            np.tan(np.radians(t["friction_deg"])),
            t["unit_weight_kn_m3"],
            t["saturated_unit_weight_kn_m3"],
            float(sc.seismic_coefficient),
            9.81,
            fs,
        )
    block["saturation"] = np.broadcast_to(m, (n,))
    values["hazard"] = classify(fs, job.fs_breaks)
    values["fs"] = np.minimum(fs, job.fs_cap)
    values["saturation"] = block["saturation"]
    if job.recharge_cache is None:
        values["recharge"] = critical_recharge_mm_day(
            block["slope"], block["sca"], seismic_coefficient=sc.seismic_coefficient, **params
        )
    if job.spreads:
        values["probability"], values["reliability"] = probability(job, block)
    shape = codes.shape
    for name, v in values.items():
        full = (
            np.zeros(shape, np.uint8)
            if name == "hazard"
            else np.full(shape, NODATA_F32, np.float32)
        )
        full[valid] = v if name == "hazard" else np.nan_to_num(v, nan=NODATA_F32)
        out[name] = full
    cell_area = job.grid.cell_area_rows_m2[rows]
    table = np.zeros((job.n_units + 1, len(job.fs_breaks) + 2))
    add_areas(table, codes * valid, out["hazard"], cell_area)
    out["table"] = table
    if job.spreads:
        pf_table = np.zeros((job.n_units + 1, len(PF_CLASS_NAMES) + 1))
        pf_classes = np.zeros(shape, np.uint8)
        pf_classes[valid] = classify_probability(values["probability"])
        add_areas(pf_table, codes * valid, pf_classes, cell_area)
        out["pf_table"] = pf_table
    return out


def serial_runner(fn: Callable[..., dict], jobs: list[tuple]) -> Iterator[dict]:
    for args in jobs:
        yield fn(*args)


def _sinks(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    out: Path,
    names: list[str],
    with_probability: bool,
    with_recharge: bool,
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
    if with_recharge:
        sinks["recharge"] = f32("critical_recharge_mm_day.tif", **recharge_tags(sc))
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


def recharge_tags(sc: Scenario) -> dict[str, str]:
    return {
        "slopescreen_version": __version__,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
        "units": "mm/day of steady recharge bringing FS to 1",
        "code_fails_when_dry": f"{FAILS_WHEN_DRY:g}",
        "code_holds_when_saturated": f"{HOLDS_WHEN_SATURATED:g}",
    }


def recharge_key(units: SoilUnits, sc: Scenario, terrain_key: str) -> str:
    """Content key of a critical-recharge raster: terrain, soil tables and seismic load."""
    import hashlib

    digest = hashlib.sha256(terrain_key.encode())
    for name in CORE_FIELDS:
        digest.update(name.encode())
        digest.update(np.ascontiguousarray(units.parameters[name]).tobytes())
    digest.update(repr(float(sc.seismic_coefficient)).encode())
    return digest.hexdigest()[:24]


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
) -> tuple[ScenarioSummary, list[dict[str, object]]]:
    from slopescreen.maps.quicklook import draw_map
    from slopescreen.maps.terrain_cache import copy_file
    from slopescreen.maps.zones import hazard_zones, write_zones

    where = f"{cfg.path}: scenario {sc.name}"
    units = soils.with_overrides(sc.soil_overrides, where)
    recharge_file = terrain_cache / f"critical_recharge-{recharge_key(units, sc, terrain_key)}.tif"
    cached = recharge_file.exists()
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
        recharge_cache=recharge_file if cached else None,
        fs_breaks=cfg.fs_breaks,
        fs_cap=cfg.fs_cap,
        reliability=cfg.reliability,
        n_units=len(units.keys),
        numba_threads=numba_threads,
    )
    with_probability = bool(units.spreads)
    sinks = _sinks(cfg, sc, grid, out, names, with_probability, not cached)
    tables, pf_tables = [], []
    missing = 0
    with all_or_nothing(*sinks.values()):
        tiles = [(job, rows, cols) for rows, cols in windows(grid)]
        results = runner(compute_tile, tiles)
        for res in progress(results, len(tiles), sc.name):
            for name, sink in sinks.items():
                sink.write(res["rows"], res["cols"], res[name])
            tables.append(res["table"])
            if with_probability:
                pf_tables.append(res["pf_table"])
            missing += res["missing_wetness"]
    if cached:
        copy_file(recharge_file, out / "critical_recharge_mm_day.tif")
    else:
        copy_file(out / "critical_recharge_mm_day.tif", recharge_file)
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
    rows_out = summary_rows(table, units.keys, names, sc.name, "factor_of_safety")
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
    outputs = sorted({s.target.name for s in sinks.values()} | {"critical_recharge_mm_day.tif"})
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
    ), rows_out
