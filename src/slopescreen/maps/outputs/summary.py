"""Area tables: hectares and shares of each stability or probability class per soil unit
and in total."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from slopescreen.maps.io.safe_writes import write_text

M2_PER_HA = 10_000.0


def add_areas(
    table: np.ndarray, codes: np.ndarray, classes: np.ndarray, cell_area_m2: np.ndarray
) -> None:
    """Add each cell's ground area (an array broadcastable to the block) to
    table[unit code, class], block by block."""
    area = np.broadcast_to(cell_area_m2, codes.shape)
    n_classes = table.shape[1]
    index = codes.astype(np.int64).ravel() * n_classes + classes.astype(np.int64).ravel()
    table += np.bincount(index, weights=area.ravel(), minlength=table.size).reshape(table.shape)


def summary_rows(
    table: np.ndarray,
    unit_keys: list[str],
    class_names: list[str],
    scenario: str,
    measure: str = "factor_of_safety",
    cut_table: np.ndarray | None = None,
) -> list[dict[str, object]]:
    """Rows per soil unit and class, then totals; classes >= 1 only (0 is no data).

    ``cut_table`` (same layout) holds the areas whose upslope area is cut off by a void or
    the DEM's edge; each row then gives their share of the row's area."""
    mapped = table[1:, 1:]
    cut = (cut_table if cut_table is not None else np.zeros_like(table))[1:, 1:]
    total_mapped = float(mapped.sum())
    rows: list[dict[str, object]] = []
    units = [(key, mapped[i], cut[i]) for i, key in enumerate(unit_keys)]
    units.append(("ALL", mapped.sum(axis=0), cut.sum(axis=0)))
    for key, areas, cut_areas in units:
        unit_total = float(areas.sum())
        for cls, name in enumerate(class_names, start=1):
            a = float(areas[cls - 1])
            rows.append(
                {
                    "scenario": scenario,
                    "measure": measure,
                    "soil_unit": key,
                    "class": cls,
                    "class_name": name,
                    "area_ha": round(a / M2_PER_HA, 4),
                    "percent_of_unit": round(100.0 * a / unit_total, 3) if unit_total else 0.0,
                    "percent_of_mapped_area": round(100.0 * a / total_mapped, 3)
                    if total_mapped
                    else 0.0,
                }
            )
            if cut_table is not None:
                share = 100.0 * float(cut_areas[cls - 1]) / a if a else 0.0
                rows[-1]["percent_catchment_cut_off"] = round(share, 3)
    return rows


FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def text_cell(value: object) -> object:
    """A text cell a spreadsheet will not run as a formula: text beginning with = + - @
    (or a tab or carriage return) gets a leading apostrophe (common practice against CSV
    formula injection); numbers are left alone.

    >>> text_cell("=HYPERLINK(1)"), text_cell("COL"), text_cell(-1.5)
    ("'=HYPERLINK(1)", 'COL', -1.5)
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def write_summary(rows: list[dict[str, object]], target: Path) -> Path:
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=list(rows[0]), lineterminator="\n")
    writer.writeheader()
    writer.writerows({k: text_cell(v) for k, v in row.items()} for row in rows)
    return write_text(target, buffer.getvalue())
