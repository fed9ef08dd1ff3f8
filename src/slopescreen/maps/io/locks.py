"""Advisory locks: one writer per output folder, one builder per cache entry.

POSIX ``fcntl.flock`` (``msvcrt.locking`` on Windows) on a lock file; the lock goes with
the process, so a killed run never leaves a folder locked. A folder's lock file stays once
a run has written there; a run that stops on an error removes the lock file it created,
and the folder too if it made it and left it empty, so a refused run leaves the disk as it
was.
"""

from __future__ import annotations

import contextlib
import errno
import os
import time
from collections.abc import Iterator
from pathlib import Path

from slopescreen.errors import InputError

FOLDER_LOCK = ".slopescreen.lock"


def _open_lock_file(path: Path) -> int:
    flags = os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        return os.open(path, flags, 0o666)
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise InputError(f"{path}: lock file is a symbolic link; remove it") from None
        raise


def _try_lock(fd: int, wait: bool) -> bool:
    try:
        import fcntl
    except ImportError:  # Windows
        import msvcrt

        mode = msvcrt.LK_LOCK if wait else msvcrt.LK_NBLCK  # type: ignore[attr-defined]
        try:
            msvcrt.locking(fd, mode, 1)  # type: ignore[attr-defined]
        except OSError:
            return False
        return True
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | (0 if wait else fcntl.LOCK_NB))
    except BlockingIOError:
        return False
    return True


@contextlib.contextmanager
def folder_lock(folder: Path, holder: str, new_folder: bool = False) -> Iterator[None]:
    """Hold the output folder's lock, or raise InputError at once naming the holder.

    ``holder`` (for example "PID 123, started 2026-01-01T00:00:00Z") is written into the
    lock file for the next run to quote. ``new_folder``: the caller made ``folder`` for this
    run (removed on an error if nothing else is in it).
    """
    path = folder / FOLDER_LOCK
    created = not path.exists()
    fd = _open_lock_file(path)
    try:
        if not _try_lock(fd, wait=False):
            created = False  # another run's
            other = ""
            for _ in range(40):  # the holder writes its line just after taking the lock
                other = os.pread(fd, 200, 0).decode("utf-8", "replace").split("\n")[0].strip()
                if other:
                    break
                time.sleep(0.05)
            raise InputError(
                f"{folder}: another slopescreen run is writing to this folder "
                f"({other or 'holder unknown'}); "
                "wait for it to finish or choose another --out"
            )
        line = f"{holder}\n".encode()
        os.pwrite(fd, line, 0)  # never empty while held: write, then cut what is left
        os.ftruncate(fd, len(line))
        try:
            yield
        except BaseException:
            if created:  # still held: no other run is using this file
                with contextlib.suppress(OSError):
                    path.unlink()
                if new_folder:
                    with contextlib.suppress(OSError):
                        folder.rmdir()  # only an empty folder
            raise
        finally:
            os.ftruncate(fd, 0)  # at rest the file names nobody (no stale holder quoted)
    finally:
        os.close(fd)


@contextlib.contextmanager
def entry_lock(cache_dir: Path, name: str) -> Iterator[None]:
    """Wait for, then hold, the lock of cache entry ``name`` (runs sharing a cache folder
    build each entry once and never read one that is half made)."""
    fd = _open_lock_file(cache_dir / f".{name}.lock")
    try:
        _try_lock(fd, wait=True)
        yield
    finally:
        os.close(fd)
