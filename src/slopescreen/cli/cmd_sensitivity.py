"""``slopescreen sensitivity``: which soil parameter drives the map.

Per soil unit, FS at the unit's median slope and specific catchment area with each
parameter (c', phi', root cohesion, unit weight, depth, and K under steady recharge) at
its low and high value, the others held: mean -/+ 1 standard deviation where the soil
table gives a spread, else -/+ 20%. Shown as a tornado chart per unit
(OUT/validation/sensitivity_<scenario>.png), with the share of each unit's mapped area
whose FS class changes at each value (..._<scenario>.csv); the report and manifest.json
gain both. The widest bars point to the field or lab test that would most improve the
map. Storm scenarios are refused. Needs no inventory.

Example::

    slopescreen sensitivity demo_region/quillbrook_scenarios.toml --out demo_output \\
        --scenario wet_season
"""

from __future__ import annotations

import argparse
from typing import Any

from slopescreen.cli.options import command_parser, run_folder_options, with_cautions


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "sensitivity", "which soil parameter drives the map (tornado per unit)", __doc__, run
    )
    run_folder_options(parser, scenario=True, inventory=False)


def run(args: argparse.Namespace) -> int:
    return with_cautions(execute, args)


def execute(args: argparse.Namespace) -> None:
    """The command's work and its lines of results (no cautions: the caller prints them)."""
    from slopescreen.cli.options import out_folder
    from slopescreen.maps.inventory.finished_run import locked_run, record_results
    from slopescreen.maps.inventory.sensitivity_map import sensitivity

    out = out_folder(args.out, args.scenarios)
    with locked_run(args.scenarios, out, None, read=False) as (done, _):
        sc = done.scenario(args.scenario)
        entry, files = sensitivity(done, sc)
        record_results(done, "sensitivity", sc.name, entry, files)
    print(f"sensitivity under {sc.name} (FS at the median slope; class change on the map):")
    for r in entry["rows"]:  # type: ignore[attr-defined]
        print(
            f"  {r['soil_unit']:>6} {r['parameter']:<28} {r['range']:>7}: FS {r['fs_low']:.3f} / "
            f"{r['fs_high']:.3f} (base {r['fs_base']:.3f}); class changes on "
            f"{100 * r['class_change_low']:.1f}% / {100 * r['class_change_high']:.1f}% of the unit"
        )
    print(f"written: {out / entry['table']}, {out / entry['figure']}")
