"""``backcalc`` on a finished run: per landslide cell, the value of one parameter that
brings FS to 1 under a scenario's wetness (:mod:`slopescreen.back_analysis`), summarised
per soil unit with a histogram; written under OUT/validation/."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from slopescreen.back_analysis import PARAMETERS, summary_by_group, value_at_failure
from slopescreen.errors import InputError
from slopescreen.maps.inventory.finished_run import FinishedRun
from slopescreen.maps.inventory.reading import Inventory
from slopescreen.maps.io.rasters import read_at_cells
from slopescreen.maps.io.safe_writes import real_folder
from slopescreen.maps.outputs.output_names import (
    CELLS_SUFFIX,
    SATURATION,
    SCA,
    SLOPE_DEG,
    SOIL_UNIT,
    TERRAIN_FOLDER,
    VALIDATION_FOLDER,
)
from slopescreen.maps.outputs.summary import write_summary
from slopescreen.maps.outputs.validation_plots import histogram_figure
from slopescreen.maps.region.cell_fields import soil_at
from slopescreen.maps.region.config import Scenario
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import CORE_FIELDS

NO_SOLUTION = {
    "cohesion_kpa": "the slope holds with c' = 0, or the ground is flat",
    "root_cohesion_kpa": "the slope holds with no root cohesion, or the ground is flat",
    "friction_deg": "no angle in (0, 90) degrees gives FS = 1",
    "depth_m": "no depth within the soil-depth range (from the shallowest slip plane to "
    "50 m) gives FS = 1",
    "saturation": "fails even when dry, or holds even when saturated",
    "recharge_mm_day": "fails even when dry, or holds even when saturated",
}


def steady_only(sc: Scenario, what: str) -> None:
    if sc.storm is not None or sc.rainfall is not None:
        kind = "a storm" if sc.storm is not None else "a rainfall-frequency scenario"
        raise InputError(
            f"--scenario {sc.name}: {what} needs a steady wetness (saturation, "
            f"saturation_raster or recharge_mm_day); this scenario is {kind}"
        )


def cell_inputs(done: FinishedRun, sc: Scenario, rows: np.ndarray, cols: np.ndarray) -> dict:
    """Slope, SCA, saturation and soil parameters of the scenario at the cells; ``ok``
    marks cells with every value."""
    terrain = {
        "slope_deg": done.verified(f"{TERRAIN_FOLDER}/{SLOPE_DEG}"),
        "specific_catchment_area_m": done.verified(f"{TERRAIN_FOLDER}/{SCA}"),
        "saturation": done.verified(f"{sc.name}/{SATURATION}"),
    }
    v = {k: read_at_cells(p, done.grid, rows, cols) for k, p in terrain.items()}
    codes = read_at_cells(done.verified(f"{TERRAIN_FOLDER}/{SOIL_UNIT}"), done.grid, rows, cols)
    ok = codes > 0
    for k in terrain:
        ok &= v[k] != NODATA_F32
    codes = np.where(ok, codes, 0).astype(np.int64)
    units = done.soils.with_overrides(sc.soil_overrides, f"{done.cfg.path}: scenario {sc.name}")
    soil = soil_at(
        done.cell_soil(sc),
        units.parameters,
        done.grid,
        done.verified(f"{TERRAIN_FOLDER}/{SOIL_UNIT}"),
        rows,
        cols,
    )
    v |= {name: np.where(ok, soil.get(name, np.nan), np.nan) for name in CORE_FIELDS}
    v["codes"], v["ok"], v["tables"] = codes, ok, units.parameters
    return v


def back_analyse(
    done: FinishedRun, sc: Scenario, inv: Inventory, parameter: str
) -> tuple[dict[str, object], list[Path]]:
    """The manifest entry and the files of one back-analysis."""
    if parameter not in PARAMETERS:
        raise InputError(f"--parameter {parameter}: must be one of {', '.join(PARAMETERS)}")
    steady_only(sc, "back-analysis")
    v = cell_inputs(done, sc, inv.rows, inv.cols)
    ok = v["ok"]
    soil = {name: v[name][ok] for name in CORE_FIELDS}
    values = value_at_failure(
        parameter,
        v["slope_deg"][ok],
        v["saturation"][ok],
        v["specific_catchment_area_m"][ok],
        seismic_coefficient=sc.seismic_coefficient,
        min_slip_depth_m=done.cfg.min_slip_depth_m,
        **soil,
    )
    codes = v["codes"][ok]
    summary = summary_by_group(values, codes)
    keys = done.soils.keys
    table_value = {}
    for code, key in enumerate(keys, start=1):
        if parameter in v["tables"]:
            table_value[key] = float(v["tables"][parameter][code])
        elif parameter == "recharge_mm_day" and sc.recharge_mm_day is not None:
            table_value[key] = float(sc.recharge_mm_day)
        elif parameter == "saturation" and sc.saturation is not None:
            table_value[key] = float(sc.saturation)
    unit_rows = [
        {"soil_unit": keys[code - 1], **stats, "soil_table": table_value.get(keys[code - 1])}
        for code, stats in sorted(summary.items())
    ]
    folder = real_folder(done.out / VALIDATION_FOLDER)
    stem = f"backcalc_{sc.name}_{parameter}"
    cells = [
        {
            "landslide": inv.names[s],
            "row": int(r),
            "col": int(c),
            "soil_unit": keys[code - 1],
            parameter: "" if not np.isfinite(x) else round(float(x), 6),
        }
        for s, r, c, code, x in zip(
            inv.slide[ok], inv.rows[ok], inv.cols[ok], codes, values, strict=True
        )
    ]
    rounded = [{k: _rounded(x) for k, x in row.items()} for row in unit_rows]
    label = PARAMETERS[parameter]
    files = [
        write_summary(rounded, folder / f"{stem}.csv"),
        write_summary(cells, folder / f"{stem}{CELLS_SUFFIX}"),
        histogram_figure(
            folder / f"{stem}.png",
            {keys[c - 1]: values[(codes == c) & np.isfinite(values)] for c in sorted(summary)},
            label,
            f"{done.cfg.region.name}: {label} at failure, landslide cells, {sc.name}",
            table_value,
        ),
    ]
    skipped = int((~ok).sum())
    entry = {
        "scenario": sc.name,
        "parameter": parameter,
        "parameter_label": label,
        "method": "infinite slope, inverse solution at FS = 1",
        "no_solution_note": NO_SOLUTION[parameter],
        "units": rounded,
        "cells_on_no_data": skipped,
        "figure": files[2].relative_to(done.out).as_posix(),
        "tables": [f.relative_to(done.out).as_posix() for f in files[:2]],
    }
    return entry, files


def _rounded(value: object) -> object:
    if isinstance(value, float):
        return round(value, 6) if np.isfinite(value) else None
    return value
