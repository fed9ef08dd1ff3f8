"""Scenario comparison: one row of small class maps, and where the class changes between
two scenarios (cells less stable, more stable, unchanged), with ground areas."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.io.safe_writes import replacing
from slopescreen.maps.outputs.figure_text import fit_text
from slopescreen.maps.outputs.palette import hex_rgb
from slopescreen.maps.outputs.quicklook import (
    MapFrame,
    class_legend,
    draw_classes,
    read_for_map,
    relief_image,
)

CHANGE_NAMES = ("less stable", "more stable", "same class")
# hazard classes run from the most frequent: a lower class number is more frequent
HAZARD_CHANGE_NAMES = ("more frequent", "less frequent", "same class")
# less stable: the least stable class colour; more stable: a slate blue; same: pale
CHANGE_HEX = ("#5a1a78", "#4f86b0", "#f2f2ef")


@dataclass
class ClassChange:
    first: str
    second: str
    areas_ha: tuple[float, float, float]  # less stable, more stable, same (in both mapped)
    png: Path | None = None
    names: tuple[str, str, str] = CHANGE_NAMES  # or HAZARD_CHANGE_NAMES for hazard classes
    # hazard comparisons: the triggering return period in second / in first
    ratio: PeriodRatio | None = None


@dataclass
class PeriodRatio:
    """Triggering return period of the second scenario over the first's, where both lie
    within the design-rainfall table."""

    raster: Path
    png: Path | None
    median: float | None  # over the ground area with both, within RATIO_BIN (log10)
    share_shorter: float  # of that area, the share whose return period shortens
    area_ha: float  # ground area with a return period in both


def class_change(
    grid: Grid, first: Path, second: Path, step: int
) -> tuple[np.ndarray, tuple[float, float, float]]:
    """Where ``second``'s class differs from ``first``'s, read tile by tile: a map of every
    ``step``-th cell (1 less stable, 2 more stable, 3 the same class, 0 no class in either)
    and the ground hectares of codes 1, 2 and 3 over the whole grid."""
    small = np.zeros((-(-grid.height // step), -(-grid.width // step)), np.uint8)
    totals = np.zeros(4)
    for rows, cols in windows(grid):
        a = read_block(first, rows, cols).astype(np.int16)
        b = read_block(second, rows, cols).astype(np.int16)
        change = np.where(b < a, 1, np.where(b > a, 2, 3)).astype(np.uint8)
        change[(a == 0) | (b == 0)] = 0
        area = np.broadcast_to(grid.ground.cell_area_m2(rows, cols), change.shape)
        totals += np.bincount(change.ravel(), weights=area.ravel(), minlength=4)
        r0, c0 = (-rows.start) % step, (-cols.start) % step
        part = change[r0::step, c0::step]
        i, j = (rows.start + r0) // step, (cols.start + c0) // step
        small[i : i + part.shape[0], j : j + part.shape[1]] = part
    areas = tuple(float(v) / 10_000.0 for v in totals[1:])
    return small, areas  # type: ignore[return-value]


RATIO_BIN = 0.001  # log10 width of the bins of the median ratio (0.23%)
# codes of the return-period ratio where a scenario's return period is itself a code
RATIO_BEYOND = -1.0  # neither triggers within the table (rarer, or no rain fails it)
RATIO_FREQUENT = -2.0  # either fails more often than the table, or before any rain
RATIO_ONE_SIDED = -3.0  # within the table in one scenario only


def period_ratio(
    grid: Grid, first: Path, second: Path, target: Path, tags: dict[str, str]
) -> tuple[float | None, float, float]:
    """Write ``target``: T(second) / T(first) where both rasters hold a return period, the
    codes ``RATIO_*`` where either holds a code, tile by tile; return the area-weighted median
    ratio (from a histogram of log10 ratio in ``RATIO_BIN`` bins over 1e-6 to 1e6), the
    share of that area whose return period shortens, and the area (ha)."""
    from slopescreen.maps.io.rasters import RasterSink, all_or_nothing
    from slopescreen.maps.region.terrain_cache import NODATA_F32

    edges = np.arange(-6.0, 6.0 + RATIO_BIN / 2, RATIO_BIN)
    weights = np.zeros(edges.size + 1)
    shorter = 0.0
    sink = RasterSink(target, grid, "float32", NODATA_F32, tags=tags)
    with all_or_nothing(sink):
        for rows, cols in windows(grid):
            a = read_block(first, rows, cols).astype(np.float64)
            b = read_block(second, rows, cols).astype(np.float64)
            both = (a > 0.0) & (b > 0.0)
            ratio = np.full(a.shape, NODATA_F32, np.float32)
            mapped = (a != NODATA_F32) & (b != NODATA_F32)
            frequent = (a == -1.0) | (a == -3.0) | (b == -1.0) | (b == -3.0)  # rf codes
            ratio[mapped & ((a > 0.0) != (b > 0.0))] = RATIO_ONE_SIDED
            ratio[mapped & frequent] = RATIO_FREQUENT
            ratio[mapped & ~frequent & (a < 0.0) & (b < 0.0)] = RATIO_BEYOND
            ratio[both] = b[both] / a[both]
            sink.write(rows, cols, ratio)
            area = np.broadcast_to(grid.ground.cell_area_m2(rows, cols), a.shape)[both]
            where = np.searchsorted(edges, np.log10(ratio[both].astype(np.float64)))
            weights += np.bincount(where, weights=area, minlength=weights.size)
            shorter += float(area[ratio[both] < 1.0].sum())
    total = float(weights.sum())
    if total == 0.0:
        return None, 0.0, 0.0
    k = int(np.searchsorted(np.cumsum(weights), total / 2.0))
    k = min(max(k, 1), edges.size - 1)
    median = float(10 ** ((edges[k - 1] + edges[k]) / 2.0))
    return median, shorter / total, total / 10_000.0


def draw_change(
    target: Path,
    frame: MapFrame,
    change: np.ndarray,
    first: str,
    second: str,
    names: tuple[str, str, str] = CHANGE_NAMES,
) -> Path:
    """The class-change map (from :func:`class_change`) in the house style."""
    colours = np.array([hex_rgb(h) for h in CHANGE_HEX])
    return draw_classes(
        target,
        frame,
        change,
        list(names),
        f"{second}\ncompared with {first}",
        colours=colours,
    )


def draw_small_multiples(
    target: Path,
    grid: Grid,
    hillshade: Path,
    scenarios: list[tuple[str, Path]],
    names: list[str],
    title: str,
) -> Path:
    """One row of class maps, one per scenario, with a shared legend."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    frame = MapFrame(grid, hillshade, title, "")
    relief = read_for_map(hillshade, frame)
    lut, handles = class_legend(names, "no result")
    n = len(scenarios)
    per_row = min(n, 5)
    rows = -(-n // per_row)
    t = grid.transform
    aspect = (grid.height * abs(t.e)) / (grid.width * abs(t.a))  # type: ignore[attr-defined]
    panel = 11.0 / per_row
    fig, axes = plt.subplots(
        rows,
        per_row,
        figsize=(11.0, rows * panel * aspect + 2.0),
        dpi=100,
        squeeze=False,
    )
    for ax in axes.ravel():
        ax.set_axis_off()
    for ax, (name, path) in zip(axes.ravel(), scenarios, strict=False):
        classes = read_for_map(path, frame)
        ax.imshow(
            relief_image(lut[np.clip(classes, 0, len(names))], relief), interpolation="nearest"
        )
        ax.set_title(name, fontsize=9, parse_math=False)
    fig.legend(
        handles=handles,
        loc="lower center",
        ncol=min(5, len(handles)),
        fontsize=8,
        frameon=False,
        bbox_to_anchor=(0.5, 0.09),
    )
    fig.suptitle(title, fontsize=11, x=0.01, ha="left")
    fit_text(fig, 0.01, 0.01, "CAUTION: " + " ".join(CAUTIONS), fontsize=7, color="0.2")
    fig.subplots_adjust(left=0.01, right=0.99, top=0.88, bottom=0.2, wspace=0.04)
    with replacing(target) as tmp:
        fig.savefig(tmp, format="png")
    plt.close(fig)
    return target
