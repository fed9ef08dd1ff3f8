"""The run report: one self-contained HTML page (images embedded), written atomically.

First screen: region, run date (UTC), what ran, the cautions and the scenario comparison.
Then each scenario's maps and tables, the inputs (soil table with spreads, lab fits with
their Mohr figures, the demo's hillside check), the methods of what ran with their
sources, and coverage warnings. Tables scroll inside their own box; empty values are "-".
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.safe_writes import write_text
from slopescreen.maps.outputs.comparison import ClassChange
from slopescreen.maps.outputs.html_parts import (
    EMPTY,
    boxed_table,
    embedded_image,
    esc,
    num,
)
from slopescreen.maps.outputs.output_names import COMPARISON_FOLDER, MAP_PAGE
from slopescreen.maps.region.config import SOIL_FIELDS, Config
from slopescreen.maps.region.scenario_run import ScenarioSummary
from slopescreen.maps.region.soils import SoilUnits
from slopescreen.stability_classes import PF_CLASS_NAMES

_STYLE = """
body{font-family:system-ui,sans-serif;max-width:1100px;margin:1.5em auto;padding:0 1em;
color:#222;line-height:1.45}
h1{font-size:1.6em;margin-bottom:0.2em}h2{border-bottom:2px solid #5a1a78;padding-bottom:2px;
margin-top:2em}.meta{color:#555}
.tbl{overflow-x:auto;max-width:100%;margin:0.5em 0 1.2em}
table{border-collapse:collapse}
td,th{border:1px solid #bbb;padding:3px 7px;font-size:0.88em;text-align:right;
vertical-align:top;white-space:nowrap}
th{background:#f0eef3}td.l,th.l{text-align:left}td.w,th.w{white-space:normal;min-width:24em;
text-align:left}
.caution{border:2px solid #8a2a2a;background:#fbeeee;padding:0.5em 1em;margin:1em 0}
.warn{color:#8a4b00}img{max-width:100%;height:auto;border:1px solid #ccc;margin:0.4em 0}
.up{color:#5a1a78;font-weight:600}.down{color:#1f4e79}
code{font-size:0.9em;overflow-wrap:anywhere}
nav.toc{columns:2 16em;background:#f7f6f9;border:1px solid #ddd;padding:0.4em 1em;margin:1em 0}
nav.toc a{display:block;padding:1px 0}
details.part{border-top:2px solid #5a1a78;margin:1.2em 0}
details.part>summary{cursor:pointer;padding:0.4em 0}
details.part>summary h2{display:inline;border:none;margin:0;font-size:1.3em}
details.part>summary .gist{display:block;color:#555;font-size:0.9em;margin-left:1.2em}
.glance th{white-space:normal;min-width:5em}.glance td.w{min-width:16em}
@media (max-width:600px){body{padding:0 0.5em;margin:0.5em auto}h1{font-size:1.25em}
td,th{font-size:0.8em;padding:2px 4px}nav.toc{columns:1}}
@media print{@page{size:A4;margin:12mm}body{max-width:none;margin:0;font-size:10pt}
nav.toc{display:none}.tbl{overflow:visible}td,th{white-space:normal;font-size:7.5pt;
overflow-wrap:anywhere;padding:2px 3px}td.w,th.w,.glance th{min-width:0}
table{width:100%;table-layout:fixed}img,tr,.caution{break-inside:avoid}
details.part>summary{list-style:none}h2,h3{break-after:avoid}}
"""
# opens every section before printing (reading needs no script: sections open on a click)
_PRINT_SCRIPT = (
    "<script>addEventListener('beforeprint',()=>document.querySelectorAll('details')"
    ".forEach(d=>d.open=true))</script>"
)


@dataclass
class Extras:
    """What the report shows beside the run: the demo's lab fit and hillside check."""

    mohr_png: Path | None = None
    lab_fit: dict[str, object] | None = None
    hillside: dict[str, object] | None = None
    lab_tests: Path | None = None  # the file the demo's fit came from


@dataclass
class RunFacts:
    started_utc: str
    finished_utc: str
    version: str
    command: Sequence[str]
    hashes: dict[str, str] = field(default_factory=dict)
    dem_no_data: str = ""


def _cautions() -> str:
    items = "".join(f"<li>{esc(c)}</li>" for c in CAUTIONS)
    return f'<div class="caution"><strong>Cautions</strong><ul>{items}</ul></div>'


def _relative(path: Path | str, cfg: Config) -> str:
    """A path as the scenario file names it: relative to the scenario file's folder."""
    return os.path.relpath(Path(path), cfg.path.parent).replace(os.sep, "/")


def _ha(value: float, total: float) -> str:
    share = f" ({100 * value / total:.1f}%)" if total else ""
    return f"{value:,.2f} ha{share}"


def _baseline(cfg: Config, scenarios: list[ScenarioSummary]) -> tuple[str, ScenarioSummary | None]:
    """The baseline's name (``[comparison] baseline``, else the first scenario run) and its
    summary (None when it did not run)."""
    name = cfg.comparison.baseline or (scenarios[0].name if scenarios else "")
    return name, next((s for s in scenarios if s.name == name), None)


def _comparison(
    cfg: Config,
    class_names: list[str],
    scenarios: list[ScenarioSummary],
    small_multiples: Path | None,
    changes: list[ClassChange],
) -> list[str]:
    names = [s.name for s in scenarios]
    base_name, baseline = _baseline(cfg, scenarios)
    parts = ["<h2 id='comparison'>Scenario comparison</h2>"]
    if small_multiples is not None:
        parts.append(embedded_image(small_multiples, "factor-of-safety classes of every scenario"))
    if baseline is None:
        parts.append(f"<p>Baseline {esc(base_name)} was not run (--only): no changes shown.</p>")
    else:
        parts.append(
            f"<p>Ground area of each class; in brackets the change from the baseline "
            f"scenario <strong>{esc(base_name)}</strong>"
            f"{'' if cfg.comparison.baseline else ' (the first scenario run)'}.</p>"
        )
    rows = []
    for i, cls in enumerate(class_names):
        row = [esc(cls)]
        for s in scenarios:
            cell = f"{s.class_areas_ha[i]:,.1f} ha"
            if baseline is not None and s is not baseline:
                d = s.class_areas_ha[i] - baseline.class_areas_ha[i]
                mark = "up" if (d > 0) == (i < len(class_names) // 2) and d else "down"
                cell += f" <span class='{mark}'>({d:+,.1f})</span>" if d else " (0)"
            row.append(cell)
        rows.append(row)
    parts.append(boxed_table(["class", *names], rows))
    for ch in changes:
        less, more, same = ch.areas_ha
        worse, better, _ = ch.names
        what = "hazard class" if worse == "more frequent" else "class"
        title = f"<h3>Where the {what} changes: {esc(ch.first)} to {esc(ch.second)}</h3>"
        if less == 0.0 and more == 0.0:  # an empty map carries nothing: said, not drawn
            parts.append(
                f"{title}<p>No cell changes {what}: all {same:,.1f} ha are in the same {what} "
                f"in {esc(ch.second)} as in {esc(ch.first)} (map not shown).</p>"
            )
            continue
        parts.append(
            f"{title}<p>{less:,.1f} ha {worse}, {more:,.1f} ha {better} and {same:,.1f} ha in "
            f"the same {what} in {esc(ch.second)} than in {esc(ch.first)}.</p>"
            + embedded_image(ch.png, f"{what} change {ch.first} to {ch.second}")
        )
        r = ch.ratio
        if r is not None and r.median is not None:
            parts.append(
                f"<p>Triggering return period: on the {r.area_ha:,.1f} ha with a return period "
                f"within the design-rainfall table in both, the median of {esc(ch.second)}'s "
                f"over {esc(ch.first)}'s is {r.median:.2f}; it shortens on "
                f"{100 * r.share_shorter:.0f}% of that area "
                f"(<code>{COMPARISON_FOLDER}/{esc(r.raster.name)}</code>).</p>"
                + embedded_image(r.png, f"return-period ratio {ch.second} over {ch.first}")
            )
    return parts


def _scenario_section(
    s: ScenarioSummary,
    class_names: list[str],
    soils: SoilUnits,
    depths: dict[str, str] | None = None,
    geographic: bool = False,
) -> str:
    """One scenario's maps and tables, a section that opens on a click. ``depths``: the
    soil-depth maps shown so far (pixel digest -> scenario); a depth map equal to an
    earlier one is named, not shown again."""
    mapped = sum(s.class_areas_ha)
    gist = (
        f"{class_names[0]}: {_ha(s.class_areas_ha[0], mapped)}; "
        f"{class_names[1]}: {_ha(s.class_areas_ha[1], mapped)}"
        if len(class_names) > 1
        else ""
    )
    parts = [
        f"<details class='part' id='sc-{esc(s.name)}'><summary><h2>Scenario {esc(s.name)}</h2>"
        f"<span class='gist'>{esc(gist)}</span></summary>",
        f"<p>{esc(s.description)}</p>" if s.description else "",
        f"<p><strong>Loads:</strong> {esc(s.loads)}</p>",
    ]
    for what, png in s.maps.items():
        title = f"<h3>{esc(what[:1].upper() + what[1:])}</h3>"
        if what == "soil depth" and depths is not None:
            digest = _pixels_sha256(png.with_suffix(".tif"))
            if digest in depths:
                parts.append(f"{title}<p>As in scenario {esc(depths[digest])}.</p>")
                continue
            depths[digest] = s.name
        parts.append(title + embedded_image(png, what))
    rows = []
    for key, areas in zip(soils.keys, s.unit_class_areas_ha, strict=True):
        total = sum(areas)
        rows.append([esc(soils.label(key)), *(_ha(a, total) for a in areas), f"{total:,.2f} ha"])
    rows.append(
        ["<strong>all</strong>", *(_ha(a, mapped) for a in s.class_areas_ha), f"{mapped:,.2f} ha"]
    )
    parts.append(
        "<h3>Area by soil unit</h3>" + boxed_table(["soil unit", *class_names, "mapped"], rows)
    )
    if s.hazard_areas_ha is not None:
        parts.append(
            "<h3>Hazard: how often rain starts failure</h3><p>Ground area by the annual "
            "probability that a storm of any tabulated duration brings FS below 1 (a "
            "<em>hazard</em> in the zoning sense: it carries a frequency). Cells already "
            "below FS 1 before the rain count in the most frequent class.</p>"
            + boxed_table(
                ["class", "area"]
                + (["area with soil spreads"] if s.hazard_spread_areas_ha is not None else []),
                [
                    [esc(n), _ha(a, mapped)]
                    + (
                        [_ha(s.hazard_spread_areas_ha[i], mapped)]
                        if s.hazard_spread_areas_ha
                        else []
                    )
                    for i, (n, a) in enumerate(zip(s.hazard_names, s.hazard_areas_ha, strict=True))
                ],
            )
            + (
                "<p>With soil spreads: the annual probability over rainfall frequency and soil "
                "uncertainty together (<code>annual_failure_probability_with_spread.tif</code>; "
                "a year's storms of every duration taken at one return-period level); units "
                "without spreads are not counted there.</p>"
                if s.hazard_spread_areas_ha is not None
                else ""
            )
        )
    if s.runout is not None:
        parts.append(_runout_section(s))
    if s.cut_off_ha and mapped:
        parts.append(
            f"<p>{s.cut_off_ha:,.2f} ha ({100 * s.cut_off_ha / mapped:.1f}% of the mapped area) "
            "drain from beyond a no-data cell or the DEM's edge: there the specific catchment "
            "area and the wetness are lower bounds (<code>terrain/catchment_cut_off.tif</code>)."
            "</p>"
        )
    if s.zones:
        zone_rows = [
            [
                esc(z["class_name"]),
                esc(soils.label(str(z["soil_unit"]))),
                num(z["area_ha"], ",.2f"),
                num(z["mean_slope_deg"], ".1f"),
                esc(_where(z, geographic)),
            ]
            for z in s.zones
        ]
        parts.append(
            "<h3>Largest low-margin zones</h3>"
            + boxed_table(
                ["class", "soil unit", "area (ha)", "mean slope (deg)", "a point inside"],
                zone_rows,
                left=2,
            )
        )
    files = ", ".join(f"<code>{esc(s.name)}/{esc(f)}</code>" for f in s.outputs)
    parts.append(f"<p class='meta'>Files: {files}</p>")
    parts += [f"<p class='warn'>{esc(w)}</p>" for w in s.warnings]
    parts.append("</details>")
    return "\n".join(parts)


def _where(zone: dict[str, object], geographic: bool, degrees_too: bool = True) -> str:
    """Where a zone lies: a point inside it, in the DEM's CRS and (``degrees_too``) in
    latitude and longitude."""
    lat, lon = float(zone.get("lat", math.nan)), float(zone.get("lon", math.nan))  # type: ignore[arg-type]
    if not (math.isfinite(lat) and math.isfinite(lon)):
        return EMPTY
    ns, ew = ("N" if lat >= 0 else "S"), ("E" if lon >= 0 else "W")
    degrees = f"{abs(lat):.5f} {ns}, {abs(lon):.5f} {ew}"
    if geographic:
        return degrees
    xy = f"x {float(zone['x']):,.0f}, y {float(zone['y']):,.0f}"  # type: ignore[arg-type]
    return f"{xy} ({degrees})" if degrees_too else xy


def _glance(
    cfg: Config,
    grid: Grid,
    soils: SoilUnits,
    class_names: list[str],
    scenarios: list[ScenarioSummary],
) -> str:
    """The first screen: per scenario one row with the area failing and with a narrow
    margin, the change from the baseline, the largest zone and where it lies, and how often
    rain starts failure where that was computed."""
    base_name, baseline = _baseline(cfg, scenarios)
    narrow = class_names[1] if len(class_names) > 1 else ""
    hazard = any(s.hazard_areas_ha is not None for s in scenarios)
    geographic = bool(getattr(grid, "geographic", False))
    rows = []
    for s in scenarios:
        mapped = sum(s.class_areas_ha)
        low = s.class_areas_ha[0] + (s.class_areas_ha[1] if narrow else 0.0)
        if baseline is None or s is baseline:
            change = "baseline" if s is baseline else EMPTY
        else:
            d = low - (baseline.class_areas_ha[0] + (baseline.class_areas_ha[1] if narrow else 0.0))
            mark = "up" if d > 0 else "down"
            change = f"<span class='{mark}'>{d:+,.1f} ha</span>" if d else "no change"
        zone = EMPTY
        if s.zones:
            z = s.zones[0]
            zone = (
                f"{float(z['area_ha']):,.2f} ha, {esc(z['class_name'])}, "  # type: ignore[arg-type]
                f"{esc(soils.label(str(z['soil_unit'])))}; at {esc(_where(z, geographic, False))}"
            )
        row = [
            f"<a href='#sc-{esc(s.name)}'>{esc(s.name)}</a>",
            _ha(s.class_areas_ha[0], mapped),
            *([_ha(s.class_areas_ha[1], mapped)] if narrow else []),
            change,
            zone,
        ]
        if hazard:
            often = EMPTY
            if s.hazard_areas_ha is not None:
                often = "; ".join(
                    f"{esc(n)}: {a:,.1f} ha"
                    for n, a in list(zip(s.hazard_names, s.hazard_areas_ha, strict=True))[:2]
                )
            row.append(often)
        rows.append(row)
    head = ["scenario", class_names[0], *([narrow] if narrow else []),
            f"change from {base_name} (both classes)" if narrow else f"change from {base_name}",
            "largest low-margin zone: area, class, soil unit, a point inside"]  # fmt: skip
    if hazard:
        head.append("how often rain starts failure (most frequent classes)")
    zone_column = head.index("largest low-margin zone: area, class, soil unit, a point inside")
    wrap = (zone_column, len(head) - 1)
    table = boxed_table(head, rows, wrap=wrap).replace("<table>", "<table class='glance'>", 1)
    return (
        "<h2 id='glance'>At a glance</h2><p>Ground area of each scenario with FS below 1 and "
        "with a narrow margin, its change from the baseline, and the largest zone of the two "
        "least stable classes with a point inside it. Sections below open on a click.</p>" + table
    )


def _contents(scenarios: list[ScenarioSummary], extra: list[tuple[str, str]]) -> str:
    """The table of contents: the first screen, each scenario, then what follows."""
    links = [("glance", "At a glance"), ("comparison", "Scenario comparison")]
    links += [(f"sc-{s.name}", f"Scenario {s.name}") for s in scenarios]
    links += extra
    items = "".join(f"<a href='#{esc(a)}'>{esc(t)}</a>" for a, t in links)
    return f"<nav class='toc' aria-label='contents'><strong>Contents</strong>{items}</nav>"


def _runout_section(s: ScenarioSummary) -> str:
    """What the run-out of a scenario reaches: sources, reach, and the assets in it."""
    ro = s.runout
    text = (
        f"<h3>Run-out: sources, reach and assets</h3><p>Sources: {ro.source_cells:,} cells in "
        f"{ro.source_patches:,} "
        f"patches ({ro.source_ha:,.2f} ha); reach {ro.reach_ha:,.2f} ha on the ground. "
        f"{esc(ro.rule[:1].upper() + ro.rule[1:])}. Reach is an empirical screening estimate "
        "(angle of reach, Corominas 1996; spreading, Holmgren 1994): no entrainment, no "
        "deposition volume balance, no impact pressure; verify on site.</p>"
    )
    if ro.cut_off_cells:
        text += (
            f"<p class='warn'>The flow reaches the DEM's edge or no data with room to travel "
            f"on {ro.cut_off_cells:,} cells: the reach there is a lower bound.</p>"
        )
    if any(f.startswith("runout_assets") for f in ro.files):  # assets were checked
        rows = [
            [
                esc(str(a["asset"])),
                esc(str(a["kind"])),
                num(a["max_share"], ".3g"),
                num(a["source_value"], ".3g"),
                num(a["length_in_reach_m"], ",.1f") if a["length_in_reach_m"] else EMPTY,
            ]
            for a in ro.assets[:20]
        ]
        text += (
            f"<p>{ro.asset_count} assets lie in reach; lines run {ro.asset_length_m:,.0f} m "
            "on the ground inside it (<code>runout_assets.csv</code>, "
            "<code>runout_assets.gpkg</code>)"
            + (": the 20 with the most source flow below." if ro.asset_count > 20 else ".")
            + "</p>"
        )
        if rows:
            text += boxed_table(
                ["asset", "kind", "share of source flow", ro.worst_label, "length in reach (m)"],
                rows,
                left=2,
            )
    return text


def _pixels_sha256(path: Path) -> str:
    """sha256 of a raster's pixel values (not its tags, which name the scenario)."""
    import hashlib

    import rasterio

    with rasterio.open(path) as src:
        return hashlib.sha256(src.read(1).tobytes()).hexdigest()


def _cell_sources(cfg: Config, soils: SoilUnits) -> dict[tuple[str, int], str]:
    """(field, unit code) -> what sets it cell by cell: a raster, a depth model, land cover."""
    out: dict[tuple[str, int], str] = {}
    for name, by_code in soils.rasters.items():
        for code, path in by_code.items():
            out[(name, code)] = f"raster {_relative(path, cfg)}"
    for model in cfg.region.soil_depth:
        for unit in model.units or soils.keys:
            out[("depth_m", soils.keys.index(unit) + 1)] = model.model.replace("_", " ")
    if cfg.region.land_cover is not None:
        for code in range(1, len(soils.keys) + 1):
            out[("root_cohesion_kpa", code)] = "land cover"
    return out


def _soil_table(cfg: Config, soils: SoilUnits) -> str:
    cells = _cell_sources(cfg, soils)
    fields = [
        f
        for f in SOIL_FIELDS
        if any(
            math.isfinite(float(soils.parameters[f][c])) or (f, c) in cells
            for c in range(1, len(soils.keys) + 1)
        )
    ]
    rows = []
    for code, key in enumerate(soils.keys, start=1):
        spreads = soils.spreads.get(code, {})
        text = []
        for name, sp in spreads.items():
            kind = sp.distribution
            if kind in ("normal", "lognormal"):
                text.append(f"{name}: {kind}, sd {float(sp.sd):.3g}")
            else:
                text.append(f"{name}: {kind} {float(sp.low):.3g} to {float(sp.high):.3g}")
        if soils.correlations.get(code):
            text.append(f"c'-phi' correlation {soils.correlations[code]:+.2f}")
        if key in soils.lab_tests:
            text.append(f"strength fitted to {_relative(soils.lab_tests[key], cfg)}")
        rows.append(
            [
                esc(key),
                *(
                    f"<em>{esc(cells[(f, code)])}</em>"
                    if (f, code) in cells
                    else num(soils.parameters[f][code])
                    for f in fields
                ),
                esc("; ".join(text)) or EMPTY,
            ]
        )
    head = ["unit", *fields, "spread (drives the probability of failure)"]
    return boxed_table(head, rows, wrap_last=True)


def _cell_field_notes(cfg: Config, scenarios: list[ScenarioSummary]) -> list[str]:
    """The depth models and the land-cover classes (roots in each scenario's year)."""
    parts = []
    region = cfg.region
    if region.soil_depth:
        items = "".join(
            f"<li>{esc(', '.join(m.units) or 'every unit')}: {esc(m.text)}</li>"
            for m in region.soil_depth
        )
        parts.append(
            "<h3>Soil depth cell by cell</h3><ul>" + items + "</ul><p>Slope-linear: a common "
            "screening form; elevation-linear: Saulnier, Beven &amp; Obled (1997); soil "
            "production: Heimsath et al. (1997), Dietrich et al. (1995), on the ground "
            "Laplacian of the DEM. Each scenario writes its <code>soil_depth_m.tif</code>."
            "</p>"
        )
    cover = region.land_cover
    if cover is not None:
        ran = {s.name for s in scenarios}
        years = sorted({sc.year for sc in cfg.scenarios if sc.year is not None and sc.name in ran})
        rows = []
        for name, c in cover.classes.items():
            after = [num(c.roots_in(year), ".2f") for year in years]
            rows.append(
                [
                    esc(name),
                    esc(c.description) or EMPTY,
                    num(c.root_cohesion_kpa, ".2f"),
                    num(c.rooting_depth_m, ".2f"),
                    num(c.harvest_year, ".0f") if math.isfinite(c.harvest_year) else EMPTY,
                    *after,
                ]
            )
        head = ["class", "description", "root cohesion (kPa)", "rooting depth (m)", "harvested"]
        head += [f"in {y} (kPa)" for y in years]
        parts.append(
            f"<h3>Root cohesion from land cover</h3><p><code>{esc(_relative(cover.path, cfg))}"
            f"</code>, classes in <code>{esc(_relative(cover.table, cfg))}</code>; after a "
            "harvest the old roots decay and new ones grow (Sidle 1991), so root cohesion "
            "is least some years after the cut; slip planes deeper than the rooting depth "
            + ("get none" if cover.root_profile == "step" else "get exp(-depth / rooting depth)")
            + ". Cells in no class keep their unit's root cohesion; a scenario's own "
            "number for a unit beats its land cover.</p>" + boxed_table(head, rows, left=2)
        )
    return parts


def _lab_fits(cfg: Config, soils: SoilUnits, extras: Extras, work: Path) -> list[str]:
    from slopescreen.maps.io.labtests import fit_file

    parts = []
    fits: list[tuple[str, Path, object, Path]] = []
    demo = extras.lab_tests.resolve() if extras.lab_tests is not None else None
    for unit, path in soils.lab_tests.items():
        png = work / f"mohr_{len(fits)}.png"
        _, fit = fit_file(path, png)
        label = f"soil unit {unit}" + (" and the demo hillside" if path == demo else "")
        fits.append((label, path, fit, png))
    shown = set(soils.lab_tests.values())
    if extras.lab_fit is not None and extras.mohr_png is not None and demo not in shown:
        parts.append(_fit_block("the demo hillside", extras.lab_fit, None, extras.mohr_png))
    for label, path, fit, png in fits:
        parts.append(_fit_block(label, fit.as_dict(), _relative(path, cfg), png))  # type: ignore[attr-defined]
    return parts


def _fit_block(label: str, fit: dict[str, object], source: str | None, png: Path) -> str:
    rows = [
        [
            "c' (kPa)",
            num(fit.get("cohesion_kpa"), ".2f"),
            num(fit.get("cohesion_se_kpa"), ".2f"),
        ],
        [
            "phi' (deg)",
            num(fit.get("friction_deg"), ".2f"),
            num(fit.get("friction_se_deg"), ".2f"),
        ],
    ]
    cov = fit.get("covariance")
    corr = None
    if isinstance(cov, list) and len(cov) == 2 and cov[0][0] > 0 and cov[1][1] > 0:
        corr = cov[0][1] / math.sqrt(cov[0][0] * cov[1][1])
    where = f" from <code>{esc(source)}</code>" if source else ""
    return (
        f"<h3>Lab fit for {esc(label)}{where}</h3>"
        + boxed_table(["parameter", "value", "standard error"], rows)
        + (
            f"<p>Correlation of the c' and phi' estimates: {num(corr, '+.2f')}.</p>"
            if corr is not None
            else ""
        )
        + embedded_image(png, f"Mohr circles and envelope, {label}")
    )


def _hillside(record: dict[str, object]) -> str:
    inputs = record.get("inputs", {})
    results = record.get("results", {})
    rows = [[esc(k), num(v)] for k, v in dict(inputs).items()]  # type: ignore[arg-type]
    for key, value in dict(results).items():  # type: ignore[arg-type]
        items = value.items() if isinstance(value, dict) else [(key, value)]
        rows += [[f"<strong>{esc(k)}</strong>", num(v)] for k, v in items]
    return f"<h3>Hillside check: {esc(record.get('slope', ''))}</h3>" + boxed_table(
        ["quantity", "value"], rows
    )


def _methods(cfg: Config, scenarios: list[ScenarioSummary], soils: SoilUnits) -> str:
    ran = [sc for sc in cfg.scenarios if sc.name in {s.name for s in scenarios}]
    items = [
        "Slope by Horn (1981), from one-sided differences where the 3x3 window touches no "
        "data or the DEM's edge; every length and area on the ground, from the CRS's "
        "ellipsoid (cell axes measured by geodesics with pyproj).",
        "Factor of safety by the infinite-slope limit equilibrium with slope-parallel "
        "seepage and Mohr-Coulomb strength on effective stress (Haefeli 1948; Skempton &amp; "
        "DeLory 1957; Sidle &amp; Ochiai 2006), with the pseudo-static horizontal load k_h "
        "where given.",
    ]
    items.append(
        "Critical recharge (every scenario) and steady wetness: depressions filled level "
        "(the Priority-Flood surface, Barnes et al. 2014, computed by basins after "
        "Cordonnier et al. 2019; tile by tile after Barnes 2016), flats drained "
        "by steps to their outlet; flow by D-infinity (Tarboton 1997); "
        "specific catchment area = contributing area / contour width; "
        "m = min(1, R a/b / (T sin beta)), "
        "T = K z cos beta (Beven &amp; Kirkby 1979; O'Loughlin 1986; Montgomery &amp; "
        "Dietrich 1994)."
    )
    if any(sc.storm is not None for sc in ran):
        items.append(
            "Design storms: pressure head by the linearised infiltration solution of Iverson "
            "(2000), capped at the hydrostatic value with the water table at the surface; "
            "suction neglected; FS the minimum over depth and time, bracketed and refined "
            "(golden-section search)."
        )
    if any(sc.rainfall is not None for sc in ran) and cfg.rainfall_frequency is not None:
        rain = cfg.rainfall_frequency
        items.append(
            "Rainfall frequency: per cell and tabulated duration, the smallest constant "
            "intensity bringing the minimum FS (over depth, and over the storm and "
            f"{rain.after_h:g} h after it) to 1, in closed form from the pressure head of "
            "Iverson (2000), its minimum over depth bracketed on 48 planes and refined "
            "(golden-section search), capped by the steady water table of the same rain "
            "(Montgomery &amp; Dietrich 1994). Return period from the design-rainfall table, "
            "log intensity linear in log return period between rows; the triggering storm "
            "is the most frequent over the durations; annual probability 1 - exp(-1/T); "
            "classes at annual probabilities " + ", ".join(f"{b:g}" for b in rain.aep_breaks) + "."
        )
        if soils.spreads:
            how = (
                "Monte Carlo over the soil parameters (each sample's own triggering return period)"
                if cfg.reliability.method == "monte_carlo"
                else "the Taylor-series method on the rain factor of safety I_c / min(i, K_z) "
                "at the critical duration, summed over 256 bands of storm level (conservative)"
            )
            items.append(
                "Annual probability with soil spreads: the year's storms of every duration at "
                f"one return-period level; P(failure | level) by {how}."
            )
    if any(sc.saturation_raster is not None for sc in ran):
        items.append("Saturation rasters: the user's m, resampled to the DEM's grid.")
    if any(sc.rain_raster is not None for sc in ran):
        items.append(
            "Rain rasters (recharge or storm intensity): the user's grid resampled "
            "bilinearly onto the DEM's grid; it covers every cell of the DEM."
        )
    if soils.spreads and any(s.probability_areas_ha for s in scenarios):
        rel = cfg.reliability
        if rel.method == "taylor" or any(sc.storm is not None for sc in ran):
            items.append(
                "Probability of failure by the Taylor-series method (Duncan 2000), FS "
                f"{rel.fs_distribution}. Under this method the class <em>1 in 2 or more</em> "
                "is where the median of the FS distribution is below 1: the mean FS below 1 "
                "(normal) or below sqrt(1 + V^2) (lognormal). It therefore repeats the "
                "<em>failing</em> class up to that small shift; the spread shows in the "
                "other classes."
            )
        if rel.method == "monte_carlo":
            items.append(
                f"Probability of failure by Monte Carlo, {rel.samples} samples (random_state "
                f"{rel.random_state}), c'-phi' correlation through a Gaussian copula."
            )
    if soils.lab_tests:
        items.append(
            "Lab fits: least-squares line through the tops of the Mohr circles (s'-t; Lambe "
            "&amp; Whitman 1969) or the direct-shear points, standard errors from the "
            "residuals (Draper &amp; Smith 1998)."
        )
    return (
        "<details class='part' id='methods'><summary><h2>Methods</h2></summary><ul>"
        + "".join(f"<li>{i}</li>" for i in items)
        + "</ul></details>"
    )


def write_report(
    target: Path,
    cfg: Config,
    grid: Grid,
    soils: SoilUnits,
    class_names: list[str],
    scenarios: list[ScenarioSummary],
    facts: RunFacts,
    small_multiples: Path | None = None,
    changes: Sequence[ClassChange] = (),
    extras: Extras | None = None,
    validation: str = "",
    scores: str = "",
) -> Path:
    """The report; ``validation`` is the known-landslides section (HTML) and ``scores`` its
    line on the first screen, each kept between markers so the inventory commands can
    rewrite them in place."""
    import tempfile

    from slopescreen.maps.outputs.validation_report import (
        GLANCE_END,
        GLANCE_START,
        SECTION_END,
        SECTION_START,
    )

    extras = extras or Extras()
    ran = ", ".join(s.name for s in scenarios)
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<title>slopescreen: {esc(cfg.region.name)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>Shallow-landslide susceptibility screening: {esc(cfg.region.name)}</h1>",
        f"<p class='meta'>Run {esc(facts.started_utc)} to {esc(facts.finished_utc)} (UTC) with "
        f"slopescreen {esc(facts.version)}; scenario file <code>{esc(cfg.path.name)}</code>; "
        f"{len(scenarios)} scenario(s): {esc(ran)}. The maps to pan, zoom and click: "
        f"<a href='{MAP_PAGE}'>{MAP_PAGE}</a> beside this page.</p>",
        _cautions(),
        _glance(cfg, grid, soils, class_names, scenarios),
        GLANCE_START + scores + GLANCE_END,
        _contents(
            scenarios,
            ([("inventory", "Known landslides")] if validation else [])
            + [("inputs", "Inputs"), ("methods", "Methods"), ("warnings", "Coverage and warnings")],
        ),
        "<p>Factor-of-safety classes are a <em>susceptibility</em> map: where failure is more "
        "or less likely under each scenario, with no annual frequency attached.</p>",
    ]
    parts += _comparison(cfg, class_names, scenarios, small_multiples, list(changes))
    with_pf = [s for s in scenarios if s.probability_areas_ha]
    if with_pf:
        rows = [
            [esc(name), *(f"{s.probability_areas_ha[i]:,.1f} ha" for s in with_pf)]  # type: ignore[index]
            for i, name in enumerate(PF_CLASS_NAMES)
        ]
        parts.append(
            "<h3>Probability of failure</h3><p>P(FS &lt; 1) from the spread of the soil "
            "parameters (not an annual frequency). Areas of the units that have spreads.</p>"
            + boxed_table(["chance that FS < 1", *(s.name for s in with_pf)], rows)
        )
    depths: dict[str, str] = {}
    geographic = bool(getattr(grid, "geographic", False))
    parts += [_scenario_section(s, class_names, soils, depths, geographic) for s in scenarios]
    parts.append(SECTION_START + validation + SECTION_END)

    t = grid.transform
    parts.append("<details class='part' id='inputs'><summary><h2>Inputs</h2></summary>")
    rows = [
        [
            "DEM",
            f"<code>{esc(_relative(cfg.region.dem, cfg))}</code>: {grid.width} x "
            f"{grid.height} cells, elevations in {esc(cfg.region.dem_elevation_unit)}",
        ],
        ["ground geometry", esc(grid.spacing_note)],
        ["CRS", esc(grid.crs.to_string())],  # type: ignore[attr-defined]
        ["DEM no data", esc(facts.dem_no_data or "not counted")],
        ["origin", f"{t.c:.10g}, {t.f:.10g} (upper-left corner)"],  # type: ignore[attr-defined]
        [
            "soil units",
            f"<code>{esc(_relative(soils.sources['polygons'], cfg))}</code>, "
            f"parameters from <code>{esc(_relative(soils.sources['parameters'], cfg))}</code>",
        ],
        [
            "class breaks",
            f"FS {', '.join(f'{b:g}' for b in cfg.fs_breaks)}; zones of the two "
            f"least stable classes, minimum mapping unit {cfg.min_zone_area_m2:g} m2",
        ],
        [
            "FS cap",
            f"FS above {cfg.fs_cap:g} (flat ground: no driving stress) stored as {cfg.fs_cap:g}",
        ],
        ["command", f"<code>{esc(' '.join(facts.command))}</code>"],
    ]
    parts.append(boxed_table(["input", "value"], [[esc(a), b] for a, b in rows], 2, wrap_last=True))
    parts.append("<h3>Soil parameters</h3>" + _soil_table(cfg, soils))
    parts += _cell_field_notes(cfg, scenarios)
    with tempfile.TemporaryDirectory() as work:
        parts += _lab_fits(cfg, soils, extras, Path(work))
        if extras.hillside is not None:
            parts.append(_hillside(extras.hillside))
        hashes = [[esc(k), f"<code>{esc(v)}</code>"] for k, v in facts.hashes.items()]
        parts.append(
            "<h3>Input hashes (SHA-256)</h3>" + boxed_table(["input", "SHA-256"], hashes, 2)
        )
        parts.append("</details>")
        parts.append(_methods(cfg, scenarios, soils))
        warnings = soils.warnings + [w for s in scenarios for w in s.warnings]
        parts.append(
            "<details class='part' id='warnings' open><summary><h2>Coverage and warnings</h2>"
            "</summary>"
        )
        parts.append(
            "<ul>" + "".join(f"<li class='warn'>{esc(w)}</li>" for w in warnings) + "</ul>"
            if warnings
            else "<p>All DEM data cells lie in a soil unit; no warnings.</p>"
        )
        parts.append("</details>" + _cautions() + _PRINT_SCRIPT + "</body></html>\n")
        return write_text(target, "\n".join(parts))
