"""The map engine end to end on the demo region: outputs, grids, areas and per-cell values.

Expected values are recomputed here from the input files with the core functions (which
are checked against outside references in test_stability.py and friends) and from an
independent reading of the soil table with the csv module.
"""

import csv
import json
import shutil
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import rasterio

from slopescreen import factor_of_safety, fit_envelope
from slopescreen.cli.main import main
from slopescreen.hydrology import steady_state_saturation
from slopescreen.maps.region.engine import run

ROOT = Path(__file__).resolve().parents[2]
REGION = ROOT / "demo_region"
SCENARIOS = REGION / "quillbrook_scenarios.toml"
PER_SCENARIO = ("fs.tif", "saturation.tif", "critical_recharge_mm_day.tif", "stability_class.tif")
NAMES = ("dry_season", "wet_season", "fully_saturated", "wet_season_logged", "design_storm")
PROBABILITY = ("probability_of_failure.tif", "reliability_index.tif")
STORM = (
    "storm_fs_end.tif",
    "storm_fs_later.tif",
    "storm_failure_depth_m.tif",
    "storm_time_to_failure_h.tif",
)


def _soil_table():
    """The demo soil table read with the csv module; lab-tested units get the envelope fit."""
    with open(REGION / "soil_parameters.csv") as handle:
        rows = list(csv.DictReader(line for line in handle if not line.startswith("#")))
    table = {}
    for r in rows:
        values = {
            k: float(v)
            for k, v in r.items()
            if k not in ("unit", "name", "strength_lab_tests") and v not in ("", None)
        }
        if r["strength_lab_tests"]:
            with open(REGION / r["strength_lab_tests"]) as handle:
                tests = list(csv.DictReader(x for x in handle if not x.startswith("#")))
            s3 = np.array([float(t["sigma3_kpa"]) for t in tests])
            s1 = s3 + np.array([float(t["deviator_kpa"]) for t in tests])
            u = np.array([float(t["pore_pressure_kpa"]) for t in tests])
            fit = fit_envelope(s3, s1, u)
            values["cohesion_kpa"] = fit.cohesion_kpa
            values["friction_deg"] = fit.friction_deg
            values["cohesion_kpa_sd"] = fit.cohesion_se_kpa
            values["friction_deg_sd"] = fit.friction_se_deg
            values["c_phi_correlation"] = fit.covariance[0, 1] / (
                fit.cohesion_se_kpa * fit.friction_se_deg
            )
        table[r["unit"]] = values
    return table


def _per_cell(out, scenario):
    """The scenario's soil depth and root cohesion rasters as the run wrote them (checked
    against the core's depth and root models in test_depth_and_roots_follow_the_models)."""
    depth, *_ = _read(out / scenario / "soil_depth_m.tif")
    root_path = out / scenario / "root_cohesion_kpa.tif"
    return depth, _read(root_path)[0] if root_path.exists() else None


def _cell(table, unit, cells, r, c):
    """The soil-table row of ``unit`` with the cell's own depth and root cohesion; the root
    cohesion's spread scales with it (the land-cover classes' sd over their value)."""
    depth, root = cells
    p = dict(table[unit], depth_m=float(depth[r, c]))
    if root is not None:
        p["root_cohesion_kpa"] = float(root[r, c])
        p["root_cohesion_kpa_sd"] = float(root[r, c]) * COVER_SD_SHARE
    return p


def _cover_table():
    with open(REGION / "quillbrook_land_cover.csv") as handle:
        rows = list(csv.DictReader(line for line in handle if not line.startswith("#")))
    return {r["class"]: r for r in rows}


def _sd_share():
    """The demo classes' root-cohesion sd over their value: one share for all of them."""
    shares = {
        float(r["root_cohesion_kpa_sd"]) / float(r["root_cohesion_kpa"])
        for r in _cover_table().values()
    }
    assert len(shares) == 1
    return shares.pop()


COVER_SD_SHARE = _sd_share()


def test_depth_and_roots_follow_the_models(demo_out):
    """soil_depth_m.tif and root_cohesion_kpa.tif at sampled cells against the core's depth
    and root models, fed independently: the slope raster, the DEM's five-point Laplacian
    on ground lengths from PROJ's scale factor, the land-cover class at the cell's centre
    (a point in the polygons, shapely) and the scenario file's numbers."""
    import tomllib

    from slopescreen.root_cohesion import (
        root_cohesion_after_harvest_kpa,
        root_cohesion_at_depth_kpa,
    )
    from slopescreen.soil_depth import slope_linear_depth_m, soil_production_depth_m

    out, _ = demo_out
    cfg = tomllib.loads(SCENARIOS.read_text())
    models = {u: m for m in cfg["soil_depth"] for u in m["units"]}
    table = _soil_table()
    classes = _cover_table()
    slope, profile, *_ = _read(out / "terrain" / "slope_deg.tif")
    units, _, unit_tags, _ = _read(out / "terrain" / "soil_unit.tif")
    z, *_ = _read(REGION / "quillbrook_dem.tif")
    z = z.astype(np.float64)
    cover = gpd.read_file(REGION / cfg["land_cover"]["path"])
    t = profile["transform"]
    rng = np.random.default_rng(5)
    rows, cols = np.nonzero(units > 0)
    inner = (rows > 0) & (rows < units.shape[0] - 1) & (cols > 0) & (cols < units.shape[1] - 1)
    pick = rng.choice(np.flatnonzero(inner), 400, replace=False)
    seen = set()
    for scenario, year in (("wet_season", cfg["land_cover"]["year"]), ("wet_season_2035", 2035)):
        depth, root = _per_cell(out, scenario)
        for r, c in zip(rows[pick], cols[pick], strict=True):
            unit = unit_tags[f"unit_{units[r, c]}"]
            m = models.get(unit)
            if m is None:
                expected = table[unit]["depth_m"]
            elif m["model"] == "slope_linear":
                keys = ("gentle_slope_deg", "steep_slope_deg", "gentle_depth_m", "steep_depth_m")
                expected = slope_linear_depth_m(float(slope[r, c]), *(m[k] for k in keys))
            else:
                x, y = t * (c + 0.5, r + 0.5)
                k = float(np.sqrt(_areal_scale(profile["crs"], x, y)))  # conformal: one scale
                step = 10.0 / k  # ground metres of one 10 m map step
                ring = z[r, c - 1] + z[r, c + 1] + z[r - 1, c] + z[r + 1, c]
                lap = (ring - 4 * z[r, c]) / step**2
                expected = soil_production_depth_m(
                    lap, m["production_m_yr"], 2.0, m["creep_diffusivity_m2_yr"],
                    m["production_depth_m"], m["min_depth_m"], m["max_depth_m"],
                )  # fmt: skip
            assert depth[r, c] == pytest.approx(float(expected), rel=2e-4), (unit, r, c)
            seen.add(m["model"] if m else "table")
            x, y = t * (c + 0.5, r + 0.5)
            name = cover[cover.contains(gpd.points_from_xy([x], [y])[0])]["cover"].tolist()
            if len(name) != 1:
                continue  # on a boundary between classes: either may hold the cell
            row = classes[name[0]]
            full = float(row["root_cohesion_kpa"])
            value = full
            if row["harvest_year"]:
                value = root_cohesion_after_harvest_kpa(year - float(row["harvest_year"]), full)
            expected_root = root_cohesion_at_depth_kpa(
                value, float(depth[r, c]), float(row["rooting_depth_m"])
            )
            assert root[r, c] == pytest.approx(float(expected_root), rel=1e-6, abs=1e-6)
            seen.add(name[0])
    assert seen >= {"table", "slope_linear", "soil_production", "forest", "pasture"}


def _fs(p, beta, m):
    """The core factor of safety for one soil-table row."""
    return factor_of_safety(
        beta,
        p["depth_m"],
        p["cohesion_kpa"],
        p["friction_deg"],
        p["unit_weight_kn_m3"],
        m,
        saturated_unit_weight_kn_m3=p["saturated_unit_weight_kn_m3"],
        root_cohesion_kpa=p["root_cohesion_kpa"],
    )


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1), src.profile, src.tags(), src.tags(ns="IMAGE_STRUCTURE")


def test_every_output_exists_opens_and_shares_the_dem_grid(demo_out):
    out, _ = demo_out
    with rasterio.open(REGION / "quillbrook_dem.tif") as dem:
        crs, transform, shape = dem.crs, dem.transform, dem.shape
    rasters = [
        out / "terrain" / n
        for n in (
            "slope_deg.tif",
            "specific_catchment_area_m.tif",
            "soil_unit.tif",
            "hillshade.tif",
        )
    ]
    rasters += [out / s / n for s in NAMES for n in PER_SCENARIO + PROBABILITY]
    rasters += [out / "design_storm" / n for n in STORM]
    for path in rasters:
        with rasterio.open(path) as src:
            assert (src.crs, src.transform, src.shape) == (crs, transform, shape), path
            assert src.profile["tiled"] and src.profile["compress"] == "deflate"
            assert src.tags(ns="IMAGE_STRUCTURE").get("LAYOUT") == "COG", path
            assert src.nodata is not None
    for s in NAMES:
        zones = gpd.read_file(out / s / "low_margin_zones.gpkg")
        assert zones.crs == crs
        assert (out / s / "stability_class.png").read_bytes()[:4] == b"\x89PNG"
        assert (out / s / "summary.csv").stat().st_size > 0
    report = (out / "report.html").read_text()
    assert all(s in report for s in NAMES)
    assert "Screening level only" in report and "licensed geotechnical practice" in report
    manifest = json.loads((out / "manifest.json").read_text())
    assert set(manifest["inputs_sha256"]) >= {"dem", "soil_units", "soil_table", "scenario_file"}
    assert manifest["timings_s"] and manifest["outputs"]


def _areal_scale(crs, x, y):
    """Areal scale factor of the projection at map points: PROJ's analytic factors
    (pyproj.Proj.get_factors), an outside reference for our geodesic cell measurement."""
    from pyproj import CRS, Proj, Transformer

    crs = CRS.from_user_input(crs.to_wkt())
    lon, lat = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True).transform(x, y)
    return np.asarray(Proj(crs).get_factors(lon, lat).areal_scale)


def _ground_cell_ha(profile):
    t = profile["transform"]
    r, c = np.mgrid[0 : profile["height"], 0 : profile["width"]]
    x, y = t * (c + 0.5, r + 0.5)
    return abs(t.a * t.e) / _areal_scale(profile["crs"], x, y) / 10_000.0


def test_summary_areas_add_up_to_mapped_area(demo_out):
    out, _ = demo_out
    for s in NAMES:
        classes, profile, _, _ = _read(out / s / "stability_class.tif")
        cell_ha = _ground_cell_ha(profile)  # ground hectares: UTM scale about 0.9997 here
        mapped_ha = float(cell_ha[classes > 0].sum())
        with open(out / s / "summary.csv") as handle:
            rows = list(csv.DictReader(handle))
        rows = [r for r in rows if r["measure"] == "factor_of_safety"]
        total = sum(float(r["area_ha"]) for r in rows if r["soil_unit"] == "ALL")
        per_unit = sum(float(r["area_ha"]) for r in rows if r["soil_unit"] != "ALL")
        assert total == pytest.approx(mapped_ha, rel=1e-6)
        assert per_unit == pytest.approx(mapped_ha, rel=1e-6)
        for cls in (1, 2, 3, 4):
            class_ha = float(cell_ha[classes == cls].sum())
            row = next(r for r in rows if r["soil_unit"] == "ALL" and int(r["class"]) == cls)
            assert float(row["area_ha"]) == pytest.approx(class_ha, abs=1e-3)
        assert sum(
            float(r["percent_of_mapped_area"]) for r in rows if r["soil_unit"] == "ALL"
        ) == pytest.approx(100.0, abs=0.01)


@pytest.mark.parametrize("scenario", ["dry_season", "wet_season", "wet_season_logged"])
def test_fs_raster_matches_core_at_sampled_cells(demo_out, scenario):
    out, _ = demo_out
    fs, _, tags, _ = _read(out / scenario / "fs.tif")
    slope, *_ = _read(out / "terrain" / "slope_deg.tif")
    sca, *_ = _read(out / "terrain" / "specific_catchment_area_m.tif")
    units, _, unit_tags, _ = _read(out / "terrain" / "soil_unit.tif")
    table = _soil_table()
    cap = float(tags["fs_cap"])
    cells = _per_cell(out, scenario)
    rng = np.random.default_rng(1)
    rows, cols = np.nonzero(fs != -9999.0)
    pick = rng.choice(rows.size, 300, replace=False)
    for r, c in zip(rows[pick], cols[pick], strict=True):
        p = _cell(table, unit_tags[f"unit_{units[r, c]}"], cells, r, c)
        if scenario == "wet_season_logged" and unit_tags[f"unit_{units[r, c]}"] in ("SLP", "COL"):
            assert p["root_cohesion_kpa"] == 0.0  # the scenario's number beats land cover
        beta = float(slope[r, c])
        if scenario == "dry_season":
            m = 0.1
        else:  # steady recharge 10 mm/day, T = K z cos(beta) (Montgomery & Dietrich 1994)
            t = p["hydraulic_conductivity_m_s"] * 86400.0 * p["depth_m"] * np.cos(np.radians(beta))
            m = min(1.0, 0.010 * float(sca[r, c]) / (t * np.sin(np.radians(beta))))
            assert m == pytest.approx(
                float(steady_state_saturation(10.0, float(sca[r, c]), beta, t)), rel=1e-9
            )
        expected = _fs(p, beta, m)
        assert fs[r, c] == pytest.approx(min(expected, cap), rel=2e-6)


def test_critical_recharge_brings_fs_to_one(demo_out):
    out, _ = demo_out
    rc, _, tags, _ = _read(out / "wet_season" / "critical_recharge_mm_day.tif")
    assert tags["code_fails_when_dry"] == "-1" and tags["code_holds_when_saturated"] == "-2"
    slope, *_ = _read(out / "terrain" / "slope_deg.tif")
    sca, *_ = _read(out / "terrain" / "specific_catchment_area_m.tif")
    units, _, unit_tags, _ = _read(out / "terrain" / "soil_unit.tif")
    fs_dry, *_ = _read(out / "dry_season" / "fs.tif")
    table = _soil_table()
    cells = _per_cell(out, "wet_season")
    rows, cols = np.nonzero(rc > 0.0)
    assert rows.size > 100
    assert ((rc == -1) | (rc == -2) | (rc >= 0) | (rc == -9999)).all()
    for r, c in list(zip(rows, cols, strict=True))[:: max(1, rows.size // 200)]:
        p = _cell(table, unit_tags[f"unit_{units[r, c]}"], cells, r, c)
        beta = float(slope[r, c])
        t = p["hydraulic_conductivity_m_s"] * 86400.0 * p["depth_m"] * np.cos(np.radians(beta))
        m = float(steady_state_saturation(float(rc[r, c]), float(sca[r, c]), beta, t))
        fs = _fs(p, beta, m)
        assert fs == pytest.approx(1.0, abs=1e-4)
    # cells coded "fails even when dry" are below 1 in a nearly dry scenario too
    assert (fs_dry[rc == -1] < 1.0).all()


def test_stability_classes_colour_table_and_names(demo_out):
    out, _ = demo_out
    with rasterio.open(out / "wet_season" / "stability_class.tif") as src:
        cmap = src.colormap(1)
        tags = src.tags()
        data = src.read(1)
    assert cmap[0][3] == 0 and all(cmap[i][3] == 255 for i in (1, 2, 3, 4))
    assert tags["class_1"].startswith("failing") and "FS < 1" in tags["class_1"]
    assert set(np.unique(data)) <= {0, 1, 2, 3, 4}
    fs, *_ = _read(out / "wet_season" / "fs.tif")
    # common practice breaks 1.0 / 1.3 / 1.5
    assert (fs[data == 1] < 1.0).all() and (fs[data == 4] >= 1.5).all()
    assert ((fs[data == 2] >= 1.0) & (fs[data == 2] < 1.3)).all()


def test_zones_hold_the_two_least_stable_classes(demo_out):
    out, _ = demo_out
    zones = gpd.read_file(out / "wet_season" / "low_margin_zones.gpkg")
    assert len(zones) > 0
    assert set(zones["stability_class"]) <= {1, 2}
    assert (zones["area_m2"] >= 500.0).all()
    centre = zones.geometry.centroid
    ground_m2 = zones.geometry.area / _areal_scale(zones.crs, centre.x, centre.y)
    assert np.allclose(zones["area_m2"], ground_m2, rtol=1e-4)  # ground, not map, areas
    assert set(zones["soil_unit"]) <= set(_soil_table())
    with open(out / "wet_season" / "summary.csv") as handle:
        rows = list(csv.DictReader(handle))
    for cls in (1, 2):
        class_m2 = 10_000 * next(
            float(r["area_ha"]) for r in rows if r["soil_unit"] == "ALL" and int(r["class"]) == cls
        )
        zone_m2 = zones.loc[zones["stability_class"] == cls, "area_m2"].sum()
        assert 0.5 * class_m2 < zone_m2 <= class_m2 + 1e-6


def test_rerun_reuses_terrain_and_reproduces_outputs(demo_out, tmp_path):
    shared, lines = demo_out
    assert any("terrain: computed" in line for line in lines)
    out = tmp_path / "again"  # a copy: the session's demo run stays as it was for others
    shutil.copytree(shared, out, symlinks=True)
    first = json.loads((out / "manifest.json").read_text())
    again = []
    run(SCENARIOS, out, only=["wet_season"], progress=False, echo=again.append)
    second = json.loads((out / "manifest.json").read_text())
    assert second["terrain"]["reused"] is True
    assert any("reused from cache" in line for line in again)
    for name in (*PER_SCENARIO, "summary.csv", "low_margin_zones.gpkg"):
        key = f"wet_season/{name}"
        assert second["outputs"][key] == first["outputs"][key], key


def test_check_and_run_commands(tmp_path, capsys):
    assert main(["check", str(SCENARIOS)]) == 0
    text = capsys.readouterr().out
    assert "valid" in text and all(s in text for s in NAMES)
    assert not (tmp_path / "x").exists()
    assert (
        main(
            ["run", str(SCENARIOS), "--out", str(tmp_path / "x"), "--only", "dry_season", "--quiet"]
        )
        == 0
    )
    text = capsys.readouterr().out
    assert "Screening level only" in text
    assert (tmp_path / "x" / "dry_season" / "fs.tif").exists()
    assert not (tmp_path / "x" / "wet_season").exists()


def _taylor_probability(p, beta, sca):
    """Duncan (2000) Taylor-series method written out: FS at the means and at mean +- sd
    of each uncertain input, lognormal FS (the demo's choice, as Duncan recommends):
    beta = ln(F / sqrt(1 + V^2)) / sqrt(ln(1 + V^2)), V = sigma_F / F, P = Phi(-beta)
    (scipy's normal CDF)."""
    from scipy import stats

    spreads = {
        "cohesion_kpa": p.get("cohesion_kpa_sd"),
        "friction_deg": p.get("friction_deg_sd"),
        "depth_m": p["depth_m"] * p["depth_m_cov"] if "depth_m_cov" in p else None,
        "root_cohesion_kpa": p.get("root_cohesion_kpa_sd"),
    }
    spreads = {k: v for k, v in spreads.items() if v}

    def fs(**change):
        q = dict(p, **change)
        t = q["hydraulic_conductivity_m_s"] * 86400 * q["depth_m"] * np.cos(np.radians(beta))
        m = min(1.0, 0.010 * sca / (t * np.sin(np.radians(beta))))
        return _fs(q, beta, m)

    half = {k: (fs(**{k: p[k] + sd}) - fs(**{k: p[k] - sd})) / 2 for k, sd in spreads.items()}
    var = sum(h * h for h in half.values())
    if "cohesion_kpa" in half and "friction_deg" in half:
        var += 2 * p.get("c_phi_correlation", 0.0) * half["cohesion_kpa"] * half["friction_deg"]
    f = fs()
    v2 = var / f**2
    return stats.norm.cdf(-np.log(f / np.sqrt(1.0 + v2)) / np.sqrt(np.log(1.0 + v2)))


def test_probability_raster_matches_taylor_series_by_hand(demo_out):
    out, _ = demo_out
    pf, _, tags, _ = _read(out / "wet_season" / "probability_of_failure.tif")
    assert tags["method"] == "taylor" and tags["fs_distribution"] == "lognormal"
    assert "Duncan 2000" in tags["beta"] and "Pearson" in tags["correlation_model"]
    slope, *_ = _read(out / "terrain" / "slope_deg.tif")
    sca, *_ = _read(out / "terrain" / "specific_catchment_area_m.tif")
    units, _, unit_tags, _ = _read(out / "terrain" / "soil_unit.tif")
    table = _soil_table()
    cells = _per_cell(out, "wet_season")
    rng = np.random.default_rng(2)
    rows, cols = np.nonzero(pf != -9999.0)
    for i in rng.choice(rows.size, 150, replace=False):
        r, c = rows[i], cols[i]
        p = _cell(table, unit_tags[f"unit_{units[r, c]}"], cells, r, c)
        expected = _taylor_probability(p, float(slope[r, c]), float(sca[r, c]))
        assert pf[r, c] == pytest.approx(expected, abs=2e-6)
    with open(out / "wet_season" / "summary.csv") as handle:
        rows_pf = [r for r in csv.DictReader(handle) if r["measure"] == "probability_of_failure"]
    assert rows_pf and sum(float(r["area_ha"]) for r in rows_pf if r["soil_unit"] == "ALL") > 0
    assert "<h3>Probability of failure</h3>" in (out / "report.html").read_text()


def test_storm_rasters_match_core_at_sampled_cells(demo_out):
    from slopescreen.storm import storm_factor_of_safety

    out, _ = demo_out
    fs, *_ = _read(out / "design_storm" / "fs.tif")
    t_fail, _, tags, _ = _read(out / "design_storm" / "storm_time_to_failure_h.tif")
    assert tags["code_no_failure"].startswith("-1")
    slope, *_ = _read(out / "terrain" / "slope_deg.tif")
    units, _, unit_tags, _ = _read(out / "terrain" / "soil_unit.tif")
    table = _soil_table()
    cells = _per_cell(out, "design_storm")
    rng = np.random.default_rng(3)
    rows, cols = np.nonzero(fs != -9999.0)
    for i in rng.choice(rows.size, 100, replace=False):
        r, c = rows[i], cols[i]
        p = _cell(table, unit_tags[f"unit_{units[r, c]}"], cells, r, c)
        # fs.tif: the minimum over depth and time up to 24 h, against a dense grid of
        # 300 planes from the shallowest slip plane (0.05 m) x 97 times with the core
        # function (tolerance of storm_summary: 0.005)
        planes = 0.05 + (p["depth_m"] - 0.05) * np.arange(300) / 299.0
        dense = min(
            float(np.min(storm_factor_of_safety(
                planes,
                t,
                slope_deg=float(slope[r, c]),
                cohesion_kpa=p["cohesion_kpa"],
                friction_deg=p["friction_deg"],
                unit_weight_kn_m3=p["unit_weight_kn_m3"],
                saturated_unit_weight_kn_m3=p["saturated_unit_weight_kn_m3"],
                root_cohesion_kpa=p["root_cohesion_kpa"],
                water_table_depth_m=1.0,
                rain_mm_h=20.0,
                duration_h=12.0,
                hydraulic_conductivity_m_s=p["hydraulic_conductivity_m_s"],
                diffusivity_m2_s=p["diffusivity_m2_s"],
            )))
            for t in np.linspace(0.0, 24.0, 97)
        )  # fmt: skip
        assert fs[r, c] <= min(dense, 10.0) + 1e-5
        assert fs[r, c] == pytest.approx(min(dense, 10.0), abs=0.005)
        # consistent by construction: -1 exactly where FS holds, -2 where it fails before rain
        assert (fs[r, c] < 1.0) == (t_fail[r, c] >= 0.0 or t_fail[r, c] == -2.0)
        if fs[r, c] < 1.0 and t_fail[r, c] >= 0.0:
            assert 0.0 < t_fail[r, c] <= 24.0
    assert ((t_fail == -1) | (t_fail == -2) | (t_fail >= 0) | (t_fail == -9999)).all()
    assert tags["code_fails_before"].startswith("-2")
