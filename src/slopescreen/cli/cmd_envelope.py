"""``slopescreen envelope``: fit c', phi' to lab tests and draw the Mohr circles.

TESTS.csv holds either triaxial results (columns sigma3_kpa and sigma1_kpa or deviator_kpa,
optional pore_pressure_kpa and specimen) or direct-shear results (normal_kpa, shear_kpa),
all in kPa at failure.

Example::

    slopescreen envelope demo_region/lab_tests.csv --plot mohr.png
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from slopescreen.cli.options import add_json_option, command_parser, dump_json
from slopescreen.maps.outputs.output_names import LAB_TESTS_PLACEHOLDER


def add_to(sub: Any) -> None:
    parser = command_parser(
        sub, "envelope", "fit a Mohr-Coulomb envelope to lab tests", __doc__, run
    )
    parser.add_argument("tests", type=Path, metavar=LAB_TESTS_PLACEHOLDER, help="lab-test CSV file")
    parser.add_argument(
        "--plot",
        type=Path,
        metavar="PNG",
        help="write a Mohr-circle figure (triaxial) or envelope plot here",
    )
    add_json_option(parser)


def format_text(path: Path, tests: Any, fit: Any) -> str:
    """The fit as text (the command prints the cautions once, after it)."""
    lines = [
        f"slopescreen envelope fit: {path} ({fit.n} {tests.kind.replace('_', ' ')} tests, "
        f"{fit.method})",
        f"  cohesion c'        {fit.cohesion_kpa:8.2f} kPa   "
        f"(standard error {fit.cohesion_se_kpa:.2f})",
        f"  friction phi'      {fit.friction_deg:8.2f} deg   "
        f"(standard error {fit.friction_se_deg:.2f})",
        f"  r2                 {fit.r2:8.4f}",
    ]
    lines += [f"  WARNING: {w}" for w in fit.warnings]
    return "\n".join(lines)


def fit_record(fit: Any) -> dict[str, Any]:
    """The fit for JSON (``envelope --json`` and the demo's hillside_check.json): NaN as
    null, the covariance of (c', phi') with its units."""
    from slopescreen.cli.options import finite_or_none

    record = {
        k: finite_or_none(v) if isinstance(v, float) else v
        for k, v in fit.as_dict().items()
        if k != "covariance"
    }
    cov = fit.as_dict()["covariance"]
    record["covariance"] = {
        "cohesion_cohesion_kpa2": finite_or_none(cov[0][0]),
        "cohesion_friction_kpa_deg": finite_or_none(cov[0][1]),
        "friction_friction_deg2": finite_or_none(cov[1][1]),
    }
    return record


def run(args: argparse.Namespace) -> int:
    from slopescreen.cautions import CAUTIONS, caution_block
    from slopescreen.maps.io.labtests import fit_file

    tests, fit = fit_file(args.tests, args.plot)
    if args.json:
        payload = fit_record(fit)
        payload["kind"] = tests.kind
        payload["file"] = str(args.tests)
        payload["cautions"] = list(CAUTIONS)
        print(dump_json(payload))
    else:
        print(format_text(args.tests, tests, fit))
        if args.plot is not None:
            print(f"  figure written: {args.plot}")
        print("\n" + caution_block())
    return 0
