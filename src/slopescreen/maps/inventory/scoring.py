"""Scoring a finished run against a landslide inventory, from its rasters (no map is
recomputed): success-rate and prediction-rate curves by FS and by P_f, ROC areas,
landslide density and frequency ratio per class and soil unit, and the confusion at FS = 1.

Two passes over the rasters, tile by tile: the first reads the scores at the landslide
cells, the second sums, for every tile, the ground area between and at those scores
(:func:`slopescreen.validation.masses_around`, compiled as
:func:`slopescreen.maps.region.kernels.add_masses`), so the curves are exact (ties count one half)
at any map size. In this process the tiles run on a thread per core and, for maps of up to
``KEEP_CELLS``, the first pass's tiles are kept for the second, so FS is read once; given a
dask runner the second pass runs on its workers.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.maps.inventory.reading import FEW_CELLS, Inventory
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.outputs.output_names import FS, PROBABILITY, SOIL_UNIT, STABILITY_CLASS
from slopescreen.maps.region.runners import Runner, serial_runner, threaded_runner
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import add_tile
from slopescreen.stability_classes import classify
from slopescreen.validation import RankCurves, auc_standard_error, grouped_curves, held_out_blocks

KEEP_CELLS = 2**27  # maps up to this size keep the first pass's tiles (4 B a cell, 8 with P_f)
GROUPS = ("all", "test")  # success rate on every landslide; prediction rate on the held out
SCORES = ("fs", "pf")  # FS ascending; P_f descending (scored as -P_f)


@dataclass(frozen=True)
class ScoreJob:
    """What a scoring tile needs: paths and the landslide scores (small, picklable)."""

    grid: Grid
    fs: Path
    probability: Path | None
    classes: Path
    codes: Path
    thresholds: dict[tuple[str, str], np.ndarray]  # (score, group) -> sorted unique scores
    split: str
    block_cells: tuple[int, int]
    test_share: float
    random_state: int
    n_units: int
    fs_breaks: tuple[float, ...]
    class_from_fs: bool  # fs_cap >= the last break: the class follows from fs.tif


def read_scores(
    job: ScoreJob, rows: slice, cols: slice, classes: bool = True, kept: dict | None = None
) -> dict[str, np.ndarray]:
    """FS and -P_f (NaN where none) of a window, float32 as stored (or as ``kept`` from
    the first pass); with ``classes`` also the unit code, the cell area and, where it does
    not follow from FS, the class raster."""
    if kept is not None:
        out = dict(kept)
    else:
        fs = read_block(job.fs, rows, cols)
        valid = fs != NODATA_F32
        fs[~valid] = np.nan
        out = {"fs": fs}
        if job.probability is not None:
            pf = read_block(job.probability, rows, cols)
            out["pf"] = np.where(valid & (pf != NODATA_F32), -pf, np.float32(np.nan))
    fs = out["fs"]
    if classes:
        out["code"] = read_block(job.codes, rows, cols)
        out["area"] = np.ascontiguousarray(
            np.broadcast_to(job.grid.ground.cell_area_m2(rows, cols), fs.shape), np.float64
        )
        if not job.class_from_fs:
            out["class"] = read_block(job.classes, rows, cols).astype(np.int64)
    return out


def _test_area(job: ScoreJob, rows: slice, cols: slice) -> np.ndarray | None:
    """Cells of held-out blocks in a window; None for a date split (all area scored)."""
    if job.split != "blocks":
        return None
    br = np.arange(rows.start, rows.stop) // job.block_cells[0]
    bc = np.arange(cols.start, cols.stop) // job.block_cells[1]
    r0, c0 = br[0], bc[0]
    held = held_out_blocks(
        np.arange(r0, br[-1] + 1)[:, None], np.arange(c0, bc[-1] + 1)[None, :],
        job.test_share, job.random_state,
    )  # fmt: skip
    return held[(br - r0)[:, None], (bc - c0)[None, :]]


def score_tile(
    job: ScoreJob,
    rows: slice,
    cols: slice,
    cell_rows: np.ndarray,
    cell_cols: np.ndarray,
    kept: dict | None = None,
) -> dict[str, Any]:
    """Area masses around the landslide scores, cell counts and the unit x class areas of
    one tile, and the unit (and class, where read) of the landslide cells (``cell_rows``,
    ``cell_cols``) in it."""
    from slopescreen.maps.region.kernels import add_class_areas, add_masses

    v = read_scores(job, rows, cols, kept=kept)
    test = _test_area(job, rows, cols)
    area = v["area"].ravel()
    out: dict[str, Any] = {}
    everywhere = np.zeros(0, bool)  # no mask: every cell
    held = test.ravel() if test is not None else everywhere
    for (score, group), t in job.thresholds.items():
        between, tied = np.zeros(t.size + 1), np.zeros(t.size)
        keep = held if group == "test" else everywhere
        cells = add_masses(v[score].ravel(), area, keep, t, between, tied)
        out[(score, group, "masses")] = (between, tied)
        out[(score, group, "cells")] = int(cells)
    table = np.zeros((job.n_units + 1, len(job.fs_breaks) + 2))
    classes = v["class"].ravel() if "class" in v else np.zeros(0, np.int64)
    breaks = np.asarray(job.fs_breaks, np.float64)
    out["flagged_m2"] = add_class_areas(
        v["fs"].ravel(), v["code"].ravel(), area, breaks, classes, table
    )
    out["unit_class_m2"] = table
    r, c = cell_rows - rows.start, cell_cols - cols.start
    out["slide_code"] = v["code"][r, c]
    if "class" in v:
        out["slide_class"] = v["class"][r, c]
    return out


def _in_window(inv: Inventory, rows: slice, cols: slice) -> np.ndarray:
    return (
        (inv.rows >= rows.start)
        & (inv.rows < rows.stop)
        & (inv.cols >= cols.start)
        & (inv.cols < cols.stop)
    )


def landslide_scores(
    grid: Grid, job: ScoreJob, inv: Inventory, kept: dict[int, dict] | None = None
) -> dict[str, np.ndarray]:
    """FS and -P_f at every landslide cell (NaN where the map has none), reading only the
    tiles that hold one (a thread per core), and the cells' ground area. The tiles read are
    kept in ``kept`` (by tile number) when it is given, for the second pass."""
    n = inv.rows.size
    out = {k: np.full(n, np.nan) for k in SCORES}
    tiles = [
        (i, rows, cols, inside)
        for i, (rows, cols) in enumerate(windows(grid))
        if (inside := _in_window(inv, rows, cols)).any()
    ]
    jobs = [(job, rows, cols, False) for _, rows, cols, _ in tiles]
    for (i, rows, cols, inside), v in zip(tiles, threaded_runner(read_scores, jobs), strict=True):
        if kept is not None:
            kept[i] = v
        r, c = inv.rows[inside] - rows.start, inv.cols[inside] - cols.start
        for key in v:
            out[key][inside] = v[key][r, c]
    out["area"] = np.broadcast_to(grid.ground.cell_area_at(inv.rows, inv.cols), (n,)).copy()
    return out


@dataclass
class GroupScore:
    curves: RankCurves
    landslides: int
    cells: int
    stable_cells: int

    @property
    def se(self) -> float:
        """Hanley & McNeil standard error of the ROC area, counting landslides (not their
        cells, which are not independent) against stable cells."""
        return auc_standard_error(self.curves.roc_auc, self.landslides, self.stable_cells)


@dataclass
class ScenarioScore:
    scenario: str
    record: dict[str, object]
    groups: dict[tuple[str, str], GroupScore]
    density_rows: list[dict[str, object]]
    warnings: list[str] = field(default_factory=list)


def _cells_of(inv: Inventory, v: dict[str, np.ndarray], score: str, group: str) -> np.ndarray:
    keep = np.isfinite(v[score])
    if group == "test":
        keep &= inv.cell_is_test()
    return keep


def score_scenario(
    name: str,
    grid: Grid,
    folder: Path,
    terrain: Path,
    inv: Inventory,
    unit_keys: list[str],
    class_names: list[str],
    runner: Runner = serial_runner,
    progress: Any = None,
    fs_breaks: tuple[float, ...] = (1.0, 1.3, 1.5),
    fs_cap: float = 10.0,
) -> ScenarioScore:
    """Every score of one scenario folder against the inventory (``fs_breaks`` and
    ``fs_cap`` as the run used them)."""
    pf_path = folder / PROBABILITY
    base = ScoreJob(
        grid=grid,
        fs=folder / FS,
        probability=pf_path if pf_path.exists() else None,
        classes=folder / STABILITY_CLASS,
        codes=terrain / SOIL_UNIT,
        thresholds={},
        split=inv.spec.split,
        block_cells=inv.block_cells,
        test_share=inv.spec.test_share,
        random_state=inv.spec.random_state,
        n_units=len(unit_keys),
        fs_breaks=fs_breaks,
        class_from_fs=fs_cap >= fs_breaks[-1],
    )
    # serially, and where the map fits KEEP_CELLS, the tiles of the first pass are kept for
    # the second (each read once); on a cluster each pass reads its own
    kept: dict[int, dict] | None = (
        {} if runner is serial_runner and grid.width * grid.height <= KEEP_CELLS else None
    )
    v = landslide_scores(grid, base, inv, kept)
    scores = SCORES if base.probability is not None else ("fs",)
    thresholds = {(s, g): np.unique(v[s][_cells_of(inv, v, s, g)]) for s in scores for g in GROUPS}
    job = replace(base, thresholds=thresholds)
    tiles = []
    for i, (rows, cols) in enumerate(windows(grid)):
        inside = _in_window(inv, rows, cols)
        cached = kept.pop(i, None) if kept is not None else None
        tiles.append((job, rows, cols, inv.rows[inside], inv.cols[inside], cached))
    # in this process the tiles go to a thread per core (reads and kernels release the GIL)
    run_tiles = threaded_runner if runner is serial_runner else runner
    results: Iterable[dict] = run_tiles(score_tile, tiles)
    if progress is not None:
        results = progress(results, len(tiles), f"{name} scores")
    total: dict[Any, Any] = {}
    v["class"] = classify(v["fs"], fs_breaks).astype(np.int64)  # unless read below
    v["code"] = np.zeros(inv.rows.size, np.int64)
    for (_, rows, cols, *_), res in zip(tiles, results, strict=True):
        inside = _in_window(inv, rows, cols)  # summed in tile order: the same sums anywhere
        v["code"][inside] = res.pop("slide_code")
        if "slide_class" in res:
            v["class"][inside] = res.pop("slide_class")
        add_tile(total, res)
    groups: dict[tuple[str, str], GroupScore] = {}
    warnings: list[str] = []
    for s in scores:
        for g in GROUPS:
            keep = _cells_of(inv, v, s, g)
            t = thresholds[(s, g)]
            if t.size == 0:
                continue
            at = np.searchsorted(t, v[s][keep])
            hit = np.bincount(at, weights=v["area"][keep], minlength=t.size)
            between, tied = total[(s, g, "masses")]
            cells = total[(s, g, "cells")]
            if cells <= int(keep.sum()):
                continue
            groups[(s, g)] = GroupScore(
                grouped_curves(between, tied, hit),
                int(np.unique(inv.slide[keep]).size),
                int(keep.sum()),
                cells - int(keep.sum()),
            )
    scored = np.isfinite(v["fs"])
    on_no_data = int((~scored).sum())
    if on_no_data:
        warnings.append(
            f"scenario {name}: {on_no_data} of {inv.rows.size} landslide cells lie on no data "
            "(no DEM value, soil unit or wetness) and are not scored"
        )
    if scored.sum() < FEW_CELLS:
        warnings.append(
            f"scenario {name}: only {int(scored.sum())} landslide cells scored (fewer than "
            f"{FEW_CELLS}): the scores are not meaningful"
        )
    flagged = total["flagged_m2"]
    area = float(total["unit_class_m2"][1:, 1:].sum())
    hit_area = float(v["area"][scored].sum())
    captured = float(v["area"][scored & (v["fs"] < 1.0)].sum())
    all_fs, test_fs = groups.get(("fs", "all")), groups.get(("fs", "test"))
    all_pf, test_pf = groups.get(("pf", "all")), groups.get(("pf", "test"))

    def auc(gs: GroupScore | None, kind: str = "success") -> float | None:
        if gs is None:
            return None
        return round(gs.curves.success_auc if kind == "success" else gs.curves.roc_auc, 6)

    record: dict[str, object] = {
        "scenario": name,
        "landslides": int(np.unique(inv.slide[scored]).size),
        "cells": int(scored.sum()),
        "success_auc": auc(all_fs),
        "prediction_auc": auc(test_fs),
        "flagged_share": round(flagged / area, 6) if area else None,
        "captured_share": round(captured / hit_area, 6) if hit_area else None,
        "false_alarm_share": round((flagged - captured) / (area - hit_area), 6)
        if area > hit_area
        else None,
        "roc_auc": auc(all_fs, "roc"),
        "roc_auc_se": round(all_fs.se, 6) if all_fs else None,
        "prediction_roc_auc": auc(test_fs, "roc"),
        "prediction_landslides": test_fs.landslides if test_fs else 0,
        "pf_success_auc": auc(all_pf),
        "pf_prediction_auc": auc(test_pf),
        "landslide_cells_on_no_data": on_no_data,
    }
    rows = density_rows(name, inv, v, total["unit_class_m2"], unit_keys, class_names)
    return ScenarioScore(name, record, groups, rows, warnings)


def density_rows(
    name: str,
    inv: Inventory,
    v: dict[str, np.ndarray],
    unit_class_m2: np.ndarray,
    unit_keys: list[str],
    class_names: list[str],
) -> list[dict[str, object]]:
    """Per soil unit and in total, per FS class: area, landslides (each counted once, in
    the class of its least stable scored cell), landslide cells, landslides per km2 and the
    frequency ratio (share of landslide cells / share of area; 1 = as common as anywhere)."""
    scored = np.flatnonzero(np.isfinite(v["fs"]))
    order = scored[np.lexsort((v["fs"][scored], inv.slide[scored]))]
    first = (
        order[np.r_[True, inv.slide[order][1:] != inv.slide[order][:-1]]] if order.size else order
    )
    n_units, n_classes = len(unit_keys), len(class_names)
    shape = (n_units + 1, n_classes + 1)
    slides = np.zeros(shape)
    np.add.at(slides, (v["code"][first], v["class"][first]), 1.0)
    cells = np.zeros(shape)
    np.add.at(cells, (v["code"][scored], v["class"][scored]), v["area"][scored])
    rows: list[dict[str, object]] = []
    for u, unit in [(i, k) for i, k in enumerate(unit_keys, start=1)] + [(0, "all")]:
        area = unit_class_m2[1:, 1:].sum(axis=0) if u == 0 else unit_class_m2[u, 1:]
        hits = slides[1:, 1:].sum(axis=0) if u == 0 else slides[u, 1:]
        hit_area = cells[1:, 1:].sum(axis=0) if u == 0 else cells[u, 1:]
        for c, cname in enumerate(class_names):
            with np.errstate(invalid="ignore", divide="ignore"):
                ratio = (hit_area[c] / hit_area.sum()) / (area[c] / area.sum())
            rows.append(
                {
                    "scenario": name,
                    "soil_unit": unit,
                    "class": cname,
                    "area_ha": round(float(area[c]) / 1e4, 4),
                    "area_share": round(float(area[c] / area.sum()), 6) if area.sum() else "",
                    "landslides": int(hits[c]),
                    "landslide_cell_area_ha": round(float(hit_area[c]) / 1e4, 4),
                    "landslide_cell_share": round(float(hit_area[c] / hit_area.sum()), 6)
                    if hit_area.sum()
                    else "",
                    "landslides_per_km2": round(float(hits[c] / (area[c] / 1e6)), 4)
                    if area[c]
                    else "",
                    "frequency_ratio": round(float(ratio), 4) if np.isfinite(ratio) else "",
                }
            )
    return rows
