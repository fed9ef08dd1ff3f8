"""``sensitivity`` on a finished run: per soil unit, a tornado of FS at the unit's median
slope and specific catchment area with each parameter at its low and high value
(:mod:`slopescreen.sensitivity`), and, on the map, the share of the unit's area whose FS
class changes when that parameter moves. Written under OUT/validation/.

Medians come from histograms gathered tile by tile (slope in 0.01-degree bins, the
specific catchment area in log bins 0.2% wide, m in 0.001 bins), so they are exact to
half a bin at any map size.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.inventory.backcalc import steady_only
from slopescreen.maps.inventory.finished_run import FinishedRun
from slopescreen.maps.io.rasters import windows
from slopescreen.maps.io.safe_writes import real_folder
from slopescreen.maps.outputs.output_names import (
    SATURATION,
    SCA,
    SLOPE_DEG,
    SOIL_UNIT,
    TERRAIN_FOLDER,
    VALIDATION_FOLDER,
)
from slopescreen.maps.outputs.summary import write_summary
from slopescreen.maps.outputs.validation_plots import tornado_figure
from slopescreen.maps.region.cell_fields import field_range
from slopescreen.maps.region.config import Scenario
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.maps.region.tile_job import CORE_FIELDS, summed_tiles
from slopescreen.maps.region.unit_medians import (
    SensitivityJob,
    tile_inputs,
    unit_means,
    unit_medians,
)
from slopescreen.sensitivity import parameter_range, steady_fs
from slopescreen.stability_classes import classify

VARIED = ("cohesion_kpa", "friction_deg", "root_cohesion_kpa", "unit_weight_kn_m3", "depth_m")


def _fs(job: SensitivityJob, code: int, v: dict, sel: np.ndarray, **change: float) -> np.ndarray:
    """FS of a unit's cells ``sel`` with one field moved to ``change``: a field that varies
    by cell moves by the same amount on every cell (from the unit's mean to the value),
    kept within its range."""
    if not job.soil.varies:
        p: dict[str, Any] = {name: float(job.tables[name][code]) for name in CORE_FIELDS}
        p |= change
    else:
        p = {name: v[name][sel] for name in CORE_FIELDS}
        for name, value in change.items():
            mean = job.means.get(code, {}).get(name)
            if mean is None:
                p[name] = value
            else:
                low, high = field_range(name)
                p[name] = np.clip(p[name] + (value - mean), max(low, 1e-9), high)
    return steady_fs(
        v["slope"][sel],
        v["sca"][sel],
        saturation=None if job.recharge_mm_day is not None else v["m"][sel],
        recharge_mm_day=job.recharge_mm_day,
        seismic_coefficient=job.seismic,
        **p,
    )


def class_change_tile(job: SensitivityJob, rows: slice, cols: slice) -> dict[str, Any]:
    """Per (unit, parameter, side): ground area whose FS class differs from the base."""
    v = tile_inputs(job, rows, cols)
    out: dict[str, Any] = {"area": np.zeros(job.n_units + 1)}
    for code, ranges in job.ranges.items():
        sel = v["ok"] & (v["codes"] == code)
        if not sel.any():
            continue
        area = v["area"][sel]
        out["area"][code] += float(area.sum())
        base = classify(_fs(job, code, v, sel), job.fs_breaks)
        for name, (low, high) in ranges.items():
            for side, value in (("low", low), ("high", high)):
                changed = classify(_fs(job, code, v, sel, **{name: value}), job.fs_breaks) != base
                out[(code, name, side)] = float(area[changed].sum())
    return out


def sensitivity(
    done: FinishedRun, sc: Scenario, runner: Runner = serial_runner
) -> tuple[dict[str, object], list[Path]]:
    """The manifest entry and files of the sensitivity of one scenario."""
    steady_only(sc, "sensitivity")
    if sc.rain_raster is not None:
        raise InputError(
            f"--scenario {sc.name}: sensitivity needs one recharge number or a saturation; "
            f"this scenario reads recharge from {sc.rain_raster.name}"
        )
    units = done.soils.with_overrides(sc.soil_overrides, f"scenario {sc.name}")
    tables = {name: units.parameters[name] for name in CORE_FIELDS}
    job = SensitivityJob(
        grid=done.grid,
        slope_deg=done.verified(f"{TERRAIN_FOLDER}/{SLOPE_DEG}"),
        sca=done.verified(f"{TERRAIN_FOLDER}/{SCA}"),
        saturation=done.verified(f"{sc.name}/{SATURATION}"),
        codes=done.verified(f"{TERRAIN_FOLDER}/{SOIL_UNIT}"),
        tables=tables,
        ranges={},
        recharge_mm_day=sc.recharge_mm_day,
        seismic=float(sc.seismic_coefficient),
        fs_breaks=done.cfg.fs_breaks,
        n_units=len(units.keys),
        soil=done.cell_soil(sc),
    )
    means = unit_means(job, runner)  # fields that vary by cell: the unit's mean stands in
    varied = list(VARIED)
    if sc.recharge_mm_day is not None:
        varied.append("hydraulic_conductivity_m_s")
    ranges: dict[int, dict[str, tuple[float, float]]] = {}
    how: dict[tuple[int, str], str] = {}
    for code in range(1, len(units.keys) + 1):
        spreads = units.unit_spreads(code)
        ranges[code] = {}
        for name in varied:
            value = means.get(code, {}).get(name, float(tables[name][code]))
            if not np.isfinite(value):
                continue
            sd = spreads[name].sd if name in spreads else None
            if sd is None and name == "depth_m" and "depth_m" in spreads:
                sd = spreads["depth_m"].sd
            upper = np.inf  # the moist unit weight stays at most the saturated one
            if name == "unit_weight_kn_m3":
                upper = means.get(code, {}).get(
                    "saturated_unit_weight_kn_m3",
                    float(tables["saturated_unit_weight_kn_m3"][code]),
                )
            low, high, text = parameter_range(
                name, value, None if sd is None else float(sd), upper=upper
            )
            if low != high:
                ranges[code][name] = (low, high)
                how[(code, name)] = text
    job = replace(job, ranges=ranges, means=means)
    tiles = [(job, r, c) for r, c in windows(done.grid)]
    medians = unit_medians(job, runner)
    changes = summed_tiles(runner(class_change_tile, tiles))
    rows: list[dict[str, object]] = []
    tornado: dict[str, tuple[float, list[tuple[str, float, float, str]]]] = {}
    for code, key in enumerate(units.keys, start=1):
        if changes["area"][code] <= 0 or code not in medians:
            continue
        slope, sca, m_median = medians[code]
        m = sc.saturation if sc.saturation is not None else m_median
        base = {name: float(tables[name][code]) for name in CORE_FIELDS} | means.get(code, {})

        def fs_of(**p: float) -> float:
            return float(
                steady_fs(
                    slope,  # noqa: B023 (used at once, inside the loop)
                    sca,  # noqa: B023
                    saturation=None if sc.recharge_mm_day is not None else m,  # noqa: B023
                    recharge_mm_day=sc.recharge_mm_day,
                    seismic_coefficient=sc.seismic_coefficient,
                    **p,
                )
            )

        fs_base = fs_of(**base)
        bars = []
        for name, (low, high) in ranges[code].items():
            fs_low, fs_high = fs_of(**{**base, name: low}), fs_of(**{**base, name: high})
            bars.append((name, fs_low, fs_high, how[(code, name)]))
            rows.append(
                {
                    "soil_unit": key,
                    "parameter": name,
                    "range": how[(code, name)],
                    "low": round(low, 6),
                    "high": round(high, 6),
                    "median_slope_deg": round(slope, 6),
                    "median_sca_m": round(sca, 6),
                    "fs_base": round(fs_base, 6),
                    "fs_low": round(fs_low, 6),
                    "fs_high": round(fs_high, 6),
                    "class_change_low": round(
                        changes[(code, name, "low")] / changes["area"][code], 6
                    ),
                    "class_change_high": round(
                        changes[(code, name, "high")] / changes["area"][code], 6
                    ),
                }
            )
        tornado[key] = (fs_base, bars)
    if not rows:
        raise InputError(f"scenario {sc.name}: no mapped soil unit to vary")
    folder = real_folder(done.out / VALIDATION_FOLDER)
    files = [
        write_summary(rows, folder / f"sensitivity_{sc.name}.csv"),
        tornado_figure(
            folder / f"sensitivity_{sc.name}.png",
            tornado,
            f"{done.cfg.region.name}: sensitivity of FS under {sc.name}",
        ),
    ]
    entry = {
        "scenario": sc.name,
        "rows": rows,
        "figure": files[1].relative_to(done.out).as_posix(),
        "table": files[0].relative_to(done.out).as_posix(),
        "wetness": "m from the steady recharge, moving with depth and conductivity"
        if sc.recharge_mm_day is not None
        else "m as the run mapped it",
    }
    return entry, files
