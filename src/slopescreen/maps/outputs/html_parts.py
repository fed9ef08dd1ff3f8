"""The pieces every HTML page of a run is built from: esc text, numbers for tables,
tables in their own scrolling box and embedded PNG images."""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Sequence
from pathlib import Path

EMPTY = "-"


def esc(x: object) -> str:
    """Any value as HTML text."""
    return html.escape(str(x))


def num(value: object, fmt: str = ".4g") -> str:
    """A number for a table: '-' for NaN, None or empty."""
    if value is None or value == "":
        return EMPTY
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return esc(value)
    return EMPTY if not math.isfinite(v) else format(v, fmt)


def boxed_table(
    head: Sequence[str], rows: Sequence[Sequence[str]], left: int = 1, wrap_last: bool = False
) -> str:
    """A table in its own scrolling box; the first ``left`` columns align left, and the
    last wraps its text with ``wrap_last``. Cells are HTML already (escape them with esc or
    num)."""
    cls = ["l" if i < left else "" for i in range(len(head))]
    if wrap_last:
        cls[-1] = "w"
    th = "".join(f"<th class='{c}'>{esc(h)}</th>" for c, h in zip(cls, head, strict=True))
    body = "".join(
        "<tr>" + "".join(f"<td class='{c}'>{v}</td>" for c, v in zip(cls, r, strict=True)) + "</tr>"
        for r in rows
    )
    return f"<div class='tbl'><table><tr>{th}</tr>{body}</table></div>"


def embedded_image(path: Path | None, alt: str) -> str:
    """A PNG embedded in the page (the report is one self-contained file); empty if none."""
    if path is None or not path.exists():
        return ""
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return f'<img alt="{esc(alt)}" src="data:image/png;base64,{data}">'
