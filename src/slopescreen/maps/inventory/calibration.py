"""``calibrate`` on a finished run: per soil unit, a multiplier on one strength parameter
chosen to rank the training landslides best, the flagged share kept under a limit.

Search: coordinate ascent over the units (each unit's multiplier on the stated grid, the
others held; sweeps until none changes, at most ``MAX_SWEEPS``). The success AUC is a step
function of the multipliers, so the grid is searched exhaustively rather than by a
derivative or bracketing method; ties go to the multiplier nearest 1 (the least change).
Each candidate is scored exactly (ties one half) on the training landslides, and the
prediction AUC on the held-out ones is reported beside it, so over-fitting shows.

Only the cells of the unit being searched (and of units already changed) are recomputed,
tile by tile, from the run's slope and saturation rasters (strength does not change the
wetness, so m is read as the run wrote it); every other cell keeps the FS of fs.tif.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.inventory.backcalc import cell_inputs, steady_only
from slopescreen.maps.inventory.finished_run import FinishedRun
from slopescreen.maps.inventory.reading import FEW_CELLS, Inventory
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.io.safe_writes import real_folder, write_text
from slopescreen.maps.outputs.output_names import (
    FS,
    SATURATION,
    SLOPE_DEG,
    SOIL_UNIT,
    TERRAIN_FOLDER,
    VALIDATION_FOLDER,
)
from slopescreen.maps.region.cell_fields import CellSoil, soil_cells
from slopescreen.maps.region.config import Scenario
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.maps.region.scenario_tiles import fs_fast
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import CORE_FIELDS, add_tile
from slopescreen.validation import grouped_curves, held_out_blocks, masses_around

CALIBRATED = ("cohesion_kpa", "friction_deg", "root_cohesion_kpa")
DEFAULT_GRID = (0.5, 1.5, 0.05)  # multipliers 0.5, 0.55, ... 1.5
MAX_SWEEPS = 4
GROUPS = ("train", "test")


@dataclass(frozen=True)
class CalibrationJob:
    """One sweep step: FS of ``unit``'s cells for each candidate multiplier (picklable)."""

    grid: Grid
    fs: Path
    saturation: Path
    slope_deg: Path
    codes: Path
    tables: dict[str, np.ndarray]  # soil parameters by code (no multipliers)
    soil: CellSoil  # soil fields set cell by cell
    multipliers: dict[int, float]  # current multipliers of the other units
    changed: tuple[int, ...]  # units whose FS differs from fs.tif
    unit: int
    parameter: str
    candidates: np.ndarray  # multipliers tried on ``unit``
    thresholds: tuple[dict[str, np.ndarray], ...]  # per candidate, per group
    seismic: float
    fs_cap: float
    split: str
    block_cells: tuple[int, int]
    test_share: float
    random_state: int


def unit_fs(
    soil: dict[str, np.ndarray],
    parameter: str,
    multiplier: float,
    tan_slope: np.ndarray,
    saturation: np.ndarray,
    seismic: float,
    fs_cap: float,
) -> np.ndarray:
    """FS of a unit's cells (``soil``: their soil fields, cell by cell) with ``parameter``
    times ``multiplier``, rounded as fs.tif stores it (float32, capped)."""
    p = {name: soil[name] for name in CORE_FIELDS}
    p[parameter] = p[parameter] * multiplier
    p["friction_deg"] = np.minimum(p["friction_deg"], 89.999)
    fs = fs_fast(seismic, tan_slope, saturation, **p)
    return np.minimum(fs, fs_cap).astype(np.float32).astype(np.float64)


def calibration_tile(job: CalibrationJob, rows: slice, cols: slice) -> dict[str, Any]:
    fs = read_block(job.fs, rows, cols).astype(np.float64)
    valid = fs != NODATA_F32
    fs[~valid] = np.nan
    codes = read_block(job.codes, rows, cols).astype(np.int64)
    area = np.broadcast_to(job.grid.ground.cell_area_m2(rows, cols), fs.shape)
    if job.split == "blocks":
        r = np.arange(rows.start, rows.stop)[:, None] // job.block_cells[0]
        c = np.arange(cols.start, cols.stop)[None, :] // job.block_cells[1]
        test = np.broadcast_to(held_out_blocks(r, c, job.test_share, job.random_state), fs.shape)
        masks = {"train": valid & ~test, "test": valid & test}
    else:
        masks = {"train": valid, "test": valid}
    touched = valid & np.isin(codes, (*job.changed, job.unit))
    m = read_block(job.saturation, rows, cols).astype(np.float64)
    tan = np.tan(np.radians(read_block(job.slope_deg, rows, cols).astype(np.float64)))
    soil = soil_cells(job.soil, job.tables, job.grid, rows, cols, codes, touched)
    c = codes[touched]

    def cells(code: int) -> dict[str, np.ndarray]:
        return {name: soil[name][c == code] for name in CORE_FIELDS}

    for code in job.changed:
        sel = valid & (codes == code)
        if code != job.unit and sel.any():
            k = job.multipliers.get(code, 1.0)
            fs[sel] = unit_fs(
                cells(code), job.parameter, k, tan[sel], m[sel], job.seismic, job.fs_cap
            )
    sel = valid & (codes == job.unit)
    mine = cells(job.unit)
    out: dict[str, Any] = {"flagged": np.zeros(job.candidates.size)}
    for i, k in enumerate(job.candidates):
        if sel.any():
            fs[sel] = unit_fs(
                mine, job.parameter, float(k), tan[sel], m[sel], job.seismic, job.fs_cap
            )
        for g in GROUPS:
            keep = masks[g]
            out[(i, g)] = masses_around(fs[keep], area[keep], job.thresholds[i][g])
        out["flagged"][i] = float(area[valid & (fs < 1.0)].sum())
    out["area"] = float(area[valid].sum())
    out["touched"] = int(touched.sum())
    return out


@dataclass
class Landslides:
    """The landslide cells as the calibration sees them."""

    codes: np.ndarray
    tan: np.ndarray
    m: np.ndarray
    area: np.ndarray
    fs: np.ndarray  # of fs.tif
    test: np.ndarray
    soil: dict[str, np.ndarray]  # each soil field at the cells


def _landslides(done: FinishedRun, sc: Scenario, inv: Inventory) -> Landslides:
    from slopescreen.maps.io.rasters import read_at_cells

    v = cell_inputs(done, sc, inv.rows, inv.cols)
    fs = read_at_cells(done.verified(f"{sc.name}/{FS}"), done.grid, inv.rows, inv.cols)
    ok = v["ok"] & (fs != NODATA_F32)
    area = done.grid.ground.cell_area_at(inv.rows[ok], inv.cols[ok])
    return Landslides(
        v["codes"][ok],
        np.tan(np.radians(v["slope_deg"][ok])),
        v["saturation"][ok],
        np.broadcast_to(area, (int(ok.sum()),)).astype(float),
        fs[ok],
        inv.cell_is_test()[ok],
        {name: v[name][ok] for name in CORE_FIELDS},
    )


class Search:
    """Evaluations of the success AUC for a set of multipliers, tile by tile."""

    def __init__(
        self,
        done: FinishedRun,
        sc: Scenario,
        inv: Inventory,
        parameter: str,
        runner: Runner,
    ) -> None:
        self.done, self.sc, self.inv, self.parameter, self.runner = done, sc, inv, parameter, runner
        self.slides = _landslides(done, sc, inv)
        self.base = done.soils.with_overrides(sc.soil_overrides, f"scenario {sc.name}").parameters
        self.soil = done.cell_soil(sc)
        self.evaluations = 0
        self.cells_recomputed = 0

    def cell_set(self, parameter: str) -> set[int]:
        """Unit codes whose ``parameter`` is set cell by cell: a calibrated soil table
        cannot hold their multiplied values, so they are not searched."""
        codes = set(self.soil.rasters.get(parameter, {}))
        if parameter == "depth_m":
            codes |= set(self.soil.depth)
        if parameter == "root_cohesion_kpa" and self.soil.cover is not None:
            codes |= set(self.soil.cover_units)
        return codes

    def _slide_fs(
        self, multipliers: dict[int, float], changed: tuple[int, ...], unit: int, k: float
    ) -> np.ndarray:
        s = self.slides
        fs = s.fs.copy()
        for code in (*changed, unit):
            sel = s.codes == code
            if sel.any():
                mult = k if code == unit else multipliers.get(code, 1.0)
                fs[sel] = unit_fs(
                    {name: v[sel] for name, v in s.soil.items()},
                    self.parameter,
                    mult,
                    s.tan[sel],
                    s.m[sel],
                    self.sc.seismic_coefficient,
                    self.done.cfg.fs_cap,
                )
        return fs

    def evaluate(
        self, multipliers: dict[int, float], unit: int, candidates: np.ndarray
    ) -> list[dict[str, float | None]]:
        """Per candidate multiplier of ``unit`` (the others as in ``multipliers``): training
        and held-out success AUC and the flagged share."""
        current = {c: k for c, k in multipliers.items() if c != unit}
        changed = tuple(sorted(c for c, k in current.items() if k != 1.0))
        s = self.slides
        per_candidate = []
        slide_fs = []
        for k in candidates:
            fs = self._slide_fs(current, changed, unit, float(k))
            slide_fs.append(fs)
            per_candidate.append({"train": np.unique(fs[~s.test]), "test": np.unique(fs[s.test])})
        grid = self.done.grid
        out_dir = self.done.out
        job = CalibrationJob(
            grid=grid,
            fs=out_dir / self.sc.name / FS,
            saturation=out_dir / self.sc.name / SATURATION,
            slope_deg=out_dir / TERRAIN_FOLDER / SLOPE_DEG,
            codes=out_dir / TERRAIN_FOLDER / SOIL_UNIT,
            tables=self.base,
            soil=self.soil,
            multipliers=current,
            changed=changed,
            unit=unit,
            parameter=self.parameter,
            candidates=np.asarray(candidates, float),
            thresholds=tuple(per_candidate),
            seismic=float(self.sc.seismic_coefficient),
            fs_cap=self.done.cfg.fs_cap,
            split=self.inv.spec.split,
            block_cells=self.inv.block_cells,
            test_share=self.inv.spec.test_share,
            random_state=self.inv.spec.random_state,
        )
        total: dict[Any, Any] = {}
        for res in self.runner(calibration_tile, [(job, r, c) for r, c in windows(grid)]):
            add_tile(total, res)
        self.evaluations += len(candidates)
        self.cells_recomputed += total["touched"] * len(candidates)
        results = []
        for i, fs in enumerate(slide_fs):
            row: dict[str, float | None] = {"flagged_share": total["flagged"][i] / total["area"]}
            for g in GROUPS:
                mask = s.test if g == "test" else ~s.test
                t = per_candidate[i][g]
                between, tied = total[(i, g)]
                if t.size == 0 or mask.sum() >= between.sum() + tied.sum():
                    row[f"{g}_auc"] = None
                    continue
                hit = np.bincount(
                    np.searchsorted(t, fs[mask]), weights=s.area[mask], minlength=t.size
                )
                row[f"{g}_auc"] = grouped_curves(between, tied, hit).success_auc
            results.append(row)
        return results


def parse_grid(text: str | None) -> np.ndarray:
    """Multipliers from "LOW:HIGH:STEP" (default 0.5:1.5:0.05), 1 always included."""
    low, high, step = DEFAULT_GRID
    if text:
        try:
            low, high, step = (float(x) for x in text.split(":"))
        except ValueError:
            raise InputError(
                f"--multipliers {text!r}: give LOW:HIGH:STEP, e.g. 0.5:1.5:0.05"
            ) from None
    if not (0.0 < low <= 1.0 <= high <= 10.0 and 0.0 < step <= high - low):
        raise InputError(
            f"--multipliers {text!r}: need 0 < LOW <= 1 <= HIGH <= 10 and 0 < STEP <= HIGH - LOW"
        )
    n = round((high - low) / step)
    if n + 1 > 201:  # before the grid is built: a tiny step would ask for gigabytes
        raise InputError(f"--multipliers {text!r}: at most 201 values, got {n + 1:,}")
    values = np.round(low + step * np.arange(n + 1), 10)
    values = values[values <= high + 1e-9]
    return np.unique(np.r_[values, 1.0])


def _best(rows: list[dict], candidates: np.ndarray, limit: float, current: float) -> int | None:
    feasible = [
        i for i, r in enumerate(rows) if r["train_auc"] is not None and r["flagged_share"] <= limit
    ]
    if not feasible:
        return None
    top = max(rows[i]["train_auc"] for i in feasible)
    best = [i for i in feasible if rows[i]["train_auc"] >= top - 1e-12]
    return min(best, key=lambda i: (abs(candidates[i] - current), abs(candidates[i] - 1.0)))


def calibrate(
    done: FinishedRun,
    sc: Scenario,
    inv: Inventory,
    parameter: str,
    max_flagged_share: float,
    candidates: np.ndarray,
    only_units: list[str] | None = None,
    runner: Runner = serial_runner,
    echo: Any = print,
    reference: str = "",
) -> tuple[dict[str, object], list[Path]]:
    """The manifest entry and files of a calibration; ``reference`` is a line for the
    report (the demo states the hidden value its landslides were drawn from)."""
    if parameter not in CALIBRATED:
        raise InputError(f"--parameter {parameter}: must be one of {', '.join(CALIBRATED)}")
    if not 0.0 < max_flagged_share <= 1.0:
        raise InputError(f"--max-flagged-share {max_flagged_share:g}: must be in (0, 1]")
    steady_only(sc, "calibration")
    search = Search(done, sc, inv, parameter, runner)
    keys = done.soils.keys
    if only_units:
        for u in only_units:
            if u not in keys:
                raise InputError(f"--units {u}: no such soil unit; units: {', '.join(keys)}")
    notes: dict[str, str] = {}
    units: list[int] = []
    train = ~search.slides.test
    for code, key in enumerate(keys, start=1):
        n = int((train & (search.slides.codes == code)).sum())
        if only_units and key not in only_units:
            notes[key] = "not searched (--units)"
        elif parameter in ("cohesion_kpa", "friction_deg") and key in done.soils.lab_tests:
            notes[key] = "strength from lab tests: refit the tests instead"
        elif code in search.cell_set(parameter):
            notes[key] = f"{parameter} set cell by cell (a raster, [soil_depth] or land cover)"
        elif search.base[parameter][code] == 0.0:
            notes[key] = f"{parameter} = 0: a multiplier cannot change it"
        elif n < FEW_CELLS:
            notes[key] = f"{n} training landslide cells (fewer than {FEW_CELLS}): not searched"
        else:
            units.append(code)
    if not units:
        raise InputError(
            f"{inv.spec.path}: no soil unit can be calibrated under {sc.name} "
            f"({'; '.join(f'{k}: {v}' for k, v in notes.items())})"
        )
    multipliers = {code: 1.0 for code in units}
    before = search.evaluate(multipliers, units[0], np.array([1.0]))[0]
    for sweep in range(MAX_SWEEPS):
        moved = False
        for code in units:
            rows = search.evaluate(multipliers, code, candidates)
            best = _best(rows, candidates, max_flagged_share, multipliers[code])
            if best is None:
                notes[keys[code - 1]] = "no multiplier keeps the flagged share under the limit"
                continue
            k = float(candidates[best])
            if k != multipliers[code]:
                moved = True
                multipliers[code] = k
            echo(
                f"  sweep {sweep + 1}, {keys[code - 1]}: multiplier {k:g}, training AUC "
                f"{rows[best]['train_auc']:.4f}, flagged {100 * rows[best]['flagged_share']:.1f}%"
            )
        if not moved:
            break
    after = search.evaluate(multipliers, units[0], np.array([multipliers[units[0]]]))[0]
    for code in units:
        notes.setdefault(keys[code - 1], "searched")
        if multipliers[code] in (candidates[0], candidates[-1]) and multipliers[code] != 1.0:
            notes[keys[code - 1]] = "at the end of the grid: widen --multipliers"
    folder = real_folder(done.out / VALIDATION_FOLDER)
    stem = f"calibration_{sc.name}_{parameter}"
    table_path = write_text(
        folder / f"calibrated_soil_table_{sc.name}_{parameter}.csv",
        _calibrated_table(done, parameter, multipliers),
    )
    unit_rows = [
        {
            "soil_unit": key,
            "before": float(search.base[parameter][code]),
            "multiplier": multipliers.get(code, 1.0),
            "after": float(search.base[parameter][code]) * multipliers.get(code, 1.0),
            "note": notes.get(key, ""),
        }
        for code, key in enumerate(keys, start=1)
    ]
    from slopescreen.maps.outputs.summary import write_summary

    csv_path = write_summary(unit_rows, folder / f"{stem}.csv")
    entry = {
        "scenario": sc.name,
        "parameter": parameter,
        "search": f"multipliers {candidates[0]:g} to {candidates[-1]:g} ({candidates.size} "
        f"values), coordinate ascent over the units, at most {MAX_SWEEPS} sweeps",
        "max_flagged_share": max_flagged_share,
        "split_note": inv.split_note,
        "units": unit_rows,
        "before": _rounded(before),
        "after": _rounded(after),
        "soil_table": table_path.relative_to(done.out).as_posix(),
        "table": csv_path.relative_to(done.out).as_posix(),
        "reference": reference,
        "evaluations": search.evaluations,
        "cells_recomputed": search.cells_recomputed,
    }
    return entry, [csv_path, table_path]


def _rounded(row: dict[str, float | None]) -> dict[str, float | None]:
    return {k: None if v is None else round(float(v), 6) for k, v in row.items()}


def _calibrated_table(done: FinishedRun, parameter: str, multipliers: dict[int, float]) -> str:
    """The input soil table with the calibrated column changed (its comments and other
    columns kept), or, where the parameters came from the polygons, a table of them."""
    from slopescreen.maps.io.textfiles import read_text
    from slopescreen.maps.region.config import SOIL_FIELDS

    keys = done.soils.keys
    key_field = done.cfg.region.soil_unit_field
    source = done.cfg.region.soil_table
    if source is None:
        buffer = io.StringIO()
        w = csv.writer(buffer, lineterminator="\n")
        w.writerow([key_field, *SOIL_FIELDS])
        for code, key in enumerate(keys, start=1):
            values = [done.soils.parameters[f][code] for f in SOIL_FIELDS]
            values[list(SOIL_FIELDS).index(parameter)] *= multipliers.get(code, 1.0)
            w.writerow([key, *("" if np.isnan(v) else f"{v:.6g}" for v in values)])
        return buffer.getvalue()
    lines = read_text(source, "soil table").splitlines(keepends=True)
    out: list[str] = []
    header: list[str] | None = None
    for line in lines:
        if line.lstrip().startswith("#") or not line.strip():
            out.append(line)
            continue
        row = next(csv.reader([line]))
        if header is None:
            header = row
            out.append(line)
            continue
        key = row[header.index(key_field)].strip()
        code = keys.index(key) + 1 if key in keys else 0
        if code in multipliers and multipliers[code] != 1.0:
            col = header.index(parameter)
            row[col] = f"{float(done.soils.parameters[parameter][code]) * multipliers[code]:.6g}"
            buffer = io.StringIO()
            csv.writer(buffer, lineterminator="\n").writerow(row)
            line = buffer.getvalue()
        out.append(line)
    return "".join(out)
