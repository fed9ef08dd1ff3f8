"""Safe writing of output files: write beside the target, then rename over it."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path


@contextlib.contextmanager
def replacing(target: str | Path) -> Iterator[Path]:
    """Yield a temporary path in the target's folder; rename it onto ``target`` on success.

    If the block raises (or the process is interrupted), the temporary file is removed and
    any previous ``target`` is left whole.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp_name = tempfile.mkstemp(
        prefix=f".{target.stem}.", suffix=target.suffix, dir=target.parent
    )
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        yield tmp
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()


def write_text(target: str | Path, text: str) -> Path:
    """Write ``text`` to ``target`` through :func:`replacing`."""
    with replacing(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)
