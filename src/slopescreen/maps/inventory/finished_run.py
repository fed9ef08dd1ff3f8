"""A finished run's folder as the input of the inventory checks (``score``, ``backcalc``,
``calibrate``, ``sensitivity``): the manifest must say complete, the scenario file, DEM
and soil table must be the ones the run read, and every raster used must still hold the
bytes the manifest recorded. Results are added to the manifest and the report's
validation section is rewritten in place.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid, read_grid
from slopescreen.maps.io.safe_writes import file_sha256, write_text
from slopescreen.maps.outputs.output_names import FS, MANIFEST, REPORT
from slopescreen.maps.region.cell_fields import CellSoil
from slopescreen.maps.region.config import Config, InventorySpec, Scenario, load_config
from slopescreen.maps.region.soils import SoilUnits, load_soils

if TYPE_CHECKING:
    from slopescreen.maps.inventory.reading import Inventory


@dataclass
class FinishedRun:
    cfg: Config
    out: Path
    manifest: dict[str, Any]
    grid: Grid
    soils: SoilUnits

    def cell_soil(self, sc: Scenario) -> CellSoil:
        """What sets the scenario's soil fields cell by cell (its overrides, the run's
        [soil_depth] and [land_cover]; terrain from the run's own folder)."""
        from slopescreen.maps.outputs.output_names import TERRAIN_FOLDER
        from slopescreen.maps.region.cell_fields import cell_soil, elevation_range

        units = self.soils.with_overrides(sc.soil_overrides, f"scenario {sc.name}")
        span = elevation_range(self.cfg.region, self.grid)
        return cell_soil(units, self.cfg.region, sc, self.out / TERRAIN_FOLDER, span)

    def scenario(self, name: str) -> Scenario:
        """The finished scenario ``name``; InputError if the run did not finish it or its
        fs.tif changed or went missing since."""
        ran = self.manifest.get("scenarios_finished", [])
        if name not in ran:
            raise InputError(
                f"--scenario {name}: not a scenario of the run in {self.out}; scenarios: "
                f"{', '.join(ran)}"
            )
        self.verified(f"{name}/{FS}")  # the scenario's result as the run wrote it
        return next(s for s in self.cfg.scenarios if s.name == name)

    def verified(self, relative: str) -> Path:
        """A file of the run, checked against the SHA-256 the manifest recorded."""
        recorded = self.manifest.get("outputs", {}).get(relative)
        path = self.out / relative
        if recorded is None or not path.is_file():
            raise InputError(f"{path}: not an output of the run in {self.out}; run again")
        if file_sha256(path) != recorded:
            raise InputError(
                f"{path}: changed since the run wrote it (SHA-256 differs from manifest.json); "
                "run again"
            )
        return path


def open_run(config_path: Path, out: Path) -> FinishedRun:
    """The finished run in ``out`` of the scenario file ``config_path``; InputError if the
    run is missing, unfinished, or its inputs have changed since."""
    cfg = load_config(config_path)
    target = out / MANIFEST
    try:
        manifest = json.loads(target.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{target}: no run here; run the scenario file first") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{target}: not a slopescreen manifest ({exc})") from None
    if not isinstance(manifest, dict) or manifest.get("tool") != "slopescreen":
        raise InputError(f"{target}: not a slopescreen manifest")
    if not manifest.get("complete"):
        raise InputError(f"{target}: the run did not finish (complete: false); run again")
    hashes = manifest.get("inputs_sha256", {})
    now = {"scenario_file": cfg.path, "dem": cfg.region.dem, "soil_table": cfg.region.soil_table}
    for key, path in now.items():
        if path is not None and hashes.get(key) != file_sha256(path):
            raise InputError(
                f"{path}: differs from the {key.replace('_', ' ')} the run in {out} read; "
                "run again first"
            )
    grid = read_grid(cfg.region.dem, cfg.region.dem_crs)
    return FinishedRun(cfg, out, manifest, grid, load_soils(cfg.region, grid))


def inventory_spec(cfg: Config, path: Path | None) -> InventorySpec:
    """The scenario file's [inventory], its path replaced by ``--inventory`` when given."""
    if path is None:
        if cfg.inventory is None:
            raise InputError(f"{cfg.path}: no [inventory] table; give --inventory FILE or add one")
        return cfg.inventory
    if not path.is_file():
        raise InputError(f"--inventory {path}: file not found")
    spec = cfg.inventory or InventorySpec(path=path)
    return spec.with_path(path.resolve())


def record_results(
    run: FinishedRun, key: str, entry: str, value: object, files: list[Path]
) -> Path:
    """Add ``value`` to the manifest under ``key`` (as ``entry`` within it, or the whole
    key when ``entry`` is empty), record the files' SHA-256 and rewrite the report's
    validation section."""
    manifest = run.manifest
    if entry:
        section = manifest.setdefault(key, {})
        section[entry] = value
    else:
        manifest[key] = value
    outputs = manifest.setdefault("outputs", {})
    for f in files:
        outputs[f.relative_to(run.out).as_posix()] = file_sha256(f)
    manifest["outputs"] = dict(sorted(outputs.items()))
    refresh_report(run.out, manifest)
    if (run.out / REPORT).exists():
        outputs[REPORT] = file_sha256(run.out / REPORT)
    return write_text(run.out / MANIFEST, json.dumps(manifest, indent=2, allow_nan=False) + "\n")


def _spliced(text: str, start: str, end: str, content: str) -> str | None:
    """``text`` with what lies between the markers ``start`` and ``end`` replaced by
    ``content``; None if the markers are not there."""
    a, b = text.find(start), text.find(end)
    if a < 0 or b < a:
        return None
    return text[: a + len(start)] + content + text[b:]


def refresh_report(out: Path, manifest: dict[str, Any]) -> None:
    """Rewrite the validation section of report.html and the first screen's line of scores
    from the manifest (no report: none)."""
    from slopescreen.maps.outputs.validation_report import (
        GLANCE_END,
        GLANCE_START,
        SECTION_END,
        SECTION_START,
        glance_scores,
        validation_section,
    )

    report = out / REPORT
    if not report.exists():
        return
    text = report.read_text(encoding="utf-8")
    section = _spliced(text, SECTION_START, SECTION_END, validation_section(manifest, out))
    if section is None:
        raise InputError(
            f"{report}: no validation section (written by an older version); run again"
        )
    # a report from before the first screen had scores keeps its other sections rewritten
    scores = _spliced(section, GLANCE_START, GLANCE_END, glance_scores(manifest))
    write_text(report, scores if scores is not None else section)


@contextmanager
def locked_run(
    config_path: Path, out: Path, inventory: Path | None, read: bool = True
) -> Iterator[tuple[FinishedRun, Inventory | None]]:
    """The finished run and (with ``read``) its inventory, the output folder held by this
    command alone."""
    import os

    from slopescreen.maps.inventory.reading import read_inventory
    from slopescreen.maps.io.clock import utc_now
    from slopescreen.maps.io.locks import folder_lock

    if not (out / MANIFEST).is_file():
        raise InputError(f"{out / MANIFEST}: no run here; run the scenario file first")
    with folder_lock(out, f"PID {os.getpid()}, started {utc_now()}"):
        done = open_run(config_path, out)
        if not read:
            yield done, None
            return
        spec = inventory_spec(done.cfg, inventory)
        yield done, read_inventory(spec, done.grid, done.cfg.region.dem_elevation_unit)
