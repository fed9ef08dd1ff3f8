"""The batch run: every scenario of a scenario file, end to end."""

from __future__ import annotations

import json
import platform
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from slopescreen import __version__
from slopescreen.cautions import CAUTIONS
from slopescreen.errors import InputError
from slopescreen.hazard import class_names as hazard_class_names
from slopescreen.maps.config import Config, Scenario, load_config
from slopescreen.maps.grid import Grid, file_sha256, read_elevations, read_grid
from slopescreen.maps.rasters import RasterSink, all_or_nothing
from slopescreen.maps.report import write_report
from slopescreen.maps.scenario_run import (
    Runner,
    ScenarioSummary,
    check_storm_soils,
    run_scenario,
    serial_runner,
)
from slopescreen.maps.soils import SoilUnits, load_soils
from slopescreen.maps.terrain_cache import (
    cache_key,
    copy_file,
    terrain_products,
)
from slopescreen.outputs import write_text

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
    soils: SoilUnits
    hashes: dict[str, str]


def prepare(cfg: Config, codes_target: Path | None = None) -> Inputs:
    """Read and validate every input (shared by ``run`` and ``check``), tile by tile.

    With ``codes_target`` the rasterized soil units are written there as a GeoTIFF.
    """
    grid = read_grid(cfg.region.dem)

    def valid_tile(rows: slice, cols: slice) -> np.ndarray:
        return np.isfinite(read_elevations(cfg.region.dem, "m", rows, cols))

    soils = load_soils(cfg.region, grid)
    for sc in cfg.scenarios:  # everything is checked before anything is written
        where = f"{cfg.path}: scenario {sc.name}"
        check_storm_soils(soils.with_overrides(sc.soil_overrides, where), sc, where)
        if sc.saturation_raster is not None:
            read_saturation(sc.saturation_raster, grid)
    sink = None
    if codes_target is not None:
        tags = {f"unit_{i}": k for i, k in enumerate(soils.keys, start=1)}
        sink = RasterSink(
            codes_target,
            grid,
            "uint16",
            0,
            resampling="nearest",
            tags=tags
            | {
                "slopescreen_version": __version__,
                "description": "soil unit code; unit_N names code N",
            },
        )
    with all_or_nothing(sink) if sink is not None else nullcontext():
        soils.measure_coverage(grid, valid_tile, sink)
        if soils.data_cells == 0:
            raise InputError(f"{cfg.region.dem}: DEM holds no data cells")
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
    return Inputs(cfg, grid, soils, hashes)


def read_saturation(
    path: Path, grid: Grid, rows: slice | None = None, cols: slice | None = None
) -> np.ndarray:
    """A window of the saturation raster resampled onto the DEM grid (bilinear, NaN where it
    has no data); with no window, only checks that the raster can be used."""
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.vrt import WarpedVRT
    from rasterio.windows import Window

    try:
        src = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(f"{path}: cannot read saturation raster ({exc})") from None
    with src:
        if src.crs is None:
            raise InputError(f"{path}: saturation raster has no coordinate reference system")
        with WarpedVRT(
            src,
            crs=grid.crs,
            transform=grid.transform,
            width=grid.width,
            height=grid.height,
            resampling=Resampling.bilinear,
            nodata=np.nan,
            dtype="float32",
        ) as vrt:
            if rows is None or cols is None:
                return np.empty(0)
            window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
            return vrt.read(1, window=window).astype(np.float64)


def run(
    config_path: Path,
    out: Path,
    only: Sequence[str] | None = None,
    cache_dir: Path | None = None,
    progress: bool = True,
    echo: Echo = print,
    workers: int = 0,
    scheduler: str | None = None,
) -> Path:
    """Run the scenarios; return the path of manifest.json.

    ``workers`` > 0 runs the scenario tiles on a local dask.distributed cluster of that many
    worker processes; ``scheduler`` sends them to an existing cluster at that address
    (workers must see the same files at the same paths). The outputs are the same bytes
    either way.
    """
    timings = Timings()
    started = time.perf_counter()
    cfg = load_config(config_path)
    chosen = select_scenarios(cfg, only)
    terrain_dir = out / "terrain"
    inputs = prepare(cfg, codes_target=terrain_dir / "soil_unit.tif")
    timings.add("read and check inputs", started)
    grid, soils = inputs.grid, inputs.soils
    echo(f"region {cfg.region.name}: {grid.width} x {grid.height} cells, {grid.spacing_note}")
    for w in soils.warnings:
        echo(f"WARNING: {w}")

    started = time.perf_counter()
    key = cache_key(inputs.hashes["dem"], cfg.region.dem_elevation_unit)
    cache = cache_dir if cache_dir is not None else out / ".cache"
    folder, reused = terrain_products(grid, cfg.region.dem_elevation_unit, key, cache, __version__)
    for name in ("slope_deg.tif", "specific_catchment_area_m.tif", "hillshade.tif"):
        copy_file(folder / name, terrain_dir / name)
    timings.add("terrain (cached)" if reused else "terrain", started)
    echo(f"terrain: {'reused from cache' if reused else 'computed'} ({folder})")

    names = hazard_class_names(cfg.fs_breaks)
    summaries: list[ScenarioSummary] = []
    with _runner(workers, scheduler, echo) as (runner, numba_threads):
        for sc in chosen:
            started = time.perf_counter()
            summary, _ = run_scenario(
                cfg,
                sc,
                grid,
                soils,
                terrain_dir,
                folder,
                key,
                out / sc.name,
                names,
                lambda items, total, label: _progress(items, total, label, progress),
                runner,
                numba_threads,
            )
            summaries.append(summary)
            timings.add(f"scenario {sc.name}", started)
            mapped = sum(summary.class_areas_ha)
            worst = summary.class_areas_ha[0]
            echo(
                f"scenario {sc.name}: {summary.wetness}; {worst:,.1f} ha of {mapped:,.1f} ha "
                f"mapped in class 1 ({names[0]}) -> {out / sc.name}"
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


@contextmanager
def _runner(workers: int, scheduler: str | None, echo: Echo) -> Iterator[tuple[Runner, int]]:
    """(runner, numba threads per task): serial here, or on a dask.distributed cluster."""
    if not workers and not scheduler:
        yield serial_runner, 0
        return
    from slopescreen.maps.distributed import dask_runner

    with dask_runner(workers, scheduler, echo) as runner:
        yield runner, 1


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
