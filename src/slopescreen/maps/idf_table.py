"""Reading a design-rainfall (intensity-duration-frequency) table: a CSV with columns
``duration_h``, ``return_period_yr`` and ``intensity_mm_h`` (or ``depth_mm``, turned into
intensity = depth / duration), one row per duration and return period, lines starting
with # skipped. Checked by :func:`slopescreen.rainfall_frequency.check_table`."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

from slopescreen.errors import InputError
from slopescreen.rainfall_frequency import check_table
from slopescreen.textfiles import read_text

COLUMNS = ("duration_h", "return_period_yr", "intensity_mm_h", "depth_mm")


def read_idf(path: Path) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(durations h, return periods yr, intensities mm/h on their grid), sorted."""
    lines = [
        (n, line)
        for n, line in enumerate(read_text(path, "rainfall table").splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    try:
        rows = list(csv.reader(line for _, line in lines))
    except csv.Error as exc:
        raise InputError(f"{path}: rainfall table is not readable CSV ({exc})") from None
    if not rows:
        raise InputError(f"{path}: rainfall table is empty")
    head = [h.strip() for h in rows[0]]
    amount = [c for c in ("intensity_mm_h", "depth_mm") if c in head]
    unknown = [h for h in head if h not in COLUMNS]
    if unknown or len(amount) != 1 or not {"duration_h", "return_period_yr"} <= set(head):
        raise InputError(
            f"{path}: rainfall table needs the columns duration_h, return_period_yr and one of "
            f"intensity_mm_h or depth_mm; found {', '.join(head)}"
        )
    cells: dict[tuple[float, float], float] = {}
    for (number, _), row in zip(lines[1:], rows[1:], strict=True):
        values = dict(zip(head, row, strict=False))
        try:
            d, t, a = (float(values[c]) for c in ("duration_h", "return_period_yr", amount[0]))
        except (KeyError, ValueError):
            raise InputError(f"{path}: line {number}: needs three numbers, got {row}") from None
        if not all(math.isfinite(x) for x in (d, t, a)) or d <= 0.0:
            raise InputError(f"{path}: line {number}: values must be finite, duration > 0")
        if (d, t) in cells:
            raise InputError(f"{path}: line {number}: duration {d:g} h, {t:g} yr given twice")
        cells[(d, t)] = a / d if amount[0] == "depth_mm" else a
    durations = sorted({d for d, _ in cells})
    periods = sorted({t for _, t in cells})
    missing = [(d, t) for d in durations for t in periods if (d, t) not in cells]
    if missing:
        d, t = missing[0]
        raise InputError(
            f"{path}: no row for duration {d:g} h and return period {t:g} yr: give every "
            "duration for every return period"
        )
    grid = np.array([[cells[(d, t)] for t in periods] for d in durations])
    return check_table(durations, periods, grid, str(path))
