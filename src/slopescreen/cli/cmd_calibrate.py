"""``slopescreen calibrate``: tune one strength parameter per soil unit to the known
landslides.

Per soil unit, a multiplier on --parameter (cohesion_kpa, friction_deg or
root_cohesion_kpa) is searched on a grid (--multipliers LOW:HIGH:STEP, default
0.5:1.5:0.05) by coordinate ascent over the units, to maximise the success AUC of the
scenario's FS map on the training landslides while the share of the area with FS < 1 stays
at or below --max-flagged-share (default 0.2). The held-out landslides (the inventory's
split) give the prediction AUC before and after. Writes
OUT/validation/calibration_<scenario>_<parameter>.csv and a calibrated copy of the soil
table beside it (the input table is never changed); the report and manifest.json gain the
result. Storm scenarios are refused. A calibrated value is a screening estimate, not a
design strength.

Example::

    slopescreen calibrate demo_region/quillbrook_scenarios.toml --out demo_output \\
        --scenario wet_season --parameter cohesion_kpa --max-flagged-share 0.1
"""

from __future__ import annotations

import argparse
from typing import Any

from slopescreen.cli.options import (
    command_parser,
    run_folder_options,
    with_cautions,
    workers_option,
)


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub,
        "calibrate",
        "tune a strength parameter per soil unit to known landslides",
        __doc__,
        run,
    )
    run_folder_options(parser, scenario=True)
    workers_option(parser)
    parser.add_argument(
        "--parameter",
        default="cohesion_kpa",
        choices=("cohesion_kpa", "friction_deg", "root_cohesion_kpa"),
        help="the parameter to scale (default: cohesion_kpa)",
    )
    parser.add_argument(
        "--max-flagged-share",
        type=float,
        default=0.2,
        metavar="SHARE",
        help="largest share of the mapped area allowed at FS < 1, (0, 1] (default 0.2)",
    )
    parser.add_argument(
        "--multipliers",
        default=None,
        metavar="LOW:HIGH:STEP",
        help="the grid of multipliers searched (default 0.5:1.5:0.05; 1 always included)",
    )
    parser.add_argument(
        "--units", nargs="+", metavar="UNIT", help="search only these soil units (default: all)"
    )


def run(args: argparse.Namespace) -> int:
    return with_cautions(execute, args)


def execute(args: argparse.Namespace) -> None:
    """The command's work and its lines of results (no cautions: the caller prints them)."""
    from slopescreen.cli.options import check_workers, out_folder
    from slopescreen.maps.inventory.calibration import calibrate, parse_grid
    from slopescreen.maps.inventory.finished_run import locked_run, record_results
    from slopescreen.maps.region.engine import tile_runner

    candidates = parse_grid(args.multipliers)
    out = out_folder(args.out, args.scenarios)
    check_workers(getattr(args, "workers", 0))
    with (
        locked_run(args.scenarios, out, args.inventory) as (done, inv),
        tile_runner(getattr(args, "workers", 0), None, print) as (runner, _),
    ):
        sc = done.scenario(args.scenario)
        print(f"calibrating {args.parameter} under {sc.name} against {inv.spec.path.name}:")
        entry, files = calibrate(
            done,
            sc,
            inv,
            args.parameter,
            args.max_flagged_share,
            candidates,
            args.units,
            runner=runner,
            reference=getattr(args, "reference", ""),
        )
        record_results(done, "calibration", f"{sc.name}:{args.parameter}", entry, files)
    for u in entry["units"]:  # type: ignore[attr-defined]
        print(
            f"  {u['soil_unit']:>8}: {u['before']:.4g} x {u['multiplier']:g} = "
            f"{u['after']:.4g} ({u['note']})"
        )
    b, a = entry["before"], entry["after"]
    print(
        f"success AUC (training) {b['train_auc']:.3f} -> {a['train_auc']:.3f}; prediction AUC "
        f"(held out) {_f(b['test_auc'])} -> {_f(a['test_auc'])}; flagged "
        f"{100 * b['flagged_share']:.1f}% -> {100 * a['flagged_share']:.1f}%"
    )
    print(f"calibrated soil table: {out / entry['soil_table']} (input unchanged)")


def _f(value: object) -> str:
    return "-" if value is None else f"{float(value):.3f}"  # type: ignore[arg-type]
