"""Maps scored against landslide inventories, end to end on small invented regions: the
scores against scikit-learn's ROC area, the exact cases (slides on the least stable cells,
slides at random within the Hanley & McNeil standard error), the readers (points,
polygons, scarps, other CRSs, cells off the map), back-analysis plugged back into the core,
and sensitivity against the core at the medians."""

import json
import shutil

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from region_files import SCENARIO_TEXT, _dem, _polygons
from shapely.geometry import Point, box
from sklearn.metrics import roc_auc_score

from slopescreen import factor_of_safety
from slopescreen.cli.main import main
from slopescreen.maps.io.safe_writes import file_sha256
from slopescreen.maps.region.engine import run

ORIGIN = (500000.0, 5000400.0)  # upper-left corner of region_files' DEM, 10 m cells


def _region(folder, inventory=""):
    folder.mkdir(parents=True, exist_ok=True)
    _dem(folder / "dem.tif")
    _polygons(folder / "soils.geojson")
    (folder / "scenarios.toml").write_text(SCENARIO_TEXT + inventory)
    return folder / "scenarios.toml"


def _points(path, cells, crs="EPSG:32633", **fields):
    """Points at the centres of (row, col) cells."""
    pts = [Point(ORIGIN[0] + (c + 0.5) * 10.0, ORIGIN[1] - (r + 0.5) * 10.0) for r, c in cells]
    frame = gpd.GeoDataFrame(fields, geometry=pts, crs="EPSG:32633").to_crs(crs)
    frame.to_file(path, driver="GeoJSON")
    return path


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1).astype(float)


@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    """A finished run of the two-unit test region (no inventory yet)."""
    folder = tmp_path_factory.mktemp("inv")
    toml = _region(folder / "region")
    out = folder / "out"
    run(toml, out, progress=False, echo=lambda s: None)
    fs = _read(out / "wet" / "fs.tif")
    return toml, out, fs


def _score(capsys, toml, out, inventory):
    code = main(["score", str(toml), "--out", str(out), "--inventory", str(inventory), "--quiet"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    manifest = json.loads((out / "manifest.json").read_text())
    return {r["scenario"]: r for r in manifest["inventory"]["scenarios"]}, manifest, captured.out


def _copy(out, tmp_path):
    target = tmp_path / "copy"
    shutil.copytree(out, target, ignore=shutil.ignore_patterns(".cache", ".lock*"))
    return target


def test_scores_equal_scikit_learn_roc_area(small_run, tmp_path, capsys):
    toml, out, fs = small_run
    out = _copy(out, tmp_path)
    rng = np.random.default_rng(5)
    rows, cols = rng.integers(0, 40, 60), rng.integers(0, 50, 60)
    cells = sorted({(int(r), int(c)) for r, c in zip(rows, cols, strict=True)})
    scores, manifest, _ = _score(capsys, toml, out, _points(tmp_path / "p.geojson", cells))
    hit = np.zeros(fs.shape, bool)
    hit[tuple(np.array(cells).T)] = True
    valid = fs > -1e30
    # scikit-learn's ROC area with the stable cells as negatives (sklearn.metrics,
    # roc_auc_score; equal cell areas in this UTM grid)
    expected = roc_auc_score(hit[valid], -fs[valid])
    assert scores["wet"]["roc_auc"] == pytest.approx(expected, abs=2e-6)
    # the success-rate area is the ROC area with every cell as a negative (Chung & Fabbri
    # 2003): the landslide cells appear once as positives and once among all cells
    y = np.r_[np.ones(hit[valid].sum()), np.zeros(valid.sum())]
    s = np.r_[-fs[valid & hit], -fs[valid]]
    assert scores["wet"]["success_auc"] == pytest.approx(roc_auc_score(y, s), abs=2e-6)
    assert scores["wet"]["landslides"] == len(cells) == scores["wet"]["cells"]
    flagged = (fs[valid] < 1.0).mean()
    assert scores["wet"]["flagged_share"] == pytest.approx(flagged, abs=1e-6)
    assert scores["wet"]["captured_share"] == pytest.approx((fs[hit] < 1.0).mean(), abs=1e-6)
    assert manifest["complete"] and "inventory_scores.csv" in manifest["outputs"]
    top = (out / "inventory_scores.csv").read_text().splitlines()
    assert top[0] == (
        "scenario,landslides,cells,success_auc,prediction_auc,flagged_share,captured_share"
    )
    assert "id='inventory'" in (out / "report.html").read_text()


def test_slides_on_the_least_stable_cells_score_one(small_run, tmp_path, capsys):
    toml, out, fs = small_run
    out = _copy(out, tmp_path)
    values, counts = np.unique(fs[fs > -1e30], return_counts=True)
    # every cell strictly below ``cut`` (at least ten of them), no tie across it
    cut = values[int(np.searchsorted(np.cumsum(counts), 10)) + 1]
    cells = [tuple(map(int, rc)) for rc in np.argwhere((fs > -1e30) & (fs < cut))]
    assert 10 <= len(cells) < 0.5 * fs.size
    scores, _, _ = _score(capsys, toml, out, _points(tmp_path / "p.geojson", cells))
    # exact case: every landslide ranks before every stable cell
    assert scores["wet"]["roc_auc"] == pytest.approx(1.0, abs=1e-12)
    share = len(cells) / (fs > -1e30).sum()
    # success-rate area then is 1 - share / 2 (the landslide cells' own triangle)
    assert scores["wet"]["success_auc"] == pytest.approx(1.0 - share / 2.0, abs=2e-6)


def test_slides_at_random_score_one_half_within_the_standard_error(small_run, tmp_path, capsys):
    toml, out, fs = small_run
    out = _copy(out, tmp_path)
    rng = np.random.default_rng(11)
    flat = rng.choice(fs.size, 300, replace=False)
    cells = [(int(i // 50), int(i % 50)) for i in flat]
    scores, _, _ = _score(capsys, toml, out, _points(tmp_path / "p.geojson", cells))
    r = scores["wet"]
    # Hanley & McNeil (1982) standard error of the area; 3 SE: a 1-in-370 miss by chance
    assert abs(r["roc_auc"] - 0.5) < 3.0 * r["roc_auc_se"]
    # Hanley & McNeil's formula at A = 1/2 (Q1 = Q2 = 1/3): SE^2 = (1/4 + (n1 + n2 - 2) / 12)
    # / (n1 n2), with n1 = 300 landslides and n2 = 1700 stable cells
    at_half = np.sqrt((0.25 + (300 + 1700 - 2) / 12.0) / (300 * 1700))
    assert r["roc_auc_se"] == pytest.approx(at_half, rel=0.02)


def test_scoring_reads_the_maps_and_refuses_changed_ones(small_run, tmp_path, capsys):
    toml, out, _ = small_run
    out = _copy(out, tmp_path)
    rasters = {p: file_sha256(p) for p in out.rglob("*.tif")}
    points = _points(tmp_path / "p.geojson", [(5, 5), (10, 20), (30, 40)])
    _, _, text = _score(capsys, toml, out, points)
    assert {p: file_sha256(p) for p in out.rglob("*.tif")} == rasters  # nothing recomputed
    assert "fewer than 10" in text  # three cells: scores given with a warning
    with (out / "wet" / "fs.tif").open("r+b") as handle:  # one byte changed
        handle.seek(-1, 2)
        last = handle.read(1)
        handle.seek(-1, 2)
        handle.write(bytes([last[0] ^ 1]))
    code = main(["score", str(toml), "--out", str(out), "--inventory", str(points)])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1
    assert "fs.tif: changed since the run wrote it" in err
    # every command that reads a finished scenario refuses it alike, and a deleted one
    on_wet = ["--out", str(out), "--scenario", "wet"]
    for argv in (
        ["backcalc", str(toml), *on_wet, "--inventory", str(points)],
        ["calibrate", str(toml), *on_wet, "--inventory", str(points)],
        ["sensitivity", str(toml), *on_wet],
    ):
        assert main(argv) == 2, argv
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "fs.tif: changed since the run wrote it" in err
    (out / "wet" / "fs.tif").unlink()
    assert main(["sensitivity", str(toml), *on_wet]) == 2
    assert "fs.tif: not an output of the run" in capsys.readouterr().err


def test_points_off_the_map_are_counted_and_other_crs_reprojected(small_run, tmp_path, capsys):
    toml, out, _ = small_run
    out = _copy(out, tmp_path)
    cells = [(r, c) for r in range(2, 38, 3) for c in range(3, 48, 7)]
    utm, _, _ = _score(capsys, toml, out, _points(tmp_path / "utm.geojson", cells))
    lonlat = _points(tmp_path / "ll.geojson", [*cells, (-30, 10), (10, 90)], crs="EPSG:4326")
    geo, manifest, text = _score(capsys, toml, out, lonlat)
    assert geo["wet"]["roc_auc"] == utm["wet"]["roc_auc"]  # the same cells after reprojection
    assert manifest["inventory"]["landslides_outside_dem"] == 2
    assert "2 of" in text and "outside the DEM" in text


def test_polygons_mark_their_highest_cells_or_all(tmp_path, capsys):
    # a 6 x 4 cell rectangle: 24 cells; its scarp is the ceil(0.2 * 24) = 5 highest
    toml = _region(tmp_path / "r", '\n[inventory]\npath = "slide.geojson"\npart = "whole"\n')
    x0, y0 = ORIGIN[0] + 100.0, ORIGIN[1] - 260.0
    gpd.GeoDataFrame(geometry=[box(x0, y0, x0 + 40.0, y0 + 60.0)], crs="EPSG:32633").to_file(
        tmp_path / "r" / "slide.geojson", driver="GeoJSON"
    )
    run(toml, tmp_path / "whole", progress=False, echo=lambda s: None)
    whole = json.loads((tmp_path / "whole" / "manifest.json").read_text())["inventory"]
    assert whole["landslide_cells"] == 24
    toml.write_text(toml.read_text().replace('part = "whole"\n', ""))  # default: the scarp
    run(toml, tmp_path / "scarp", progress=False, echo=lambda s: None)
    scarp = json.loads((tmp_path / "scarp" / "manifest.json").read_text())["inventory"]
    assert scarp["landslide_cells"] == 5
    cells = json.loads((tmp_path / "scarp" / "manifest.json").read_text())
    assert cells["inputs_sha256"]["inventory"] == file_sha256(tmp_path / "r" / "slide.geojson")
    # the reader's five cells are the five highest of the rectangle (rows 20-25, columns
    # 10-13) by the DEM's own values
    from slopescreen.maps.inventory.reading import read_inventory
    from slopescreen.maps.io.grid import read_grid
    from slopescreen.maps.region.config import InventorySpec

    inv = read_inventory(
        InventorySpec(tmp_path / "r" / "slide.geojson"), read_grid(tmp_path / "r" / "dem.tif")
    )
    z = _read(tmp_path / "r" / "dem.tif")
    chosen = np.sort(z[inv.rows, inv.cols])
    assert (inv.rows >= 20).all() and (inv.rows <= 25).all() and (inv.cols >= 10).all()
    assert np.array_equal(chosen, np.sort(z[20:26, 10:14].ravel())[-5:])


def test_date_split_holds_out_the_newest(tmp_path, capsys):
    text = '\n[inventory]\npath = "p.geojson"\ndate_field = "year"\ntest_share = 0.25\n'
    toml = _region(tmp_path / "r", text)
    cells = [(r, c) for r in range(2, 38, 3) for c in range(3, 48, 10)]  # 60 points
    _points(tmp_path / "r" / "p.geojson", cells, year=[2000 + i % 20 for i in range(len(cells))])
    run(toml, tmp_path / "o", progress=False, echo=lambda s: None)
    inv = json.loads((tmp_path / "o" / "manifest.json").read_text())["inventory"]
    # the newest quarter: 15 of 60 points, years 2015 onwards (3 points a year)
    assert inv["scenarios"][0]["prediction_landslides"] == 15
    assert "dated 2015-01-01 or later" in inv["split_note"]


def test_back_analysed_cohesion_brings_fs_to_one(small_run, tmp_path, capsys):
    toml, out, _ = small_run
    out = _copy(out, tmp_path)
    cells = [(r, c) for r in range(1, 39, 2) for c in range(1, 49, 3)]
    points = _points(tmp_path / "p.geojson", cells)
    argv = ["backcalc", str(toml), "--out", str(out), "--inventory", str(points)]
    assert main([*argv, "--scenario", "dry", "--parameter", "cohesion_kpa"]) == 0
    rows = (out / "validation" / "backcalc_dry_cohesion_kpa_cells.csv").read_text().splitlines()
    slope = _read(out / "terrain" / "slope_deg.tif")
    checked = 0
    for line in rows[1:]:
        _, r, c, _, value = line.split(",")
        if not value:
            continue
        # the core's own forward equation at the back-analysed c': FS = 1 (plug back)
        fs = factor_of_safety(slope[int(r), int(c)], 1.5, float(value), 30.0, 18.0, 0.0)
        assert fs == pytest.approx(1.0, rel=1e-5)  # slope stored as float32
        checked += 1
    assert checked > 50
    manifest = json.loads((out / "manifest.json").read_text())
    units = manifest["back_analysis"]["dry:cohesion_kpa"]["units"]
    values = [
        float(x.split(",")[4]) for x in rows[1:] if x.split(",")[3] == "A" and x.split(",")[4]
    ]
    a = next(u for u in units if u["soil_unit"] == "A")
    assert a["median"] == pytest.approx(np.median(values), rel=1e-6)  # numpy's median
    assert "Back-analysis" in (out / "report.html").read_text()
    assert main([*argv, "--scenario", "nosuch"]) == 2
    assert "--scenario nosuch: not a scenario" in capsys.readouterr().err


def test_sensitivity_bars_are_the_core_fs_at_the_medians(small_run, tmp_path, capsys):
    toml, out, _ = small_run
    out = _copy(out, tmp_path)
    assert main(["sensitivity", str(toml), "--out", str(out), "--scenario", "dry"]) == 0
    rows = json.loads((out / "manifest.json").read_text())["sensitivity"]["dry"]["rows"]
    slope = _read(out / "terrain" / "slope_deg.tif")
    codes = _read(out / "terrain" / "soil_unit.tif")
    a = [r for r in rows if r["soil_unit"] == "A"]
    # median from 0.01-degree bins: within half a bin of numpy's median (equal cell areas)
    assert a[0]["median_slope_deg"] == pytest.approx(np.median(slope[codes == 1]), abs=0.006)
    phi = next(r for r in a if r["parameter"] == "friction_deg")
    assert (phi["low"], phi["high"]) == pytest.approx((24.0, 36.0))  # +-20%: no spread given
    expected = factor_of_safety(phi["median_slope_deg"], 1.5, 2.0, 24.0, 18.0, 0.0)
    assert phi["fs_low"] == pytest.approx(expected, abs=2e-6)
    assert 0.0 <= phi["class_change_low"] <= 1.0
    assert (out / "validation" / "sensitivity_dry.png").stat().st_size > 10_000


def test_demo_calibration_recovers_the_hidden_cohesion(demo_out, tmp_path, capsys):
    """The whole chain on the demo: its invented slides were drawn with SLP's c' 30% below
    the scenario file's table (make_demo_region.HIDDEN_CHANGES); the map scores well above
    chance, and calibration against the older 70% of the slides finds c' within 0.4 kPa
    (two grid steps of 0.05 x 4 kPa) of the hidden 2.8 kPa."""
    import importlib.util

    from conftest import REGION

    spec = importlib.util.spec_from_file_location("demo", REGION / "make_demo_region.py")
    demo = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(demo)
    hidden = demo.HIDDEN_CHANGES["SLP"]["cohesion_kpa"]
    out, lines = demo_out
    scores = json.loads((out / "manifest.json").read_text())["inventory"]["scenarios"]
    # the slides were drawn from the per-unit soils: the scenario with per-unit constants
    wet = next(r for r in scores if r["scenario"] == "wet_season_units")
    assert wet["success_auc"] > 0.8 and wet["prediction_auc"] > 0.8
    assert any(line.startswith("scenario wet_season_units: success AUC") for line in lines)
    copy = _copy(out, tmp_path)
    table = file_sha256(REGION / "soil_parameters.csv")
    toml = REGION / "quillbrook_scenarios.toml"
    argv = ["calibrate", str(toml), "--out", str(copy), "--scenario", "wet_season_units"]
    assert main([*argv, "--max-flagged-share", "0.1"]) == 0, capsys.readouterr().err
    entry = json.loads((copy / "manifest.json").read_text())["calibration"]
    result = entry["wet_season_units:cohesion_kpa"]
    slp = next(u for u in result["units"] if u["soil_unit"] == "SLP")
    assert slp["after"] == pytest.approx(hidden, abs=0.4)
    assert result["after"]["train_auc"] >= result["before"]["train_auc"]
    assert result["after"]["flagged_share"] <= 0.1
    assert file_sha256(REGION / "soil_parameters.csv") == table  # the input is untouched
    calibrated = (copy / result["soil_table"]).read_text().splitlines()
    row = next(x for x in calibrated if x.startswith("SLP,"))
    assert float(row.split(",")[2]) == pytest.approx(slp["after"])
    assert "Calibration of cohesion_kpa" in (copy / "report.html").read_text()
    # a limit no map meets: every unit keeps its value, with a note
    assert main([*argv, "--max-flagged-share", "0.001"]) == 0
    result = json.loads((copy / "manifest.json").read_text())["calibration"]
    strict = result["wet_season_units:cohesion_kpa"]["units"]
    assert all(u["multiplier"] == 1.0 for u in strict)
    assert any("no multiplier keeps the flagged share" in u["note"] for u in strict)


def test_calibration_on_a_dask_cluster_matches_serial(small_run, tmp_path, capsys):
    pytest.importorskip("distributed")
    toml, out, fs = small_run
    rng = np.random.default_rng(3)
    flat = rng.choice(fs.size, 120, replace=False, p=np.exp(-fs.ravel()) / np.exp(-fs).sum())
    points = _points(tmp_path / "p.geojson", [(int(i // 50), int(i % 50)) for i in flat])
    results = []
    for workers in ("0", "2"):
        copy = _copy(out, tmp_path / workers)
        argv = ["calibrate", str(toml), "--out", str(copy), "--inventory", str(points)]
        assert main([*argv, "--scenario", "wet", "--workers", workers]) == 0
        entry = json.loads((copy / "manifest.json").read_text())["calibration"]["wet:cohesion_kpa"]
        results.append({k: entry[k] for k in ("units", "before", "after")})
        capsys.readouterr()
    assert results[0] == results[1]
    assert results[0]["before"]["train_auc"] is not None


@pytest.mark.parametrize("n_thresholds", [0, 1, 7, 3000])
def test_compiled_masses_equal_the_numpy_reference(n_thresholds):
    from slopescreen.maps.region.kernels import add_masses
    from slopescreen.validation import masses_around

    rng = np.random.default_rng(n_thresholds)
    score = np.round(rng.lognormal(0.2, 0.5, 50_000), 3).astype(np.float32)  # many ties
    score[::97] = np.nan
    weight = rng.uniform(90.0, 110.0, score.size)
    thresholds = np.unique(rng.choice(score[np.isfinite(score)], n_thresholds)).astype(float)
    keep = rng.random(score.size) < 0.6
    for mask in (np.zeros(0, bool), keep):
        between, tied = np.zeros(thresholds.size + 1), np.zeros(thresholds.size)
        counted = add_masses(score, weight, mask, thresholds, between, tied)
        sel = mask if mask.size else np.ones(score.size, bool)
        b, t = masses_around(score[sel], weight[sel], thresholds)  # the numpy reference
        np.testing.assert_allclose(between, b, rtol=1e-12)
        np.testing.assert_allclose(tied, t, rtol=1e-12)
        assert counted == int(np.isfinite(score[sel]).sum())


def test_a_multiplier_grid_too_fine_is_refused_before_it_is_built():
    # 0.5:1.5:1e-9 would be 10^9 multipliers (7.45 GiB): one line, no MemoryError
    from slopescreen.errors import InputError
    from slopescreen.maps.inventory.calibration import parse_grid

    with pytest.raises(InputError, match="at most 201 values, got 1,000,000,001"):
        parse_grid("0.5:1.5:1e-9")
    assert parse_grid("0.5:1.5:0.5").tolist() == [0.5, 1.0, 1.5]
