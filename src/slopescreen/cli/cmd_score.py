"""``slopescreen score``: score a finished run's maps against known landslides.

Reads the rasters the run wrote (nothing is recomputed) and, for every scenario, writes
OUT/<scenario>/inventory_scores.csv (landslide density and frequency ratio per FS class
and soil unit), OUT/<scenario>/success_rate.png (success and prediction rates with their
AUC) and OUT/inventory_scores.csv (one row per scenario); the report and manifest.json
gain the scores. The inventory's options (key, date_field, part, split...) come from the
scenario file's [inventory] table; --inventory names another file to score.

Example::

    slopescreen score demo_region/quillbrook_scenarios.toml --out demo_output \\
        --inventory demo_region/mapped_landslides.gpkg
"""

from __future__ import annotations

import argparse
import sys
from typing import Any

from slopescreen.cli.options import (
    command_parser,
    run_folder_options,
    with_cautions,
    workers_option,
)
from slopescreen.maps.outputs.output_names import (
    FS,
    INVENTORY_SCORES,
    PROBABILITY,
    SOIL_UNIT,
    STABILITY_CLASS,
    TERRAIN_FOLDER,
)


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "score", "score a finished run's maps against known landslides", __doc__, run
    )
    run_folder_options(parser)
    workers_option(parser)
    parser.add_argument("--quiet", action="store_true", help="no progress bars")


def run(args: argparse.Namespace) -> int:
    return with_cautions(execute, args)


def execute(args: argparse.Namespace) -> None:
    """The command's work and its lines of results (no cautions: the caller prints them)."""
    from slopescreen.cli.options import check_workers, out_folder
    from slopescreen.maps.inventory.finished_run import locked_run, record_results
    from slopescreen.maps.inventory.score_files import score_all
    from slopescreen.maps.region.engine import tile_runner

    out = out_folder(args.out, args.scenarios)
    check_workers(args.workers)
    with (
        locked_run(args.scenarios, out, args.inventory) as (done, inv),
        tile_runner(args.workers, None, print) as (runner, _),
    ):
        scenarios = list(done.manifest["scenarios_finished"])
        for name in scenarios:
            for f in (FS, STABILITY_CLASS, PROBABILITY):
                if f != PROBABILITY or (out / name / f).exists():
                    done.verified(f"{name}/{f}")
        done.verified(f"{TERRAIN_FOLDER}/{SOIL_UNIT}")

        def progress(items: Any, total: int, label: str) -> Any:
            from tqdm import tqdm

            enabled = not args.quiet and sys.stderr.isatty()
            return tqdm(items, total=total, desc=label, disable=not enabled, leave=False)

        section, files = score_all(
            done.cfg,
            done.grid,
            done.soils.keys,
            out,
            scenarios,
            inv,
            runner,
            progress=progress,
        )
        target = record_results(done, "inventory", "", section, files)
    print(f"scores: {out / INVENTORY_SCORES}; report: {out / 'report.html'}; manifest: {target}")
