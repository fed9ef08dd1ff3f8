"""Entry point: ``slopescreen COMMAND ...``; user mistakes end in one line and exit code 2."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from slopescreen.cli import (
    cmd_backcalc,
    cmd_calibrate,
    cmd_check,
    cmd_demo,
    cmd_envelope,
    cmd_run,
    cmd_score,
    cmd_sensitivity,
    cmd_slope,
)
from slopescreen.errors import InputError

COMMANDS = (
    cmd_slope,
    cmd_envelope,
    cmd_run,
    cmd_check,
    cmd_score,
    cmd_backcalc,
    cmd_calibrate,
    cmd_sensitivity,
    cmd_demo,
)
EXIT_USER_ERROR = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports a usage mistake as one line and exit code 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"{self.prog}: error: {message} (see {self.prog} --help)\n")
        raise SystemExit(EXIT_USER_ERROR)


def one_line(text: str) -> str:
    """The message with control characters (a newline in a name, say) shown escaped."""
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


def build_parser() -> argparse.ArgumentParser:
    from slopescreen import __version__

    parser = _Parser(
        prog="slopescreen",
        description="Shallow-landslide screening: infinite-slope factor of safety, "
        "strength from lab tests, regional maps. Screening only.",
    )
    parser.add_argument("--version", action="version", version=f"slopescreen {__version__}")
    sub = parser.add_subparsers(
        dest="command", required=True, parser_class=_Parser, metavar="COMMAND"
    )
    for command in COMMANDS:
        command.add_to(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args) or 0)
    except InputError as exc:
        sys.stderr.write(f"slopescreen {args.command}: error: {one_line(str(exc))}\n")
        return EXIT_USER_ERROR
    except OSError as exc:  # a path the user gave cannot be read or written
        where = f": {exc.filename}" if getattr(exc, "filename", None) else ""
        reason = exc.strerror or (str(exc).splitlines() or [type(exc).__name__])[0]
        sys.stderr.write(
            f"slopescreen {args.command}: error{one_line(where)}: {one_line(reason)}; finished "
            "outputs are whole, others not written\n"
        )
        return EXIT_USER_ERROR
    except KeyboardInterrupt:
        sys.stderr.write(
            "slopescreen: interrupted; finished outputs are whole, others not written\n"
        )
        return 130


if __name__ == "__main__":
    raise SystemExit(main())
