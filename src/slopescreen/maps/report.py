"""The run report: one self-contained HTML page (maps embedded), written atomically."""

from __future__ import annotations

import base64
import html
from pathlib import Path

from slopescreen.cautions import CAUTIONS
from slopescreen.hazard import PF_CLASS_NAMES
from slopescreen.maps.config import SOIL_FIELDS, Config
from slopescreen.maps.grid import Grid
from slopescreen.maps.scenario_run import ScenarioSummary
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


def _area_table(class_names: list[str], columns: list[tuple[str, list[float]]]) -> str:
    head = "".join(f"<th>{_e(name)}</th>" for name, _ in columns)
    rows = []
    for i, name in enumerate(class_names):
        cells = []
        for _, areas in columns:
            total = sum(areas) or 1.0
            cells.append(f"<td>{areas[i]:,.2f} ha ({100 * areas[i] / total:.1f}%)</td>")
        rows.append(f"<tr><th class='l'>{_e(name)}</th>{''.join(cells)}</tr>")
    return f"<table><tr><th class='l'>class</th>{head}</tr>{''.join(rows)}</table>"


def write_report(
    target: Path,
    cfg: Config,
    grid: Grid,
    soils: SoilUnits,
    class_names: list[str],
    scenarios: list[ScenarioSummary],
    version: str,
    dem_no_data: str = "",
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
    parts.append("<h2>Hazard-class areas by scenario</h2>")
    parts.append(_area_table(class_names, [(s.name, s.class_areas_ha) for s in scenarios]))
    with_pf = [(s.name, s.probability_areas_ha) for s in scenarios if s.probability_areas_ha]
    if with_pf:
        parts.append(
            "<h2>Probability of failure by scenario</h2><p>P(FS &lt; 1) from the spreads of "
            f"the soil parameters, method: {_e(cfg.reliability.method.replace('_', ' '))} "
            "(storm scenarios: Taylor series). Areas of the units that have spreads.</p>"
        )
        parts.append(_area_table(list(PF_CLASS_NAMES), with_pf))
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
        f"<tr><th class='l'>DEM no data</th><td class='l'>{_e(dem_no_data or 'not counted')}"
        "</td></tr>"
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
        "<h3>Terrain methods</h3><p>Slope by Horn (1981), from one-sided differences where "
        "the 3x3 window touches no data or the DEM's edge (marked in "
        "<code>terrain/slope_one_sided.tif</code>); every length and area on the ground, "
        "from the CRS's ellipsoid (cell axes measured by geodesics, pyproj). Depressions filled by "
        "Priority-Flood+epsilon (Barnes et al. 2014) so every cell drains; flow directions by "
        "D-infinity (Tarboton 1997); specific catchment area = contributing area / contour "
        "width. Steady-state wetness m = min(1, R a/b / (T sin beta)), T = K z cos beta "
        "(Beven &amp; Kirkby 1979; O'Loughlin 1986; Montgomery &amp; Dietrich 1994). "
        "Design storms: pressure head by the linearised infiltration solution of Iverson "
        "(2000), capped at the hydrostatic value with the water table at the surface, FS the "
        "minimum over ten planes down to the soil base; suction is neglected. Probability of "
        "failure: Taylor series (Duncan 2000) or Monte Carlo.</p>"
    )
    warnings = soils.warnings + [w for s in scenarios for w in s.warnings]
    parts.append("<h2>Coverage and warnings</h2>")
    parts.append(
        "<ul>" + "".join(f"<li class='warn'>{_e(w)}</li>" for w in warnings) + "</ul>"
        if warnings
        else "<p>All DEM data cells lie in a soil unit; no warnings.</p>"
    )
    for s in scenarios:
        files = ", ".join(f"<code>{_e(f)}</code>" for f in s.outputs)
        mapped = sum(s.class_areas_ha)
        cut = (
            f"<p>{s.cut_off_ha:,.2f} ha ({100 * s.cut_off_ha / mapped:.1f}% of the mapped area) "
            "drain from beyond a no-data cell or the DEM's edge: there the specific catchment "
            "area and the wetness are lower bounds (<code>terrain/catchment_cut_off.tif</code>)."
            "</p>"
            if mapped and s.cut_off_ha
            else ""
        )
        parts.append(
            f"<h2>Scenario {_e(s.name)}</h2><p>{_e(s.description)}</p><p>{_e(s.wetness)}</p>"
            f"<p>Files: {files}</p>{cut}{_image(s.map_png)}"
        )
    parts.append(_cautions() + "</body></html>\n")
    return write_text(target, "\n".join(parts))
