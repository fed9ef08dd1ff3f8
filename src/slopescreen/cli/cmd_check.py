"""``slopescreen check``: validate every input of a scenario file and print what would run.

Reads the DEM, the soil polygons and parameters and any saturation or rain rasters, checks
every field and range, reports coverage, and lists the scenarios and outputs, without
computing.

Example::

    slopescreen check demo_region/quillbrook_scenarios.toml
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from slopescreen.cli.options import command_parser


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "check", "validate a scenario file and its inputs without computing", __doc__, run
    )
    parser.add_argument("scenarios", type=Path, metavar="SCENARIOS.toml")


def run(args: argparse.Namespace) -> int:
    from slopescreen.maps.outputs.output_names import SCENARIO_OUTPUTS, written
    from slopescreen.maps.region.config import load_config
    from slopescreen.maps.region.engine import prepare, void_note
    from slopescreen.stability_classes import class_names

    cfg = load_config(args.scenarios)
    for note in cfg.deprecations:
        print(f"DEPRECATED: {note}")
    for note in cfg.notes:
        print(f"NOTE: {note}")
    inputs = prepare(cfg)
    grid, soils = inputs.grid, inputs.soils
    print(f"scenario file {cfg.path}: valid")
    print(
        f"  DEM {cfg.region.dem.name}: {grid.width} x {grid.height} cells, "
        f"{grid.crs.to_string()}, {grid.spacing_note}"
    )
    print(f"  DEM: {void_note(inputs.voids)}")
    print(
        f"  soil units ({len(soils.keys)}): {', '.join(soils.keys)}; "
        f"{1 - soils.unmapped_share:.1%} of DEM data cells covered"
    )
    for w in soils.warnings:
        print(f"  WARNING: {w}")
    print(f"  stability classes: {'; '.join(class_names(cfg.fs_breaks))}")
    print("  would run:")
    for sc in cfg.scenarios:
        extra = f", seismic k_h {sc.seismic_coefficient:g}" if sc.seismic_coefficient else ""
        over = f", overrides for {', '.join(sc.soil_overrides)}" if sc.soil_overrides else ""
        cells = f", year {sc.year}" if sc.year is not None else ""
        cells += ", depth: the units' numbers" if not sc.use_soil_depth else ""
        cells += ", roots: the units' numbers" if not sc.use_land_cover else ""
        print(f"    {sc.name}: {sc.wetness}{extra}{over}{cells}")
    for model in cfg.region.soil_depth:
        print(f"  soil depth of {', '.join(model.units) or 'every unit'}: {model.text}")
    for name, by_code in sorted(soils.rasters.items()):
        units = ", ".join(soils.keys[c - 1] for c in sorted(by_code))
        files = ", ".join(sorted({p.name for p in by_code.values()}))
        print(f"  {name} cell by cell from {files} ({units}): checked to cover and in range")
    cover = cfg.region.land_cover
    if cover is not None:
        print(
            f"  root cohesion from land cover {cover.path.name}: {len(cover.classes)} classes "
            f"({', '.join(cover.classes)}), {cover.root_profile} profile"
        )
    ro = cfg.runout
    if ro is not None:
        print(f"  run-out for {', '.join(ro.scenarios)}: {ro.reach_rule}")
        if ro.assets is not None:
            print(f"  assets checked for reach: {ro.assets.name}")
    spreads = bool(soils.spreads)
    if spreads:
        print(
            f"  probability of failure: {cfg.reliability.method.replace('_', ' ')} for units "
            f"{', '.join(soils.keys[c - 1] for c in sorted(soils.spreads))}"
        )
    inv = inputs.inventory
    if inv is not None:
        print(
            f"  landslide inventory {inv.spec.path.name}: {inv.landslides} landslides "
            f"({inv.kind}), {inv.rows.size} cells on the DEM; held out {inv.split_note}"
        )
        for w in inv.warnings:
            print(f"  WARNING: {w}")
    settings = {
        "zones": cfg.zones,
        "maps": cfg.quicklook_map,
        "spreads": spreads,
        "inventory": inv is not None,
    }
    wanted = written(SCENARIO_OUTPUTS, storm=False, **settings)
    print(f"  per scenario: {', '.join(wanted)}")
    if any(sc.storm for sc in cfg.scenarios):
        extra = [f for f in written(SCENARIO_OUTPUTS, storm=True, **settings) if f not in wanted]
        print(f"  storm scenarios also: {', '.join(extra)}")
    if ro is not None:
        extra = written(
            SCENARIO_OUTPUTS, storm=False, runout=True, assets=ro.assets is not None, **settings
        )
        print(f"  run-out scenarios also: {', '.join(f for f in extra if f not in wanted)}")
    if cover is not None:
        extra = written(SCENARIO_OUTPUTS, storm=False, land_cover=True, **settings)
        print(f"  with land cover also: {', '.join(f for f in extra if f not in wanted)}")
    across = "comparison/, report.html, " if cfg.report else ""
    across += "inventory_scores.csv, " if inv is not None else ""
    print(f"  across scenarios: {across}manifest.json")
    return 0
