"""Per soil unit, the median (or another quantile of the area) slope, specific catchment
area and saturation of a finished scenario, from area histograms gathered tile by tile
(slope in 0.01-degree bins, the specific catchment area in log bins 0.2% wide, m in 0.001
bins), so they are exact to half a bin at any map size. Used by the intensity-duration
figure of a rainfall scenario and by the sensitivity of a finished run.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block, windows
from slopescreen.maps.region.cell_fields import CellSoil, soil_cells
from slopescreen.maps.region.runners import Runner, serial_runner
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import CORE_FIELDS, summed_tiles

SLOPE_BINS = np.linspace(0.0, 90.0, 9001)  # 0.01 degree
SCA_BINS = np.linspace(-2.0, 8.0, 11_501)  # log10(m): 0.2% wide
M_BINS = np.linspace(0.0, 1.0, 1001)


@dataclass(frozen=True)
class SensitivityJob:
    """A finished scenario's rasters and soil tables, tile by tile: the per-unit medians
    of slope, catchment and saturation, and the class changes of the sensitivity."""

    grid: Grid
    slope_deg: Path
    sca: Path
    saturation: Path
    codes: Path
    tables: dict[str, np.ndarray]
    ranges: dict[int, dict[str, tuple[float, float]]]  # unit -> parameter -> (low, high)
    recharge_mm_day: float | None
    seismic: float
    fs_breaks: tuple[float, ...]
    n_units: int
    soil: CellSoil = field(default_factory=CellSoil)  # soil fields set cell by cell
    # unit code -> field -> the unit's mean where the field varies by cell (unit_means)
    means: dict[int, dict[str, float]] = field(default_factory=dict)


def tile_inputs(job: SensitivityJob, rows: slice, cols: slice) -> dict[str, np.ndarray]:
    """A tile's slope, catchment, saturation, codes, cells with all of them, ground areas."""
    v = {
        "slope": read_block(job.slope_deg, rows, cols).astype(np.float64),
        "sca": read_block(job.sca, rows, cols).astype(np.float64),
        "m": read_block(job.saturation, rows, cols).astype(np.float64),
        "codes": read_block(job.codes, rows, cols).astype(np.int64),
    }
    ok = (v["codes"] > 0) & (v["slope"] != NODATA_F32) & (v["sca"] != NODATA_F32)
    ok &= v["m"] != NODATA_F32
    v["ok"] = ok
    v["area"] = np.broadcast_to(job.grid.ground.cell_area_m2(rows, cols), ok.shape)
    if job.soil.varies:  # each soil field on the tile (NaN off the cells with every value)
        soil = soil_cells(job.soil, job.tables, job.grid, rows, cols, v["codes"], ok)
        for name in CORE_FIELDS:
            v[name] = np.full(ok.shape, np.nan)
            v[name][ok] = soil[name]
    return v


def means_tile(job: SensitivityJob, rows: slice, cols: slice) -> dict[str, np.ndarray]:
    """Per unit, the area-weighted sum of each soil field and the area (for unit_means)."""
    v = tile_inputs(job, rows, cols)
    out = {"area": np.zeros(job.n_units + 1)}
    np.add.at(out["area"], v["codes"][v["ok"]], v["area"][v["ok"]])
    for name in CORE_FIELDS:
        if name in v:
            sums = np.zeros(job.n_units + 1)
            np.add.at(sums, v["codes"][v["ok"]], (v[name] * v["area"])[v["ok"]])
            out[name] = sums
    return out


def unit_means(job: SensitivityJob, runner: Runner = serial_runner) -> dict[int, dict[str, float]]:
    """Per unit code whose soil fields vary by cell, the area-weighted mean of each field
    over its cells (summed tile by tile; NaN for a field the unit leaves blank, such as
    transmissivity where K is given)."""
    if not job.soil.varies:
        return {}
    total = summed_tiles(runner(means_tile, [(job, r, c) for r, c in windows(job.grid)]))
    varying = job.soil.varying_units()
    return {
        code: {name: float(total[name][code] / total["area"][code]) for name in CORE_FIELDS}
        for code in range(1, job.n_units + 1)
        if code in varying and total["area"][code] > 0
    }


def histogram_tile(job: SensitivityJob, rows: slice, cols: slice) -> dict[str, np.ndarray]:
    """Per unit, area histograms of slope, log10 SCA and m (for the medians)."""
    v = tile_inputs(job, rows, cols)
    out = {}
    for name, values, bins in (
        ("slope", v["slope"], SLOPE_BINS),
        ("sca", np.log10(np.maximum(v["sca"], 1e-2)), SCA_BINS),
        ("m", v["m"], M_BINS),
    ):
        h = np.zeros((job.n_units + 1, bins.size - 1))
        for code in range(1, job.n_units + 1):
            sel = v["ok"] & (v["codes"] == code)
            if sel.any():
                h[code] = np.histogram(values[sel], bins, weights=v["area"][sel])[0]
        out[name] = h
    return out


def unit_medians(
    job: SensitivityJob, runner: Runner = serial_runner, share: float = 0.5
) -> dict[int, tuple[float, float, float]]:
    """Per unit code with mapped cells: median (or another quantile ``share`` of the area)
    slope (degrees), specific catchment area (m) and saturation m, from area histograms
    gathered tile by tile (half a bin exact)."""
    hist = summed_tiles(runner(histogram_tile, [(job, r, c) for r, c in windows(job.grid)]))
    out = {}
    for code in range(1, job.n_units + 1):
        if hist["slope"][code].sum() > 0:
            out[code] = (
                _median(hist["slope"][code], SLOPE_BINS, share),
                10.0 ** _median(hist["sca"][code], SCA_BINS, share),
                _median(hist["m"][code], M_BINS, share),
            )
    return out


def _median(hist: np.ndarray, bins: np.ndarray, share: float = 0.5) -> float:
    cum = np.cumsum(hist)
    if cum[-1] <= 0:
        return float("nan")
    i = int(np.searchsorted(cum, cum[-1] * share))
    return float((bins[i] + bins[i + 1]) / 2.0)
