"""Every numeric scenario-file key's range is stated once, in the schema: the reader refuses a
value just beyond it, names the key and prints the same numbers, and takes the bound itself."""

from __future__ import annotations

import copy
import math
import tomllib
from pathlib import Path

import pytest
from region_files import write_gauges

from slopescreen.errors import InputError
from slopescreen.maps.region.config import load_config
from slopescreen.maps.region.field_config import DEPTH_MODELS
from slopescreen.maps.region.scenario_schema import SCHEMA, Span

DEMO = Path(__file__).resolve().parents[2] / "demo_region"
PATH_KEYS = {
    "dem",
    "soil_units",
    "soil_table",
    "idf_table",
    "path",
    "hyetograph",
    "table",
    "assets",
}
# a design storm's keys: within their span, and also within the design-rainfall table
DESIGN_KEYS = {"design_return_period_yr", "design_duration_h", "block_h"}


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return repr(value)


def _toml(data: dict, prefix: str = "") -> str:
    """A TOML text of plain tables, arrays of tables and values (enough for a scenario
    file; the standard library reads TOML but does not write it)."""
    lines, nested = [], []
    for key, value in data.items():
        if isinstance(value, dict):
            nested.append(f"\n[{prefix}{key}]\n" + _toml(value, f"{prefix}{key}."))
        elif isinstance(value, list) and value and isinstance(value[0], dict):
            nested += [f"\n[[{prefix}{key}]]\n" + _toml(item, f"{prefix}{key}.") for item in value]
        else:
            lines.append(f"{key} = {_toml_value(value)}")
    return "\n".join(lines) + "\n" + "".join(nested)


def _demo() -> dict:
    data = tomllib.loads((DEMO / "quillbrook_scenarios.toml").read_text(encoding="utf-8"))
    for table in data.values():
        for item in table if isinstance(table, list) else [table]:
            if not isinstance(item, dict):
                continue
            for where in (item, item.get("storm") or {}):
                for key in PATH_KEYS & set(where):
                    where[key] = str(DEMO / where[key])
    return data


def _with(table: str, key: str, value: float) -> dict:
    """The demo's scenario file with one key set, and what that key needs to matter."""
    data = _demo()
    by_name = {s["name"]: s for s in data["scenario"]}
    if table == "scenario":
        where = by_name["wet_season" if key == "recharge_mm_day" else "dry_season"]
    elif table == "scenario.storm" and key in DESIGN_KEYS:
        where = by_name["design_storm"]["storm"]
        for constant in ("rain_mm_h", "duration_h"):
            where.pop(constant)
        where |= {"design_return_period_yr": 100.0, "design_duration_h": 12.0}
    elif table == "scenario.storm" and key == "gauge_power":  # with gauges by distance
        where = by_name["design_storm"]["storm"]
        for constant in ("rain_mm_h", "duration_h"):
            where.pop(constant)
        where |= {"gauges": "gauges.gpkg", "gauge_weighting": "inverse_distance"}
    elif table == "scenario.storm":
        where = by_name["design_storm"]["storm"]
        where["later_h"] = 10000.0  # a long duration stays within it
        if key == "initial_recharge_mm_day":  # one initial state or the other
            where.pop("initial_water_table_depth_m")
    elif table == "scenario.rainfall":
        where = by_name["rain_frequency"]["rainfall"]
    elif table == "soil_depth":  # one model of the key's own, its other keys mid-range
        model = next(m for m, keys in DEPTH_MODELS.items() if key in keys)
        where = {"model": model} | {
            k: v for k, v in MODEL_KEYS[model].items() if k not in PAIRED.get(key, ())
        }
        data["soil_depth"] = where
    elif table == "runout":  # a fresh table: what the key needs beside it
        where = {"scenarios": ["wet_season"]}
        if key == "probability_above":
            where["source"] = "probability"
        if key == "max_speed_m_s":
            where["friction_angle_deg"] = 10.0
        data["runout"] = where
    else:
        where = data.setdefault(table, {})
    if table == "reliability":
        where.pop("fs_distribution", None)
        where["method"] = "monte_carlo"
    if table == "inventory" and key in ("block_size_m", "random_state"):
        where.pop("date_field")
    where[key] = value
    return data


# a valid table of each depth model; a key probed alone drops the key it is checked against
MODEL_KEYS = {
    "slope_linear": {
        "gentle_slope_deg": 0.0,
        "steep_slope_deg": 89.9,
        "gentle_depth_m": 2.0,
        "steep_depth_m": 0.5,
    },
    "elevation_linear": {"low_depth_m": 2.0, "high_depth_m": 1.0},
    "soil_production": {
        "production_m_yr": 1e-4,
        "creep_diffusivity_m2_yr": 0.005,
        "production_depth_m": 0.5,
        "max_depth_m": 50.0,
        "min_depth_m": 0.05,
    },
}
# keys checked against another: the probe leaves the other out (or at its own end)
PAIRED = {"max_depth_m": ("min_depth_m",)}
# pairs whose bound cannot be taken alone (the other key must lie beyond it)
ORDERED = {"gentle_slope_deg", "steep_slope_deg", "low_elevation_m", "high_elevation_m"}

NUMERIC = [
    (table, key, span)
    for table, rows in SCHEMA.items()
    for key, span, _, _ in rows
    if isinstance(span, Span)
]


def test_every_numeric_key_is_probed():
    # the keys the reader checks as numbers: each has its range in the schema (51 of them)
    assert len(NUMERIC) == 51
    assert {("scenario.storm", "rain_mm_h"), ("inventory", "test_share")} <= {
        (t, k) for t, k, _ in NUMERIC
    }


@pytest.mark.parametrize(("table", "key", "span"), NUMERIC, ids=[f"{t}.{k}" for t, k, _ in NUMERIC])
def test_the_reader_checks_the_schema_range(tmp_path, table, key, span):
    path = tmp_path / "scenarios.toml"
    if key == "gauge_power":
        record = DEMO / "quillbrook_gauge_record.csv"
        write_gauges(tmp_path, "gauges.gpkg", (str(record), str(record)))
    whole = key in ("samples", "random_state", "year")  # read as integers
    beyond = span.high + max(1, abs(span.high)) * 0.5
    path.write_text(_toml(_with(table, key, int(beyond) if whole else beyond)))
    with pytest.raises(InputError) as refused:
        load_config(path)
    message = str(refused.value)
    assert key in message
    assert f"{span.high:g}" in message or str(int(span.high)) in message
    if not span.low_text:  # later_h's low bound is duration_h, checked on its own
        below = span.low - max(1, abs(span.low)) * 0.5
        path.write_text(_toml(_with(table, key, math.floor(below) if whole else below)))
        with pytest.raises(InputError, match=key):
            load_config(path)
    if key in DESIGN_KEYS or key in ORDERED:
        return  # the table or the other key decides which values are taken (tested elsewhere)
    high = int(span.high) if whole else float(span.high)
    path.write_text(_toml(_with(table, key, high)))
    load_config(path)  # the bound itself is taken


def test_toml_writer_round_trips_the_demo():
    data = _demo()
    assert tomllib.loads(_toml(copy.deepcopy(data))) == data
