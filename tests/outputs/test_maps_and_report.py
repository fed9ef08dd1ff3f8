"""Maps and report as a user sees them: palette, relief shading, rendered pixels, the
report in a real browser, and the words of the trade."""

import json
import os
import re
import shutil
import subprocess
from itertools import combinations
from pathlib import Path

import numpy as np
import pytest
import rasterio
from colorspacious import cspace_convert
from matplotlib.image import imread
from region_files import write_raster

from slopescreen.maps.io.grid import read_grid
from slopescreen.maps.outputs.palette import (
    CLASS_HEX,
    NO_DATA_HEX,
    class_rgb,
    hex_rgb,
    lab_to_srgb,
    shade,
    srgb_to_lab,
)
from slopescreen.maps.outputs.quicklook import MapFrame, axis_labels, draw_classes, read_for_map
from slopescreen.stability_classes import PF_CLASS_NAMES

CVD_TYPES = ("deuteranomaly", "protanomaly", "tritanomaly")
MIN_DISTANCE = 15.0  # CAM02-UCS units: our stated floor for "distinguishable at a glance"
HUE_TOLERANCE_DEG = 6.0  # CIECAM02 hue shift allowed between lit and shaded pixels


def _ucs(rgb01, cvd=None):
    """CAM02-UCS coordinates, after a colour-vision-deficiency simulation (Machado et al.
    2009, as implemented by colorspacious) at full severity when ``cvd`` is given."""
    rgb01 = np.asarray(rgb01, dtype=float)
    if cvd is not None:
        space = {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}
        rgb01 = np.clip(cspace_convert(rgb01, space, "sRGB1"), 0.0, 1.0)
    return cspace_convert(rgb01, "sRGB1", "CAM02-UCS")


def _hue_deg(rgb01):
    return cspace_convert(np.asarray(rgb01, dtype=float), "sRGB1", "JCh")[..., 2]


def test_lab_conversion_matches_colorspacious():
    # outside reference: colorspacious's CIELab (D65) on random sRGB colours
    rgb = np.random.default_rng(3).random((500, 3))
    ours = srgb_to_lab(rgb)
    theirs = cspace_convert(rgb, "sRGB1", "CIELab")
    assert np.max(np.abs(ours - theirs)) < 0.05
    assert np.max(np.abs(lab_to_srgb(ours) - rgb)) < 1e-6


def test_palette_is_distinguishable_under_colour_vision_deficiencies():
    colours = [hex_rgb(h) for h in (*CLASS_HEX, NO_DATA_HEX)]
    for cvd in (None, *CVD_TYPES):
        points = [_ucs(c, cvd) for c in colours]
        closest = min(np.linalg.norm(a - b) for a, b in combinations(points, 2))
        assert closest >= MIN_DISTANCE, (cvd, closest)


def test_the_fails_before_the_storm_code_stands_apart_from_the_time_ramp():
    # the code's colour against every colour of the time-to-failure ramp, the no-data grey
    # and "holds", normal vision and simulated deficiencies (colorspacious, CAM02-UCS)
    from slopescreen.maps.outputs.palette import FAILS_BEFORE_HEX, HOLDS_HEX, ramp

    others = [*ramp(64), hex_rgb(NO_DATA_HEX), hex_rgb(HOLDS_HEX)]
    for cvd in (None, *CVD_TYPES):
        code = _ucs(hex_rgb(FAILS_BEFORE_HEX), cvd)
        closest = min(np.linalg.norm(code - _ucs(c, cvd)) for c in others)
        assert closest >= 30.0, (cvd, closest)


def test_palette_least_stable_most_prominent_and_no_traffic_light():
    lab = srgb_to_lab(class_rgb(4))
    # lightness rises from the least stable (darkest, most prominent) to the most stable
    assert np.all(np.diff(lab[:, 0]) > 10.0)
    chroma = np.hypot(lab[:, 1], lab[:, 2])
    hue = np.degrees(np.arctan2(lab[:, 2], lab[:, 1])) % 360.0
    # no green class (CIELAB hue 100-170 deg with visible chroma): not red-yellow-green
    assert not np.any((hue > 100.0) & (hue < 170.0) & (chroma > 15.0))
    assert chroma[-1] < 5.0  # the most stable class is near-neutral: it recedes


def test_shading_moves_lightness_only():
    rgb = class_rgb(4)
    for relief in (-1.0, 1.0):
        shaded = shade(rgb, np.full(4, relief))
        a, b = srgb_to_lab(rgb), srgb_to_lab(shaded)
        moved = b[:, 0] - a[:, 0]
        assert np.all(np.sign(moved[:-1]) == np.sign(relief))  # the pale class may clip at 100
        inside = (b[:, 0] > 1.0) & (b[:, 0] < 99.0)
        assert np.allclose(a[inside, 1:], b[inside, 1:], atol=1.0)


def _ridge_grid(tmp_path):
    """A small grid for drawing: left half lit, right half in shade, all cells class 1."""
    shade_raster = np.full((60, 80), 60, np.uint8)
    shade_raster[:, :40] = 250
    dem = write_raster(tmp_path / "dem.tif", np.zeros((60, 80)))
    hill = tmp_path / "hillshade.tif"
    with rasterio.open(dem) as src:
        profile = src.profile | {"dtype": "uint8", "nodata": 0}
    with rasterio.open(hill, "w", **profile) as dst:
        dst.write(shade_raster, 1)
    return read_grid(dem), hill


def test_rendered_class_keeps_its_hue_on_lit_and_shaded_slopes(tmp_path):
    grid, hill = _ridge_grid(tmp_path)
    frame = MapFrame(grid, hill, "test", "relief only")
    classes = np.ones(read_for_map(hill, frame).shape, np.uint8)
    names = ["failing", "narrow", "modest", "ample"]
    png = draw_classes(tmp_path / "map.png", frame, classes, names, "classes")
    pixels = imread(png)[..., :3].reshape(-1, 3).astype(float)
    jch = cspace_convert(pixels, "sRGB1", "JCh")
    legend = hex_rgb(CLASS_HEX[0])
    legend_hue = _hue_deg(legend)
    # the class's pixels: chroma like the legend colour's and hue within 30 degrees of it
    near = (jch[:, 1] > 20.0) & (np.abs((jch[:, 2] - legend_hue + 180) % 360 - 180) < 30)
    lightness = jch[near, 0]
    lit = pixels[near][lightness >= np.percentile(lightness, 80)]
    dark = pixels[near][lightness <= np.percentile(lightness, 20)]
    assert lit.shape[0] > 500 and dark.shape[0] > 500
    j_lit, j_dark = _ucs(lit.mean(axis=0))[0], _ucs(dark.mean(axis=0))[0]
    assert j_lit - j_dark > 5.0  # the relief shows
    h_lit, h_dark = _hue_deg(lit.mean(axis=0)), _hue_deg(dark.mean(axis=0))
    assert abs((h_lit - h_dark + 180) % 360 - 180) < HUE_TOLERANCE_DEG
    assert abs((h_dark - legend_hue + 180) % 360 - 180) < HUE_TOLERANCE_DEG


def test_axis_labels_name_their_units():
    from rasterio.crs import CRS

    assert axis_labels(CRS.from_epsg(32633)) == ("Easting (m)", "Northing (m)")
    assert axis_labels(CRS.from_epsg(2227))[0] == "Easting (US survey ft)"
    assert axis_labels(CRS.from_epsg(4326))[0].startswith("Longitude (degrees")


def test_probability_classes_are_named_by_their_breaks():
    words = " ".join(PF_CLASS_NAMES).lower()
    for frequency_word in ("expected", "likely", "possible", "remote"):
        assert frequency_word not in words
    assert PF_CLASS_NAMES[0].startswith("1 in 2")


def test_demo_maps_and_comparison_written(demo_out):
    out, _ = demo_out
    for name in ("dry_season", "wet_season", "design_storm"):
        for png in ("stability_class.png", "probability_of_failure.png"):
            assert imread(out / name / png).shape[0] > 500
    assert (out / "design_storm" / "storm_time_to_failure_h.png").exists()
    assert not (out / "wet_season" / "storm_time_to_failure_h.png").exists()
    assert (out / "wet_season" / "critical_recharge_mm_day.png").exists()
    assert (out / "comparison" / "stability_classes.png").exists()
    assert (out / "comparison" / "wet_season_vs_wet_season_logged.png").exists()
    manifest = json.loads((out / "manifest.json").read_text())
    assert "comparison/wet_season_vs_wet_season_logged.png" in manifest["outputs"]


def test_report_content(demo_out):
    out, _ = demo_out
    text = (out / "report.html").read_text()
    assert "nan" not in text.replace("Nan", "").split("<img")[0].lower().split()
    assert ">nan<" not in text.lower()
    assert "/demo_region/" not in text  # input names relative to the scenario file
    assert "<code>soil_units.gpkg</code>" in text and "<code>quillbrook_dem.tif</code>" in text
    assert "(UTC)" in text and "Scenario comparison" in text
    assert "Largest low-margin zones" in text and "mean slope (deg)" in text
    assert "Iverson" in text  # a storm scenario ran
    assert "sqrt(1 + V^2)" in text  # why the top probability class repeats FS < 1
    assert "Lab fit for soil unit COL" in text
    assert "overflow-x:auto" in text
    assert text.count("data:image/webp;base64,") >= 12
    # "hazard" only where an annual frequency is attached: the rainfall scenarios' sections
    # and the comparison of their hazard classes (and the file names that carry the word)
    lower = text.lower()
    for allowed in (
        "hazard: how often rain starts failure",
        "hazard: annual probability that rain starts failure",
        "hazard</em> in the zoning sense",
        "where the hazard class changes",
        "hazard class change",
        "the same hazard class",
        "no cell changes hazard class",
        "hazard_class",
        "hazard classes",
    ):
        lower = lower.replace(allowed, "")
    at = lower.find("hazard")
    assert at < 0, lower[max(0, at - 80) : at + 80]


def test_report_opens_on_the_answer_and_stays_small(demo_out):
    """The first screen holds the cautions and one row per scenario (area failing and with
    a narrow margin, the change from the baseline, the largest zone and where it lies);
    every scenario's section opens on a click from a table of contents; the page stays
    under 8 MB (figures scaled to the page and stored as WebP)."""
    import re

    out, _ = demo_out
    text = (out / "report.html").read_text()
    assert (out / "report.html").stat().st_size < 8 * 2**20
    head = text[: text.index("Scenario comparison</h2>")]
    assert head.index("Cautions") < head.index("At a glance") < head.index("Contents")
    manifest = json.loads((out / "manifest.json").read_text())
    names = [s["name"] for s in manifest["scenarios"]]
    glance = head[head.index("At a glance") : head.index("Contents")]
    for name in names:  # one row each, linked to its section, which is collapsible
        assert f"<a href='#sc-{name}'>{name}</a>" in glance
        assert f"<details class='part' id='sc-{name}'><summary>" in text
    # the largest zone of each scenario with a point inside it, as the CSV of zones has it
    import geopandas as gpd

    zones = gpd.read_file(out / "wet_season" / "low_margin_zones.gpkg")
    big = zones.sort_values("area_m2", ascending=False).iloc[0]
    import html

    assert f"{big.area_m2 / 1e4:,.2f} ha, {html.escape(big.class_name)}" in glance
    point = big.geometry.representative_point()
    assert f"x {point.x:,.0f}, y {point.y:,.0f}" in glance
    # soil units by their names from the soil table
    assert "SLP (weathered siltstone slope soil)" in text
    # the inventory's scores on the first screen
    assert "Against 764 known landslides" in glance or "known landslides" in head
    # an empty class-change map is not drawn but said
    for match in re.finditer(r"No cell changes (class|hazard class)", text):
        after = text[match.end() : match.end() + 400]
        assert "<img" not in after.split("<h3>")[0]
    # print: every section opens before printing; wide cells wrap on paper
    assert "beforeprint" in text and "@media print" in text
    assert "href='map.html'" in text


def test_report_methods_only_for_what_ran(tmp_path):
    from slopescreen.maps.region.engine import run

    out = tmp_path / "out"
    scenarios = Path(__file__).resolve().parents[2] / "demo_region" / "quillbrook_scenarios.toml"
    run(scenarios, out, only=["dry_season", "wet_season"], progress=False, echo=lambda _: None)
    text = (out / "report.html").read_text()
    assert "Iverson" not in text  # no storm ran
    assert "Design storms" not in text
    assert "Where the class changes" not in text  # the pair did not both run
    assert "wet_season" in text


def _chromium():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


@pytest.mark.skipif(
    _chromium() is None,
    reason="Debian's chromium is not installed: sudo apt-get install chromium (.ci/run does)",
)
def test_report_renders_in_a_real_browser(demo_out, tmp_path):
    """Headless Chromium renders the report: no console error, a screenshot that is not
    blank. The screenshot stays in the test's temporary folder; with SLOPESCREEN_REFRESH_DOCS=1
    it and one class map replace the pictures README shows (docs/)."""
    out, _ = demo_out
    shot = tmp_path / "report.png"
    result = subprocess.run(
        [
            _chromium(),
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            f"--user-data-dir={tmp_path / 'profile'}",
            "--enable-logging=stderr",
            "--v=0",
            "--window-size=1200,2600",
            f"--screenshot={shot}",
            (out / "report.html").as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=180,
    )
    assert result.returncode == 0, result.stderr[-2000:]
    # Chromium logs every console message as "...:CONSOLE:<line>] ..." (console.error and
    # uncaught exceptions at INFO level too): the page writes none
    console = [line for line in result.stderr.splitlines() if ":CONSOLE" in line]
    assert not console, console
    image = imread(shot)[..., :3]
    assert image.shape[0] >= 2000
    distinct = np.unique((image.reshape(-1, 3) * 255).astype(np.uint8), axis=0)
    assert distinct.shape[0] > 200  # text, tables and maps, not an empty page
    assert image.std() > 0.05
    docs = Path(__file__).resolve().parents[2] / "docs"
    if os.environ.get("SLOPESCREEN_REFRESH_DOCS") == "1":  # the pictures README shows
        shutil.copyfile(shot, docs / "report_screenshot.png")
        shutil.copyfile(
            out / "wet_season" / "stability_class.png", docs / "stability_class_example.png"
        )


def _two_scenarios(folder, extra=""):
    from region_files import SCENARIO_TEXT_WITH_MAPS, _dem, _polygons

    _dem(folder / "dem.tif")
    _polygons(folder / "soils.geojson")
    path = folder / "s.toml"
    path.write_text(SCENARIO_TEXT_WITH_MAPS + extra)
    return path


def test_comparison_keys_change_the_report_or_are_refused(tmp_path):
    from slopescreen.errors import InputError
    from slopescreen.maps.region.engine import run

    quiet = {"progress": False, "echo": lambda _: None}
    plain = _two_scenarios(tmp_path)
    run(plain, tmp_path / "a", **quiet)
    based = _two_scenarios(tmp_path, '\n[comparison]\nbaseline = "dry"\n')
    run(based, tmp_path / "b", **quiet)
    paired = _two_scenarios(tmp_path, '\n[comparison]\npairs = [["dry", "wet"]]\n')
    run(paired, tmp_path / "c", **quiet)
    a, b, c = ((tmp_path / x / "report.html").read_text() for x in "abc")
    assert "baseline scenario <strong>wet</strong> (the first scenario run)" in a
    assert "baseline scenario <strong>dry</strong>" in b
    assert "Where the class changes: dry to wet" in c and "Where the class changes" not in a
    assert (tmp_path / "c" / "comparison" / "dry_vs_wet.png").exists()
    for bad, words in (
        ('baseline = "drry"', "did you mean dry?"),
        ('pairs = [["dry", "dry"]]', "two different names"),
        ('pairs = [["dry", "moist"]]', "no scenario 'moist'"),
        ("pairs = 3", "must be a list"),
        ('basline = "dry"', "unknown key (did you mean baseline?)"),
    ):
        path = _two_scenarios(tmp_path, f"\n[comparison]\n{bad}\n")
        with pytest.raises(InputError, match=re.escape(words)):
            run(path, tmp_path / "bad", **quiet)


def test_deprecated_names_read_for_one_release(tmp_path):
    from slopescreen.errors import InputError
    from slopescreen.maps.region.config import load_config

    path = _two_scenarios(tmp_path)
    old = path.read_text().replace("[classes]", "[hazard]")
    old = old.replace("[outputs]\n", "[outputs]\nhazard_zones = false\n")
    old = old.replace("min_zone_area_m2 = 0.0\n", "fs_breaks = [1.0, 1.2]\n")
    path.write_text(old)
    cfg = load_config(path)
    assert cfg.fs_breaks == (1.0, 1.2) and cfg.zones is False
    assert len(cfg.deprecations) == 2
    assert "[hazard] is deprecated and read as [classes]" in cfg.deprecations[0]
    assert "hazard_zones is deprecated and read as zones" in cfg.deprecations[1]
    path.write_text(old.replace("hazard_zones = false\n", "hazard_zones = false\nzones = true\n"))
    with pytest.raises(InputError, match="give zones only"):
        load_config(path)


def test_misspelt_soil_column_gets_a_suggestion(tmp_path):
    from slopescreen.errors import InputError
    from slopescreen.maps.region.config import load_config
    from slopescreen.maps.region.engine import prepare

    path = _two_scenarios(tmp_path)
    (tmp_path / "t.csv").write_text(
        "unit,cohesion_kpa,friction_dge,unit_weight_kn_m3,depth_m\nA,2,30,18,1.5\nB,5,30,18,1.5\n"
    )
    path.write_text(
        path.read_text().replace(
            'soil_unit_field = "unit"\n', 'soil_unit_field = "unit"\nsoil_table = "t.csv"\n'
        )
    )
    with pytest.raises(InputError, match=r"did you mean friction_deg\?"):
        prepare(load_config(path))


def test_scenario_file_reference_is_current():
    from slopescreen.maps.region.config import SOIL_FIELDS, STORM_KEYS, WETNESS_KEYS
    from slopescreen.maps.region.scenario_schema import SOIL_MEANINGS, allowed, markdown

    # the documented keys are exactly those the reader takes ranges and meanings for
    assert set(SOIL_MEANINGS) == set(SOIL_FIELDS)
    non_numeric = {"hyetograph", "pattern", "gauges", "gauge_weighting", "rain_series"}
    non_numeric |= {"rain_variable", "rain_series_unit", "rain_series_resampling"}
    assert allowed("scenario.storm") == set(STORM_KEYS) | non_numeric
    assert set(WETNESS_KEYS) <= allowed("scenario")

    docs = Path(__file__).resolve().parents[2] / "docs" / "scenario-file.md"
    assert docs.read_text() == markdown(), "run: python -m slopescreen.maps.region.scenario_schema"
    for key in ("soil_layer", "soil_unit_field", "did you mean friction_deg?", "[comparison]"):
        assert key in docs.read_text()


def test_threshold_plot_has_a_legend_entry_per_drawn_curve(tmp_path, monkeypatch):
    # every curve drawn (each design-rainfall curve, each unit's threshold) has one legend
    # entry, a unit whose threshold does not exist has none, and the return-period labels
    # sit inside the frame
    from slopescreen.maps.outputs import validation_plots

    kept = {}

    def keep(fig, target, bottom=0.1):
        kept["fig"] = fig
        return target

    monkeypatch.setattr(validation_plots, "_save", keep)
    validation_plots.threshold_figure(
        tmp_path / "t.png", (1.0, 6.0, 24.0),
        {"A (median)": np.array([30.0, 12.0, 6.0]), "A (steep)": np.array([-1.0, -1.0, -1.0])},
        (2.0, 10.0, 100.0), np.array([[20.0, 28.0, 40.0], [8.0, 11.0, 16.0], [3.0, 4.0, 6.0]]),
        "thresholds",
    )  # fmt: skip
    fig = kept["fig"]
    ax = fig.axes[0]
    drawn = [line for line in ax.get_lines() if len(line.get_xdata())]
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert len(labels) == len(drawn) == 4 and "A (steep)" not in labels
    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    periods = [t for t in ax.texts if t.get_text().endswith(" yr")]
    assert len(periods) == 3
    for text in periods:
        box = text.get_window_extent(renderer)
        assert frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 <= frame.y1
    assert any("A (steep): fails before rain" in t.get_text() for t in ax.texts)
