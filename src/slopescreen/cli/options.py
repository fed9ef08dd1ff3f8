"""Options shared by several commands and their conversion to core keyword arguments."""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path
from typing import Any

# (option, core keyword, help, default); None default = required. The help gains the
# allowed range from slopescreen.ranges (the one the command enforces) and the default.
SLOPE_OPTIONS: tuple[tuple[str, str, str, float | None], ...] = (
    ("--slope-deg", "slope_deg", "slope angle, degrees", None),
    ("--depth-m", "depth_m", "VERTICAL depth of the slip plane, m", None),
    ("--cohesion-kpa", "cohesion_kpa", "effective cohesion c', kPa", None),
    ("--friction-deg", "friction_deg", "effective friction angle phi', degrees", None),
    ("--unit-weight", "unit_weight_kn_m3", "soil unit weight above the water table, kN/m3", None),
    ("--saturation", "saturation", "saturation ratio m = h_w / z", 0.0),
    (
        "--saturated-unit-weight",
        "saturated_unit_weight_kn_m3",
        "unit weight below the water table, kN/m3",
        math.nan,  # as --unit-weight
    ),
    ("--root-cohesion-kpa", "root_cohesion_kpa", "apparent root cohesion, kPa", 0.0),
    ("--surcharge-kpa", "surcharge_kpa", "vertical surcharge, kPa", 0.0),
    ("--seismic-coefficient", "seismic_coefficient", "horizontal pseudo-static k_h", 0.0),
    ("--water-unit-weight", "water_unit_weight_kn_m3", "unit weight of water, kN/m3", 9.81),
    ("--target-fs", "target_fs", "target factor of safety for the inverse values (> 0)", 1.0),
)


def option_help(dest: str, text: str, default: float | None) -> str:
    """An option's help: what it is, its allowed range, its default."""
    from slopescreen.ranges import RANGES, range_text

    if dest in RANGES:
        text = f"{text}, {range_text(dest)}"
    if default is not None:
        text += " (default: --unit-weight)" if math.isnan(default) else f" (default {default:g})"
    return text


def command_parser(
    sub: Any, name: str, help_text: str, doc: str | None, run: Any
) -> argparse.ArgumentParser:
    """A sub-command whose --help is the command module's docstring, with its example,
    as plain text (no reStructuredText markup)."""
    parser = sub.add_parser(
        name,
        help=help_text,
        description=plain_text(doc or ""),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.set_defaults(run=run)
    return parser


def plain_text(doc: str) -> str:
    """A docstring as a terminal shows it: ``code`` and :role:`x` marks removed, "::"
    ending a line becomes ":".

    >>> plain_text("Writes ``fs.tif``; see :mod:`slopescreen`.\\n\\nExample::")
    'Writes fs.tif; see slopescreen.\\n\\nExample:'
    """
    import re

    text = re.sub(r":[a-z]+:`([^`]*)`", r"\1", doc)
    text = text.replace("``", "")
    return re.sub(r"::$", ":", text, flags=re.MULTILINE)


def add_slope_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("slope and soil")
    for option, dest, help_text, default in SLOPE_OPTIONS:
        group.add_argument(
            option,
            dest=dest,
            type=float,
            required=default is None,
            default=default,
            help=option_help(dest, help_text, default),
            metavar="X",
        )


def slope_kwargs(args: argparse.Namespace) -> dict[str, Any]:
    """Core keyword arguments from parsed options (NaN saturated weight = not given)."""
    out = {dest: getattr(args, dest) for _, dest, _, _ in SLOPE_OPTIONS}
    if math.isnan(out["saturated_unit_weight_kn_m3"]):
        out["saturated_unit_weight_kn_m3"] = None
    return out


def add_json_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of text")


def finite_or_none(value: float) -> float | None:
    """JSON has no NaN or infinity: such values become null."""
    return float(value) if math.isfinite(value) else None


def dump_json(obj: object) -> str:
    return json.dumps(obj, indent=2, allow_nan=False)


def out_folder(value: str | Path | None, scenarios: Path) -> Path:
    """The output folder of --out: the default beside the scenario file's name when not
    given; InputError for an empty text (it would mean the current folder)."""
    from slopescreen.errors import InputError

    if value is None:
        return Path(f"{scenarios.stem}_output")
    if isinstance(value, Path):  # from another command (demo), not from the shell
        return value
    if not value.strip():
        raise InputError("--out '': must name a folder, got an empty text")
    return Path(value)


def run_folder_options(
    parser: argparse.ArgumentParser, scenario: bool = False, inventory: bool = True
) -> None:
    """SCENARIOS.toml, --out and --inventory: the options of the commands that work on a
    finished run's folder (score, backcalc, calibrate, sensitivity)."""
    from pathlib import Path

    parser.add_argument("scenarios", type=Path, metavar="SCENARIOS.toml")
    parser.add_argument(
        "--out",
        default=None,
        help="the run's output folder (default: <scenario file name>_output)",
    )
    if inventory:
        parser.add_argument(
            "--inventory",
            type=Path,
            default=None,
            metavar="FILE",
            help="landslide points or polygons (default: [inventory] path of the scenario file)",
        )
    if scenario:
        parser.add_argument(
            "--scenario", required=True, metavar="NAME", help="the scenario to work on"
        )


def with_cautions(execute: Any, args: argparse.Namespace) -> int:
    """Run a command's work, then print the cautions once."""
    from slopescreen.cautions import caution_block

    execute(args)
    print(caution_block())
    return 0


def workers_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--workers",
        type=int,
        default=0,
        metavar="N",
        help="run the tiles on a local dask cluster of N worker processes (default: in "
        "this process)",
    )


def check_workers(workers: int) -> None:
    from slopescreen.errors import InputError

    if not 0 <= workers <= 256:
        raise InputError(f"--workers {workers}: must be 0 (no cluster) to 256")
