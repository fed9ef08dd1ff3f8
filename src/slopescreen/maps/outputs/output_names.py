"""Every file a run can write, with when and what: one list for ``run --help``, ``check``,
README and the removal of stale files (standard library only, so ``--help`` stays instant).
"""

from __future__ import annotations

# folders a run writes beside the scenario folders, and its files across scenarios
TERRAIN_FOLDER = "terrain"
COMPARISON_FOLDER = "comparison"
VALIDATION_FOLDER = "validation"
REPORT = "report.html"
MAP_PAGE = "map.html"
MANIFEST = "manifest.json"
INVENTORY_SCORES = "inventory_scores.csv"

# terrain/ (cached by content); slope_tan.tif is the cache's own, not copied to the run
SLOPE_DEG = "slope_deg.tif"
SLOPE_TAN = "slope_tan.tif"
SLOPE_ONE_SIDED = "slope_one_sided.tif"
SCA = "specific_catchment_area_m.tif"
CUT_OFF = "catchment_cut_off.tif"
HILLSHADE = "hillshade.tif"
SOIL_UNIT = "soil_unit.tif"
SOIL_UNIT_MAP = "soil_unit.png"
# what the terrain cache entry holds, and the part of it a run copies to OUT/terrain
TERRAIN_CACHE = (SLOPE_DEG, SLOPE_TAN, SLOPE_ONE_SIDED, SCA, CUT_OFF, HILLSHADE)
TERRAIN_COPIED = tuple(name for name in TERRAIN_CACHE if name != SLOPE_TAN)

# <scenario>/
FS = "fs.tif"
SATURATION = "saturation.tif"
RECHARGE = "critical_recharge_mm_day.tif"
RECHARGE_MAP = "critical_recharge_mm_day.png"
STABILITY_CLASS = "stability_class.tif"
STABILITY_CLASS_MAP = "stability_class.png"
SUMMARY = "summary.csv"
LOW_MARGIN_ZONES = "low_margin_zones.gpkg"
PROBABILITY = "probability_of_failure.tif"
PROBABILITY_MAP = "probability_of_failure.png"
RELIABILITY = "reliability_index.tif"
STORM_FS_END = "storm_fs_end.tif"
STORM_FS_LATER = "storm_fs_later.tif"
STORM_FAILURE_DEPTH = "storm_failure_depth_m.tif"
STORM_TIME_TO_FAILURE = "storm_time_to_failure_h.tif"
STORM_TIME_TO_FAILURE_MAP = "storm_time_to_failure_h.png"
FAILING_AREA = "failing_area.csv"
FAILING_AREA_MAP = "failing_area.png"
RETURN_PERIOD = "triggering_return_period_yr.tif"
RETURN_PERIOD_MAP = "triggering_return_period_yr.png"
ANNUAL_PROBABILITY = "annual_failure_probability.tif"
ANNUAL_PROBABILITY_SPREAD = "annual_failure_probability_with_spread.tif"
HAZARD_CLASS = "hazard_class.tif"
HAZARD_CLASS_MAP = "hazard_class.png"
HAZARD_ZONES = "hazard_class_zones.gpkg"
THRESHOLDS_MAP = "rainfall_thresholds.png"
SUCCESS_RATE = "success_rate.png"
SOIL_DEPTH = "soil_depth_m.tif"
SOIL_DEPTH_MAP = "soil_depth_m.png"
ROOT_COHESION = "root_cohesion_kpa.tif"
RUNOUT_REACH = "runout_reach.tif"
RUNOUT_SHARE = "runout_source_share.tif"
RUNOUT_ANGLE = "runout_travel_angle_deg.tif"
RUNOUT_ZONES = "runout_zones.gpkg"
RUNOUT_MAP = "runout_reach.png"
RUNOUT_ASSETS = "runout_assets.csv"
RUNOUT_ASSETS_LAYER = "runout_assets.gpkg"

# comparison/
SIDE_BY_SIDE = "stability_classes.png"
PAIR_HAZARD_SUFFIX = "_hazard.png"
PAIR_RATIO_SUFFIX = "_return_period_ratio.tif"

# validation/: back-analysed values per landslide cell end in this
CELLS_SUFFIX = "_cells.csv"

# the demo's own files: the region's lab tests and the Mohr figure of their fit
DEMO_LAB_TESTS = "lab_tests.csv"
DEMO_MOHR_FIGURE = "mohr_circles.png"
# how the envelope command names its input in --help
LAB_TESTS_PLACEHOLDER = "TESTS.csv"
# the private file a raster is assembled in before it is copied to a COG
ASSEMBLY_FILE = "blocks.tif"


# every critical-intensity raster of a scenario folder (for glob)
INTENSITY_PATTERN = "critical_intensity_*h_mm_h.tif"


def intensity_name(duration_h: float) -> str:
    """The raster of the critical intensity of one duration."""
    return f"critical_intensity_{duration_h:g}h_mm_h.tif"


# (file, written when, what it holds)
TERRAIN_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    (SLOPE_DEG, "always", "slope angle on the ground (Horn 1981)"),
    (SLOPE_ONE_SIDED, "always", "1 where the slope comes from one-sided differences"),
    (SCA, "always", "D-infinity contributing area / contour width"),
    (CUT_OFF, "always", "1 where part of the upslope area is beyond the DEM"),
    (HILLSHADE, "always", "relief for the maps"),
    (SOIL_UNIT, "always", "soil-unit codes, named in the metadata"),
    (SOIL_UNIT_MAP, "maps on", "map of the soil units"),
)
SCENARIO_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    (FS, "always", "factor of safety (capped at fs_cap)"),
    (SATURATION, "always", "saturation ratio m"),
    (SOIL_DEPTH, "always", "soil depth (m): the unit's, a raster's or a depth model's"),
    (SOIL_DEPTH_MAP, "maps on", "map of the soil depth"),
    (ROOT_COHESION, "land cover", "root cohesion (kPa) on the slip plane, from land cover"),
    (RECHARGE, "always", "steady recharge bringing FS to 1; codes -1, -2"),
    (STABILITY_CLASS, "always", "FS classes 1 (least stable) to n, colour table"),
    (SUMMARY, "always", "ground hectares per class and soil unit"),
    (LOW_MARGIN_ZONES, "zones on", "polygons of the two least stable classes"),
    (STABILITY_CLASS_MAP, "maps on", "map of the FS classes"),
    (RECHARGE_MAP, "maps on", "map of the critical recharge"),
    (PROBABILITY, "spreads given", "P(FS < 1) from parameter spread"),
    (RELIABILITY, "spreads given", "reliability index beta"),
    (PROBABILITY_MAP, "spreads given, maps on", "map of the probability classes"),
    (STORM_FS_END, "storm", "lowest FS over depth at the end of the storm"),
    (STORM_FS_LATER, "storm", "lowest FS over depth at later_h"),
    (STORM_FAILURE_DEPTH, "storm", "depth of the lowest FS"),
    (
        STORM_TIME_TO_FAILURE,
        "storm",
        "hours until FS first falls below 1; -1 never, -2 before the storm",
    ),
    (STORM_TIME_TO_FAILURE_MAP, "storm, maps on", "map of the time to failure"),
    (FAILING_AREA, "storm", "ground area failed (FS first below 1) by each time, and the rain"),
    (FAILING_AREA_MAP, "storm, maps on", "failing area against time under the hyetograph"),
    (
        "critical_intensity_<D>h_mm_h.tif",
        "rainfall",
        "rain intensity of a D-hour storm bringing FS to 1; codes -1, -2",
    ),
    (RETURN_PERIOD, "rainfall", "return period of the rain starting failure"),
    (ANNUAL_PROBABILITY, "rainfall", "1 - exp(-1/T): how often, per year"),
    (
        ANNUAL_PROBABILITY_SPREAD,
        "rainfall, soil spreads",
        "annual probability with rainfall frequency and soil spreads together",
    ),
    (HAZARD_CLASS, "rainfall", "classes by annual probability, colour table"),
    (HAZARD_CLASS_MAP, "rainfall, maps on", "map of the hazard classes"),
    (
        HAZARD_ZONES,
        "rainfall, zones on",
        "polygons of the two most frequent hazard classes",
    ),
    (RETURN_PERIOD_MAP, "rainfall, maps on", "map of the return period"),
    (THRESHOLDS_MAP, "rainfall, maps on", "critical intensity-duration per unit"),
    (RUNOUT_REACH, "runout", "1 where flow from a failing source reaches the cell"),
    (RUNOUT_SHARE, "runout", "share of all source flow passing the cell"),
    (RUNOUT_ANGLE, "runout", "angle of reach of the most mobile source reaching the cell"),
    (RUNOUT_ZONES, "runout", "polygons of the reach with ground areas"),
    (RUNOUT_MAP, "runout, maps on", "map of the reach"),
    (RUNOUT_ASSETS, "runout, assets given", "assets in reach: share, worst source, length"),
    (RUNOUT_ASSETS_LAYER, "runout, assets given", "the same as a GeoPackage layer"),
    (INVENTORY_SCORES, "inventory given", "landslide density and frequency ratio"),
    (SUCCESS_RATE, "inventory given", "success and prediction rates with AUC"),
)
RUN_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    (
        f"{COMPARISON_FOLDER}/{SIDE_BY_SIDE}",
        "report on, maps on, 2+ scenarios",
        "class maps side by side",
    ),
    (
        f"{COMPARISON_FOLDER}/FIRST_vs_SECOND.png",
        "report on, maps on, [comparison] pairs",
        "class-change map",
    ),
    (
        f"{COMPARISON_FOLDER}/FIRST_vs_SECOND{PAIR_HAZARD_SUFFIX}",
        "report on, maps on, [comparison] pairs of rainfall scenarios",
        "hazard-class change map",
    ),
    (
        f"{COMPARISON_FOLDER}/FIRST_vs_SECOND{PAIR_RATIO_SUFFIX}",
        "report on, [comparison] pairs of rainfall scenarios",
        "triggering return period of SECOND over FIRST's (and a .png map)",
    ),
    (INVENTORY_SCORES, "inventory given", "one row of scores per scenario"),
    (
        f"{VALIDATION_FOLDER}/",
        "score, backcalc, calibrate, sensitivity",
        "back-analysis, calibration and sensitivity tables and figures",
    ),
    (REPORT, "report on", "the self-contained report"),
    (MAP_PAGE, "report on", "the maps to pan, zoom and click, offline (beside the report)"),
    (MANIFEST, "always", "the run's state, inputs, parameters and output hashes"),
)
# names of the release before 0.2: removed from a scenario folder where found
LEGACY_SCENARIO_FILES = (HAZARD_CLASS, "hazard_zones.gpkg", "map.png")


def listing(indent: str = "  ") -> str:
    """Every output as text lines, for --help and check."""
    lines = [f"{TERRAIN_FOLDER}/ (cached by content):"]
    lines += [f"{indent}{f:34} {w:24} {d}" for f, w, d in TERRAIN_OUTPUTS]
    lines.append("<scenario>/ (one folder per scenario):")
    lines += [f"{indent}{f:34} {w:24} {d}" for f, w, d in SCENARIO_OUTPUTS]
    lines.append("across scenarios:")
    lines += [f"{indent}{f:34} {w:24} {d}" for f, w, d in RUN_OUTPUTS]
    return "\n".join(lines)


def written(
    table: tuple[tuple[str, str, str], ...],
    *,
    zones: bool,
    maps: bool,
    spreads: bool,
    storm: bool,
    report: bool = True,
    inventory: bool = False,
    rainfall: bool = False,
    land_cover: bool = False,
    runout: bool = False,
    assets: bool = False,
) -> list[str]:
    """The files of ``table`` a run with these settings writes."""
    conditions = {
        "always": True,
        "zones on": zones,
        "maps on": maps,
        "spreads given": spreads,
        "storm": storm,
        "report on": report,
        "inventory given": inventory,
        "rainfall": rainfall,
        "land cover": land_cover,
        "runout": runout,
        "assets given": assets,
    }
    out = []
    for name, when, _ in table:
        words = [w.strip() for w in when.split(",")]
        if all(conditions.get(w, False) for w in words if not w.startswith(("2+", "["))):
            out.append(name)
    return out
