"""The batch run: every scenario of a scenario file, end to end."""

from __future__ import annotations

import json
import platform
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from slopescreen import __version__
from slopescreen.cautions import CAUTIONS
from slopescreen.errors import InputError
from slopescreen.hazard import class_names as hazard_class_names
from slopescreen.maps.config import Config, Scenario, load_config
from slopescreen.maps.grid import Grid, file_sha256, read_dem
from slopescreen.maps.rasters import RasterSink, read_block, windows, write_raster
from slopescreen.maps.report import ScenarioSummary, write_report
from slopescreen.maps.soils import SoilUnits, load_soils
from slopescreen.maps.summary import add_areas, summary_rows, write_summary
from slopescreen.maps.terrain_cache import (
    NODATA_F32,
    cache_key,
    copy_file,
    terrain_products,
)
from slopescreen.outputs import write_text
from slopescreen.scenario import FAILS_WHEN_DRY, HOLDS_WHEN_SATURATED, evaluate_cells

Echo = Callable[[str], None]


@dataclass
class Timings:
    steps: dict[str, float] = field(default_factory=dict)

    def add(self, name: str, started: float) -> None:
        self.steps[name] = round(time.perf_counter() - started, 3)


def _progress(items: Iterable, total: int, label: str, enabled: bool) -> Iterable:
    from tqdm import tqdm

    return tqdm(items, total=total, desc=label, unit="block", disable=not enabled, leave=False)


def select_scenarios(cfg: Config, only: Sequence[str] | None) -> list[Scenario]:
    if not only:
        return list(cfg.scenarios)
    names = [s.name for s in cfg.scenarios]
    for name in only:
        if name not in names:
            raise InputError(
                f"--only {name}: no such scenario in {cfg.path.name}; scenarios: {', '.join(names)}"
            )
    return [s for s in cfg.scenarios if s.name in only]


@dataclass
class Inputs:
    cfg: Config
    grid: Grid
    elevation_m: np.ndarray
    soils: SoilUnits
    hashes: dict[str, str]


def prepare(cfg: Config) -> Inputs:
    """Read and validate every input (shared by ``run`` and ``check``)."""
    grid, z = read_dem(cfg.region.dem, cfg.region.dem_elevation_unit)
    soils = load_soils(cfg.region, grid, np.isfinite(z))
    for sc in cfg.scenarios:
        soils.with_overrides(sc.soil_overrides, f"{cfg.path}: scenario {sc.name}")
        if sc.saturation_raster is not None:
            _open_saturation(sc.saturation_raster, grid).close()
    hashes = {
        "scenario_file": file_sha256(cfg.path),
        "dem": file_sha256(cfg.region.dem),
        "soil_units": file_sha256(cfg.region.soil_units),
    }
    if cfg.region.soil_table is not None:
        hashes["soil_table"] = file_sha256(cfg.region.soil_table)
    for sc in cfg.scenarios:
        if sc.saturation_raster is not None:
            hashes[f"saturation_raster:{sc.name}"] = file_sha256(sc.saturation_raster)
    return Inputs(cfg, grid, z, soils, hashes)


def _open_saturation(path: Path, grid: Grid) -> object:
    """The saturation raster resampled onto the DEM grid (bilinear), as a WarpedVRT."""
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.vrt import WarpedVRT

    try:
        src = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(f"{path}: cannot read saturation raster ({exc})") from None
    if src.crs is None:
        src.close()
        raise InputError(f"{path}: saturation raster has no coordinate reference system")
    vrt = WarpedVRT(
        src,
        crs=grid.crs,
        transform=grid.transform,
        width=grid.width,
        height=grid.height,
        resampling=Resampling.bilinear,
        nodata=np.nan,
        dtype="float32",
    )
    vrt._slopescreen_source = src  # keep the source open as long as the VRT
    return vrt


def run(
    config_path: Path,
    out: Path,
    only: Sequence[str] | None = None,
    cache_dir: Path | None = None,
    progress: bool = True,
    echo: Echo = print,
) -> Path:
    """Run the scenarios; return the path of manifest.json."""
    timings = Timings()
    started = time.perf_counter()
    cfg = load_config(config_path)
    chosen = select_scenarios(cfg, only)
    inputs = prepare(cfg)
    timings.add("read and check inputs", started)
    grid, soils = inputs.grid, inputs.soils
    echo(f"region {cfg.region.name}: {grid.width} x {grid.height} cells, {grid.spacing_note}")
    for w in soils.warnings:
        echo(f"WARNING: {w}")

    started = time.perf_counter()
    key = cache_key(inputs.hashes["dem"], cfg.region.dem_elevation_unit)
    cache = cache_dir if cache_dir is not None else out / ".cache"
    folder, reused = terrain_products(grid, inputs.elevation_m, key, cache, __version__)
    terrain_dir = out / "terrain"
    for name in ("slope_deg.tif", "specific_catchment_area_m.tif", "hillshade.tif"):
        copy_file(folder / name, terrain_dir / name)
    unit_tags = {f"unit_{i}": k for i, k in enumerate(soils.keys, start=1)}
    write_raster(
        terrain_dir / "soil_unit.tif",
        grid,
        soils.codes,
        0,
        resampling="nearest",
        tags=unit_tags
        | {
            "slopescreen_version": __version__,
            "description": "soil unit code; unit_N names code N",
        },
    )
    timings.add("terrain (cached)" if reused else "terrain", started)
    echo(f"terrain: {'reused from cache' if reused else 'computed'} ({folder})")
    del inputs.elevation_m

    names = hazard_class_names(cfg.fs_breaks)
    summaries: list[ScenarioSummary] = []
    all_rows: list[dict[str, object]] = []
    for sc in chosen:
        started = time.perf_counter()
        summary, rows = run_scenario(
            cfg, sc, grid, soils, terrain_dir, out / sc.name, names, progress
        )
        summaries.append(summary)
        all_rows += rows
        timings.add(f"scenario {sc.name}", started)
        mapped = sum(summary.class_areas_ha)
        worst = summary.class_areas_ha[0]
        echo(
            f"scenario {sc.name}: {summary.wetness}; {worst:,.1f} ha of {mapped:,.1f} ha mapped "
            f"in class 1 ({names[0]}) -> {out / sc.name}"
        )
        for w in summary.warnings:
            echo(f"WARNING: {w}")

    started = time.perf_counter()
    if cfg.report:
        write_report(out / "report.html", cfg, grid, soils, names, summaries, __version__)
    timings.add("report", started)
    manifest = _manifest(cfg, inputs, chosen, out, timings, key, reused)
    target = write_text(out / "manifest.json", json.dumps(manifest, indent=2) + "\n")
    echo(f"report: {out / 'report.html'}; manifest: {target}")
    return target


def _cells(
    block: dict[str, np.ndarray], soils: SoilUnits, sc: Scenario, breaks: Sequence[float]
) -> object:
    codes = block["codes"]
    params = {name: soils.lookup(name, codes) for name in soils.parameters}
    wet: dict[str, object] = {}
    if sc.recharge_mm_day is not None:
        wet["recharge_mm_day"] = sc.recharge_mm_day
    elif sc.saturation_raster is not None:
        wet["saturation"] = block["saturation"]
    else:
        wet["saturation"] = sc.saturation
    return evaluate_cells(
        block["slope"],
        block["sca"],
        seismic_coefficient=sc.seismic_coefficient,
        fs_breaks=breaks,
        **params,
        **wet,
    )


def run_scenario(
    cfg: Config,
    sc: Scenario,
    grid: Grid,
    soils: SoilUnits,
    terrain_dir: Path,
    out: Path,
    names: list[str],
    progress: bool,
) -> tuple[ScenarioSummary, list[dict[str, object]]]:
    from slopescreen.maps.quicklook import colour_table, draw_map
    from slopescreen.maps.zones import hazard_zones, write_zones

    units = soils.with_overrides(sc.soil_overrides, f"{cfg.path}: scenario {sc.name}")
    base = {
        "slopescreen_version": __version__,
        "scenario": sc.name,
        "wetness": sc.wetness,
        "seismic_coefficient": f"{sc.seismic_coefficient:g}",
    }
    sinks = {
        "fs": RasterSink(
            out / "fs.tif",
            grid,
            "float32",
            NODATA_F32,
            tags=base
            | {
                "units": "factor of safety (dimensionless)",
                "fs_cap": f"{cfg.fs_cap:g}",
                "fs_cap_note": f"FS above {cfg.fs_cap:g}, including flat ground with no driving "
                f"stress, is stored as {cfg.fs_cap:g}",
            },
        ),
        "saturation": RasterSink(
            out / "saturation.tif",
            grid,
            "float32",
            NODATA_F32,
            tags=base | {"units": "saturation ratio m = h_w / z"},
        ),
        "recharge": RasterSink(
            out / "critical_recharge_mm_day.tif",
            grid,
            "float32",
            NODATA_F32,
            tags=base
            | {
                "units": "mm/day of steady recharge bringing FS to 1",
                "code_fails_when_dry": f"{FAILS_WHEN_DRY:g}",
                "code_holds_when_saturated": f"{HOLDS_WHEN_SATURATED:g}",
            },
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
    table = np.zeros((len(units.keys) + 1, len(names) + 1))
    warnings: list[str] = []
    saturation_src = (
        _open_saturation(sc.saturation_raster, grid) if sc.saturation_raster is not None else None
    )
    hazard_full = np.zeros(grid.shape, np.uint8) if cfg.hazard_zones or cfg.quicklook_map else None
    missing_wetness = 0
    try:
        blocks = list(windows(grid))
        for rows, cols in _progress(blocks, len(blocks), sc.name, progress):
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
            res = _cells(block, units, sc, cfg.fs_breaks)
            shape = codes.shape
            outputs = {
                "fs": np.minimum(res.factor_of_safety, cfg.fs_cap),
                "saturation": res.saturation,
                "recharge": res.critical_recharge_mm_day,
            }
            for name, values in outputs.items():
                full = np.full(shape, NODATA_F32, np.float32)
                full[valid] = np.nan_to_num(values, nan=NODATA_F32)
                sinks[name].write(rows, cols, full)
            classes = np.zeros(shape, np.uint8)
            classes[valid] = res.hazard_class
            sinks["hazard"].write(rows, cols, classes)
            add_areas(table, codes * valid, classes, grid.cell_area_rows_m2[rows])
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
    rows_out = summary_rows(table, units.keys, names, sc.name)
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
        sc.name, sc.wetness, sc.seismic_coefficient, sc.soil_overrides, areas, map_png, warnings
    ), rows_out


def _manifest(
    cfg: Config,
    inputs: Inputs,
    chosen: list[Scenario],
    out: Path,
    timings: Timings,
    key: str,
    reused: bool,
) -> dict[str, object]:
    import geopandas
    import rasterio

    outputs = sorted(
        str(p.relative_to(out))
        for p in out.rglob("*")
        if p.is_file()
        and not p.name.startswith(".")
        and ".cache" not in p.parts
        and p.name != "manifest.json"
    )
    return {
        "tool": "slopescreen",
        "version": __version__,
        "python": platform.python_version(),
        "packages": {
            "numpy": np.__version__,
            "rasterio": rasterio.__version__,
            "gdal": rasterio.__gdal_version__,
            "geopandas": geopandas.__version__,
        },
        "scenario_file": str(cfg.path),
        "inputs_sha256": inputs.hashes,
        "terrain": {"cache_key": key, "reused": reused, "spacing": inputs.grid.spacing_note},
        "parameters": {
            "fs_breaks": list(cfg.fs_breaks),
            "fs_cap": cfg.fs_cap,
            "min_zone_area_m2": cfg.min_zone_area_m2,
            "soil_units": {
                k: {f: float(inputs.soils.parameters[f][i]) for f in inputs.soils.parameters}
                for i, k in enumerate(inputs.soils.keys, start=1)
            },
        },
        "scenarios": [
            {
                "name": s.name,
                "wetness": s.wetness,
                "seismic_coefficient": s.seismic_coefficient,
                "soil_overrides": s.soil_overrides,
            }
            for s in chosen
        ],
        "coverage": {
            "unmapped_share": inputs.soils.unmapped_share,
            "warnings": inputs.soils.warnings,
        },
        "timings_s": timings.steps,
        "outputs": {name: file_sha256(out / name) for name in outputs},
        "cautions": list(CAUTIONS),
    }
