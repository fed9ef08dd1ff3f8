"""Inventory scores of every scenario of a run: ``<scenario>/inventory_scores.csv`` (density
and frequency ratio per class and soil unit), ``<scenario>/success_rate.png`` and the
run's ``inventory_scores.csv`` (one row per scenario), plus the manifest's ``inventory``."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from slopescreen.maps.inventory.reading import Inventory
from slopescreen.maps.inventory.scoring import score_scenario
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.safe_writes import file_sha256
from slopescreen.maps.outputs.output_names import INVENTORY_SCORES, SUCCESS_RATE, TERRAIN_FOLDER
from slopescreen.maps.outputs.summary import write_summary
from slopescreen.maps.outputs.validation_plots import success_rate_figure
from slopescreen.maps.region.config import Config
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.stability_classes import class_names as stability_class_names

RUN_COLUMNS = (
    "scenario",
    "landslides",
    "cells",
    "success_auc",
    "prediction_auc",
    "flagged_share",
    "captured_share",
)
SCENARIO_FILES = (INVENTORY_SCORES, SUCCESS_RATE)


def score_all(
    cfg: Config,
    grid: Grid,
    unit_keys: list[str],
    out: Path,
    scenarios: list[str],
    inv: Inventory,
    runner: Runner = serial_runner,
    echo: Callable[[str], None] = print,
    progress: Any = None,
) -> tuple[dict[str, object], list[Path]]:
    """Score every scenario folder; return the manifest's ``inventory`` and the files."""
    names = stability_class_names(cfg.fs_breaks)
    files: list[Path] = []
    records = []
    warnings = list(inv.warnings)
    for name in scenarios:
        folder = out / name
        score = score_scenario(
            name,
            grid,
            folder,
            out / TERRAIN_FOLDER,
            inv,
            unit_keys,
            names,
            runner,
            progress,
            cfg.fs_breaks,
            cfg.fs_cap,
        )
        files.append(write_summary(score.density_rows, folder / INVENTORY_SCORES))
        files.append(
            success_rate_figure(
                folder / SUCCESS_RATE,
                score,
                f"{cfg.region.name}: {name} against {inv.spec.path.name}",
                inv.split_note,
            )
        )
        records.append(score.record | {"density": score.density_rows})
        warnings += score.warnings
        r = score.record
        echo(
            f"scenario {name}: success AUC {_3(r['success_auc'])}, prediction AUC "
            f"{_3(r['prediction_auc'])} ({r['landslides']} landslides, {r['cells']} cells); "
            f"{_pct(r['flagged_share'])} of the area flagged FS < 1 holds "
            f"{_pct(r['captured_share'])} of the landslide cells"
        )
    top = [{k: rec[k] for k in RUN_COLUMNS} for rec in records]
    files.append(
        write_summary(
            [{k: _cell(v) for k, v in row.items()} for row in top], out / INVENTORY_SCORES
        )
    )
    for w in warnings:
        echo(f"WARNING: {w}")
    spec = inv.spec
    section: dict[str, object] = {
        "source": str(spec.path),
        "sha256": file_sha256(spec.path),
        "kind": inv.kind,
        "features": inv.features,
        "landslides": inv.landslides,
        "landslides_outside_dem": inv.outside,
        "landslide_cells": int(inv.rows.size),
        "part": {
            "scarp": "the highest 20% of each polygon's cells by elevation",
            "whole": "every cell of each polygon",
        }[spec.part or "scarp"]
        if inv.kind == "polygons"
        else "the cell holding each point",
        "key": spec.key,
        "date_field": spec.date_field,
        "split": spec.split,
        "split_note": inv.split_note,
        "scenarios": records,
        "warnings": warnings,
    }
    return section, files


def _3(value: object) -> str:
    return f"{float(value):.3f}" if isinstance(value, int | float) else "-"


def _pct(value: object) -> str:
    return f"{100 * float(value):.1f}%" if isinstance(value, int | float) else "-"


def _cell(value: object) -> object:
    return "" if value is None else value
