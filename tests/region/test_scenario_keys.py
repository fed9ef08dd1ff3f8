"""Every key the scenario file accepts reaches the results: changing it alone changes the
outputs of a run (or, where it cannot matter for that scenario kind, the file is refused;
those refusals are rows of the bad-input table in test_trustworthy_runs.py)."""

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from region_files import PARAMS, _dem, _polygons, write_gauges, write_rain_netcdf
from shapely.geometry import box

from slopescreen.maps.region.config import SOIL_FIELDS, STORM_KEYS
from slopescreen.maps.region.engine import run

SOIL = dict(PARAMS, diffusivity_m2_s=1e-4)
KINDS = {
    "uniform": "saturation = 0.3",
    "raster": 'saturation_raster = "m.tif"',
    "recharge": "recharge_mm_day = 40.0",
    "storm": (
        "[scenario.storm]\nrain_mm_h = 20.0\nduration_h = 6.0\nlater_h = 12.0\n"
        "initial_water_table_depth_m = 1.0\nlong_term_infiltration_mm_day = 0.0"
    ),
}
KINDS["recharge_raster"] = 'recharge_mm_day = "rch.tif"'
KINDS["storm_raster"] = KINDS["storm"].replace("rain_mm_h = 20.0", 'rain_mm_h = "rain.tif"')


def _text(kind, region="", classes="", outputs="", reliability="", scenario="", soil=""):
    if "quicklook_map" not in outputs:  # figures cost a second each; one row turns them on
        outputs = f"quicklook_map = false\n{outputs}"
    wet = KINDS[kind]
    head, _, storm = wet.partition("[scenario.storm]")
    storm = f"[scenario.storm]{storm}" if storm else ""
    return (
        f'[region]\nname = "keys"\ndem = "dem.tif"\nsoil_units = "soils.geojson"\n{region}\n'
        f"[classes]\nmin_zone_area_m2 = 0.0\n{classes}\n[outputs]\n{outputs}\n"
        f"[reliability]\n{reliability}\n"
        f'[[scenario]]\nname = "s"\ndescription = "base"\n{head}\n{scenario}\n{storm}\n'
        + (f"[scenario.soil.A]\n{soil}\n" if soil else "")
    )


def _outputs(out):
    return {
        str(p.relative_to(out)): p.read_bytes()
        for p in sorted(out.rglob("*"))
        if p.is_file()
        and p.name != "manifest.json"
        and not any(part.startswith(".") for part in p.relative_to(out).parts)
    }


@pytest.fixture(scope="module")
def region(tmp_path_factory):
    folder = tmp_path_factory.mktemp("keys")
    _dem(folder / "dem.tif")
    _polygons(folder / "soils.geojson", diffusivity_m2_s=1e-4, cohesion_kpa_sd=0.5)
    frame = gpd.read_file(folder / "soils.geojson")
    frame["other"] = ["B", "A"]  # the units swapped, for soil_unit_field
    frame["diffusivity_m2_s"] = 1e-4
    frame.to_file(folder / "soils.geojson", driver="GeoJSON")
    frame.to_file(folder / "soils.gpkg", layer="first", driver="GPKG")
    frame.assign(cohesion_kpa=[4.0, 1.0]).to_file(folder / "soils.gpkg", layer="second")
    with rasterio.open(folder / "dem.tif") as src:
        profile = src.profile
    for name, value in (("m.tif", 0.4), ("m2.tif", 0.7)):
        with rasterio.open(folder / name, "w", **profile) as dst:
            dst.write(np.full((1, 40, 50), value, np.float32))
    coarse = profile | {"width": 30, "height": 30}  # 25 m cells over the DEM and beyond
    coarse["transform"] = rasterio.transform.from_origin(499900.0, 5000500.0, 25.0, 25.0)
    ramp = np.linspace(0.5, 1.5, 30)[None, None, :].repeat(30, axis=1)
    for name, value in (("rch.tif", 40.0), ("rch2.tif", 5.0), ("rain.tif", 20.0)):
        with rasterio.open(folder / name, "w", **coarse) as dst:
            dst.write((value * ramp).astype(np.float32))
    with rasterio.open(folder / "rain2.tif", "w", **coarse) as dst:
        dst.write((50.0 * ramp[:, ::-1]).astype(np.float32))
    (folder / "table.csv").write_text(
        "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,depth_m,hydraulic_conductivity_m_s,"
        "diffusivity_m2_s,cohesion_kpa_sd\nA,3,31,18,1.5,1e-5,1e-4,0.5\nB,5,30,18,1.5,1e-5,"
        "1e-4,0.5\n"
    )
    return folder


def _run(region, tmp_path, name, text):
    toml = region / f"{name}.toml"
    toml.write_text(text)
    out = tmp_path / name
    run(toml, out, progress=False, echo=lambda s: None)
    return _outputs(out)


# (section, key, changed line): every key of [region], [classes], [outputs], [reliability]
FILE_KEYS = [
    ("region", "name", 'name = "other"'),
    ("region", "dem_elevation_unit", 'dem_elevation_unit = "ft"'),
    ("region", "soil_unit_field", 'soil_unit_field = "other"'),
    ("region", "soil_table", 'soil_table = "table.csv"'),
    ("classes", "fs_breaks", "fs_breaks = [1.0, 1.2, 1.4]"),
    ("classes", "min_zone_area_m2", "min_zone_area_m2 = 5000.0"),
    ("outputs", "fs_cap", "fs_cap = 1.6"),
    ("outputs", "zones", "zones = false"),
    ("outputs", "quicklook_map", "quicklook_map = true"),
    ("outputs", "report", "report = false"),
    ("reliability", "method", 'method = "monte_carlo"\nsamples = 50'),
    ("reliability", "fs_distribution", 'fs_distribution = "normal"'),
]


@pytest.mark.parametrize(("section", "key", "line"), FILE_KEYS, ids=[k for _, k, _ in FILE_KEYS])
def test_every_file_key_changes_the_outputs(section, key, line, region, tmp_path):
    base_text = _text("uniform")
    base = _run(region, tmp_path, "base", base_text)
    if key in ("name", "min_zone_area_m2"):  # keys the base sets: replaced
        old = next(x for x in base_text.splitlines() if x.startswith(f"{key} ="))
        changed = base_text.replace(old, line, 1)
    elif key == "zones":  # without zones, their minimum size is refused
        changed = _text("uniform", **{section: line}).replace("min_zone_area_m2 = 0.0\n", "")
    else:
        changed = _text("uniform", **{section: line})
    assert _run(region, tmp_path, key, changed) != base


def test_soil_layer_and_monte_carlo_keys_change_the_outputs(region, tmp_path):
    layered = _text("uniform").replace('"soils.geojson"', '"soils.gpkg"')
    first = _run(
        region,
        tmp_path,
        "first",
        layered.replace("\n\n[classes]", '\nsoil_layer = "first"\n\n[classes]', 1),
    )
    second = _run(
        region,
        tmp_path,
        "second",
        layered.replace("\n\n[classes]", '\nsoil_layer = "second"\n\n[classes]', 1),
    )
    assert first != second
    mc = 'method = "monte_carlo"\nsamples = 50\n'
    a = _run(region, tmp_path, "mc_a", _text("uniform", reliability=mc + "random_state = 1"))
    b = _run(region, tmp_path, "mc_b", _text("uniform", reliability=mc + "random_state = 2"))
    c = _run(region, tmp_path, "mc_c", _text("uniform", reliability=mc.replace("50", "80")))
    assert a != b and a != c


SCENARIO_KEYS = {
    "name": 'name = "t"',
    "description": 'description = "another"',
    "seismic_coefficient": "seismic_coefficient = 0.1",
}
WETNESS_CHANGES = {
    "uniform": ("saturation = 0.3", "saturation = 0.6"),
    "raster": ('saturation_raster = "m.tif"', 'saturation_raster = "m2.tif"'),
    "recharge": ("recharge_mm_day = 40.0", "recharge_mm_day = 5.0"),
    "recharge_raster": ('recharge_mm_day = "rch.tif"', 'recharge_mm_day = "rch2.tif"'),
}
STORM_CHANGES = {
    "rain_mm_h": "rain_mm_h = 50.0",
    "duration_h": "duration_h = 9.0",
    "later_h": "later_h = 30.0",
    "initial_water_table_depth_m": "initial_water_table_depth_m = 0.4",
    "long_term_infiltration_mm_day": "long_term_infiltration_mm_day = 0.5",
}
SOIL_CHANGES = {
    "cohesion_kpa": 4.0,
    "friction_deg": 35.0,
    "unit_weight_kn_m3": 20.0,
    "depth_m": 0.8,
    "saturated_unit_weight_kn_m3": 21.0,
    "root_cohesion_kpa": 2.0,
    "hydraulic_conductivity_m_s": 3e-6,
    "transmissivity_m2_day": 0.05,
    "diffusivity_m2_s": 2e-5,
    "moisture_capacity_per_m": 0.5,
}


HISTORY_CHANGES = {  # rain in steps: a gauge's record or a design storm from the table
    "hyetograph": 'hyetograph = "gauge2.csv"',
    "design_return_period_yr": "design_return_period_yr = 100.0",
    "design_duration_h": "design_duration_h = 12.0",
    "block_h": "block_h = 2.0",
    "pattern": 'pattern = "end"',
}


GAUGE_CHANGES = {  # several gauges (base: inverse distance, power 2)
    "gauges": 'gauges = "gauges_swapped.gpkg"',
    "gauge_weighting": 'gauge_weighting = "nearest"',  # and no power
    "gauge_power": "gauge_power = 6.0",
}


SERIES_CHANGES = {  # rain on a grid (base: a NetCDF variable named; a folder in mm/h)
    "rain_series": 'rain_series = "series2.nc"',
    "rain_variable": 'rain_variable = "rain_b"',
    "rain_series_unit": 'rain_series_unit = "mm"',
    "rain_series_resampling": 'rain_series_resampling = "nearest"',
}


def test_the_key_lists_are_complete():
    assert set(SOIL_CHANGES) == set(SOIL_FIELDS)
    # the initial recharge: test_a_steady_recharge_sets_the_water_table_before_the_storm
    storm_rows = set(STORM_CHANGES) | set(HISTORY_CHANGES) | {"initial_recharge_mm_day"}
    storm_rows |= set(GAUGE_CHANGES) | set(SERIES_CHANGES)
    assert storm_rows >= set(STORM_KEYS)
    assert storm_rows == allowed_storm_keys()


def allowed_storm_keys():
    from slopescreen.maps.region.scenario_schema import allowed

    return allowed("scenario.storm")


def _fs(out):
    return rasterio.open(out / "s" / "fs.tif").read(1)


def test_a_one_step_hyetograph_is_the_constant_storm(region, tmp_path):
    # the same rain as one step of a gauge's record: the same factor of safety, value for
    # value (the history of one step is the constant storm)
    (region / "gauge1.csv").write_text("end_h,rain_mm_h\n6,20\n")
    constant = _text("storm")
    gauge = constant.replace("rain_mm_h = 20.0\nduration_h = 6.0", 'hyetograph = "gauge1.csv"')
    _run(region, tmp_path, "constant", constant)
    _run(region, tmp_path, "gauge1", gauge)
    for name in ("fs.tif", "storm_time_to_failure_h.tif", "storm_failure_depth_m.tif"):
        a, b = (
            rasterio.open(tmp_path / run / "s" / name).read(1) for run in ("constant", "gauge1")
        )
        np.testing.assert_array_equal(a, b)


def test_a_steady_recharge_sets_the_water_table_before_the_storm(region, tmp_path):
    # no recharge: the water table at the soil base (1.5 m in both units), the same FS as
    # that depth given as one number; 20 mm/day raises it where the catchment is wet
    base = _text("storm").replace("initial_water_table_depth_m = 1.0", "{}")
    for name, line in (
        ("at_base", "initial_water_table_depth_m = 1.5"),
        ("recharge_0", "initial_recharge_mm_day = 0.0"),
        ("recharge_20", "initial_recharge_mm_day = 20.0"),
    ):
        _run(region, tmp_path, name, base.replace("{}", line))
    np.testing.assert_array_equal(_fs(tmp_path / "at_base"), _fs(tmp_path / "recharge_0"))
    wetter, dry = _fs(tmp_path / "recharge_20"), _fs(tmp_path / "recharge_0")
    mapped = dry > -9999.0
    assert np.all(wetter[mapped] <= dry[mapped]) and np.any(wetter[mapped] < dry[mapped])


def test_every_rain_history_key_changes_the_factor_of_safety(region, tmp_path):
    _write_idf(region)
    (region / "gauge.csv").write_text("end_h,rain_mm\n2,10\n4,60\n6,10\n")
    (region / "gauge2.csv").write_text("end_h,rain_mm\n2,10\n4,10\n6,60\n")  # end-loaded
    storm = "rain_mm_h = 20.0\nduration_h = 6.0\nlater_h = 12.0"
    gauge_text = _text("storm").replace(storm, 'hyetograph = "gauge.csv"\nlater_h = 12.0')
    design = (
        "design_return_period_yr = 10.0\ndesign_duration_h = 6.0\nblock_h = 1.0\n"
        'pattern = "centre"\nlater_h = 24.0'
    )
    table = '\n[rainfall_frequency]\nidf_table = "idf.csv"\n'
    design_text = _text("storm").replace(storm, design) + table
    _run(region, tmp_path, "gauge", gauge_text)
    _run(region, tmp_path, "design", design_text)
    unchanged = []
    for key, line in HISTORY_CHANGES.items():
        base_name, text = ("gauge", gauge_text) if key == "hyetograph" else ("design", design_text)
        old = next(x for x in text.splitlines() if x.startswith(key))
        _run(region, tmp_path, f"h_{key}", text.replace(old, line))
        if np.array_equal(_fs(tmp_path / f"h_{key}"), _fs(tmp_path / base_name)):
            unchanged.append(key)
    assert unchanged == []


def test_every_gauge_key_changes_the_factor_of_safety(region, tmp_path):
    (region / "wet.csv").write_text("end_h,rain_mm\n2,10\n4,60\n6,10\n")
    (region / "dry.csv").write_text("end_h,rain_mm\n2,0\n4,5\n6,0\n")
    write_gauges(region, "gauges.gpkg", ("wet.csv", "dry.csv"))
    write_gauges(region, "gauges_swapped.gpkg", ("dry.csv", "wet.csv"))
    storm = "rain_mm_h = 20.0\nduration_h = 6.0\nlater_h = 12.0"
    lines = 'gauges = "gauges.gpkg"\ngauge_weighting = "inverse_distance"\ngauge_power = 2.0'
    base = _text("storm").replace(storm, f"{lines}\nlater_h = 12.0")
    _run(region, tmp_path, "gauges", base)
    unchanged = []
    for key, line in GAUGE_CHANGES.items():
        old = next(x for x in base.splitlines() if x.startswith(f"{key} "))
        text = base.replace(old, line)
        if key == "gauge_weighting":
            text = text.replace("gauge_power = 2.0\n", "")
        _run(region, tmp_path, f"g_{key}", text)
        if np.array_equal(_fs(tmp_path / f"g_{key}"), _fs(tmp_path / "gauges")):
            unchanged.append(key)
    assert unchanged == []


def test_every_rain_series_key_changes_the_factor_of_safety(region, tmp_path):
    ramp = 5.0 + np.linspace(0.0, 20.0, 16)[None, :] * np.ones((14, 1))  # west to east
    write_rain_netcdf(region / "series.nc", (ramp, 30.0, 10.0), more={"rain_b": (30, 5, 0)})
    write_rain_netcdf(region / "series2.nc", (5.0, 10.0, 30.0))
    folder = region / "radar"  # two-hour steps: "mm" halves the intensity of "mm_h"
    folder.mkdir(exist_ok=True)
    profile = dict(driver="GTiff", width=16, height=14, count=1, dtype="float32",
                   crs="EPSG:32633", transform=rasterio.transform.from_origin(
                       499850.0, 5000550.0, 50.0, 50.0))  # fmt: skip
    for hour, rain in ((2, 20.0), (4, 40.0), (6, 10.0)):
        with rasterio.open(folder / f"r_2026-11-30T{hour:02d}00.tif", "w", **profile) as dst:
            dst.write(np.full((1, 14, 16), rain, np.float32))
    storm = "rain_mm_h = 20.0\nduration_h = 6.0\nlater_h = 12.0"
    bases = {
        "nc": 'rain_series = "series.nc"\nrain_variable = "rain"\n'
        'rain_series_resampling = "bilinear"',
        "folder": 'rain_series = "radar"\nrain_series_unit = "mm_h"',
    }
    texts = {k: _text("storm").replace(storm, f"{v}\nlater_h = 12.0") for k, v in bases.items()}
    for name, text in texts.items():
        _run(region, tmp_path, f"series_{name}", text)
    unchanged = []
    for key, line in SERIES_CHANGES.items():
        base = "folder" if key == "rain_series_unit" else "nc"
        old = next(x for x in texts[base].splitlines() if x.startswith(f"{key} "))
        _run(region, tmp_path, f"r_{key}", texts[base].replace(old, line))
        if np.array_equal(_fs(tmp_path / f"r_{key}"), _fs(tmp_path / f"series_{base}")):
            unchanged.append(key)
    assert unchanged == []


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_every_scenario_key_changes_the_outputs(kind, region, tmp_path):
    base = _run(region, tmp_path, "base", _text(kind))
    base_text = _text(kind)
    changes = {"seismic_coefficient": _text(kind, scenario=SCENARIO_KEYS["seismic_coefficient"])}
    for key, old in (("name", 'name = "s"'), ("description", 'description = "base"')):
        changes[key] = base_text.replace(old, SCENARIO_KEYS[key], 1)  # set by the base
    if kind in WETNESS_CHANGES:
        old, new = WETNESS_CHANGES[kind]
        changes["wetness"] = _text(kind).replace(old, new)
    else:
        for key, line in STORM_CHANGES.items():
            if kind == "storm_raster" and key == "rain_mm_h":
                line = 'rain_mm_h = "rain2.tif"'
            changes[key] = _text(kind).replace(
                next(x for x in KINDS[kind].splitlines() if x.startswith(key)), line
            )
    soil_changes = SOIL_CHANGES
    if kind.endswith("_raster"):  # the other keys act as with a number (the kinds above)
        changes = {k: v for k, v in changes.items() if k in ("wetness", "rain_mm_h")}
        soil_changes = {}
    for field, value in soil_changes.items():
        if field in ("diffusivity_m2_s", "moisture_capacity_per_m") and "storm" not in kind:
            continue  # refused outside storms (test_trustworthy_runs: bad-input table)
        if field == "transmissivity_m2_day" and "storm" in kind:
            continue  # it replaces the conductivity a storm needs: refused (test below)
        changes[f"soil.{field}"] = _text(kind, soil=f"{field} = {value}")
    unchanged = [k for k, text in changes.items() if _run(region, tmp_path, k, text) == base]
    assert unchanged == [], f"{kind}: keys that changed nothing: {unchanged}"


def test_transmissivity_alone_is_refused_for_a_storm(region, tmp_path):
    from slopescreen.errors import InputError

    text = _text("storm", soil="transmissivity_m2_day = 0.05")
    with pytest.raises(InputError, match="storm scenario 's' needs hydraulic_conductivity_m_s"):
        _run(region, tmp_path, "refused", text)


INVENTORY_CHANGES = {
    "path": 'path = "slides2.geojson"',
    "key": 'key = "name"',
    "date_field": 'date_field = "year"',
    "part": 'part = "whole"',
    "block_size_m": "block_size_m = 50.0",
    "test_share": "test_share = 0.6",
    "random_state": "random_state = 3",
}


def test_every_inventory_key_changes_the_outputs(region, tmp_path):
    from slopescreen.maps.region.scenario_schema import allowed

    assert set(INVENTORY_CHANGES) == allowed("inventory")
    rng = np.random.default_rng(4)
    for name, n in (("slides.geojson", 40), ("slides2.geojson", 30)):
        x = 500000.0 + 10.0 * rng.integers(0, 46, n)
        y = 5000000.0 + 10.0 * rng.integers(4, 40, n)
        frame = gpd.GeoDataFrame(
            {"name": [f"S{i // 2}" for i in range(n)], "year": 2000 + np.arange(n) % 9},
            geometry=[box(a, b, a + 30.0, b + 40.0) for a, b in zip(x, y, strict=True)],
            crs="EPSG:32633",
        )
        frame.to_file(region / name, driver="GeoJSON")
    base_text = _text("recharge") + '\n[inventory]\npath = "slides.geojson"\n'
    base = _run(region, tmp_path, "inv_base", base_text)
    assert "inventory_scores.csv" in base
    unchanged = []
    for key, line in INVENTORY_CHANGES.items():
        text = (
            base_text.replace('path = "slides.geojson"', line)
            if key == "path"
            else base_text + line + "\n"
        )
        if _run(region, tmp_path, f"inv_{key}", text) == base:
            unchanged.append(key)
    assert unchanged == []


RAINFALL = (
    '[[scenario]]\nname = "r"\n[scenario.rainfall]\ninitial_water_table_depth_m = 0.8\n{extra}\n'
    '[rainfall_frequency]\nidf_table = "idf.csv"\n{table}\n'
)
RAINFALL_CHANGES = {
    "idf_table": ('idf_table = "idf.csv"', 'idf_table = "idf2.csv"'),
    "aep_breaks": ("", "aep_breaks = [0.2, 0.05]"),
    "after_h": ("", "after_h = 2.0"),
    "initial_water_table_depth_m": (
        "initial_water_table_depth_m = 0.8",
        "initial_water_table_depth_m = 0.3",
    ),
    "long_term_infiltration_mm_day": ("", "long_term_infiltration_mm_day = 5.0"),
    "uplift": ("", "uplift = 1.5"),
    "series": ("", 'series = "partial_duration"'),
}


def _write_idf(region):
    """Two invented power-law design-rainfall tables (idf.csv, idf2.csv) in the region."""
    from slopescreen.rainfall_frequency import idf_formula

    for name, a in (("idf.csv", 18.0), ("idf2.csv", 30.0)):
        durations, periods = (1.0, 6.0, 24.0), (2.0, 10.0, 100.0)
        grid = idf_formula(durations, periods, a, 0.2, 0.3, 0.75)
        rows = [f"{d:g},{t:g},{grid[i, j]:.4f}" for i, d in enumerate(durations)
                for j, t in enumerate(periods)]  # fmt: skip
        (region / name).write_text("duration_h,return_period_yr,intensity_mm_h\n" + "\n".join(rows))


def test_every_rainfall_key_changes_the_outputs(region, tmp_path):
    from slopescreen.maps.region.scenario_schema import allowed

    assert set(RAINFALL_CHANGES) == allowed("rainfall_frequency") | allowed("scenario.rainfall")
    _write_idf(region)
    head = _text("uniform").split("[[scenario]]")[0]
    base_text = head + RAINFALL.format(extra="", table="")
    base = _run(region, tmp_path, "rain_base", base_text)
    assert "r/hazard_class.tif" in base
    unchanged = []
    for key, (old, new) in RAINFALL_CHANGES.items():
        if old:
            text = base_text.replace(old, new)
        elif key in allowed("scenario.rainfall"):
            text = head + RAINFALL.format(extra=new, table="")
        else:
            text = head + RAINFALL.format(extra="", table=new)
        if _run(region, tmp_path, f"rain_{key}", text) == base:
            unchanged.append(key)
    assert unchanged == []


def test_the_shallowest_slip_plane_changes_storms_and_rainfall(region, tmp_path):
    # [slip_planes] min_slip_depth_m: storms and critical intensities look no shallower
    from slopescreen.maps.region.scenario_schema import allowed

    assert allowed("slip_planes") == {"min_slip_depth_m"}
    soil = "cohesion_kpa = 0.0\ndepth_m = 2.0"  # cohesionless: the minimum is near the top
    for kind in ("storm",):
        base_text = _text(kind, soil=soil)
        base = _run(region, tmp_path, "slip_base", base_text)
        deeper = base_text + "\n[slip_planes]\nmin_slip_depth_m = 0.5\n"
        assert _run(region, tmp_path, "slip_deeper", deeper) != base
        # the factor of safety itself, not only the words that state the key
        values = [
            rasterio.open(tmp_path / name / "s" / "fs.tif").read(1)
            for name in ("slip_base", "slip_deeper")
        ]
        assert (values[1] > values[0] + 1e-3).any()  # deeper planes only: FS rises
    _write_idf(region)
    head = _text("uniform", soil=soil).split("[[scenario]]")[0]
    tail = "[scenario.soil.A]\n" + soil + "\n"
    rain = head + RAINFALL.format(extra="", table="") + tail
    base = _run(region, tmp_path, "slip_rain_base", rain)
    deeper = rain + "\n[slip_planes]\nmin_slip_depth_m = 0.5\n"
    assert _run(region, tmp_path, "slip_rain_deeper", deeper) != base


# per-cell soil fields: each [soil_depth] and [land_cover] key alone changes the outputs
# (the test DEM is planar on each side of a ridge: slopes near 32 degrees, the ridge
# column convex, so soil production has one column to set and the rest is planar ground)
DEPTH_BASE = {
    "slope_linear": 'model = "slope_linear"\ngentle_slope_deg = 10.0\nsteep_slope_deg = 40.0\n'
    "gentle_depth_m = 2.0\nsteep_depth_m = 0.8\n",
    "elevation_linear": 'model = "elevation_linear"\nlow_depth_m = 2.0\nhigh_depth_m = 0.8\n'
    "low_elevation_m = 100.0\nhigh_elevation_m = 300.0\n",
    "soil_production": 'model = "soil_production"\nproduction_m_yr = 3e-4\ndensity_ratio = 2.0\n'
    "creep_diffusivity_m2_yr = 0.001\nproduction_depth_m = 0.5\nmax_depth_m = 2.0\n"
    "min_depth_m = 0.1\n",
    "raster": 'model = "raster"\npath = "depth.tif"\nresampling = "bilinear"\n',
}
DEPTH_CHANGES = {  # key: (model, changed line)
    "model": ("slope_linear", None),  # to elevation_linear
    "units": ("slope_linear", 'units = ["A"]'),
    "gentle_slope_deg": ("slope_linear", "gentle_slope_deg = 20.0"),
    "steep_slope_deg": ("slope_linear", "steep_slope_deg = 50.0"),
    "gentle_depth_m": ("slope_linear", "gentle_depth_m = 2.5"),
    "steep_depth_m": ("slope_linear", "steep_depth_m = 0.6"),
    "low_depth_m": ("elevation_linear", "low_depth_m = 2.4"),
    "high_depth_m": ("elevation_linear", "high_depth_m = 0.5"),
    "low_elevation_m": ("elevation_linear", "low_elevation_m = 50.0"),
    "high_elevation_m": ("elevation_linear", "high_elevation_m = 400.0"),
    "production_m_yr": ("soil_production", "production_m_yr = 6e-4"),
    "density_ratio": ("soil_production", "density_ratio = 1.5"),
    "creep_diffusivity_m2_yr": ("soil_production", "creep_diffusivity_m2_yr = 0.0005"),
    "production_depth_m": ("soil_production", "production_depth_m = 0.6"),
    "max_depth_m": ("soil_production", "max_depth_m = 1.8"),
    "min_depth_m": ("soil_production", "min_depth_m = 0.9"),
    "path": ("raster", 'path = "depth2.tif"'),
    "resampling": ("raster", 'resampling = "nearest"'),
}
COVER_BASE = 'path = "cover.tif"\ntable = "cover.csv"\nyear = 2025\nroot_profile = "step"\n'
COVER_POLYGONS = (
    'path = "cover.gpkg"\nclass_field = "kind"\nlayer = "first"\ntable = "cover2.csv"\n'
)
COVER_CHANGES = {  # key: (base, changed line)
    "path": (COVER_BASE, 'path = "cover2.tif"'),
    "table": (COVER_BASE, 'table = "cover3.csv"'),
    "year": (COVER_BASE, "year = 2033"),
    "root_profile": (COVER_BASE, 'root_profile = "exponential"'),
    "class_field": (COVER_POLYGONS, 'class_field = "swapped"'),
    "layer": (COVER_POLYGONS, 'layer = "second"'),
}


def _replaced(base, line):
    key = line.split("=")[0].strip()
    lines = [x for x in base.splitlines() if not x.startswith(f"{key} =")]
    return "\n".join([*lines, line]) + "\n"


@pytest.fixture(scope="module")
def field_region(region):
    """Rasters and land cover for the per-cell keys, beside the region's files."""
    from region_files import write_raster

    grid = rasterio.transform.from_origin(500000.0, 5000400.0, 10.0, 10.0)
    coarse = rasterio.transform.from_origin(499990.0, 5000410.0, 25.0, 25.0)
    ramp = np.linspace(0.8, 2.2, 22)[None, :].repeat(18, axis=0)
    write_raster(region / "depth.tif", ramp, transform=coarse)
    write_raster(region / "depth2.tif", ramp[:, ::-1], transform=coarse)
    classes = np.ones((40, 50))
    classes[:, 30:] = 2.0
    write_raster(region / "cover.tif", classes, transform=grid)
    write_raster(region / "cover2.tif", 3.0 - classes, transform=grid)
    head = "class,root_cohesion_kpa,rooting_depth_m,harvest_year\n"
    (region / "cover.csv").write_text(head + "1,6.0,3.0,2020\n2,1.0,3.0,\n")
    (region / "cover3.csv").write_text(head + "1,3.0,3.0,2020\n2,1.0,3.0,\n")
    (region / "cover2.csv").write_text(
        "class,root_cohesion_kpa,rooting_depth_m\nwood,6.0,3.0\nmeadow,1.0,3.0\n"
    )
    west = box(500000.0, 5000000.0, 500300.0, 5000400.0)
    east = box(500300.0, 5000000.0, 500500.0, 5000400.0)
    frame = gpd.GeoDataFrame(
        {"kind": ["wood", "meadow"], "swapped": ["meadow", "wood"]},
        geometry=[west, east], crs="EPSG:32633",
    )  # fmt: skip
    frame.to_file(region / "cover.gpkg", layer="first", driver="GPKG")
    frame.assign(kind=["meadow", "meadow"]).to_file(region / "cover.gpkg", layer="second")
    return region


def test_the_per_cell_key_lists_are_complete():
    from slopescreen.maps.region.scenario_schema import allowed

    assert set(DEPTH_CHANGES) == allowed("soil_depth")
    assert set(COVER_CHANGES) == allowed("land_cover")


@pytest.mark.parametrize("key", sorted(DEPTH_CHANGES))
def test_every_soil_depth_key_changes_the_outputs(key, field_region, tmp_path):
    model, line = DEPTH_CHANGES[key]
    base = DEPTH_BASE[model]
    changed = DEPTH_BASE["elevation_linear"] if line is None else _replaced(base, line)
    a = _run(field_region, tmp_path, "depth_a", _text("uniform") + f"[soil_depth]\n{base}")
    b = _run(field_region, tmp_path, "depth_b", _text("uniform") + f"[soil_depth]\n{changed}")
    assert a != b


@pytest.mark.parametrize("key", sorted(COVER_CHANGES))
def test_every_land_cover_key_changes_the_outputs(key, field_region, tmp_path):
    base, line = COVER_CHANGES[key]
    a = _run(field_region, tmp_path, "cover_a", _text("uniform") + f"[land_cover]\n{base}")
    changed = _replaced(base, line)
    b = _run(field_region, tmp_path, "cover_b", _text("uniform") + f"[land_cover]\n{changed}")
    assert a != b


# [runout]: each key alone changes the outputs (base: FS below 1.2 on the planar sides)
RUNOUT_BASE = '[runout]\nscenarios = ["s"]\n'
FS_SOURCES = "fs_below = 1.2"
RUNOUT_CHANGES = {  # key: (base lines, changed lines), with FS_SOURCES unless probability
    "scenarios": (None, None),  # two scenarios: run-out for one or the other
    "source": ("", 'source = "probability"\nprobability_above = 0.01'),
    "fs_below": ("fs_below = 1.2", "fs_below = 1.1"),
    "probability_above": (
        'source = "probability"\nprobability_above = 0.01',
        'source = "probability"\nprobability_above = 0.4',
    ),
    "min_source_area_m2": ("", "min_source_area_m2 = 1e6"),
    "travel_angle_deg": ("", "travel_angle_deg = 35.0"),
    "regression_a": ("", "regression_a = -0.5"),
    "regression_b": ("", "regression_b = -0.5"),
    "angle_table": ("", 'angle_table = "angles.csv"'),
    "exponent": ("", "exponent = 1.0"),
    "friction_angle_deg": ("", "friction_angle_deg = 25.0"),
    "max_speed_m_s": ("friction_angle_deg = 5.0", "friction_angle_deg = 5.0\nmax_speed_m_s = 1.5"),
    "min_share": ("", "min_share = 0.05"),
    "assets": ('assets = "assets2.gpkg"', 'assets = "assets3.gpkg"'),
    "asset_layer": ('assets = "assets.gpkg"\nasset_layer = "one"',
                    'assets = "assets.gpkg"\nasset_layer = "two"'),
    "asset_field": ('assets = "assets2.gpkg"\nasset_field = "name"',
                    'assets = "assets2.gpkg"\nasset_field = "other"'),
}  # fmt: skip


@pytest.fixture(scope="module")
def runout_region(region):
    from shapely.geometry import LineString

    line = LineString([(500010.0, 5000200.0), (500490.0, 5000210.0)])
    short = LineString([(500240.0, 5000390.0), (500260.0, 5000010.0)])
    frame = gpd.GeoDataFrame(
        {"name": ["a", "b"], "other": ["x", "y"]}, geometry=[line, short], crs="EPSG:32633"
    )
    frame.to_file(region / "assets.gpkg", layer="one", driver="GPKG")
    frame.iloc[[1]].to_file(region / "assets.gpkg", layer="two", driver="GPKG")
    frame.iloc[[1]].to_file(region / "assets2.gpkg", driver="GPKG")
    frame.iloc[[0]].to_file(region / "assets3.gpkg", driver="GPKG")
    (region / "angles.csv").write_text("max_volume_m3,travel_angle_deg\n1e12,40.0\n")
    return region


def test_the_runout_key_list_is_complete():
    from slopescreen.maps.region.scenario_schema import allowed

    assert set(RUNOUT_CHANGES) == allowed("runout")


@pytest.mark.parametrize("key", sorted(RUNOUT_CHANGES))
def test_every_runout_key_changes_the_outputs(key, runout_region, tmp_path):
    base, changed = RUNOUT_CHANGES[key]
    text = _text("uniform").replace("saturation = 0.3", "saturation = 0.8")
    if key == "scenarios":
        text += '[[scenario]]\nname = "t"\nsaturation = 0.2\n'
        a_text = text + RUNOUT_BASE + FS_SOURCES + "\n"
        b_text = text + RUNOUT_BASE.replace('["s"]', '["t"]') + FS_SOURCES + "\n"
    else:
        fs = {line: "" if "fs_below" in line or "probability" in line else FS_SOURCES + "\n"
              for line in (base, changed)}  # fmt: skip
        a_text = text + RUNOUT_BASE + fs[base] + base + "\n"
        b_text = text + RUNOUT_BASE + fs[changed] + changed + "\n"
    a = _run(runout_region, tmp_path, "runout_a", a_text)
    b = _run(runout_region, tmp_path, "runout_b", b_text)
    assert a != b
