"""Quick-look map (PNG): hazard classes over a hillshade, with legend, scale bar, north
arrow, CRS and scenario name. Colours are sampled from matplotlib's perceptually uniform
'plasma' colour map."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.grid import Grid
from slopescreen.outputs import replacing

COLOUR_MAP = "plasma"


def class_colours(n_classes: int) -> list[tuple[int, ...]]:
    """RGBA 0-255 per class, least stable first (dark) to most stable (light)."""
    from matplotlib import colormaps

    rgba = colormaps[COLOUR_MAP](np.linspace(0.05, 0.95, n_classes))
    return [tuple(int(v) for v in row) for row in np.round(rgba * 255.0)]


def colour_table(n_classes: int) -> dict[int, tuple[int, int, int, int]]:
    """GeoTIFF colour table: 0 (no data) transparent, then the class colours."""
    table = {0: (0, 0, 0, 0)}
    table.update({i: c for i, c in enumerate(class_colours(n_classes), start=1)})
    return table


def _nice_length(target: float) -> float:
    power = 10 ** math.floor(math.log10(target))
    return max(m * power for m in (1, 2, 5) if m * power <= target)


def ground_per_map_unit(grid: Grid) -> tuple[float, float, float]:
    """Ground metres per map unit along x and y at the map's centre cell, and how much the
    scale varies across the map (largest / smallest - 1, over both axes)."""
    t = grid.transform
    r, c = grid.height // 2, grid.width // 2
    ue, un, ve, vn = grid.ground.vectors(slice(r, r + 1), slice(c, c + 1))
    mx = float(np.hypot(ue, un).ravel()[0]) / abs(t.a)  # type: ignore[attr-defined]
    my = float(np.hypot(ve, vn).ravel()[0]) / abs(t.e)  # type: ignore[attr-defined]
    du0, du1, dv0, dv1 = grid.ground.ground_spacing_m()
    return mx, my, max(du1 / du0, dv1 / dv0) - 1.0


def scale_bar(grid: Grid) -> tuple[float, float]:
    """(ground length in metres, the same length in map units along x) of a scale bar of
    a round length near a fifth of the map's width, true at the map's centre."""
    mx, _, _ = ground_per_map_unit(grid)
    span_x = abs(grid.transform.a) * grid.width  # type: ignore[attr-defined]
    bar_m = _nice_length(span_x * mx / 5.0)
    return bar_m, bar_m / mx


def _decimated(path: Path, step: int) -> np.ndarray:
    """The raster read at 1/step resolution (nearest; from its overviews where present)."""
    import rasterio
    from rasterio.enums import Resampling

    with rasterio.open(path) as src:
        shape = (max(1, src.height // step), max(1, src.width // step))
        return src.read(1, out_shape=shape, resampling=Resampling.nearest)


def draw_map(
    target: Path,
    grid: Grid,
    hillshade_path: Path,
    hazard_path: Path,
    class_names: list[str],
    title: str,
    subtitle: str,
) -> Path:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch

    step = max(1, math.ceil(max(grid.height, grid.width) / 1600))
    t = grid.transform
    extent = (t.c, t.c + t.a * grid.width, t.f + t.e * grid.height, t.f)
    n = len(class_names)
    colours = np.array(class_colours(n)) / 255.0
    mx, my, variation = ground_per_map_unit(grid)
    height_over_width = (grid.height * my * abs(t.e)) / (grid.width * mx * abs(t.a))
    fig_w = 9.0
    fig_h = min(max(fig_w * height_over_width * 0.8 + 1.8, 5.0), 14.0)
    fig, ax = plt.subplots(figsize=(fig_w, fig_h), dpi=120)
    ax.imshow(
        np.ma.masked_equal(_decimated(hillshade_path, step), 0),
        cmap="gray",
        extent=extent,
        interpolation="nearest",
        vmin=0,
        vmax=255,
    )
    ax.imshow(
        np.ma.masked_equal(_decimated(hazard_path, step), 0),
        cmap=ListedColormap(colours),
        vmin=0.5,
        vmax=n + 0.5,
        alpha=0.6,
        extent=extent,
        interpolation="nearest",
    )
    ax.set_aspect(my / mx)  # equal ground metres both ways at the map's centre
    handles = [
        Patch(facecolor=colours[i], edgecolor="0.3", label=name.replace("$", r"\$"))
        for i, name in enumerate(class_names)
    ]
    ax.legend(
        handles=handles,
        loc="lower left",
        fontsize=7,
        title="factor of safety",
        title_fontsize=7,
        framealpha=0.85,
    )
    span_x, span_y = extent[1] - extent[0], extent[3] - extent[2]
    bar_m, bar_map = scale_bar(grid)
    x0, y0 = extent[0] + 0.62 * span_x, extent[2] + 0.04 * span_y
    ax.plot([x0, x0 + bar_map], [y0, y0], color="black", lw=3, solid_capstyle="butt")
    label = f"{bar_m / 1000:g} km" if bar_m >= 1000 else f"{bar_m:g} m"
    if variation > 0.01:
        label += f"\n(true at the centre; scale varies {100 * variation:.0f}% across the map)"
    ax.text(
        x0 + bar_map / 2,
        y0 + 0.015 * span_y,
        label,
        ha="center",
        va="bottom",
        fontsize=8,
        bbox={"facecolor": "white", "alpha": 0.7, "edgecolor": "none"},
    )
    ax.annotate(
        "N",
        xy=(0.95, 0.95),
        xytext=(0.95, 0.84),
        xycoords="axes fraction",
        ha="center",
        va="center",
        fontsize=11,
        fontweight="bold",
        arrowprops={"arrowstyle": "-|>", "color": "black", "lw": 1.5},
    )
    # names are the user's text: never parsed as mathtext ("$...$")
    ax.set_title(f"{title}\n{subtitle}", fontsize=10, parse_math=False)
    crs_text = grid.crs.to_string()  # type: ignore[attr-defined]
    ax.set_xlabel(f"CRS: {crs_text}", fontsize=7, parse_math=False)
    ax.tick_params(labelsize=6)
    ax.ticklabel_format(useOffset=False, style="plain")
    fig.text(
        0.01,
        0.005,
        "CAUTION: " + " ".join(CAUTIONS[:1] + CAUTIONS[2:]),
        fontsize=6,
        color="0.25",
        wrap=True,
    )
    fig.tight_layout(rect=(0, 0.03, 1, 1))
    with replacing(target) as tmp:
        fig.savefig(tmp, format="png")
    plt.close(fig)
    return target
