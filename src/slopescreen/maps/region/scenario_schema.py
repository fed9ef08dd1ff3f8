"""Every key the scenario file accepts, in one table: the reader in
:mod:`slopescreen.maps.region.config` takes its allowed keys from here, and
``docs/scenario-file.md`` is generated from it (``python -m
slopescreen.maps.region.scenario_schema > docs/scenario-file.md``; a test checks the file is
current), so the documentation cannot drift from what is read.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from slopescreen.ranges import RANGES


def _shown(x: float) -> str:
    """A bound as the docs and messages write it: 1e6, 2^32 - 1, 0.05."""
    if x == 2**32 - 1:
        return "2^32 - 1"
    if x >= 1e5 and math.log10(x).is_integer():
        return f"1e{int(math.log10(x))}"
    return f"{x:g}"


@dataclass(frozen=True)
class Span:
    """A numeric key's allowed range, stated once: the reader checks these numbers and the
    docs and messages print them. ``low_text`` names a bound the reader checks against
    another key (``later_h`` from ``duration_h``); ``also`` adds what else is accepted."""

    low: float
    high: float
    low_text: str = ""
    also: str = ""

    def __str__(self) -> str:
        return f"{self.low_text or _shown(self.low)} to {_shown(self.high)}{self.also}"


# fields that may carry a spread for probability of failure
UNCERTAIN_FIELDS = (
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "depth_m",
    "root_cohesion_kpa",
    "hydraulic_conductivity_m_s",
    "transmissivity_m2_day",
)
SPREAD_SUFFIXES = ("_sd", "_cov", "_low", "_mode", "_high", "_distribution")

# table -> [(key, type and range, default, meaning)]
SCHEMA: dict[str, list[tuple[str, str | Span, str, str]]] = {
    "region": [
        ("name", "text", "the file's name", "shown in titles, the report and the manifest"),
        ("dem", "path", "required", "elevation raster GDAL reads (any CRS, north-up)"),
        ("dem_elevation_unit", '"m" or "ft"', '"m"', "unit of the DEM's values"),
        (
            "dem_crs",
            "text",
            "the DEM's own",
            'CRS of a DEM that carries none ("EPSG:32633", or WKT); refused for a DEM with one',
        ),
        ("soil_units", "path", "required", "soil-unit polygons in any format geopandas reads"),
        ("soil_layer", "text", "the first layer", "layer of a multi-layer soil file"),
        (
            "soil_unit_field",
            "text",
            '"unit"',
            "polygon field naming the unit; the soil table's key column has the same name",
        ),
        (
            "soil_table",
            "path",
            "none (fields on the polygons)",
            "CSV of unit parameters joined on the key column (see below)",
        ),
    ],
    "classes": [
        (
            "fs_breaks",
            "1 to 8 increasing numbers > 0",
            "[1.0, 1.3, 1.5]",
            "FS class breaks (read from [hazard] before 0.2)",
        ),
        ("min_zone_area_m2", Span(0, 1e9), "0", "low-margin zones smaller than this are dropped"),
    ],
    "outputs": [
        ("fs_cap", Span(1.5, 1e6), "10", "FS above this (e.g. flat ground) is stored as the cap"),
        ("zones", "true/false", "true", "write low_margin_zones.gpkg (hazard_zones before 0.2)"),
        ("quicklook_map", "true/false", "true", "draw the PNG maps of each scenario"),
        ("report", "true/false", "true", "write report.html and the comparison figures"),
    ],
    "slip_planes": [
        (
            "min_slip_depth_m",
            Span(0.001, 1),
            "0.05",
            "shallowest slip plane (m) that storms, critical intensities and the back-analysis "
            "of depth consider: thinner saturated skins are ignored",
        ),
    ],
    "reliability": [
        ("method", '"taylor" or "monte_carlo"', '"taylor"', "how P(FS < 1) is found"),
        ("samples", Span(10, 1e7), "1000", "Monte Carlo only: samples per cell"),
        ("random_state", Span(0, 2**32 - 1), "0", "Monte Carlo only: same number, same map"),
        ("fs_distribution", '"lognormal" or "normal"', '"lognormal"', "Taylor series only"),
    ],
    "comparison": [
        ("baseline", "a scenario name", "the first scenario run", "areas compared with it"),
        (
            "pairs",
            "list of [first, second] names",
            "none",
            "a class-change map for each pair, in the report and comparison/",
        ),
    ],
    "inventory": [
        ("path", "path", "required", "known landslides: points or polygons geopandas reads"),
        ("key", "text", "feature number", "field naming each landslide (same key: one slide)"),
        (
            "date_field",
            "text",
            "none",
            "each landslide's date (ISO or year): the newest are held out, not blocks",
        ),
        (
            "part",
            '"scarp" or "whole"',
            '"scarp"',
            "polygons: the highest 20% of their cells by elevation, or all of them",
        ),
        (
            "block_size_m",
            Span(10, 1e6),
            "500",
            "no date_field: held-out blocks' side on the ground",
        ),
        ("test_share", Span(0.05, 0.95), "0.3", "share of landslides (date) or blocks held out"),
        ("random_state", Span(0, 2**32 - 1), "0", "no date_field: same number, same blocks"),
    ],
    "rainfall_frequency": [
        (
            "idf_table",
            "path",
            "required",
            "CSV: duration_h, return_period_yr and intensity_mm_h (or depth_mm, or a raster "
            "path per row: intensity_raster_mm_h or depth_raster_mm for gridded design "
            "rainfall), every duration for every return period",
        ),
        (
            "aep_breaks",
            "1 to 8 falling numbers in (0, 1)",
            "[0.1, 0.01, 0.001]",
            "annual-probability breaks of the hazard classes",
        ),
        ("after_h", Span(0, 1000), "24", "each storm is followed this long after its end"),
        (
            "series",
            '"annual_maximum" or "partial_duration"',
            '"annual_maximum" (stated)',
            "what the table's return periods count: annual probability 1/T (annual maxima) "
            "or 1 - exp(-1/T) (partial duration); the default is the higher of the two",
        ),
    ],
    "soil_depth": [
        (
            "model",
            '"slope_linear", "elevation_linear", "soil_production" or "raster"',
            "required",
            "soil depth cell by cell in place of the units' depth_m; one table, or several "
            "[[soil_depth]] tables each with its units",
        ),
        ("units", "list of soil-unit names", "every unit", "the units this model sets"),
        ("gentle_slope_deg", Span(0, 89), "slope_linear: required", "slope of the gentle end"),
        ("steep_slope_deg", Span(0.1, 89.9), "slope_linear: required", "slope of the steep end"),
        ("gentle_depth_m", Span(*RANGES["depth_m"][:2]), "slope_linear: required", "depth there"),
        ("steep_depth_m", Span(*RANGES["depth_m"][:2]), "slope_linear: required", "depth there"),
        (
            "low_depth_m",
            Span(*RANGES["depth_m"][:2]),
            "elevation_linear: required",
            "depth at the lowest elevation (Saulnier et al. 1997)",
        ),
        (
            "high_depth_m",
            Span(*RANGES["depth_m"][:2]),
            "elevation_linear: required",
            "depth at the highest elevation",
        ),
        (
            "low_elevation_m",
            Span(-1000, 9000),
            "the DEM's lowest data cell",
            "elevation_linear: where low_depth_m applies",
        ),
        (
            "high_elevation_m",
            Span(-1000, 9000),
            "the DEM's highest data cell",
            "elevation_linear: where high_depth_m applies",
        ),
        (
            "production_m_yr",
            Span(1e-7, 0.1),
            "soil_production: required",
            "P0, soil production from bare rock (Heimsath et al. 1997)",
        ),
        ("density_ratio", Span(0.5, 5), "2", "soil_production: rock over soil bulk density"),
        (
            "creep_diffusivity_m2_yr",
            Span(1e-6, 1),
            "soil_production: required",
            "K of linear creep, m2/yr (Dietrich et al. 1995)",
        ),
        (
            "production_depth_m",
            Span(0.01, 5),
            "soil_production: required",
            "h0, depth scale of production's decline",
        ),
        (
            "max_depth_m",
            Span(*RANGES["depth_m"][:2]),
            "soil_production: required",
            "depth of hollows and planar ground, and the cap",
        ),
        (
            "min_depth_m",
            Span(*RANGES["depth_m"][:2]),
            f"{RANGES['depth_m'][0]:g}",
            "soil_production: the floor on sharp ridges",
        ),
        ("path", "path", "raster: required", "a depth raster (m) on any grid"),
        (
            "resampling",
            '"bilinear" or "nearest"',
            '"bilinear"',
            "raster: how it is resampled onto the DEM grid",
        ),
    ],
    "land_cover": [
        (
            "path",
            "path",
            "required",
            "land cover: polygons geopandas reads (with class_field) or a raster of whole-"
            "number classes (read by nearest cell)",
        ),
        ("layer", "text", "the first layer", "layer of a multi-layer polygon file"),
        ("class_field", "text", "required for polygons", "the polygons' field naming the class"),
        (
            "table",
            "path",
            "required",
            "CSV, one row per class: class, root_cohesion_kpa, rooting_depth_m; optional "
            "root_cohesion_kpa_sd or _cov, harvest_year, regrown_root_cohesion_kpa, "
            "decay_rate, decay_exponent, regrowth_shape, regrowth_rate, description",
        ),
        (
            "year",
            Span(1800, 2300),
            "none",
            "the year of every scenario without its own (roots after harvest)",
        ),
        (
            "root_profile",
            '"step" or "exponential"',
            '"step"',
            "slip planes deeper than rooting_depth_m get no roots, or roots decline as "
            "exp(-depth / rooting_depth_m)",
        ),
    ],
    "runout": [
        (
            "scenarios",
            "list of scenario names",
            "required",
            "the scenarios whose failing cells start run-out (empirical reach, screening only)",
        ),
        (
            "source",
            '"fs", "probability" or "inventory"',
            '"fs"',
            "source cells: FS below fs_below, P(FS < 1) above probability_above (sources "
            "weighted by it), or the inventory's landslide cells",
        ),
        ("fs_below", Span(0.1, 10), "1", 'source = "fs": cells below this FS'),
        ("probability_above", Span(0, 1), "0.5", 'source = "probability": cells above it'),
        (
            "min_source_area_m2",
            Span(0, 1e9),
            "0",
            "source patches (touching cells) smaller on the ground are left out",
        ),
        (
            "travel_angle_deg",
            Span(1, 60),
            "from the volume",
            "one angle of reach for every source, in place of the regression",
        ),
        (
            "regression_a",
            Span(-5, 5),
            "-0.012",
            "A of log10(H/L) = A + B log10(V) (Corominas 1996, debris flows)",
        ),
        ("regression_b", Span(-1, 1), "-0.105", "B of the same"),
        (
            "angle_table",
            "path",
            "none",
            "CSV of max_volume_m3, travel_angle_deg: the angle by the patch's volume class",
        ),
        (
            "exponent",
            Span(0, 1000),
            "4",
            "spreading exponent x of Holmgren (1994): 1 spreads by slope, large follows the "
            "steepest path",
        ),
        (
            "friction_angle_deg",
            Span(0, 60),
            "none",
            "travel friction angle of the energy line (none: the angle of reach alone)",
        ),
        ("max_speed_m_s", Span(0.1, 100), "none", "the energy line's speed cap"),
        (
            "min_share",
            Span(0, 0.5),
            "1e-4",
            "moves carrying less than this share of one source cell's flow are dropped "
            "(thin fringes)",
        ),
        (
            "assets",
            "path",
            "none",
            "roads, buildings or any points, lines or polygons (any CRS) to check for reach",
        ),
        ("asset_layer", "text", "the first layer", "layer of a multi-layer asset file"),
        ("asset_field", "text", "feature number", "the assets' field naming each one"),
    ],
    "scenario": [
        ("name", "1-64 letters, digits, _ . -", "required", "names the scenario's folder"),
        ("description", "text", "none", "shown in the report and the manifest"),
        ("saturation", Span(0, 1), "-", "uniform saturation ratio m (one wetness key)"),
        ("saturation_raster", "path", "-", "raster of m on any grid (one wetness key)"),
        (
            "recharge_mm_day",
            Span(0, 10000, also=", or a raster path"),
            "-",
            "steady recharge R, mm/day; a raster on any grid is resampled bilinearly "
            "(one wetness key)",
        ),
        ("storm", "table", "-", "a design storm, [scenario.storm] (one wetness key)"),
        (
            "rainfall",
            "table",
            "-",
            "critical storms and how often they come, [scenario.rainfall] (one wetness key)",
        ),
        (
            "seismic_coefficient",
            Span(*RANGES["seismic_coefficient"][:2]),
            "0",
            "horizontal pseudo-static coefficient k_h",
        ),
        (
            "soil",
            "table of units",
            "none",
            "[scenario.soil.UNIT]: any soil field below, a number or a raster path",
        ),
        (
            "year",
            Span(1800, 2300),
            "[land_cover] year",
            "the year the scenario is for: root cohesion of harvested land-cover classes "
            "after decay and regrowth (Sidle 1991)",
        ),
        (
            "use_soil_depth",
            "true/false",
            "true",
            "false: the units' depth_m in place of [soil_depth] (needs [soil_depth])",
        ),
        (
            "use_land_cover",
            "true/false",
            "true",
            "false: the units' root_cohesion_kpa in place of [land_cover] (needs [land_cover])",
        ),
    ],
    "scenario.storm": [
        (
            "rain_mm_h",
            Span(0, 1000, also=", or a raster path"),
            "one rain",
            "constant rain intensity (with duration_h); a raster on any grid (e.g. radar) "
            "is resampled bilinearly",
        ),
        ("duration_h", Span(0.01, 1000), "with rain_mm_h", "storm duration"),
        (
            "hyetograph",
            "path",
            "one rain",
            "a gauge's record (CSV): end_h or end_time, rain_mm or rain_mm_h, optionally "
            "start_h or start_time; rain in steps, summed by superposition",
        ),
        (
            "gauges",
            "path",
            "one rain",
            "several gauges: a point layer (any CRS) with fields name and record (each "
            "gauge's hyetograph CSV, relative to the layer), all records on one clock",
        ),
        (
            "gauge_weighting",
            '"nearest" or "inverse_distance"',
            '"nearest"',
            "with gauges: each cell takes its nearest gauge's rain (Thiessen), or the "
            "gauges' rain weighted by ground distance^-gauge_power",
        ),
        (
            "gauge_power",
            Span(0.5, 6),
            "2",
            "with inverse_distance: the exponent of the distance",
        ),
        (
            "rain_series",
            "path",
            "one rain",
            "rain on a grid in steps: a CF NetCDF file (precipitation by standard_name, its "
            "units converted) or a folder of GeoTIFFs named by time; resampled bilinearly",
        ),
        ("rain_variable", "text", "by standard_name", "with a NetCDF rain_series: the variable"),
        (
            "rain_series_unit",
            '"mm_h" or "mm"',
            "required for a folder",
            "with a folder of rasters: intensity, or depth in each interval",
        ),
        (
            "rain_series_resampling",
            '"bilinear" or "nearest"',
            '"bilinear"',
            "with a rain_series: bilinear (a smooth field; every cell searched on its own) "
            "or each DEM cell its grid cell's rain (few histories: many times faster)",
        ),
        (
            "design_return_period_yr",
            Span(0.1, 1e6),
            "one rain",
            "a design storm from [rainfall_frequency]'s table (alternating block): one of "
            "its return periods",
        ),
        ("design_duration_h", Span(0.01, 1000), "with a design storm", "its total duration"),
        (
            "block_h",
            Span(0.01, 1000),
            "the table's shortest duration",
            "a design storm's blocks (within the table's durations)",
        ),
        (
            "pattern",
            '"front", "centre" or "end"',
            '"centre"',
            "where a design storm's largest block falls",
        ),
        (
            "later_h",
            Span(0, 10000, low_text="duration_h"),
            "duration_h",
            "look again this long after the start",
        ),
        (
            "initial_water_table_depth_m",
            Span(0, 100),
            "one initial state",
            "water table before the storm, the same depth everywhere",
        ),
        (
            "initial_recharge_mm_day",
            Span(0, 10000),
            "one initial state",
            "instead: the water table of a steady recharge (mm/day) before the storm, cell by "
            "cell as in a steady scenario: depth x (1 - m)",
        ),
        ("long_term_infiltration_mm_day", Span(0, 1000), "0", "steady infiltration before it"),
    ],
    "scenario.rainfall": [
        ("initial_water_table_depth_m", Span(0, 100), "required", "water table before the rain"),
        ("long_term_infiltration_mm_day", Span(0, 1000), "0", "steady infiltration before it"),
        ("uplift", Span(0.1, 10), "1", "every tabulated intensity times this (climate scenario)"),
    ],
}

SOIL_MEANINGS = {
    "cohesion_kpa": "effective cohesion c' (kPa); required unless strength_lab_tests",
    "friction_deg": "effective friction angle phi' (degrees); required unless lab tests",
    "unit_weight_kn_m3": "unit weight above the water table (kN/m3); required",
    "depth_m": "vertical depth of the slip plane (m); required",
    "saturated_unit_weight_kn_m3": "unit weight below the water table (default: as above)",
    "root_cohesion_kpa": "apparent root cohesion (kPa, default 0)",
    "hydraulic_conductivity_m_s": "K (m/s): steady wetness T = K z cos(beta), and storms",
    "transmissivity_m2_day": "T (m2/day) instead of K, for steady wetness",
    "diffusivity_m2_s": "hydraulic diffusivity D0 (m2/s), storms and rainfall",
    "moisture_capacity_per_m": "C0 (1/m), storms and rainfall: D0 = K / C0 if D0 not given",
}


def allowed(table: str) -> set[str]:
    """The keys a table accepts."""
    return {row[0] for row in SCHEMA[table]}


def limits(table: str, key: str) -> tuple[float, float]:
    """(low, high) of a numeric key: the numbers the reader checks."""
    span = next(row[1] for row in SCHEMA[table] if row[0] == key)
    if not isinstance(span, Span):
        raise KeyError(f"[{table}] {key} has no numeric range")
    return span.low, span.high


def numeric_keys(table: str) -> dict[str, tuple[float, float]]:
    """Every numeric key of a table with its (low, high)."""
    return {row[0]: (row[1].low, row[1].high) for row in SCHEMA[table] if isinstance(row[1], Span)}


def markdown() -> str:
    """The scenario-file reference as Markdown."""
    lines = [
        "# The scenario file",
        "",
        "Generated from `src/slopescreen/maps/region/scenario_schema.py` (do not edit by hand: run",
        "`python -m slopescreen.maps.region.scenario_schema > docs/scenario-file.md`). Paths are",
        "relative to the scenario file. A key not listed is refused, with the nearest",
        "allowed name suggested; a key that cannot matter (e.g. `samples` without Monte",
        "Carlo) is refused too. See `demo_region/quillbrook_scenarios.toml` for an example.",
        "",
    ]
    for table, rows in SCHEMA.items():
        title = f"[[{table}]]" if table == "scenario" else f"[{table}]"
        lines += [f"## `{title}`", "", "| key | allowed | default | meaning |", "|---|---|---|---|"]
        lines += [f"| `{k}` | {t} | {d} | {m} |" for k, t, d, m in rows]
        lines.append("")
    lines += [
        "## Soil fields (soil table columns, polygon fields, or `[scenario.soil.UNIT]`)",
        "",
        "The soil table is a CSV whose key column is named like `soil_unit_field` (e.g.",
        "`unit`), one row per unit; optional `name` and `description` columns. A misspelt",
        'column is refused with a suggestion ("did you mean friction_deg?").',
        "",
        "| field | allowed | meaning |",
        "|---|---|---|",
    ]
    for name, meaning in SOIL_MEANINGS.items():
        low, high = RANGES[name][:2]
        lines.append(f"| `{name}` | {low:g} to {high:g} | {meaning} |")
    suffixes = ", ".join(f"`{s}`" for s in SPREAD_SUFFIXES)
    lines += [
        "",
        "Spreads for the probability of failure: any of "
        + ", ".join(f"`{f}`" for f in UNCERTAIN_FIELDS)
        + f" may carry the suffixes {suffixes} (`_distribution`: `normal`, `lognormal`,",
        "`uniform`, `triangular`); `c_phi_correlation` (-1 to 1) correlates c' and phi';",
        "`strength_lab_tests` names a lab-test CSV whose fitted c', phi', standard errors and",
        "correlation become the unit's strength and its spread.",
        "",
        "Any soil field, and the `_sd` and `_cov` of a spread, may name a raster in place of",
        "the number (`depth_m` = `depth.tif`, a path relative to the soil table): it is",
        "resampled bilinearly onto the DEM grid tile by tile, from any CRS, and checked",
        "before the run to cover every mapped cell of the unit and to lie in the field's",
        "range. A `[scenario.soil.UNIT]` number or raster (relative to the scenario file)",
        "replaces it for that unit.",
        "",
    ]
    return "\n".join(lines)


if __name__ == "__main__":
    print(markdown(), end="")
