"""``slopescreen backcalc``: what the known landslides imply about the soil.

For each landslide cell of the inventory, the value of one parameter that brings FS to 1
under a scenario's wetness, the other parameters as in the soil table (inverse solutions
of the infinite slope); summarised per soil unit (cells, no solution, median, quartiles)
in OUT/validation/backcalc_<scenario>_<parameter>.csv, cell by cell in ..._cells.csv,
with a histogram per unit (.png). The report and manifest.json gain the summary.

Parameters: cohesion_kpa (default), friction_deg, root_cohesion_kpa, depth_m,
saturation, recharge_mm_day. Storm scenarios are refused (no steady wetness).

Example::

    slopescreen backcalc demo_region/quillbrook_scenarios.toml --out demo_output \\
        --scenario wet_season --parameter cohesion_kpa
"""

from __future__ import annotations

import argparse
from typing import Any

from slopescreen.cli.options import command_parser, run_folder_options, with_cautions

PARAMETER_NAMES = (
    "cohesion_kpa",
    "friction_deg",
    "root_cohesion_kpa",
    "depth_m",
    "saturation",
    "recharge_mm_day",
)


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "backcalc", "the parameter values at which the known landslides fail", __doc__, run
    )
    run_folder_options(parser, scenario=True)
    parser.add_argument(
        "--parameter",
        default="cohesion_kpa",
        choices=PARAMETER_NAMES,
        help="the parameter to solve for (default: cohesion_kpa)",
    )


def run(args: argparse.Namespace) -> int:
    return with_cautions(execute, args)


def execute(args: argparse.Namespace) -> None:
    """The command's work and its lines of results (no cautions: the caller prints them)."""
    from slopescreen.cli.options import out_folder
    from slopescreen.maps.inventory.backcalc import back_analyse
    from slopescreen.maps.inventory.finished_run import locked_run, record_results

    out = out_folder(args.out, args.scenarios)
    with locked_run(args.scenarios, out, args.inventory) as (done, inv):
        sc = done.scenario(args.scenario)
        entry, files = back_analyse(done, sc, inv, args.parameter)
        record_results(done, "back_analysis", f"{sc.name}:{args.parameter}", entry, files)
    print(f"{entry['parameter_label']} at failure under {sc.name} (landslide cells):")
    for u in entry["units"]:  # type: ignore[attr-defined]
        print(
            f"  {u['soil_unit']:>8}: {u['cells']} cells, median {_g(u['median'])}, quartiles "
            f"{_g(u['q1'])} to {_g(u['q3'])}, no solution {u['no_solution']}; "
            f"soil table {_g(u['soil_table'])}"
        )
    print(f"written: {', '.join(str(out / f) for f in entry['tables'])}, {out / entry['figure']}")


def _g(value: object) -> str:
    return "-" if value is None else f"{float(value):.3g}"  # type: ignore[arg-type]
