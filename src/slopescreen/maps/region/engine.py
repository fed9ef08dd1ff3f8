"""The batch run: every scenario of a scenario file, end to end.

What a run guarantees (README, "What a run guarantees"):

- every input is read and checked before anything in the output folder changes;
- one writer per output folder (an advisory lock, see :mod:`slopescreen.maps.io.locks`);
- every file is written in a private folder and renamed into place, never through a link;
- cache entries are keyed by the content of all they depend on and verified before use;
- ``manifest.json`` says ``complete: false`` from the first write until every scenario and
  the report are done, listing the scenarios finished and missing; ``report.html`` is a
  "run not finished" page in the meantime.
"""

from __future__ import annotations

import contextlib
import json
import os
import platform
import re
import shutil
import sys
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass, field, replace
from html import escape
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from slopescreen import __version__
from slopescreen.cautions import CAUTIONS
from slopescreen.errors import InputError
from slopescreen.maps.inventory.reading import Inventory
from slopescreen.maps.io.cache import recorded_sha256
from slopescreen.maps.io.clock import utc_now
from slopescreen.maps.io.grid import Grid, dem_files_sha256, read_elevations, read_grid
from slopescreen.maps.io.locks import folder_lock
from slopescreen.maps.io.rasters import RasterSink, all_or_nothing, read_on_grid
from slopescreen.maps.outputs.comparison import ClassChange
from slopescreen.maps.outputs.report import Extras, RunFacts, write_report
from slopescreen.maps.region.cell_fields import cell_input_files, check_cell_inputs
from slopescreen.maps.region.config import Config, Scenario, load_config
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.maps.region.scenario_run import ScenarioSummary, run_scenario
from slopescreen.maps.region.scenario_tiles import check_storm_soils
from slopescreen.maps.region.soils import SoilUnits, load_soils

if TYPE_CHECKING:
    from slopescreen.maps.outputs.quicklook import MapFrame
from slopescreen.maps.io.safe_writes import (
    copy_verified,
    file_sha256,
    private_folder,
    real_folder,
    remove_stale_work,
    write_text,
)
from slopescreen.maps.outputs.output_names import (
    COMPARISON_FOLDER,
    HAZARD_CLASS,
    HILLSHADE,
    INVENTORY_SCORES,
    MANIFEST,
    MAP_PAGE,
    PAIR_HAZARD_SUFFIX,
    PAIR_RATIO_SUFFIX,
    REPORT,
    RETURN_PERIOD,
    SIDE_BY_SIDE,
    SOIL_UNIT,
    SOIL_UNIT_MAP,
    STABILITY_CLASS,
    TERRAIN_COPIED,
    TERRAIN_FOLDER,
)
from slopescreen.maps.outputs.validation_report import glance_scores, validation_section
from slopescreen.maps.outputs.viewer import write_map_page
from slopescreen.maps.region.terrain_cache import cache_key, terrain_products
from slopescreen.stability_classes import class_names as stability_class_names

Echo = Callable[[str], None]
_SCHEDULER = re.compile(r"[a-z][a-z0-9+.-]*://[A-Za-z0-9_.\-\[\]:]+:[0-9]{1,5}")


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
    dem_files: dict[str, str]  # SHA-256 of every file GDAL reads for the DEM
    voids: dict[str, float] = field(default_factory=dict)  # DEM no-data cells and ground area
    inventory: Inventory | None = None  # known landslides, when [inventory] is given


@dataclass
class RunState:
    """What a run has done so far, for the manifest."""

    started_utc: str
    command: list[str]
    finished_utc: str | None = None
    complete: bool = False
    finished: list[str] = field(default_factory=list)
    missing: list[str] = field(default_factory=list)
    outputs: list[str] = field(default_factory=list)  # relative paths this run wrote
    hashes: dict[str, str] = field(default_factory=dict)  # of those, hashed once each
    summaries: list[ScenarioSummary] = field(default_factory=list)
    terrain: dict[str, object] = field(default_factory=dict)
    validation: dict[str, object] = field(default_factory=dict)  # manifest's "inventory"


def prepare(cfg: Config, codes_target: Path | None = None) -> Inputs:
    """Read and validate every input (shared by ``run`` and ``check``), tile by tile.

    With ``codes_target`` the rasterized soil units are written there as a GeoTIFF.
    """
    grid = read_grid(cfg.region.dem, cfg.region.dem_crs)
    voids = {"cells": 0, "area_m2": 0.0}

    def valid_tile(rows: slice, cols: slice) -> np.ndarray:
        z = read_elevations(cfg.region.dem, cfg.region.dem_elevation_unit, rows, cols)
        ok = np.isfinite(z)
        _check_elevations(cfg.region.dem, grid, z, ok, rows, cols)
        area = np.broadcast_to(grid.ground.cell_area_m2(rows, cols), ok.shape)
        voids["cells"] += int((~ok).sum())
        voids["area_m2"] += float(area[~ok].sum())
        return ok

    def dem_cells(rows: slice, cols: slice) -> np.ndarray:
        return np.isfinite(read_elevations(cfg.region.dem, "m", rows, cols))

    soils = load_soils(cfg.region, grid)
    for sc in cfg.scenarios:  # everything is checked before anything is written
        where = f"{cfg.path}: scenario {sc.name}"
        check_storm_soils(soils.with_overrides(sc.soil_overrides, where), sc, where)
        if sc.saturation_raster is not None:
            read_on_grid(sc.saturation_raster, grid, "saturation", (0.0, 1.0))
        if sc.rain_raster is not None:  # rain must fall on every cell of the DEM
            key, low, high = sc.rain_unit
            read_on_grid(sc.rain_raster, grid, key, (low, high), needed=dem_cells)
    rain = cfg.rainfall_frequency
    if rain is not None and rain.rasters:
        from slopescreen.maps.region.idf_table import check_gridded

        check_gridded(
            rain.rasters,
            rain.durations_h,
            rain.return_periods_yr,
            rain.depth_rasters,
            grid,
            dem_cells,
            rain.idf_table,
        )
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
                "ground_geometry": grid.ground.note,
            },
        )
    with all_or_nothing(sink) if sink is not None else nullcontext():
        soils.measure_coverage(grid, valid_tile, sink)
        if soils.data_cells == 0:
            raise InputError(f"{cfg.region.dem}: DEM holds no data cells")
        check_cell_inputs(soils, cfg.region, grid, dem_cells)
        bare = replace(cfg.region, soil_depth=(), land_cover=None)
        for sc in cfg.scenarios:  # rasters a scenario gives for a unit, checked the same way
            if any(isinstance(v, Path) for f in sc.soil_overrides.values() for v in f.values()):
                where = f"{cfg.path}: scenario {sc.name}"
                check_cell_inputs(soils.with_overrides(sc.soil_overrides, where), bare, grid,
                                  dem_cells)  # fmt: skip
    dem_files = dem_files_sha256(cfg.region.dem)  # the DEM itself first, as GDAL lists it
    hashes = {
        "scenario_file": file_sha256(cfg.path),
        "dem": next(iter(dem_files.values())),
        "soil_units": file_sha256(cfg.region.soil_units),
    }
    if cfg.region.soil_table is not None:
        hashes["soil_table"] = file_sha256(cfg.region.soil_table)
    for path in cell_input_files(soils, cfg.region):
        hashes[f"soil_field:{path.name}"] = file_sha256(path)
    for sc in cfg.scenarios:
        for unit, fields in sc.soil_overrides.items():
            for name, value in fields.items():
                if isinstance(value, Path):
                    hashes[f"soil_field:{sc.name}:{unit}:{name}"] = file_sha256(value)
    for sc in cfg.scenarios:
        if sc.saturation_raster is not None:
            hashes[f"saturation_raster:{sc.name}"] = file_sha256(sc.saturation_raster)
        if sc.rain_raster is not None:
            hashes[f"rain_raster:{sc.name}"] = file_sha256(sc.rain_raster)
        for path in sc.storm.files if sc.storm is not None else []:
            hashes[f"storm_rain:{sc.name}:{path.name}"] = file_sha256(path)
    if rain is not None:
        for path in rain.files:
            hashes[f"design_rainfall:{path.name}"] = file_sha256(path)
    inventory = None
    if cfg.inventory is not None:
        from slopescreen.maps.inventory.reading import read_inventory

        inventory = read_inventory(cfg.inventory, grid, cfg.region.dem_elevation_unit)
        hashes["inventory"] = file_sha256(cfg.inventory.path)
    return Inputs(cfg, grid, soils, hashes, dem_files, voids, inventory)


def check_scheduler_address(address: str) -> None:
    """Refuse, before anything runs, a --scheduler that is not PROTOCOL://HOST:PORT."""
    if not _SCHEDULER.fullmatch(address) or not 1 <= int(address.rsplit(":", 1)[1]) <= 65535:
        raise InputError(
            f"--scheduler {address!r}: not a scheduler address; give PROTOCOL://HOST:PORT "
            "with a port 1-65535, e.g. tcp://10.0.0.5:8786"
        )


ELEVATION_RANGE_M = (-11_000.0, 9_000.0)  # below the deepest trench, above the highest peak


def _check_elevations(
    dem: Path, grid: Grid, z: np.ndarray, ok: np.ndarray, rows: slice, cols: slice
) -> None:
    """InputError for an elevation no place on Earth has (a spike, or a no-data value the
    DEM does not declare): it would give a vertical slope in the middle of a run."""
    low, high = ELEVATION_RANGE_M
    bad = ok & ((z < low) | (z > high))
    if bad.any():
        r, c = np.argwhere(bad)[0]
        x, y = grid.centre_xy(rows.start + r, cols.start + c)
        raise InputError(
            f"{dem}: {int(bad.sum())} elevations outside [{low:g}, {high:g}] m, e.g. "
            f"{z[r, c]:g} m at x = {x:g}, y = {y:g} (a spike, or an undeclared no-data value?)"
        )


RUN_FILES = (MANIFEST, REPORT, MAP_PAGE)  # rewritten by every run


@contextlib.contextmanager
def _previous_restored_on_failure(
    out: Path, subfolders: Iterable[str], staging: Path
) -> Iterator[None]:
    """Move what this run rewrites (its manifest and report, the terrain, comparison and
    chosen scenario folders) into the private ``staging`` folder; if the run then fails,
    remove what it wrote under those names and put the previous ones back, so a failed run
    never leaves a mixed folder. On success the previous ones go with ``staging``. (A
    killed process cannot restore: its manifest says which scenarios it finished.)"""
    aside = staging / "previous"
    aside.mkdir()
    names = [*RUN_FILES, *subfolders]
    moved = []
    for name in names:
        if (out / name).exists():
            os.replace(out / name, aside / name)
            moved.append(name)
    try:
        yield
    except BaseException:
        for name in names:
            path = out / name
            if path.is_dir() and not path.is_symlink():
                shutil.rmtree(path)
            elif path.exists() or path.is_symlink():
                path.unlink()
        for name in moved:
            os.replace(aside / name, out / name)
        raise


def _check_subfolders(out: Path, names: Iterable[str]) -> None:
    for name in names:
        path = out / name
        if path.is_symlink() or (path.exists() and not path.is_dir()):
            kind = "symbolic link" if path.is_symlink() else "file"
            raise InputError(
                f"{path}: must be a real folder written by slopescreen, found a {kind}; remove it"
            )


def run(
    config_path: Path,
    out: Path,
    only: Sequence[str] | None = None,
    cache_dir: Path | None = None,
    progress: bool = True,
    echo: Echo = print,
    workers: int = 0,
    scheduler: str | None = None,
    command: Sequence[str] | None = None,
    extras: Extras | None = None,
) -> Path:
    """Run the scenarios; return the path of manifest.json.

    Every input is read and checked before anything is written, and the output folder is
    held by this run alone: a second run into it stops at once (InputError). The manifest
    is written with ``complete: false`` before the first output and rewritten after each
    scenario, so a run that stops early leaves a folder that says which scenarios it
    finished and which are missing; ``complete: true`` comes after every scenario and the
    report. ``workers`` > 0 runs the scenario tiles on a local dask.distributed cluster of
    that many worker processes; ``scheduler`` sends them to an existing cluster at that
    address (workers must see the same files at the same paths). The outputs are the same
    bytes either way.
    """
    timings = Timings()
    state = RunState(utc_now(), list(sys.argv if command is None else command))
    started = time.perf_counter()
    cfg = load_config(config_path)
    for note in cfg.deprecations:
        echo(f"DEPRECATED: {note}")
    for note in cfg.notes:
        echo(f"NOTE: {note}")
    chosen = select_scenarios(cfg, only)
    if scheduler:
        check_scheduler_address(scheduler)
    cache = cache_dir if cache_dir is not None else out / ".cache"
    if cache.exists() and not cache.is_dir():
        raise InputError(f"{cache}: the cache must be a folder, found a file")
    new_folder = not out.exists()
    real_folder(out)
    subfolders = [TERRAIN_FOLDER, COMPARISON_FOLDER, *(s.name for s in chosen)]
    _check_subfolders(out, subfolders if cache_dir is not None else [*subfolders, ".cache"])
    with folder_lock(out, f"PID {os.getpid()}, started {state.started_utc}", new_folder):
        remove_stale_work(out, skip=cache.resolve())
        with (
            private_folder(out) as staging,
            tile_runner(workers, scheduler, echo) as (runner, numba_threads),
            contextlib.ExitStack() as stack,
        ):
            inputs = prepare(cfg, codes_target=staging / SOIL_UNIT)
            timings.add("read and check inputs", started)
            # nothing in the output folder has changed so far; from here on it says its state,
            # and a failure puts the previous run's outputs back (_previous_restored_on_failure)
            stack.enter_context(_previous_restored_on_failure(out, subfolders, staging))
            state.missing = [s.name for s in chosen]
            if cfg.report:  # first, so that a manifest saying "not complete" has its page
                write_text(out / REPORT, _unfinished_report(cfg, state))
            write_state(out, cfg, inputs, chosen, timings, state)
            os.replace(staging / SOIL_UNIT, real_folder(out / TERRAIN_FOLDER) / SOIL_UNIT)
            state.outputs.append(f"{TERRAIN_FOLDER}/{SOIL_UNIT}")
            steps = _Steps(timings, state, echo, progress, runner, numba_threads)
            _terrain_and_scenarios(cfg, inputs, chosen, out, cache, steps)
            _known_landslides(cfg, inputs, out, steps)
            started = time.perf_counter()
            state.finished_utc = utc_now()
            if cfg.report:
                small, changes = _comparison(cfg, inputs.grid, out, state)
                facts = RunFacts(
                    state.started_utc,
                    state.finished_utc,
                    __version__,
                    state.command,
                    inputs.hashes,
                    void_note(inputs.voids),
                )
                write_report(
                    out / REPORT,
                    cfg,
                    inputs.grid,
                    inputs.soils,
                    stability_class_names(cfg.fs_breaks),
                    state.summaries,
                    facts,
                    small,
                    changes,
                    extras,
                    validation_section(state.validation, out),
                    glance_scores(state.validation),
                )
                state.outputs.append(REPORT)
                write_map_page(
                    out / MAP_PAGE,
                    cfg,
                    inputs.grid,
                    out,
                    out / TERRAIN_FOLDER,
                    state.summaries,
                    stability_class_names(cfg.fs_breaks),
                    [inputs.soils.label(k) for k in inputs.soils.keys],
                )
                state.outputs.append(MAP_PAGE)
            else:
                (out / REPORT).unlink(missing_ok=True)
                (out / MAP_PAGE).unlink(missing_ok=True)
                shutil.rmtree(out / COMPARISON_FOLDER, ignore_errors=True)
            timings.add("report", started)
            state.complete = True
            target = write_state(out, cfg, inputs, chosen, timings, state)
    echo(f"report: {out / REPORT}; manifest: {target}")
    return target


def _comparison(
    cfg: Config, grid: Grid, out: Path, state: RunState
) -> tuple[Path | None, list[ClassChange]]:
    """The report's comparison figures under OUT/comparison: the small multiples of every
    scenario run and a class-change map per pair of scenarios that both ran."""
    from slopescreen.maps.outputs.comparison import class_change, draw_change, draw_small_multiples

    folder = real_folder(out / COMPARISON_FOLDER)
    names = stability_class_names(cfg.fs_breaks)
    ran = [s.name for s in state.summaries]
    written: list[Path] = []
    small = None
    if len(ran) > 1 and cfg.quicklook_map:
        small = draw_small_multiples(
            folder / SIDE_BY_SIDE,
            grid,
            out / TERRAIN_FOLDER / HILLSHADE,
            [(n, out / n / STABILITY_CLASS) for n in ran],
            names,
            f"{cfg.region.name}: factor-of-safety classes by scenario",
        )
        written.append(small)
    changes = []
    for first, second in cfg.comparison.pairs:
        if first not in ran or second not in ran:
            continue
        frame = _change_frame(cfg, grid, out, first, second, "where the class changes")
        step_map, areas = class_change(
            grid,
            out / first / STABILITY_CLASS,
            out / second / STABILITY_CLASS,
            frame.step,
        )
        png = None
        if cfg.quicklook_map:
            png = draw_change(folder / f"{first}_vs_{second}.png", frame, step_map, first, second)
            written.append(png)
        changes.append(ClassChange(first, second, areas, png))
        hazard = [out / name / HAZARD_CLASS for name in (first, second)]
        if all(path in written_rasters(state, out) for path in hazard):
            changes.append(_hazard_change(cfg, grid, out, first, second, folder, written))
    for stale in set(folder.iterdir()) - set(written):
        if stale.is_file() and stale.suffix in (".png", ".tif"):
            stale.unlink()
    state.outputs += [f"{COMPARISON_FOLDER}/{p.name}" for p in written]
    return small, changes


def _known_landslides(cfg: Config, inputs: Inputs, out: Path, steps: _Steps) -> None:
    """Score the scenarios against the inventory ([inventory]); results of the inventory
    commands from an earlier run (validation/) describe other maps and are removed."""
    from slopescreen.maps.outputs.output_names import VALIDATION_FOLDER

    shutil.rmtree(out / VALIDATION_FOLDER, ignore_errors=True)
    (out / INVENTORY_SCORES).unlink(missing_ok=True)
    if inputs.inventory is None:
        return
    from slopescreen.maps.inventory.score_files import score_all

    started = time.perf_counter()
    section, files = score_all(
        cfg,
        inputs.grid,
        inputs.soils.keys,
        out,
        steps.state.finished,
        inputs.inventory,
        steps.runner,
        steps.echo,
        lambda items, total, label: _progress(items, total, label, steps.progress),
    )
    steps.state.validation["inventory"] = section
    steps.state.outputs += [f.relative_to(out).as_posix() for f in files]
    steps.timings.add("inventory scores", started)


def written_rasters(state: RunState, out: Path) -> set[Path]:
    return {out / name for name in state.outputs if name.endswith(".tif")}


def _change_frame(
    cfg: Config, grid: Grid, out: Path, first: str, second: str, what: str
) -> MapFrame:
    """The frame of a map comparing two scenarios."""
    from slopescreen.maps.outputs.quicklook import MapFrame

    return MapFrame(  # the title short (it does not wrap), the scenarios below it
        grid,
        out / TERRAIN_FOLDER / HILLSHADE,
        f"{cfg.region.name}: {what}",
        f"first {first}: {_loads(cfg, first)}\nsecond {second}: {_loads(cfg, second)}",
        soil_codes=out / TERRAIN_FOLDER / SOIL_UNIT,
    )


def _hazard_change(
    cfg: Config, grid: Grid, out: Path, first: str, second: str, folder: Path, written: list[Path]
) -> ClassChange:
    """Where the hazard class changes between two rainfall scenarios (e.g. today's design
    rainfall and an uplifted one): the area that becomes more or less frequent, and the
    ratio of their triggering return periods."""
    from slopescreen.maps.outputs.comparison import (
        HAZARD_CHANGE_NAMES,
        RATIO_BEYOND,
        RATIO_FREQUENT,
        RATIO_ONE_SIDED,
        PeriodRatio,
        class_change,
        draw_change,
        period_ratio,
    )
    from slopescreen.maps.outputs.palette import FAILS_DRY_HEX, HOLDS_HEX, PARTIAL_HEX
    from slopescreen.maps.outputs.quicklook import Special, draw_values

    frame = _change_frame(cfg, grid, out, first, second, "where the hazard class changes")
    step_map, areas = class_change(
        grid, out / first / HAZARD_CLASS, out / second / HAZARD_CLASS, frame.step
    )
    png = None
    if cfg.quicklook_map:
        png = draw_change(
            folder / f"{first}_vs_{second}{PAIR_HAZARD_SUFFIX}",
            frame,
            step_map,
            first,
            second,
            HAZARD_CHANGE_NAMES,
        )
        written.append(png)
    periods = [out / name / RETURN_PERIOD for name in (first, second)]
    target = folder / f"{first}_vs_{second}{PAIR_RATIO_SUFFIX}"
    tags = {
        "slopescreen_version": __version__,
        "units": f"triggering return period in {second} / in {first} (below 1: more frequent)",
        "code_beyond": f"{RATIO_BEYOND:g}: neither triggers within the table",
        "code_frequent": f"{RATIO_FREQUENT:g}: more often than the table, or before rain",
        "code_one_sided": f"{RATIO_ONE_SIDED:g}: within the table in one scenario only",
        "ground_geometry": grid.ground.note,
    }
    median, shorter, area = period_ratio(grid, *periods, target, tags)
    written.append(target)
    ratio_png = None
    if cfg.quicklook_map and area > 0.0:
        ratio_png = draw_values(
            target.with_suffix(".png"),
            _change_frame(cfg, grid, out, first, second, "how the return period changes"),
            target,
            "return period, second / first (below 1: more often)",
            log=True,
            specials=(
                Special(RATIO_FREQUENT, FAILS_DRY_HEX, "more often than the table in either"),
                Special(RATIO_ONE_SIDED, PARTIAL_HEX, "within the table in one only"),
                Special(RATIO_BEYOND, HOLDS_HEX, "no storm of the table starts failure"),
            ),
            value_range=(0.1, 10.0),
        )
        written.append(ratio_png)
    ratio = PeriodRatio(target, ratio_png, median, shorter, area)
    return ClassChange(first, second, areas, png, HAZARD_CHANGE_NAMES, ratio)


def _loads(cfg: Config, name: str) -> str:
    return next(sc.loads for sc in cfg.scenarios if sc.name == name)


@dataclass
class _Steps:
    """How the run's steps report and where they run."""

    timings: Timings
    state: RunState
    echo: Echo
    progress: bool
    runner: Runner
    numba_threads: int


def _terrain_and_scenarios(
    cfg: Config, inputs: Inputs, chosen: list[Scenario], out: Path, cache: Path, steps: _Steps
) -> None:
    """Terrain (from a verified cache entry, or computed), then every scenario; the
    manifest is rewritten after each."""
    timings, state, echo, progress = steps.timings, steps.state, steps.echo, steps.progress
    grid, soils = inputs.grid, inputs.soils
    terrain_dir = out / TERRAIN_FOLDER
    echo(f"region {cfg.region.name}: {grid.width} x {grid.height} cells, {grid.spacing_note}")
    echo(f"DEM: {void_note(inputs.voids)}")
    for w in soils.warnings:
        echo(f"WARNING: {w}")
    started = time.perf_counter()
    key = cache_key(inputs.dem_files, cfg.region.dem_elevation_unit, grid.crs.to_wkt(), __version__)
    folder, reused = terrain_products(
        grid, cfg.region.dem_elevation_unit, key, cache, __version__, echo, steps.runner
    )
    for name in TERRAIN_COPIED:
        if not copy_verified(folder / name, terrain_dir / name, recorded_sha256(folder, name)):
            raise InputError(f"{folder / name}: cache file changed while in use; run again")
        state.outputs.append(f"terrain/{name}")
    k0, k1 = grid.ground.scale_range()
    state.terrain = {
        "cache_key": key,
        "reused": reused,
        "ground_geometry": grid.ground.note,
        "map_scale_range": [_finite(k0), _finite(k1)],
        "ground_interpolation_error": grid.ground.interpolation_error,
        "dem_no_data": {
            "cells": inputs.voids["cells"],
            "area_ha": round(inputs.voids["area_m2"] / 10_000.0, 4),
        },
    }
    if cfg.quicklook_map:
        _soil_unit_map(cfg, grid, soils, terrain_dir)
        state.outputs.append(f"{TERRAIN_FOLDER}/{SOIL_UNIT_MAP}")
    else:
        (terrain_dir / SOIL_UNIT_MAP).unlink(missing_ok=True)
    timings.add("terrain (cached)" if reused else "terrain", started)
    echo(f"terrain: {'reused from cache (verified)' if reused else 'computed'} ({folder})")

    names = stability_class_names(cfg.fs_breaks)
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
            steps.runner,
            steps.numba_threads,
            echo,
            cell_progress=progress and steps.runner is serial_runner,
            inventory=inputs.inventory,
        )
        state.summaries.append(summary)
        state.outputs += [f"{sc.name}/{f}" for f in summary.outputs]
        state.missing.remove(sc.name)
        state.finished.append(sc.name)
        timings.add(f"scenario {sc.name}", started)
        write_state(out, cfg, inputs, chosen, timings, state)
        mapped = sum(summary.class_areas_ha)
        worst = summary.class_areas_ha[0]
        echo(
            f"scenario {sc.name}: {summary.wetness}; {worst:,.1f} ha of {mapped:,.1f} ha "
            f"mapped in class 1 ({names[0]}) -> {out / sc.name}"
        )
        for w in summary.warnings:
            echo(f"WARNING: {w}")


def _soil_unit_map(cfg: Config, grid: Grid, soils: SoilUnits, terrain_dir: Path) -> Path:
    """terrain/soil_unit.png: the soil units in the house style."""
    from slopescreen.maps.outputs.palette import unit_rgb
    from slopescreen.maps.outputs.quicklook import MapFrame, draw_classes, read_for_map

    frame = MapFrame(
        grid,
        terrain_dir / HILLSHADE,
        f"{cfg.region.name}: soil units",
        f"from {cfg.region.soil_units.name}, field {cfg.region.soil_unit_field}",
        soil_codes=terrain_dir / SOIL_UNIT,
    )
    return draw_classes(
        terrain_dir / SOIL_UNIT_MAP,
        frame,
        read_for_map(terrain_dir / SOIL_UNIT, frame),
        list(soils.keys),
        "soil unit",
        "no soil unit, or no DEM data",
        colours=unit_rgb(len(soils.keys)),
    )


def void_note(voids: dict[str, float]) -> str:
    """One line on the DEM's no-data cells (voids, masked water, the sea)."""
    if not voids.get("cells"):
        return "no no-data cells"
    return (
        f"{int(voids['cells']):,} no-data cells ({voids['area_m2'] / 10_000.0:,.2f} ha on the "
        "ground): flow stops there; catchment_cut_off.tif marks where wetness is a lower bound"
    )


def _unfinished_report(cfg: Config, state: RunState) -> str:
    """The page standing in report.html while a run is under way (and after it, if it
    stopped early): an earlier run's report would describe another configuration."""
    return (
        "<!DOCTYPE html><html><head><meta charset='utf-8'><title>slopescreen: run not "
        f"finished</title></head><body><h1>{escape(cfg.region.name)}: run not finished</h1>"
        f"<p>A slopescreen run started here at {escape(state.started_utc)} (UTC) and has not "
        "finished, or stopped early. The files in this folder may come from two runs; "
        "<code>manifest.json</code> lists the scenarios finished and those missing. Run "
        "again to complete it.</p><ul>"
        + "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS)
        + "</ul></body></html>\n"
    )


@contextmanager
def tile_runner(workers: int, scheduler: str | None, echo: Echo) -> Iterator[tuple[Runner, int]]:
    """(runner, numba threads per task): serial here, or on a dask.distributed cluster."""
    if not workers and not scheduler:
        yield serial_runner, 0
        return
    from slopescreen.maps.region.distributed import dask_runner

    with dask_runner(workers, scheduler, echo) as runner:
        yield runner, 1


def _finite(value: float) -> float | None:
    """Strict JSON has no NaN or infinity: such values are null."""
    return float(value) if np.isfinite(value) else None


def _output_sha256(out: Path, name: str, state: RunState) -> str:
    """A written output's SHA-256, computed once (the manifest is rewritten per scenario)."""
    if name not in state.hashes:
        state.hashes[name] = file_sha256(out / name)
    return state.hashes[name]


def write_state(
    out: Path,
    cfg: Config,
    inputs: Inputs,
    chosen: list[Scenario],
    timings: Timings,
    state: RunState,
) -> Path:
    """Write manifest.json (strict JSON) for the run as it stands."""
    import geopandas
    import rasterio

    manifest = {
        "tool": "slopescreen",
        "version": __version__,
        "complete": state.complete,
        "started_utc": state.started_utc,
        "finished_utc": state.finished_utc,
        "command": state.command,
        "scenarios_finished": state.finished,
        "scenarios_missing": state.missing,
        "report": "written" if REPORT in state.outputs else "not written",
        "python": platform.python_version(),
        "packages": {
            "numpy": np.__version__,
            "rasterio": rasterio.__version__,
            "gdal": rasterio.__gdal_version__,
            "geopandas": geopandas.__version__,
        },
        "scenario_file": str(cfg.path),
        "inputs_sha256": inputs.hashes,
        "dem_files_sha256": inputs.dem_files,
        "terrain": state.terrain,
        "parameters": {
            "fs_breaks": list(cfg.fs_breaks),
            "fs_cap": cfg.fs_cap,
            "min_zone_area_m2": cfg.min_zone_area_m2,
            "soil_units": {
                k: {f: _finite(inputs.soils.parameters[f][i]) for f in inputs.soils.parameters}
                for i, k in enumerate(inputs.soils.keys, start=1)
            },
        },
        "scenarios": [
            {
                "name": s.name,
                "description": s.description,
                "wetness": s.wetness,
                "seismic_coefficient": s.seismic_coefficient,
                "soil_overrides": {
                    unit: {k: str(v) if isinstance(v, Path) else v for k, v in fields.items()}
                    for unit, fields in s.soil_overrides.items()
                },
            }
            for s in chosen
        ],
        "coverage": {
            "unmapped_share": inputs.soils.unmapped_share,
            "warnings": inputs.soils.warnings,
        },
        "timings_s": timings.steps,
        "outputs": {name: _output_sha256(out, name, state) for name in sorted(state.outputs)},
        "cautions": list(CAUTIONS),
        **state.validation,
    }
    runout = {s.name: s.runout.as_dict() for s in state.summaries if s.runout is not None}
    if runout:
        manifest["runout"] = runout
    text = json.dumps(manifest, indent=2, allow_nan=False) + "\n"
    return write_text(out / MANIFEST, text)
