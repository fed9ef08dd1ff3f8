"""Safe writing of output files: write in a private folder beside the target, then rename.

Every file slopescreen writes goes through :func:`replacing`. The temporary file lives in a
new folder made by :func:`tempfile.mkdtemp` (unpredictable name, mode 0700) in the
target's own folder, so nobody can plant a link at the temporary name; the finished file
is renamed over the target, which replaces a link standing there rather than writing
through it. New files take the permissions of the process umask (0644 under 022).
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from slopescreen.errors import InputError

TEMP_PREFIX = ".slopescreen-tmp-"  # private work folders; left only by a killed process


def real_folder(folder: str | Path) -> Path:
    """Create ``folder`` (and its parents) if needed; refuse a symbolic link.

    A link in place of an output folder would send files outside the output tree.
    """
    folder = Path(folder)
    if folder.is_symlink():
        raise InputError(
            f"{folder}: is a symbolic link; slopescreen writes only into real folders "
            "(remove the link or choose another --out)"
        )
    folder.mkdir(parents=True, exist_ok=True)
    if not folder.is_dir():
        raise InputError(f"{folder}: exists and is not a folder")
    return folder


@contextlib.contextmanager
def private_folder(parent: str | Path) -> Iterator[Path]:
    """A new, private work folder inside ``parent``; removed with its contents afterwards."""
    parent = real_folder(parent)
    work = Path(tempfile.mkdtemp(prefix=TEMP_PREFIX, dir=parent))
    try:
        yield work
    finally:
        shutil.rmtree(work, ignore_errors=True)


@contextlib.contextmanager
def replacing(target: str | Path) -> Iterator[Path]:
    """Yield a temporary path (not yet existing) for ``target``; rename it onto ``target``
    on success.

    If the block raises (or the process is interrupted), the temporary file is removed and
    any previous ``target`` is left whole.
    """
    target = Path(target)
    with private_folder(target.parent) as work:
        tmp = work / target.name
        yield tmp
        os.replace(tmp, target)


def write_text(target: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``target`` through :func:`replacing`."""
    with replacing(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)


def file_sha256(path: str | Path, chunk: int = 1 << 22) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while block := handle.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def copy_verified(source: Path, target: Path, sha256: str) -> bool:
    """Copy ``source`` to ``target`` through :func:`replacing`, hashing what is copied; the
    copy is published only if its SHA-256 is ``sha256``. Returns whether it was."""
    digest = hashlib.sha256()
    try:
        with replacing(target) as tmp:
            with open(source, "rb") as src, open(tmp, "wb") as dst:
                while block := src.read(1 << 22):
                    digest.update(block)
                    dst.write(block)
            if digest.hexdigest() != sha256:
                raise _Mismatch
    except _Mismatch:
        return False
    return True


class _Mismatch(Exception):
    """The bytes copied are not the ones recorded."""


def remove_stale_work(folder: Path, skip: Path | None = None) -> None:
    """Remove private work folders that a killed run left in ``folder`` and its subfolders,
    except below ``skip`` (call only while holding the folder's lock: no other writer can
    own them)."""
    for stale in sorted(folder.resolve().rglob(f"{TEMP_PREFIX}*")):
        if skip is not None and stale.is_relative_to(skip.resolve()):
            continue
        if stale.is_dir() and not stale.is_symlink():
            shutil.rmtree(stale, ignore_errors=True)
