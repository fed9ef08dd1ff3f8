"""``slopescreen run``: every scenario of a scenario file, end to end.

Writes, under --out, the files listed below. Terrain and critical recharge are cached by
the content of their inputs and verified
before use (default: OUT/.cache). One run at a time per --out folder; manifest.json says
"complete": true only when every scenario and the report are done.

Example::

    slopescreen run demo_region/quillbrook_scenarios.toml --out quillbrook_maps
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from slopescreen.cli.options import command_parser, out_folder


def add_to(sub: Any) -> None:
    from slopescreen.maps.outputs.output_names import listing

    parser = command_parser(
        sub,
        "run",
        "run every scenario of a scenario file (maps, zones, tables, report)",
        f"{__doc__}\nOutputs (file, written when, content):\n{listing()}\n",
        run,
    )
    parser.add_argument("scenarios", type=Path, metavar="SCENARIOS.toml")
    parser.add_argument(
        "--out",
        default=None,
        help="output folder (default: <scenario file name>_output)",
    )
    parser.add_argument("--only", nargs="+", metavar="NAME", help="run only these scenarios")
    parser.add_argument(
        "--cache", type=Path, default=None, help="terrain cache folder (default: OUT/.cache)"
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=0,
        metavar="N",
        help="run the scenario tiles on a local dask cluster of N worker "
        "processes (default: in this process)",
    )
    parser.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="send the scenario tiles to an existing dask scheduler, e.g. "
        "tcp://10.0.0.5:8786 (workers must see the same file paths)",
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bars")


def run(args: argparse.Namespace) -> int:
    from slopescreen.cautions import caution_block
    from slopescreen.cli.options import check_workers
    from slopescreen.maps.region.engine import run as run_engine

    check_workers(args.workers)
    out = out_folder(args.out, args.scenarios)
    run_engine(
        args.scenarios,
        out,
        args.only,
        args.cache,
        progress=not args.quiet and sys.stderr.isatty(),
        workers=args.workers,
        scheduler=args.scheduler,
        command=["slopescreen", *sys.argv[1:]],
    )
    print(caution_block())
    return 0
