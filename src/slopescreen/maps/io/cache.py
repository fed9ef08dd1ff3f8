"""Cache entries that can be trusted: keyed by content, verified before use, made whole.

An entry is a folder ``<cache>/<name>`` holding product files and ``entry.json``, which
records each file's size and SHA-256. The name carries a key computed from the content of
everything the products depend on (see :func:`content_key`). An entry is built in a private
folder and renamed into place only when complete, so a killed run leaves no half entry that
looks whole; before use every file is checked against the record, and an entry that fails
the check is reported and rebuilt.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

from slopescreen.maps.io.safe_writes import TEMP_PREFIX, file_sha256, real_folder

STAMP = "entry.json"


def content_key(*parts: str | bytes) -> str:
    """A 24-hex-digit key from the given parts (in order; each part framed by its length)."""
    digest = hashlib.sha256()
    for part in parts:
        data = part.encode() if isinstance(part, str) else part
        digest.update(len(data).to_bytes(8, "little"))
        digest.update(data)
    return digest.hexdigest()[:24]


def check_entry(folder: Path) -> str | None:
    """None if the entry is whole and unchanged; otherwise what is wrong with it."""
    stamp = folder / STAMP
    if not stamp.is_file():
        return f"{STAMP} is missing"
    try:
        record = json.loads(stamp.read_text(encoding="utf-8"))
        files = record["files"]
    except (OSError, ValueError, KeyError, TypeError):
        return f"{STAMP} is unreadable"
    for name, want in files.items():
        path = folder / name
        if path.is_symlink() or not path.is_file():
            return f"{name} is missing"
        if path.stat().st_size != want["size"]:
            return f"{name} has {path.stat().st_size} bytes, {want['size']} recorded"
        if file_sha256(path) != want["sha256"]:
            return f"{name} does not match its recorded SHA-256"
    return None


def recorded_sha256(folder: Path, name: str) -> str:
    record = json.loads((folder / STAMP).read_text(encoding="utf-8"))
    return str(record["files"][name]["sha256"])


def usable_entry(cache_dir: Path, name: str, echo: Callable[[str], None]) -> Path | None:
    """The entry's folder if it exists and passes the check; None (after one line saying
    why, where a damaged entry is found) when it must be built."""
    folder = cache_dir / name
    if not folder.exists() and not folder.is_symlink():
        return None
    problem = "is a symbolic link" if folder.is_symlink() else check_entry(folder)
    if problem is None:
        return folder
    echo(f"cache entry {folder.name}: {problem}; recomputing it")
    return None


@contextlib.contextmanager
def building(cache_dir: Path, name: str, info: dict[str, object]) -> Iterator[Path]:
    """Yield a private folder to write the entry's files into; on success record their
    sizes and hashes and rename the folder into place (replacing a damaged entry)."""
    real_folder(cache_dir)
    work = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}{name}-", dir=cache_dir))
    try:
        yield work
        files = {
            p.name: {"size": p.stat().st_size, "sha256": file_sha256(p)}
            for p in sorted(work.iterdir())
            if p.is_file()
        }
        (work / STAMP).write_text(
            json.dumps({"name": name, "info": info, "files": files}, indent=1) + "\n",
            encoding="utf-8",
        )
        _publish(work, cache_dir / name)
    finally:
        shutil.rmtree(work, ignore_errors=True)


def _publish(work: Path, final: Path) -> None:
    if final.exists() or final.is_symlink():
        if final.is_dir() and not final.is_symlink() and check_entry(final) is None:
            return  # another run built the same entry meanwhile: keep it
        trash = Path(tempfile.mkdtemp(prefix=TEMP_PREFIX, dir=final.parent))
        os.replace(final, trash / "old")
        shutil.rmtree(trash, ignore_errors=True)
    try:
        os.rename(work, final)
    except OSError:
        if check_entry(final) is not None:  # lost a race to a run whose entry is broken
            raise
