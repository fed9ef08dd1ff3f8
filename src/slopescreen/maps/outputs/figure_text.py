"""Text on figures broken into lines that fit the figure, measured once."""

from __future__ import annotations

import textwrap
from typing import Any

FILL = 0.9  # lines filled to this share of the room: characters differ in width


def fit_text(fig: Any, x: float, y: float, text: str, **kwargs: Any) -> Any:
    """``fig.text`` (left-aligned at figure fraction x, y) with ``text`` broken into lines
    that fit between x and the figure's right edge, as matplotlib's ``wrap=True`` does, but
    measured once: the whole line's width gives the mean width of its characters (matplotlib
    measures every candidate line, a hundred times for a long caution)."""
    artist = fig.text(x, y, text, **kwargs)
    width = artist.get_window_extent(fig.canvas.get_renderer()).width
    room = fig.bbox.width * (1.0 - x)
    if text and width > room:  # the widest line sets the mean width of a character
        lines = text.split("\n")
        per_char = width / max(len(line) for line in lines)
        chars = max(10, int(FILL * room / per_char))
        artist.set_text("\n".join(textwrap.fill(line, chars) for line in lines))
    return artist
