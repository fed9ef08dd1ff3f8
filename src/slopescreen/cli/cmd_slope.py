"""``slopescreen slope``: factor of safety of one infinite slope and its inverse values.

Example::

    slopescreen slope --slope-deg 32 --depth-m 1.5 --cohesion-kpa 4 --friction-deg 33 \\
        --unit-weight 18.5 --saturated-unit-weight 20 --saturation 0.6
"""

from __future__ import annotations

import argparse
import math
from typing import Any

from slopescreen.cli.options import (
    add_json_option,
    add_slope_options,
    command_parser,
    dump_json,
    finite_or_none,
    slope_kwargs,
)


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "slope", "check one slope (FS, critical values, stresses)", __doc__, run
    )
    add_slope_options(parser)
    add_json_option(parser)


def check_slope(kwargs: dict[str, Any]) -> dict[str, Any]:
    """All single-slope results for the given core keyword arguments."""
    from slopescreen import inverse, stability
    from slopescreen.ranges import check_ranges

    check_ranges(kwargs)  # the same ranges as the soil table and the spreadsheet cells
    kw = dict(kwargs)
    target = kw.pop("target_fs")
    slope, depth = kw.pop("slope_deg"), kw.pop("depth_m")
    cohesion, friction = kw.pop("cohesion_kpa"), kw.pop("friction_deg")
    gamma, m = kw.pop("unit_weight_kn_m3"), kw.pop("saturation")
    root = kw.pop("root_cohesion_kpa")
    common = dict(kw, root_cohesion_kpa=root)
    fs = stability.factor_of_safety(slope, depth, cohesion, friction, gamma, m, **common)
    stresses = stability.slip_plane_stresses(slope, depth, gamma, m, **kw)
    return {
        "factor_of_safety": fs,
        "critical_saturation": inverse.critical_saturation(
            slope, depth, cohesion, friction, gamma, target_fs=target, **common
        ),
        "critical_depth_m": inverse.critical_depth(
            slope, cohesion, friction, gamma, m, target_fs=target, **common
        ),
        "critical_slope_deg": inverse.critical_slope_deg(
            depth, cohesion, friction, gamma, m, target_fs=target, **common
        ),
        "required_cohesion_kpa": inverse.required_cohesion_kpa(
            slope, depth, friction, gamma, m, target_fs=target, **common
        ),
        "stresses_kpa": stresses._asdict(),
    }


def _describe(name: str, value: float, target: float) -> str:
    if math.isfinite(value):
        return f"{value:.3f}"
    if name == "factor_of_safety":
        return "no driving stress (a flat slope with no seismic load): does not fail"
    return f"none (no value brings FS to {target:g})"


def format_inputs(kwargs: dict[str, Any]) -> list[str]:
    """Every input that changes FS, one line each group (nothing applied unseen)."""
    sat = kwargs.get("saturated_unit_weight_kn_m3")
    sat_text = f"{sat:.4g}" if sat is not None else f"{kwargs['unit_weight_kn_m3']:.4g} (as above)"
    return [
        f"  slope {kwargs['slope_deg']:.4g} deg, vertical depth {kwargs['depth_m']:.4g} m, "
        f"saturation m {kwargs['saturation']:g}",
        f"  c' {kwargs['cohesion_kpa']:.4g} kPa, phi' {kwargs['friction_deg']:.4g} deg, "
        f"root cohesion {kwargs['root_cohesion_kpa']:.4g} kPa",
        f"  unit weight {kwargs['unit_weight_kn_m3']:.4g} kN/m3, saturated {sat_text} kN/m3, "
        f"water {kwargs['water_unit_weight_kn_m3']:.4g} kN/m3",
        f"  surcharge {kwargs['surcharge_kpa']:.4g} kPa, seismic k_h "
        f"{kwargs['seismic_coefficient']:g}, target FS {kwargs['target_fs']:g}",
    ]


def slope_record(name: str, kwargs: dict[str, Any], result: dict[str, Any]) -> dict[str, Any]:
    """One JSON layout for ``slope --json`` and the demo's hillside_check.json."""
    from slopescreen.cautions import CAUTIONS

    results = {k: finite_or_none(v) for k, v in result.items() if k != "stresses_kpa"}
    results["stresses_kpa"] = {k: finite_or_none(v) for k, v in result["stresses_kpa"].items()}
    return {
        "slope": name,
        "inputs": dict(kwargs),
        "results": results,
        "cautions": list(CAUTIONS),
    }


def format_text(kwargs: dict[str, Any], result: dict[str, Any]) -> str:
    """The check as text (the command prints the cautions once, after it)."""
    target = kwargs["target_fs"]
    fs = result["factor_of_safety"]
    verdict = "below target" if fs < target else "at or above target"
    lines = [
        "slopescreen single-slope check (infinite slope, slope-parallel seepage)",
        *format_inputs(kwargs),
        f"  factor of safety           {_describe('factor_of_safety', fs, target)}  "
        f"({verdict} {target:g})",
        f"  critical saturation m      {_describe('m', result['critical_saturation'], target)}"
        "   (<0: below target even dry; >1: holds even saturated)",
        f"  critical depth (m)         {_describe('z', result['critical_depth_m'], target)}",
        f"  critical slope (deg)       {_describe('b', result['critical_slope_deg'], target)}",
        f"  required cohesion (kPa)    {_describe('c', result['required_cohesion_kpa'], target)}"
        "   (<=0: none needed)",
        "  stresses on the slip plane (kPa): "
        + ", ".join(f"{k.replace('_kpa', '')} {v:.2f}" for k, v in result["stresses_kpa"].items()),
    ]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from slopescreen.cautions import caution_block

    kwargs = slope_kwargs(args)
    result = check_slope(kwargs)
    if args.json:
        print(dump_json(slope_record("command line", kwargs, result)))
    else:
        print(format_text(kwargs, result) + "\n\n" + caution_block())
    return 0
