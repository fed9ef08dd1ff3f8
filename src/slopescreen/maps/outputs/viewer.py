"""``map.html``: the run's maps in one offline page to pan, zoom and click.

A small viewer of our own (``viewer.js`` and ``viewer.css`` beside this module, inlined):
no map library, no tile server, nothing fetched. Each layer is an image overlay (WebP,
transparent where there is no result) read at most :data:`VIEW_PIXELS` cells a side from
its raster (nearest cell, from the raster's overviews), drawn over the hillshade in the
house palette with its legend. A click reads a value grid: every ``step``-th cell of the
grid in both directions (at most :data:`VALUE_PIXELS` a side), exactly as the rasters
hold it (FS and depths as float32, classes and unit codes as bytes), gzip-compressed.
The page says which grid cell a click read. Size, measured on the demo (450 x 450 cells,
ten scenarios, 9 MB): 8 to 60 kB an overlay, 0.7 MB a scenario's values (225 x 225). At
the caps (overlays 1,000 pixels, values 256 a side, whatever the grid) an invented
10^7-cell region with two scenarios gave 1.7 MB in 4.5 s; a 10^8-cell region with ten
scenarios should stay within 10 to 20 MB (an estimate from these sizes).
"""

from __future__ import annotations

import base64
import gzip
import io
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.io.safe_writes import write_text
from slopescreen.maps.outputs import output_names as names
from slopescreen.maps.outputs.palette import class_rgb, hex_rgb, unit_rgb
from slopescreen.maps.outputs.quicklook import decimated, decimated_shape

VIEW_PIXELS = 1000  # overlays: at most this many cells a side
VALUE_PIXELS = 256  # click values: at most this many cells a side
LAYER_QUALITY = 85  # WebP quality of the overlays (lossy; the rasters keep every value)
RUNOUT_HEX = "#2171b5"  # run-out reach, in blues apart from the stability classes
ZONE_HEX = "#111111"  # zone outlines


@dataclass
class Layer:
    """One overlay: its id, scenario ("" for the region's own), title, image and legend
    (colour and label per entry; a ramp as its end colours and end values)."""

    id: str
    scenario: str
    title: str
    rgba: np.ndarray
    legend: list[tuple[str, str]] = field(default_factory=list)
    ramp: dict[str, Any] | None = None
    overlay: bool = False  # drawn on top of the chosen layer (zones, soil units, reach)


def _hex(rgb: np.ndarray) -> str:
    r, g, b = (round(float(v) * 255) for v in rgb[:3])
    return f"#{r:02x}{g:02x}{b:02x}"


def _classes(codes: np.ndarray, colours: np.ndarray, alpha: int = 235) -> np.ndarray:
    """RGBA of classes 1..n (0 transparent)."""
    lut = np.zeros((256, 4), np.uint8)
    lut[1 : len(colours) + 1, :3] = np.round(np.asarray(colours) * 255)
    lut[1 : len(colours) + 1, 3] = alpha
    return lut[np.clip(codes, 0, 255).astype(np.uint8)]


def _webp(rgba: np.ndarray) -> str:
    from PIL import Image

    buffer = io.BytesIO()
    Image.fromarray(rgba, "RGBA").save(buffer, "WEBP", quality=LAYER_QUALITY, method=4)
    return "data:image/webp;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")


def sampled(path: Path, grid: Grid, step: int) -> np.ndarray:
    """Every ``step``-th cell of a raster in both directions, from row 0 and column 0,
    as stored (read tile by tile: memory bounded)."""
    rows = -(-grid.height // step)
    cols = -(-grid.width // step)
    out = None
    for r, c in windows(grid):
        block = read_block(path, r, c)
        if out is None:
            out = np.zeros((rows, cols), block.dtype)
        r0, c0 = (-r.start) % step, (-c.start) % step
        part = block[r0::step, c0::step]
        out[
            (r.start + r0) // step : (r.start + r0) // step + part.shape[0],
            (c.start + c0) // step : (c.start + c0) // step + part.shape[1],
        ] = part
    assert out is not None
    return out


def _packed(values: np.ndarray, kind: str, scale: float = 1.0) -> dict[str, Any]:
    """A value grid for the page: gzip, base64; ``kind`` the JS typed array."""
    data = gzip.compress(np.ascontiguousarray(values).tobytes(), compresslevel=9, mtime=0)
    return {"kind": kind, "scale": scale, "b64": base64.b64encode(data).decode("ascii")}


def _float_grid(path: Path, grid: Grid, step: int) -> dict[str, Any]:
    v = sampled(path, grid, step).astype(np.float32)
    v[~np.isfinite(v) | (v <= -9000.0)] = np.nan
    return _packed(v.astype("<f4"), "f32")


def _zone_outline(zones_path: Path, grid: Grid, shape: tuple[int, int]) -> np.ndarray | None:
    """RGBA outlines of zone polygons at the overlay's size (None without zones)."""
    if not zones_path.exists():
        return None
    import geopandas as gpd
    from rasterio import features
    from rasterio.transform import Affine

    frame = gpd.read_file(zones_path)
    if not len(frame):
        return None
    t = grid.transform
    scale = Affine.scale(grid.width / shape[1], grid.height / shape[0])
    inside = features.rasterize(
        ((g, 1) for g in frame.geometry), out_shape=shape, transform=t * scale, dtype="uint8"
    ).astype(bool)
    edge = inside.copy()
    edge[1:-1, 1:-1] &= ~(
        inside[:-2, 1:-1] & inside[2:, 1:-1] & inside[1:-1, :-2] & inside[1:-1, 2:]
    )
    rgba = np.zeros((*shape, 4), np.uint8)
    rgba[edge, :3] = np.round(hex_rgb(ZONE_HEX) * 255).astype(np.uint8)
    rgba[edge, 3] = 255
    return rgba


def _scenario_layers(
    out: Path,
    grid: Grid,
    step: int,
    s: Any,
    class_names: list[str],
    ramps: list[tuple[Any, ...]],
) -> list[Layer]:
    """The overlays of one scenario that its folder holds; ``ramps``: the continuous
    layers (file, key, title, log scale, the raster's codes as ``Special``, the value range
    or None), as the scenario's own maps draw them."""
    from slopescreen.maps.outputs.quicklook import coloured_values
    from slopescreen.stability_classes import PF_CLASS_NAMES, classify_probability

    folder = out / s.name
    shape = decimated_shape(grid.height, grid.width, step)
    layers = []
    colours = class_rgb(len(class_names))
    layers.append(
        Layer(
            f"{s.name}/classes", s.name, "stability classes (FS)",
            _classes(decimated(folder / names.STABILITY_CLASS, step), colours),
            [(_hex(c), n) for c, n in zip(colours, class_names, strict=True)],
        )
    )  # fmt: skip
    if (folder / names.PROBABILITY).exists():
        p = decimated(folder / names.PROBABILITY, step).astype(np.float64)
        p[p < 0.0] = np.nan
        pf_colours = class_rgb(len(PF_CLASS_NAMES))
        layers.append(
            Layer(
                f"{s.name}/probability", s.name, "probability of failure P(FS < 1)",
                _classes(classify_probability(p), pf_colours),
                [(_hex(c), n) for c, n in zip(pf_colours, PF_CLASS_NAMES, strict=True)],
            )
        )  # fmt: skip
    if (folder / names.HAZARD_CLASS).exists() and s.hazard_names:
        hz = class_rgb(len(s.hazard_names))
        layers.append(
            Layer(
                f"{s.name}/hazard", s.name, "how often rain starts failure",
                _classes(decimated(folder / names.HAZARD_CLASS, step), hz),
                [(_hex(c), n) for c, n in zip(hz, s.hazard_names, strict=True)],
            )
        )  # fmt: skip
    for file, key, title, log, specials, span in ramps:
        if not (folder / file).exists():
            continue
        values = decimated(folder / file, step).astype(np.float64)
        rgb, nodata, (lo, hi) = coloured_values(values, log, specials, span)
        rgba = np.zeros((*shape, 4), np.uint8)
        rgba[..., :3] = np.round(rgb * 255).astype(np.uint8)
        rgba[..., 3] = np.where(nodata, 0, 235)
        layers.append(
            Layer(
                f"{s.name}/{key}", s.name, title, rgba,
                [(x.hex_colour, x.label) for x in specials],
                ramp={"from": _hex(rgb_at(0.0)), "to": _hex(rgb_at(1.0)), "low": lo,
                      "high": hi, "log": log},
            )
        )  # fmt: skip
    if (folder / names.RUNOUT_REACH).exists():
        reach = decimated(folder / names.RUNOUT_REACH, step)
        rgba = np.zeros((*shape, 4), np.uint8)
        rgba[reach == 1, :3] = np.round(hex_rgb(RUNOUT_HEX) * 255).astype(np.uint8)
        rgba[reach == 1, 3] = 170
        layers.append(
            Layer(
                f"{s.name}/runout", s.name, "run-out reach (empirical screening estimate)",
                rgba, [(RUNOUT_HEX, "reached by flow from failing ground")], overlay=True,
            )
        )  # fmt: skip
    zones = _zone_outline(folder / names.LOW_MARGIN_ZONES, grid, shape)
    if zones is not None:
        layers.append(
            Layer(
                f"{s.name}/zones", s.name, "low-margin zones", zones,
                [(ZONE_HEX, "zone outline (two least stable classes)")], overlay=True,
            )
        )  # fmt: skip
    return layers


def rgb_at(x: float) -> np.ndarray:
    """The house ramp's colour at ``x`` in [0, 1] (0: the worry, dark)."""
    from slopescreen.maps.outputs.palette import ramp

    colours = ramp(256)
    return colours[min(int(x * 256), 255)]


def _ramps(cfg: Any, name: str) -> list[tuple[Any, ...]]:
    """The continuous layers of scenario ``name`` with the codes its rasters hold."""
    from slopescreen.maps.outputs.quicklook import (
        CRITICAL_RECHARGE_SPECIALS,
        return_period_specials,
        storm_specials,
    )

    sc = next(x for x in cfg.scenarios if x.name == name)
    out: list[tuple[Any, ...]] = []
    if sc.storm is not None:
        out.append((names.STORM_TIME_TO_FAILURE, "storm", "storm: hours until FS falls below 1",
                    False, storm_specials(sc.storm.later_h), (0.0, sc.storm.later_h)))  # fmt: skip
    out.append((names.RECHARGE, "recharge", "critical steady recharge (mm/day)", True,
                CRITICAL_RECHARGE_SPECIALS, None))  # fmt: skip
    table = cfg.rainfall_frequency
    if sc.rainfall is not None and table is not None:
        t0, t1 = table.return_periods_yr[0], table.return_periods_yr[-1]
        out.append((names.RETURN_PERIOD, "return", "return period of the rain that starts "
                    "failure (yr)", True, return_period_specials(t0, t1), (t0, t1)))  # fmt: skip
    return out


def write_map_page(
    target: Path,
    cfg: Any,
    grid: Grid,
    out: Path,
    terrain_dir: Path,
    scenarios: list[Any],
    class_names: list[str],
    unit_labels: list[str],
) -> Path:
    """Write ``map.html``: every scenario's layers over the hillshade, soil units and
    zones, values on a click (see the module docstring); ``cfg`` the run's Config."""
    from importlib import resources

    view_step = max(1, math.ceil(max(grid.height, grid.width) / VIEW_PIXELS))
    shape = decimated_shape(grid.height, grid.width, view_step)
    value_step = max(1, math.ceil(max(grid.height, grid.width) / VALUE_PIXELS))
    shade = decimated(terrain_dir / names.HILLSHADE, view_step).astype(np.float64)
    base = np.zeros((*shape, 4), np.uint8)
    grey = np.clip(np.nan_to_num(shade, nan=0.0), 0, 255).astype(np.uint8)
    base[..., 0] = base[..., 1] = base[..., 2] = grey
    base[..., 3] = np.where(np.isfinite(shade) & (shade > 0), 255, 0)
    codes = decimated(terrain_dir / names.SOIL_UNIT, view_step)
    ucol = unit_rgb(len(unit_labels))
    layers = [
        Layer("units", "", "soil units", _classes(codes, ucol, 200),
              [(_hex(c), n) for c, n in zip(ucol, unit_labels, strict=True)]),
    ]  # fmt: skip
    values: dict[str, Any] = {
        "slope": _float_grid(terrain_dir / names.SLOPE_DEG, grid, value_step),
        "unit": _packed(
            sampled(terrain_dir / names.SOIL_UNIT, grid, value_step).astype("<u2"), "u16"
        ),
    }
    per: dict[str, Any] = {}
    for s in scenarios:
        layers += _scenario_layers(out, grid, view_step, s, class_names, _ramps(cfg, s.name))
        folder = out / s.name
        grids = {
            "fs": _float_grid(folder / names.FS, grid, value_step),
            "class": _packed(sampled(folder / names.STABILITY_CLASS, grid, value_step), "u8"),
            "saturation": _float_grid(folder / names.SATURATION, grid, value_step),
            "depth": _float_grid(folder / names.SOIL_DEPTH, grid, value_step),
        }
        if (folder / names.PROBABILITY).exists():
            grids["probability"] = _float_grid(folder / names.PROBABILITY, grid, value_step)
        per[s.name] = grids
    t: Any = grid.transform
    crs: Any = grid.crs
    where = {"rows": grid.height, "cols": grid.width, "x0": t.c, "y0": t.f, "dx": t.a,
             "dy": t.e, "crs": crs.to_string()}  # fmt: skip
    sampled_values = {"step": value_step, "rows": -(-grid.height // value_step),
                      "cols": -(-grid.width // value_step), "region": values,
                      "scenarios": per}  # fmt: skip
    shown = [{"id": a.id, "scenario": a.scenario, "title": a.title, "image": _webp(a.rgba),
              "legend": a.legend, "ramp": a.ramp, "overlay": a.overlay}
             for a in layers]  # fmt: skip
    data = {
        "region": cfg.region.name,
        "cautions": list(CAUTIONS),
        "grid": where,
        "view": {"step": view_step, "rows": shape[0], "cols": shape[1]},
        "values": sampled_values,
        "base": _webp(base),
        "classNames": class_names,
        "units": unit_labels,
        "scenarios": [s.name for s in scenarios],
        "layers": shown,
    }
    here = resources.files("slopescreen.maps.outputs")
    script = (here / "viewer.js").read_text(encoding="utf-8")
    style = (here / "viewer.css").read_text(encoding="utf-8")
    payload = json.dumps(data, separators=(",", ":"), allow_nan=False).replace("</", "<\\/")
    page = (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<title>slopescreen map: {_esc(cfg.region.name)}</title><style>{style}</style></head>"
        "<body><div id='app'><aside id='panel'>"
        f"<h1>{_esc(cfg.region.name)}</h1><p class='caution'>{_esc(' '.join(CAUTIONS))}</p>"
        "<div id='legend'></div><div id='readout'>Click the map to read a cell's values."
        "</div><div id='layers'></div><p class='meta'>Offline page written by slopescreen; "
        f"drag to pan, wheel or +/- to zoom. <a href='{names.REPORT}'>The report</a>.</p>"
        "</aside><main><canvas id='map'></canvas><div id='zoom'><button id='zin' "
        "aria-label='zoom in'>+</button><button id='zout' aria-label='zoom out'>-</button>"
        "<button id='zfit' aria-label='whole region'>[ ]</button></div></main></div>"
        "<pre id='probe' hidden></pre>"
        f"<script id='data' type='application/json'>{payload}</script>"
        f"<script>{script}</script></body></html>\n"
    )
    return write_text(target, page)


def _esc(text: str) -> str:
    import html

    return html.escape(text)
