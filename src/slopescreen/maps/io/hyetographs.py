"""Reading a rain gauge's record (a hyetograph) from CSV: one row per interval, each
interval starting where the previous one ends. Lines starting with # are skipped.

Columns:

- the interval's end: ``end_h`` (hours from the start of the record; the first interval
  starts at 0 h) or ``end_time`` (ISO 8601 date-times, all with a time zone or all
  without; the first row gives the record's start and no rain);
- optionally its start, ``start_h`` or ``start_time``: then each start must be the
  previous row's end (a gap or an overlap is refused) and the first row is an interval;
- the rain in it: ``rain_mm`` (depth) or ``rain_mm_h`` (intensity), >= 0.
"""

from __future__ import annotations

import math
from datetime import datetime
from pathlib import Path
from typing import NamedTuple

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.textfiles import read_csv_rows

END_COLUMNS = ("end_h", "end_time")
START_COLUMNS = ("start_h", "start_time")
RAIN_COLUMNS = ("rain_mm", "rain_mm_h")
MAX_RAIN_MM_H = 1000.0


def _hours(path: Path, number: int, text: str, timed: bool, zone: list[bool]) -> float:
    """A time as hours: a number of hours, or a date-time as hours since 1970 (UTC when it
    has a zone)."""
    text = text.strip()
    try:
        if not timed:
            value = float(text)
            if not math.isfinite(value):
                raise ValueError
            return value
        moment = datetime.fromisoformat(text)
    except ValueError:
        kind = "an ISO 8601 date-time" if timed else "a number of hours"
        raise InputError(f"{path}: line {number}: {text!r} is not {kind}") from None
    zone.append(moment.tzinfo is not None)
    if len(set(zone)) > 1:
        raise InputError(
            f"{path}: line {number}: {text!r} mixes times with and without a time zone"
        )
    return (
        moment.timestamp() / 3600.0
        if moment.tzinfo
        else (moment - datetime(1970, 1, 1)).total_seconds() / 3600.0
    )


class Record(NamedTuple):
    """A gauge's record: its start (h: 0 for hours, else hours since 1970, UTC for zoned
    date-times), its clock ("hours", "local date-times" or "zoned date-times"), the ends of
    its intervals (h from its start) and their rain (mm/h)."""

    start_h: float
    clock: str
    ends_h: np.ndarray
    rain_mm_h: np.ndarray


def read_hyetograph(path: Path) -> tuple[np.ndarray, np.ndarray]:
    """(ends_h from the start of the record, rain_mm_h of each interval), checked."""
    record = read_record(path)
    return record.ends_h, record.rain_mm_h


def read_record(path: Path) -> Record:
    """A gauge's record, checked (see the module's columns)."""
    numbered = read_csv_rows(path, "hyetograph")
    rows = [row for _, row in numbered]
    if len(rows) < 2:
        raise InputError(f"{path}: hyetograph needs a header and at least one interval")
    head = [h.strip() for h in rows[0]]
    ends = [c for c in END_COLUMNS if c in head]
    starts = [c for c in START_COLUMNS if c in head]
    rains = [c for c in RAIN_COLUMNS if c in head]
    unknown = [h for h in head if h not in (*END_COLUMNS, *START_COLUMNS, *RAIN_COLUMNS)]
    if unknown or len(ends) != 1 or len(rains) != 1 or len(starts) > 1:
        raise InputError(
            f"{path}: hyetograph needs one of {' or '.join(END_COLUMNS)}, one of "
            f"{' or '.join(RAIN_COLUMNS)} and optionally {' or '.join(START_COLUMNS)}; "
            f"found {', '.join(head)}"
        )
    end, rain_column = ends[0], rains[0]
    start = starts[0] if starts else None
    timed = end == "end_time"
    if start is not None and (start == "start_time") != timed:
        raise InputError(f"{path}: {start} and {end} must both be hours or both date-times")
    zone: list[bool] = []
    times, amounts, numbers = [], [], []
    previous_end = None
    for number, row in numbered[1:]:
        values = dict(zip(head, row, strict=False))
        if len(row) != len(head):
            raise InputError(f"{path}: line {number}: needs {len(head)} values, got {row}")
        t_end = _hours(path, number, values[end], timed, zone)
        if start is not None:
            t_start = _hours(path, number, values[start], timed, zone)
            if previous_end is None:
                times.append(t_start)
            elif t_start > previous_end + 1e-9:
                raise InputError(
                    f"{path}: line {number}: a gap of {t_start - previous_end:g} h after the "
                    "previous interval (each interval starts where the previous one ends)"
                )
            elif t_start < previous_end - 1e-9:
                raise InputError(
                    f"{path}: line {number}: overlaps the previous interval by "
                    f"{previous_end - t_start:g} h"
                )
        elif not times and timed:  # the first row of date-times: the record's start
            if values[rain_column].strip() not in ("", "0", "0.0"):
                raise InputError(
                    f"{path}: line {number}: the first end_time gives the record's start; "
                    "leave its rain empty (or add a start_time column)"
                )
            times.append(t_end)
            previous_end = t_end
            continue
        elif not times:
            times.append(0.0)
        if t_end <= times[-1]:
            raise InputError(
                f"{path}: line {number}: {end} {values[end].strip()} is not after the "
                "previous time (times must increase)"
            )
        text = values[rain_column].strip()
        try:
            amount = float(text)
        except ValueError:
            raise InputError(
                f"{path}: line {number}: {rain_column} {text!r} is not a number"
            ) from None
        if not math.isfinite(amount) or amount < 0.0:
            raise InputError(f"{path}: line {number}: {rain_column} must be >= 0, got {text}")
        times.append(t_end)
        amounts.append(amount)
        numbers.append(number)
        previous_end = t_end
    if not amounts:
        raise InputError(f"{path}: hyetograph has no interval")
    edges = np.asarray(times, float) - times[0]
    widths = np.diff(edges)
    rain = np.asarray(amounts, float)
    intensity = rain / widths if rain_column == "rain_mm" else rain
    too_much = np.flatnonzero(intensity > MAX_RAIN_MM_H)
    if too_much.size:
        i = int(too_much[0])
        raise InputError(
            f"{path}: line {numbers[i]}: {intensity[i]:g} mm/h is beyond the allowed "
            f"0 to {MAX_RAIN_MM_H:g} mm/h"
        )
    clock = "hours" if not timed else ("zoned date-times" if zone[0] else "local date-times")
    return Record(float(times[0]), clock, edges[1:], intensity)
