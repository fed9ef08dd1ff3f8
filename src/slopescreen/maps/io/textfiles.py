"""Reading the user's text files (scenario TOML, soil and lab-test CSV) in the encodings
spreadsheets and editors save: UTF-8 with or without a byte-order mark, and UTF-16 with
one. Anything else is refused in one line naming the file and the encoding expected; no
guess is made (a wrong guess would silently change a name or a number).
"""

from __future__ import annotations

import codecs
import csv
import re
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


_DECIMAL_COMMA = re.compile(r"^\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*$")


def semicolon_note(path: str | Path, what: str) -> str:
    """The line a run states when it read ``path`` as semicolon-separated."""
    return f"{path}: {what} read with ';' separators and decimal commas (a European-locale CSV)"


def parse_csv(text: str) -> tuple[list[tuple[int, list[str]]], bool]:
    """(line number, cells) of every row of CSV text, blank lines and lines starting with #
    skipped, and whether it was semicolon-separated. Spreadsheets in many European locales
    write ``;`` between cells and a decimal comma: a header with more ``;`` than ``,`` is
    read that way, and a cell that is a number with a decimal comma ("1,5") becomes "1.5".

    >>> parse_csv("unit;depth_m\\nA;1,5\\n")
    ([(1, ['unit', 'depth_m']), (2, ['A', '1.5'])], True)
    """
    lines = [
        (n, line)
        for n, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    semicolons = bool(lines) and lines[0][1].count(";") > lines[0][1].count(",")
    rows = list(csv.reader((line for _, line in lines), delimiter=";" if semicolons else ","))
    if semicolons:
        rows = [
            [c.replace(",", ".") if _DECIMAL_COMMA.match(c) else c for c in row] for row in rows
        ]
    return [(n, row) for (n, _), row in zip(lines, rows, strict=True)], semicolons


def read_csv_rows(path: str | Path, what: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of every row of a CSV text file (see :func:`parse_csv`; the
    header is the first row)."""
    return read_csv_table(path, what)[0]


def read_csv_table(path: str | Path, what: str) -> tuple[list[tuple[int, list[str]]], str]:
    """:func:`parse_csv` of a file, with the line to state when it was semicolon-separated
    ("" otherwise)."""
    try:
        rows, semicolons = parse_csv(read_text(path, what))
    except csv.Error as exc:
        raise InputError(f"{path}: {what} is not readable CSV ({exc})") from None
    return rows, semicolon_note(path, what) if semicolons else ""


def read_csv_dicts(path: str | Path, what: str) -> tuple[list[dict[str, str]], str]:
    """Rows of a CSV file with a header, as dicts by column name (cells missing at the end
    of a row are None, as ``csv.DictReader`` gives them), and the semicolon note."""
    rows, note = read_csv_table(path, what)
    if not rows:
        return [], note
    header = [c.strip() for c in rows[0][1]]
    out = []
    for _, row in rows[1:]:
        record: dict[str, str] = dict(zip(header, row, strict=False))
        for name in header[len(row) :]:
            record[name] = None  # type: ignore[assignment]
        out.append(record)
    return out, note
