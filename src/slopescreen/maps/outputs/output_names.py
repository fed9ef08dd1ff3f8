"""Every file a run can write, with when and what: one list for ``run --help``, ``check``,
README and the removal of stale files (standard library only, so ``--help`` stays instant).
"""

from __future__ import annotations

# the folder of the known-landslide checks, beside the scenario folders
VALIDATION_FOLDER = "validation"

# (file, written when, what it holds)
TERRAIN_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    ("slope_deg.tif", "always", "slope angle on the ground (Horn 1981)"),
    ("slope_one_sided.tif", "always", "1 where the slope comes from one-sided differences"),
    ("specific_catchment_area_m.tif", "always", "D-infinity contributing area / contour width"),
    ("catchment_cut_off.tif", "always", "1 where part of the upslope area is beyond the DEM"),
    ("hillshade.tif", "always", "relief for the maps"),
    ("soil_unit.tif", "always", "soil-unit codes, named in the metadata"),
    ("soil_unit.png", "maps on", "map of the soil units"),
)
SCENARIO_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    ("fs.tif", "always", "factor of safety (capped at fs_cap)"),
    ("saturation.tif", "always", "saturation ratio m"),
    ("critical_recharge_mm_day.tif", "always", "steady recharge bringing FS to 1; codes -1, -2"),
    ("stability_class.tif", "always", "FS classes 1 (least stable) to n, colour table"),
    ("summary.csv", "always", "ground hectares per class and soil unit"),
    ("low_margin_zones.gpkg", "zones on", "polygons of the two least stable classes"),
    ("stability_class.png", "maps on", "map of the FS classes"),
    ("critical_recharge_mm_day.png", "maps on", "map of the critical recharge"),
    ("probability_of_failure.tif", "spreads given", "P(FS < 1) from parameter spread"),
    ("reliability_index.tif", "spreads given", "reliability index beta"),
    ("probability_of_failure.png", "spreads given, maps on", "map of the probability classes"),
    ("storm_fs_end.tif", "storm", "lowest FS over depth at the end of the storm"),
    ("storm_fs_later.tif", "storm", "lowest FS over depth at later_h"),
    ("storm_failure_depth_m.tif", "storm", "depth of the lowest FS"),
    (
        "storm_time_to_failure_h.tif",
        "storm",
        "hours until FS first falls below 1; -1 never, -2 before the storm",
    ),
    ("storm_time_to_failure_h.png", "storm, maps on", "map of the time to failure"),
    (
        "critical_intensity_<D>h_mm_h.tif",
        "rainfall",
        "rain intensity of a D-hour storm bringing FS to 1; codes -1, -2",
    ),
    ("triggering_return_period_yr.tif", "rainfall", "return period of the rain starting failure"),
    ("annual_failure_probability.tif", "rainfall", "1 - exp(-1/T): how often, per year"),
    (
        "annual_failure_probability_with_spread.tif",
        "rainfall, soil spreads",
        "annual probability with rainfall frequency and soil spreads together",
    ),
    ("hazard_class.tif", "rainfall", "classes by annual probability, colour table"),
    ("hazard_class.png", "rainfall, maps on", "map of the hazard classes"),
    (
        "hazard_class_zones.gpkg",
        "rainfall, zones on",
        "polygons of the two most frequent hazard classes",
    ),
    ("triggering_return_period_yr.png", "rainfall, maps on", "map of the return period"),
    ("rainfall_thresholds.png", "rainfall, maps on", "critical intensity-duration per unit"),
    ("inventory_scores.csv", "inventory given", "landslide density and frequency ratio"),
    ("success_rate.png", "inventory given", "success and prediction rates with AUC"),
)
RUN_OUTPUTS: tuple[tuple[str, str, str], ...] = (
    (
        "comparison/stability_classes.png",
        "report on, maps on, 2+ scenarios",
        "class maps side by side",
    ),
    (
        "comparison/FIRST_vs_SECOND.png",
        "report on, maps on, [comparison] pairs",
        "class-change map",
    ),
    (
        "comparison/FIRST_vs_SECOND_hazard.png",
        "report on, maps on, [comparison] pairs of rainfall scenarios",
        "hazard-class change map",
    ),
    (
        "comparison/FIRST_vs_SECOND_return_period_ratio.tif",
        "report on, [comparison] pairs of rainfall scenarios",
        "triggering return period of SECOND over FIRST's (and a .png map)",
    ),
    ("inventory_scores.csv", "inventory given", "one row of scores per scenario"),
    (
        "validation/",
        "score, backcalc, calibrate, sensitivity",
        "back-analysis, calibration and sensitivity tables and figures",
    ),
    ("report.html", "report on", "the self-contained report"),
    ("manifest.json", "always", "the run's state, inputs, parameters and output hashes"),
)
# names of the release before 0.2: removed from a scenario folder where found
LEGACY_SCENARIO_FILES = ("hazard_class.tif", "hazard_zones.gpkg", "map.png")


def listing(indent: str = "  ") -> str:
    """Every output as text lines, for --help and check."""
    lines = ["terrain/ (cached by content):"]
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
    }
    out = []
    for name, when, _ in table:
        words = [w.strip() for w in when.split(",")]
        if all(conditions.get(w, False) for w in words if not w.startswith(("2+", "["))):
            out.append(name)
    return out
