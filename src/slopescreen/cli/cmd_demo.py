"""``slopescreen demo``: run the invented demo region end to end.

1. Fits c', phi' to the demo lab tests and draws the Mohr circles.
2. Checks one invented hillside with that strength.
3. Runs every scenario of the regional scenario file: terrain, factor-of-safety maps,
   hazard zones, area tables, report.html and manifest.json, all under --out.

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
    from slopescreen.textfiles import read_text

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


def run(args: argparse.Namespace) -> int:
    from slopescreen.cautions import caution_block
    from slopescreen.cli import cmd_envelope, cmd_slope
    from slopescreen.cli.options import dump_json
    from slopescreen.outputs import write_text

    region = find_region(args.region)
    out = args.out
    tests_path = region / "lab_tests.csv"
    tests, fit = cmd_envelope.fit_file(tests_path, out / "mohr_circles.png")
    print(cmd_envelope.format_text(tests_path, tests, fit))
    print(f"  figure written: {out / 'mohr_circles.png'}\n")

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

    from slopescreen.maps.engine import run as run_region

    scenarios = region / "quillbrook_scenarios.toml"
    print(f"regional run: {scenarios}")
    from slopescreen.maps.report import Extras

    extras = Extras(out / "mohr_circles.png", fit.as_dict(), record, tests_path)
    run_region(scenarios, out, progress=sys.stderr.isatty(), extras=extras)
    print(f"\nopen {out / 'report.html'} in a browser for the maps and tables.\n")
    print(caution_block())
    return 0
