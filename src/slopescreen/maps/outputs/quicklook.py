"""Map figures (PNG) in one house style: opaque class or value colours over the relief
(lightness only, see :mod:`slopescreen.maps.outputs.palette`), soil-unit boundaries and zone
outlines as thin lines, a legend with a no-data entry, axes labelled with their units, and
the scale bar and north arrow in the margin beside the map, never on the data. Every figure
carries the full cautions."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.safe_writes import replacing
from slopescreen.maps.outputs.figure_text import fit_text
from slopescreen.maps.outputs.palette import (
    FAILS_DRY_HEX,
    HOLDS_HEX,
    NO_DATA_HEX,
    class_rgb,
    hex_rgb,
    ramp,
    relief_from_hillshade,
    shade,
)
from slopescreen.scenario import FAILS_WHEN_DRY, HOLDS_WHEN_SATURATED

MAX_PIXELS = 1600  # rasters are read at most this many cells a side for a figure
BOUNDARY_HEX = "#5f5f5f"  # soil-unit boundaries: thin, grey, half transparent (not contours)
MAX_ZONE_OUTLINES = 20_000  # beyond this many zones the outlines would hide the map


def class_colours(n_classes: int) -> list[tuple[int, ...]]:
    """RGBA 0-255 per class, least stable first (most prominent) to most stable (pale)."""
    rgb = np.round(class_rgb(n_classes) * 255.0).astype(int)
    return [(*(int(v) for v in row), 255) for row in rgb]


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


def axis_labels(crs: object) -> tuple[str, str]:
    """Axis titles with units: Easting / Northing in the CRS's linear unit, or longitude
    and latitude in degrees for a geographic grid."""
    if getattr(crs, "is_geographic", False):
        return "Longitude (degrees east)", "Latitude (degrees north)"
    unit = str(getattr(crs, "linear_units", "") or "map units")
    short = {"metre": "m", "meter": "m", "foot": "ft", "US survey foot": "US survey ft"}
    unit = short.get(unit, unit)
    return f"Easting ({unit})", f"Northing ({unit})"


def map_step(grid: Grid) -> int:
    """A map's step through the grid: at most MAX_PIXELS cells a side."""
    return max(1, math.ceil(max(grid.height, grid.width) / MAX_PIXELS))


def decimated_shape(height: int, width: int, step: int) -> tuple[int, int]:
    """The shape of a grid of ``height`` x ``width`` cells read at 1/step resolution."""
    return max(1, height // step), max(1, width // step)


def decimated(path: Path, step: int) -> np.ndarray:
    """The raster read at 1/step resolution (nearest; from its overviews where present):
    for maps and the map page."""
    import rasterio
    from rasterio.enums import Resampling

    with rasterio.open(path) as src:
        shape = decimated_shape(src.height, src.width, step)
        return src.read(1, out_shape=shape, resampling=Resampling.nearest)


@dataclass
class MapFrame:
    """What every map shares: the grid, relief, outlines and its words."""

    grid: Grid
    hillshade: Path
    title: str
    subtitle: str
    soil_codes: Path | None = None  # soil-unit raster for boundaries
    zones: Path | None = None  # zone polygons for outlines
    zones_label: str = "low-margin zone outline"  # what the outlines are, in the legend
    inset: tuple[list[str], np.ndarray] | None = None  # units, areas (unit x class)
    inset_title: str = "share of each soil unit's area by class"
    notes: list[str] = field(default_factory=list)  # extra legend lines

    @property
    def step(self) -> int:
        return map_step(self.grid)


@dataclass
class Special:
    """A code of a continuous raster shown as its own legend entry."""

    value: float
    hex_colour: str
    label: str


def relief_image(rgb: np.ndarray, hillshade: np.ndarray) -> np.ndarray:
    """RGBA image: the colours shaded by the relief (lightness only), transparent outside
    the DEM's data so the page shows through; cut to the shape both arrays share."""
    h, w = min(hillshade.shape[0], rgb.shape[0]), min(hillshade.shape[1], rgb.shape[1])
    hillshade, rgb = hillshade[:h, :w], rgb[:h, :w]
    inside = hillshade > 0
    image = np.ones((h, w, 4))
    image[..., :3] = shade(rgb, np.where(inside, relief_from_hillshade(hillshade), 0.0))
    image[..., 3] = inside
    return image


def read_for_map(path: Path, frame: MapFrame) -> np.ndarray:
    """A raster as a map of ``frame`` shows it (decimated to at most MAX_PIXELS a side)."""
    return decimated(path, frame.step)


def draw_classes(
    target: Path,
    frame: MapFrame,
    classes: np.ndarray,
    names: list[str],
    legend_title: str,
    no_data_label: str = "no result (no soil unit or no data)",
    colours: np.ndarray | None = None,
) -> Path:
    """A map of uint8 classes 1..n (0 = no result; from :func:`read_for_map`), least
    stable first; ``colours`` (n x 3, RGB 0-1) default to the class palette."""
    lut, handles = class_legend(names, no_data_label, colours)
    return _draw(target, frame, lut[np.clip(classes, 0, len(names))], handles, legend_title)


LEGEND_WIDTH = 46  # characters of a legend label before it wraps (the margin's width)


def class_legend(
    names: list[str], no_data_label: str, colours: np.ndarray | None = None
) -> tuple[np.ndarray, list]:
    """(colour per class code 0..n, legend patches) of a class map: code 0 (no result)
    grey, then ``colours`` (default the class palette), one patch each, no data last."""
    import textwrap

    from matplotlib.patches import Patch

    colours = class_rgb(len(names)) if colours is None else colours
    lut = np.vstack([hex_rgb(NO_DATA_HEX), colours])
    labels = [textwrap.fill(n, LEGEND_WIDTH) for n in [*names, no_data_label]]
    return lut, [
        Patch(facecolor=lut[(i + 1) % len(lut)], edgecolor="0.3", label=label)
        for i, label in enumerate(labels)
    ]


def coloured_values(
    values: np.ndarray,
    log: bool = False,
    specials: tuple[Special, ...] = (),
    value_range: tuple[float, float] | None = None,
) -> tuple[np.ndarray, np.ndarray, tuple[float, float]]:
    """(RGB 0-1, no-data mask, value range) of a continuous layer in the house ramp: low
    values (the worry) dark, high values pale, on a log scale with ``log``; codes in
    ``specials`` in their own colours; the range from the 1st to 99th percentile (whole
    decades on a log scale) unless given."""
    from matplotlib.colors import LogNorm, Normalize

    nodata = ~np.isfinite(values) | (values <= -9000.0)
    special_masks = [(s, np.isclose(values, s.value) & ~nodata) for s in specials]
    regular = ~nodata
    for _, m in special_masks:
        regular &= ~m
    if log:
        regular &= values > 0.0
    data = values[regular]
    if value_range is None:
        lo, hi = np.percentile(data, [1.0, 99.0]) if data.size else (1.0, 10.0)
        if log:
            lo = max(lo, 1e-3)
            lo, hi = 10 ** math.floor(math.log10(lo)), 10 ** math.ceil(math.log10(max(hi, lo)))
            hi = max(hi, lo * 10.0)
        elif hi <= lo:
            hi = lo + 1.0
        value_range = (float(lo), float(hi))
    norm = (LogNorm if log else Normalize)(*value_range, clip=True)
    colours = ramp(256)
    rgb = np.empty((*values.shape, 3))
    rgb[:] = hex_rgb(NO_DATA_HEX)
    if data.size:
        # as a 256-colour matplotlib colormap indexes [0, 1]
        index = np.clip((np.asarray(norm(data)) * 256.0).astype(int), 0, 255)
        rgb[regular] = colours[index]
    for s, m in special_masks:
        rgb[m] = hex_rgb(s.hex_colour)
    return rgb, nodata, value_range


def draw_values(
    target: Path,
    frame: MapFrame,
    value_path: Path,
    label: str,
    log: bool = False,
    specials: tuple[Special, ...] = (),
    no_data_label: str = "no result (no soil unit or no data)",
    value_range: tuple[float, float] | None = None,
) -> Path:
    """A continuous map, low values (the worry) dark and prominent, high values pale, on a
    log colour scale with ``log``; codes in ``specials`` get their own legend entries."""
    from matplotlib.colors import ListedColormap, LogNorm, Normalize
    from matplotlib.patches import Patch

    values = decimated(value_path, frame.step).astype(np.float64)
    rgb, _, value_range = coloured_values(values, log, specials, value_range)
    norm = (LogNorm if log else Normalize)(*value_range, clip=True)
    cmap = ListedColormap(ramp(256))
    handles = [
        Patch(facecolor=hex_rgb(s.hex_colour), edgecolor="0.3", label=s.label) for s in specials
    ]
    handles.append(Patch(facecolor=hex_rgb(NO_DATA_HEX), edgecolor="0.3", label=no_data_label))
    return _draw(target, frame, rgb, handles, "codes and lines", colourbar=(cmap, norm, label))


def _map_panel(
    fig: Any,
    frame: MapFrame,
    image: np.ndarray,
    handles: list,
    notes: list[str],
    rect: tuple,
    aspect: float,
) -> Any:
    """The map itself: relief-shaded classes at equal ground metres both ways, soil-unit
    boundaries, zone outlines (noted instead when too many), axes in the CRS's units."""
    import matplotlib.pyplot as plt
    from matplotlib.lines import Line2D
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    grid = frame.grid
    h, w = image.shape[:2]
    t = grid.transform
    extent = (t.c, t.c + t.a * grid.width, t.f + t.e * grid.height, t.f)  # type: ignore[attr-defined]
    ax = fig.add_axes(rect)
    ax.imshow(image, extent=extent, interpolation="nearest")
    ax.set_aspect(aspect, anchor="NW")  # equal ground metres both ways at the map's centre
    if frame.soil_codes is not None:
        codes = decimated(frame.soil_codes, frame.step)[:h, :w]
        for code in np.unique(codes[codes > 0]):
            ax.contour(
                (codes == code).astype(float),
                levels=[0.5],
                colors=BOUNDARY_HEX,
                linewidths=0.4,
                linestyles="dashed",
                alpha=0.6,
                extent=extent,
                origin="upper",
            )
        handles.append(
            Line2D(
                [],
                [],
                color=BOUNDARY_HEX,
                lw=0.6,
                ls="dashed",
                alpha=0.6,
                label="soil-unit boundary",
            )
        )
    if frame.zones is not None and frame.zones.exists():
        import geopandas as gpd

        zones = gpd.read_file(frame.zones)
        if 0 < len(zones) <= MAX_ZONE_OUTLINES:
            zones.boundary.plot(ax=ax, color="0.1", linewidth=0.3)
            handles.append(Line2D([], [], color="0.1", lw=0.8, label=frame.zones_label))
        elif len(zones):
            notes.append(f"{len(zones):,} zones: too many to outline at this scale")
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    xlabel, ylabel = axis_labels(grid.crs)
    ax.set_xlabel(xlabel, fontsize=9)
    ax.set_ylabel(ylabel, fontsize=9)
    fmt = "{:,.3f}" if grid.geographic else "{:,.0f}"
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_formatter(FuncFormatter(lambda v, _: fmt.format(v)))
        axis.set_major_locator(MaxNLocator(5, prune="lower"))
    ax.tick_params(labelsize=8)
    plt.setp(ax.get_yticklabels(), rotation=90, va="center")
    return ax


def _titles(fig: Any, frame: MapFrame, fig_h: float) -> None:
    """Title and subtitle above the map; names are the user's text: never parsed as
    mathtext ("$...$")."""
    fig.text(
        0.09,
        1.0 - 0.25 / fig_h,
        frame.title,
        fontsize=12,
        weight="bold",
        va="top",
        parse_math=False,
    )
    fit_text(fig, 0.09, 1.0 - 0.55 / fig_h, frame.subtitle, fontsize=9, va="top", parse_math=False)


def _side_panel(
    fig: Any,
    frame: MapFrame,
    handles: list,
    legend_title: str,
    colourbar: tuple | None,
    notes: list[str],
    box: tuple[float, float, float],
) -> None:
    """Right of the map, top down: the legend, the colour bar, the inset of areas by unit
    (when it fits), and the notes at the foot. ``box`` is (top, bottom, figure height)."""
    import matplotlib

    top, bottom, fig_h = box
    side_left = 0.70
    legend = fig.legend(
        handles=handles,
        loc="upper left",
        bbox_to_anchor=(side_left, top),
        fontsize=8,
        title=legend_title,
        title_fontsize=9,
        frameon=False,
        alignment="left",
    )
    for text in legend.get_texts():
        text.set_parse_math(False)
    y_next = top - (0.05 + 0.032 * len(handles)) * 6.5 / fig_h
    if colourbar is not None:
        cmap, norm, label = colourbar
        cax = fig.add_axes((side_left + 0.01, y_next - 0.03, 0.22, 0.022))
        bar = fig.colorbar(
            matplotlib.cm.ScalarMappable(norm=norm, cmap=cmap), cax=cax, orientation="horizontal"
        )
        bar.ax.tick_params(labelsize=7)
        bar.set_label(label, fontsize=8)
        y_next -= 0.03 + 0.9 / fig_h
    if frame.inset is not None and len(frame.inset[0]) <= 12:
        units, areas = frame.inset
        height = min(0.22, 0.035 * len(units) + 0.05)
        if y_next - height > bottom + 1.4 / fig_h:
            iax = fig.add_axes((side_left + 0.07, y_next - height, 0.2, height))
            _inset(iax, units, areas, frame.inset_title)
    for i, note in enumerate(notes):
        fig.text(side_left, bottom + 1.25 / fig_h - i * 0.2 / fig_h, note, fontsize=7)


def _scale_and_north(ax: Any, grid: Grid, variation: float) -> None:
    """A scale bar in ground metres (saying how much the scale, ``variation``, varies
    across a large map) and a north arrow, right of the map's foot."""
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    bar_m, bar_map = scale_bar(grid)
    label = f"{bar_m / 1000:g} km" if bar_m >= 1000 else f"{bar_m:g} m"
    if variation > 0.01:
        label += f" (true at the centre;\nscale varies {100 * variation:.0f}% across the map)"
    ax.add_artist(
        AnchoredSizeBar(
            ax.transData,
            bar_map,
            label,
            loc="lower left",
            bbox_to_anchor=(1.03, 0.0),
            bbox_transform=ax.transAxes,
            frameon=True,
            size_vertical=0,
            fontproperties={"size": 8},
            sep=4,
            borderpad=0.6,
        )
    )
    ax.annotate(
        "N",
        xy=(1.08, 0.34),
        xytext=(1.08, 0.22),
        xycoords="axes fraction",
        ha="center",
        va="center",
        fontsize=11,
        fontweight="bold",
        annotation_clip=False,
        arrowprops={"arrowstyle": "-|>", "color": "black", "lw": 1.5},
    )


def _footer(fig: Any, grid: Grid, fig_h: float) -> None:
    """The CRS with how ground lengths were measured, and the cautions."""
    crs_text = grid.crs.to_string()  # type: ignore[attr-defined]
    note = f"CRS: {crs_text}. {grid.ground.note}"
    fit_text(fig, 0.09, 0.55 / fig_h, note, fontsize=7, color="0.2", parse_math=False)
    caution = "CAUTION: " + " ".join(CAUTIONS)
    fit_text(fig, 0.09, 0.1 / fig_h, caution, fontsize=7, color="0.2", parse_math=False)


def _draw(
    target: Path,
    frame: MapFrame,
    rgb: np.ndarray,
    handles: list,
    legend_title: str,
    colourbar: tuple | None = None,
) -> Path:
    """One map in the house style: title, the map, the side panel, scale, north, footer."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    grid = frame.grid
    notes = list(frame.notes)  # the frame itself is left as given
    image = relief_image(rgb, decimated(frame.hillshade, frame.step))
    t = grid.transform
    mx, my, variation = ground_per_map_unit(grid)
    height_over_width = (grid.height * my * abs(t.e)) / (grid.width * mx * abs(t.a))  # type: ignore[attr-defined]
    fig_w = 11.0
    map_w = 0.58 * fig_w
    fig_h = min(max(map_w * height_over_width + 2.6, 6.0), 16.0)
    fig = plt.figure(figsize=(fig_w, fig_h), dpi=110)
    bottom = 1.35 / fig_h
    top = 1.0 - 1.0 / fig_h
    rect = (0.09, bottom, 0.58, top - bottom)
    ax = _map_panel(fig, frame, image, handles, notes, rect, my / mx)
    _titles(fig, frame, fig_h)
    _side_panel(fig, frame, handles, legend_title, colourbar, notes, (top, bottom, fig_h))
    _scale_and_north(ax, grid, variation)
    _footer(fig, grid, fig_h)
    with replacing(target) as tmp:
        fig.savefig(tmp, format="png")
    plt.close(fig)
    return target


def _inset(ax: object, units: list[str], areas: np.ndarray, title: str) -> None:
    """Horizontal bars: each unit's area split by class, as shares of the unit."""
    shares = areas / np.maximum(areas.sum(axis=1, keepdims=True), 1e-12)
    colours = class_rgb(areas.shape[1])
    left = np.zeros(len(units))
    y = np.arange(len(units))[::-1]
    for k in range(areas.shape[1]):
        ax.barh(y, shares[:, k], left=left, color=colours[k], edgecolor="0.4", lw=0.3)  # type: ignore[attr-defined]
        left += shares[:, k]
    ax.set_yticks(y, [u[:14] for u in units], fontsize=7)  # type: ignore[attr-defined]
    ax.set_xlim(0, 1)  # type: ignore[attr-defined]
    ax.set_xticks([0, 0.5, 1], ["0", "50%", "100%"], fontsize=7)  # type: ignore[attr-defined]
    ax.set_title(title, fontsize=8, loc="left")  # type: ignore[attr-defined]
    for label in ax.get_yticklabels():  # type: ignore[attr-defined]
        label.set_parse_math(False)


CRITICAL_RECHARGE_SPECIALS = (
    Special(FAILS_WHEN_DRY, FAILS_DRY_HEX, f"fails even when dry (code {FAILS_WHEN_DRY:g})"),
    Special(
        HOLDS_WHEN_SATURATED,
        HOLDS_HEX,
        f"holds even when saturated (code {HOLDS_WHEN_SATURATED:g})",
    ),
)


def storm_specials(later_h: float) -> tuple[Special, ...]:
    """The codes of a storm's time-to-failure raster, in their own colours."""
    from slopescreen.maps.outputs.palette import FAILS_BEFORE_HEX
    from slopescreen.storm import FAILS_BEFORE_STORM, NOT_BY_LATER

    return (
        Special(NOT_BY_LATER, HOLDS_HEX, f"holds to {later_h:g} h (code -1)"),
        Special(FAILS_BEFORE_STORM, FAILS_BEFORE_HEX, "fails before the storm (code -2)"),
    )


def return_period_specials(first_yr: float, last_yr: float) -> tuple[Special, ...]:
    """The codes of the triggering return period raster (the design-rainfall table runs
    from ``first_yr`` to ``last_yr``), in their own colours."""
    from slopescreen import rainfall_frequency as rf
    from slopescreen.maps.outputs.palette import CLASS_HEX, NO_RAIN_HEX

    return (
        Special(rf.FAILS_WITHOUT_RAIN, FAILS_DRY_HEX, "fails before any rain (code -3)"),
        Special(rf.MORE_FREQUENT, CLASS_HEX[0], f"more often than 1 in {first_yr:g} yr (code -1)"),
        Special(rf.RARER, HOLDS_HEX, f"rarer than 1 in {last_yr:g} yr (code -2)"),
        Special(rf.NO_INTENSITY_FAILS, NO_RAIN_HEX, "no rain starts failure (code -4)"),
    )
