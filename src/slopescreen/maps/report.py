"""The run report: one self-contained HTML page (maps embedded), written atomically."""

from __future__ import annotations

import base64
import html
from dataclasses import dataclass
from pathlib import Path

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.config import SOIL_FIELDS, Config
from slopescreen.maps.grid import Grid
from slopescreen.maps.soils import SoilUnits
from slopescreen.outputs import write_text

_STYLE = """
body{font-family:sans-serif;max-width:1100px;margin:2em auto;color:#222;line-height:1.4}
table{border-collapse:collapse;margin:0.5em 0 1.5em}
td,th{border:1px solid #bbb;padding:3px 8px;font-size:0.9em;text-align:right}
th{background:#eee}td.l,th.l{text-align:left}
.caution{border:2px solid #a33;background:#fbeeee;padding:0.6em 1em;margin:1em 0}
.warn{color:#8a4b00}img{max-width:100%;border:1px solid #ccc}
"""


@dataclass
class ScenarioSummary:
    name: str
    wetness: str
    seismic_coefficient: float
    overrides: dict[str, dict[str, float]]
    class_areas_ha: list[float]  # per class, all units
    map_png: Path | None
    warnings: list[str]


def _e(x: object) -> str:
    return html.escape(str(x))


def _cautions() -> str:
    items = "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
    return f'<div class="caution"><strong>Cautions</strong><ul>{items}</ul></div>'


def _image(path: Path | None) -> str:
    if path is None or not path.exists():
        return "<p>(no map requested)</p>"
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return f'<img alt="map {_e(path.parent.name)}" src="data:image/png;base64,{data}">'


def write_report(
    target: Path,
    cfg: Config,
    grid: Grid,
    soils: SoilUnits,
    class_names: list[str],
    scenarios: list[ScenarioSummary],
    version: str,
) -> Path:
    parts = [
        f"<!DOCTYPE html><html><head><meta charset='utf-8'>"
        f"<title>slopescreen: {_e(cfg.region.name)}</title><style>{_STYLE}</style></head>"
        f"<body><h1>Shallow-landslide screening: {_e(cfg.region.name)}</h1>",
        f"<p>slopescreen {_e(version)}, scenario file <code>{_e(cfg.path.name)}</code>. "
        "Infinite-slope limit equilibrium with slope-parallel seepage; wetness from a "
        "uniform saturation ratio, a saturation raster or steady recharge over the "
        "specific catchment area.</p>",
        _cautions(),
    ]
    # comparison table
    head = "".join(f"<th>{_e(s.name)}</th>" for s in scenarios)
    rows = []
    for i, name in enumerate(class_names):
        cells = []
        for s in scenarios:
            total = sum(s.class_areas_ha) or 1.0
            a = s.class_areas_ha[i]
            cells.append(f"<td>{a:,.2f} ha ({100 * a / total:.1f}%)</td>")
        rows.append(f"<tr><th class='l'>{_e(name)}</th>{''.join(cells)}</tr>")
    parts.append(
        "<h2>Hazard-class areas by scenario</h2>"
        f"<table><tr><th class='l'>class</th>{head}</tr>{''.join(rows)}</table>"
    )
    # scenarios
    parts.append(
        "<h2>Scenarios</h2><table><tr><th class='l'>name</th><th class='l'>wetness</th>"
        "<th>seismic k_h</th><th class='l'>soil overrides</th></tr>"
    )
    for s in scenarios:
        over = (
            "; ".join(
                f"{u}: " + ", ".join(f"{k}={v:g}" for k, v in f.items())
                for u, f in s.overrides.items()
            )
            or "none"
        )
        parts.append(
            f"<tr><td class='l'>{_e(s.name)}</td><td class='l'>{_e(s.wetness)}</td>"
            f"<td>{s.seismic_coefficient:g}</td><td class='l'>{_e(over)}</td></tr>"
        )
    parts.append("</table>")
    # inputs
    t = grid.transform
    parts.append(
        "<h2>Inputs</h2><table>"
        f"<tr><th class='l'>DEM</th><td class='l'>{_e(cfg.region.dem.name)}: {grid.width} x "
        f"{grid.height} cells, {_e(grid.spacing_note)}, elevations in "
        f"{_e(cfg.region.dem_elevation_unit)}</td></tr>"
        f"<tr><th class='l'>CRS</th><td class='l'>{_e(grid.crs.to_string())}</td></tr>"
        f"<tr><th class='l'>origin</th><td class='l'>{t.c:.10g}, {t.f:.10g} "
        "(upper-left corner)</td></tr>"
        f"<tr><th class='l'>soil units</th><td class='l'>{_e(soils.sources['polygons'])} "
        f"(parameters from {_e(Path(soils.sources['parameters']).name)})</td></tr>"
        f"<tr><th class='l'>hazard breaks</th><td class='l'>FS "
        f"{', '.join(f'{b:g}' for b in cfg.fs_breaks)}; zones of the two least stable classes, "
        f"minimum mapping unit {cfg.min_zone_area_m2:g} m2</td></tr>"
        f"<tr><th class='l'>FS cap</th><td class='l'>FS above {cfg.fs_cap:g} (flat ground: no "
        f"driving stress) stored as {cfg.fs_cap:g}</td></tr></table>"
    )
    fields = list(SOIL_FIELDS)
    parts.append(
        "<h3>Soil parameters</h3><table><tr><th class='l'>unit</th>"
        + "".join(f"<th>{_e(f)}</th>" for f in fields)
        + "</tr>"
    )
    for code, key in enumerate(soils.keys, start=1):
        vals = "".join(f"<td>{soils.parameters[f][code]:.4g}</td>" for f in fields)
        parts.append(f"<tr><td class='l'>{_e(key)}</td>{vals}</tr>")
    parts.append("</table>")
    parts.append(
        "<h3>Terrain methods</h3><p>Slope by Horn (1981). Depressions filled by "
        "Priority-Flood+epsilon (Barnes et al. 2014) so every cell drains; flow directions by "
        "D-infinity (Tarboton 1997); specific catchment area = contributing area / contour "
        "width. Steady-state wetness m = min(1, R a/b / (T sin beta)), T = K z cos beta "
        "(Beven &amp; Kirkby 1979; O'Loughlin 1986; Montgomery &amp; Dietrich 1994).</p>"
    )
    warnings = soils.warnings + [w for s in scenarios for w in s.warnings]
    parts.append("<h2>Coverage and warnings</h2>")
    parts.append(
        "<ul>" + "".join(f"<li class='warn'>{_e(w)}</li>" for w in warnings) + "</ul>"
        if warnings
        else "<p>All DEM data cells lie in a soil unit; no warnings.</p>"
    )
    for s in scenarios:
        parts.append(f"<h2>Scenario {_e(s.name)}</h2><p>{_e(s.wetness)}</p>{_image(s.map_png)}")
    parts.append(_cautions() + "</body></html>\n")
    return write_text(target, "\n".join(parts))
