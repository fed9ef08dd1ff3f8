"""The pieces every HTML page of a run is built from: esc text, numbers for tables,
tables in their own scrolling box and embedded images."""

from __future__ import annotations

import base64
import html
import io
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
    head: Sequence[str],
    rows: Sequence[Sequence[str]],
    left: int = 1,
    wrap_last: bool = False,
    wrap: Sequence[int] = (),
) -> str:
    """A table in its own scrolling box; the first ``left`` columns align left, and the
    last (``wrap_last``) or the columns ``wrap`` wrap their text. Cells are HTML already
    (escape them with esc or num)."""
    cls = ["l" if i < left else "" for i in range(len(head))]
    for i in [*wrap, *([len(head) - 1] if wrap_last else [])]:
        cls[i] = "w"
    th = "".join(f"<th class='{c}'>{esc(h)}</th>" for c, h in zip(cls, head, strict=True))
    body = "".join(
        "<tr>" + "".join(f"<td class='{c}'>{v}</td>" for c, v in zip(cls, r, strict=True)) + "</tr>"
        for r in rows
    )
    return f"<div class='tbl'><table><tr>{th}</tr>{body}</table></div>"


# figures in a page: at most this wide (the page's text column is 1,100 px), WebP at this
# quality (lossy: a map of 1,210 px as PNG is about 1 MB, as WebP here about 90 kB). The
# PNG files beside the page keep every pixel.
PAGE_IMAGE_WIDTH = 960
PAGE_IMAGE_QUALITY = 70


def embedded_image(path: Path | None, alt: str) -> str:
    """A figure embedded in the page (the report is one self-contained file), scaled to
    :data:`PAGE_IMAGE_WIDTH` and stored as WebP; empty if none."""
    if path is None or not path.exists():
        return ""
    from PIL import Image

    with Image.open(path) as src:
        rgba = src.convert("RGBA")
    image = Image.alpha_composite(Image.new("RGBA", rgba.size, "white"), rgba).convert("RGB")
    if image.width > PAGE_IMAGE_WIDTH:
        height = max(1, round(image.height * PAGE_IMAGE_WIDTH / image.width))
        image = image.resize((PAGE_IMAGE_WIDTH, height), Image.Resampling.LANCZOS)
    buffer = io.BytesIO()
    image.save(buffer, "WEBP", quality=PAGE_IMAGE_QUALITY, method=4)
    data = base64.b64encode(buffer.getvalue()).decode("ascii")
    return (
        f'<img alt="{esc(alt)}" width="{image.width}" height="{image.height}" '
        f'src="data:image/webp;base64,{data}">'
    )
