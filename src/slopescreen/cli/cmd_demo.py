"""``slopescreen demo``: run the invented demo region end to end.

1. Fits c', phi' to the demo lab tests and draws the Mohr circles.
2. Checks one invented hillside with that strength.
3. Runs every scenario of the regional scenario file: terrain, factor-of-safety maps,
   low-margin zones, area tables, scores against the invented landslide inventory,
   report.html and manifest.json, all under --out.
4. On the wet-season scenario: back-analyses c' at the landslide cells and draws the
   sensitivity tornado, with soil depth and roots cell by cell; on its per-unit twin (the
   model the invented landslides were drawn from) calibrates c' per soil unit against the
   inventory; the report shows all three.

Example::

    slopescreen demo --out demo_output
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from slopescreen.cli.options import command_parser
from slopescreen.errors import InputError
from slopescreen.maps.outputs.output_names import DEMO_LAB_TESTS, DEMO_MOHR_FIGURE


def add_to(sub: Any) -> None:
    parser = command_parser(sub, "demo", "run the invented demo region end to end", __doc__, run)
    parser.add_argument(
        "--region",
        type=Path,
        default=None,
        help="demo region folder (default: ./demo_region, else the one shipped "
        "beside the source tree)",
    )
    parser.add_argument(
        "--out", type=Path, default=Path("demo_output"), help="output folder (default: demo_output)"
    )


def find_region(region: Path | None) -> Path:
    candidates = (
        [region]
        if region is not None
        else [Path.cwd() / "demo_region", Path(__file__).resolve().parents[3] / "demo_region"]
    )
    for folder in candidates:
        if (folder / "hillside_slope.toml").is_file() and (
            folder / "quillbrook_scenarios.toml"
        ).is_file():
            return folder
    shown = region if region is not None else candidates[0]
    raise InputError(
        f"{shown}: demo region not found (needs hillside_slope.toml and "
        "quillbrook_scenarios.toml); run from the project folder or pass --region DIR"
    )


def read_slope_file(path: Path) -> dict[str, Any]:
    import tomllib

    from slopescreen.cli.options import SLOPE_OPTIONS
    from slopescreen.maps.io.textfiles import read_text

    try:
        data = tomllib.loads(read_text(path, "slope file"))
    except (tomllib.TOMLDecodeError, RecursionError) as exc:
        raise InputError(f"{path}: cannot read slope file ({exc})") from None
    allowed = {dest: default for _, dest, _, default in SLOPE_OPTIONS}
    unknown = sorted(set(data) - set(allowed) - {"name"})
    if unknown:
        raise InputError(f"{path}: unknown key {unknown[0]!r}; allowed: {', '.join(allowed)}")
    kwargs: dict[str, Any] = {}
    for key, default in allowed.items():
        value = data.get(key, default)
        if value is None:
            raise InputError(f"{path}: missing key {key!r}")
        if not isinstance(value, int | float) or isinstance(value, bool):
            raise InputError(f"{path}: key {key!r} must be a number, got {value!r}")
        kwargs[key] = float(value)
    if kwargs["saturated_unit_weight_kn_m3"] != kwargs["saturated_unit_weight_kn_m3"]:
        kwargs["saturated_unit_weight_kn_m3"] = None
    kwargs["name"] = str(data.get("name", path.stem))
    return kwargs


DEMO_SCENARIO = "wet_season"  # back-analysis and sensitivity, soil fields cell by cell
# calibration: the per-unit scenario the invented landslides were drawn from
CALIBRATION_SCENARIO = "wet_season_units"
DEMO_FLAGGED_LIMIT = 0.1  # calibration: at most 10% of the demo region at FS < 1


def hidden_note(region: Path) -> str:
    """The hidden soil values the demo's invented landslides were drawn from (the line the
    report shows beside the calibration), read from make_demo_region.py."""
    import importlib.util

    spec = importlib.util.spec_from_file_location(
        "make_demo_region", region / "make_demo_region.py"
    )
    if spec is None or spec.loader is None:
        return ""
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    changes = "; ".join(
        f"{unit} {name} = {value:g}"
        for unit, fields in module.HIDDEN_CHANGES.items()
        for name, value in fields.items()
    )
    return (
        f"Demo check: the invented landslides were drawn from a hidden soil table with "
        f"{changes} (make_demo_region.py); the scenario file's table does not know it."
    )


def known_landslides(scenarios: Path, out: Path) -> None:
    """Back-analysis and sensitivity of the demo's wet season, and calibration of its
    per-unit twin."""
    from slopescreen.cli import cmd_backcalc, cmd_calibrate, cmd_sensitivity

    common = dict(scenarios=scenarios, out=out, inventory=None, scenario=DEMO_SCENARIO)
    print()
    cmd_backcalc.execute(argparse.Namespace(**common, parameter="cohesion_kpa"))
    print()
    cmd_calibrate.execute(
        argparse.Namespace(
            **(common | {"scenario": CALIBRATION_SCENARIO}),
            parameter="cohesion_kpa",
            max_flagged_share=DEMO_FLAGGED_LIMIT,
            multipliers=None,
            units=None,
            reference=hidden_note(scenarios.parent),
        )
    )
    print()
    cmd_sensitivity.execute(argparse.Namespace(**common))


def run(args: argparse.Namespace) -> int:
    from slopescreen.cautions import caution_block
    from slopescreen.cli import cmd_envelope, cmd_slope
    from slopescreen.cli.options import dump_json
    from slopescreen.maps.io.labtests import fit_file
    from slopescreen.maps.io.safe_writes import write_text

    region = find_region(args.region)
    out = args.out
    tests_path = region / DEMO_LAB_TESTS
    tests, fit = fit_file(tests_path, out / DEMO_MOHR_FIGURE)
    print(cmd_envelope.format_text(tests_path, tests, fit))
    print(f"  figure written: {out / DEMO_MOHR_FIGURE}\n")

    slope = read_slope_file(region / "hillside_slope.toml")
    name = slope.pop("name")
    slope["cohesion_kpa"] = max(fit.cohesion_kpa, 0.0)
    slope["friction_deg"] = fit.friction_deg
    result = cmd_slope.check_slope(slope)
    print(f"{name} (strength from the envelope fit above)")
    print(cmd_slope.format_text(slope, result))
    record = cmd_slope.slope_record(name, slope, result)
    record["envelope"] = cmd_envelope.fit_record(fit)
    write_text(out / "hillside_check.json", dump_json(record) + "\n")
    print(f"\nresults written: {out / 'hillside_check.json'}\n")

    from slopescreen.maps.region.engine import run as run_region

    scenarios = region / "quillbrook_scenarios.toml"
    print(f"regional run: {scenarios}")
    from slopescreen.maps.outputs.report import Extras

    extras = Extras(out / DEMO_MOHR_FIGURE, fit.as_dict(), record, tests_path)
    run_region(scenarios, out, progress=sys.stderr.isatty(), extras=extras)
    known_landslides(scenarios, out)
    print(f"\nopen {out / 'report.html'} in a browser for the maps and tables.\n")
    print(caution_block())
    return 0
