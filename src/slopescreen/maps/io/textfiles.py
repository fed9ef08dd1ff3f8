"""Reading the user's text files (scenario TOML, soil and lab-test CSV) in the encodings
spreadsheets and editors save: UTF-8 with or without a byte-order mark, and UTF-16 with
one. Anything else is refused in one line naming the file and the encoding expected; no
guess is made (a wrong guess would silently change a name or a number).
"""

from __future__ import annotations

import codecs
import csv
from pathlib import Path

from slopescreen.errors import InputError

MAX_TEXT_BYTES = 64 * 2**20  # a scenario, soil or lab-test file is far smaller than this


def read_text(path: str | Path, what: str) -> str:
    """The text of ``path``; ``what`` names the file's role in error messages.

    >>> import tempfile, os
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = os.path.join(d, "t.csv")
    ...     _ = open(p, "wb").write(codecs.BOM_UTF16_LE + "a,b".encode("utf-16-le"))
    ...     read_text(p, "lab-test file")
    'a,b'
    """
    path = Path(path)
    try:
        with open(path, "rb") as handle:
            data = handle.read(MAX_TEXT_BYTES + 1)
    except OSError as exc:
        raise InputError(f"{path}: cannot read {what} ({exc.strerror})") from None
    if len(data) > MAX_TEXT_BYTES:
        raise InputError(f"{path}: {what} is larger than {MAX_TEXT_BYTES // 2**20} MB")
    try:
        if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
            return data.decode("utf-16")
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(
            f"{path}: {what} is not UTF-8 text (byte 0x{data[exc.start]:02x} at offset "
            f"{exc.start}); save it as UTF-8 (in a spreadsheet: CSV UTF-8)"
        ) from None
    if "\x00" in text:
        raise InputError(
            f"{path}: {what} holds NUL characters (UTF-16 without a byte-order mark, or not "
            "text); save it as UTF-8"
        )
    return text


def read_csv_rows(path: str | Path, what: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of every row of a CSV text file, blank lines and lines
    starting with # skipped (the header is the first row)."""
    lines = [
        (n, line)
        for n, line in enumerate(read_text(path, what).splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    try:
        rows = list(csv.reader(line for _, line in lines))
    except csv.Error as exc:
        raise InputError(f"{path}: {what} is not readable CSV ({exc})") from None
    return [(n, row) for (n, _), row in zip(lines, rows, strict=True)]
