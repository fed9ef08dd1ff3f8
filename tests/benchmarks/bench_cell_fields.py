"""Soil fields cell by cell at map speed: a steady scenario whose depth, cohesion and
friction angle come from three rasters, against the same scenario with one number per
soil unit, on one invented grid (default 3,163 x 3,163, 10^7 cells, four soil units),
terrain cached, side by side in one run (each timed twice, alternately; the faster kept).

    python tests/benchmarks/bench_cell_fields.py [--size 3163] [--workdir DIR]

The rasters lie on the DEM's grid (as a depth map made for the region would); a third
line times the same three rasters delivered on another grid (geographic, about twice
the cell size), resampled bilinearly tile by tile. Prints each scenario's time (the run's
own "scenario" step: tiles, rasters, maps, zones) and the ratio the issue asks about
(rasters over constants, target at most 1.5x). Not a test: no assertion.
"""

from __future__ import annotations

from pathlib import Path

FIELDS = ("depth_m", "cohesion_kpa", "friction_deg")
CONSTANTS = {"depth_m": 1.0, "cohesion_kpa": 2.0, "friction_deg": 30.0}  # unit i: + step i
STEPS = {"depth_m": 0.3, "cohesion_kpa": 2.0, "friction_deg": 1.0}


def _table(folder: Path, suffix: str) -> None:
    head = "unit,cohesion_kpa,friction_deg,unit_weight_kn_m3,saturated_unit_weight_kn_m3,"
    head += "depth_m,hydraulic_conductivity_m_s"
    rows = [head] + [
        f"U{i},cohesion{suffix}.tif,friction{suffix}.tif,18.5,20.0,depth{suffix}.tif,"
        f"{1e-5 * (i + 1)}"
        for i in range(4)
    ]
    (folder / f"soils{suffix}.csv").write_text("\n".join(rows) + "\n")


def write_inputs(folder: Path, n: int, cell: float = 5.0) -> None:
    """Three field rasters on the DEM grid and on a coarser geographic grid, soil tables
    naming them, and a scenario file whose second scenario gives every unit numbers."""
    import numpy as np
    import rasterio
    from pyproj import Transformer
    from rasterio.transform import from_origin

    x0, y0 = 500_000.0, 5_000_000.0
    profile = dict(driver="GTiff", count=1, dtype="float32", nodata=-9999.0, tiled=True,
                   compress="deflate", BIGTIFF="YES")  # fmt: skip

    def values(name: str, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        unit = np.clip(((x - x0) / (n * cell / 4)).astype(int), 0, 3)
        wave = np.sin(x / 170.0) * np.cos(y / 230.0)
        return (CONSTANTS[name] + STEPS[name] * unit + 0.2 * STEPS[name] * wave).astype("f4")

    names = {"depth_m": "depth", "cohesion_kpa": "cohesion", "friction_deg": "friction"}
    for name in FIELDS:
        target = folder / f"{names[name]}.tif"
        transform = from_origin(x0, y0 + n * cell, cell, cell)
        with rasterio.open(target, "w", width=n, height=n, crs="EPSG:32633",
                           transform=transform, **profile) as dst:  # fmt: skip
            for top in range(0, n, 2048):
                rows = min(2048, n - top)
                c, r = np.meshgrid(np.arange(n), np.arange(top, top + rows))
                x, y = x0 + (c + 0.5) * cell, y0 + n * cell - (r + 0.5) * cell
                window = rasterio.windows.Window(0, top, n, rows)
                dst.write(values(name, x, y), 1, window=window)
    # the same fields on a geographic grid of about twice the cell size, a margin around
    to_lonlat = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True)
    lon0, lat1 = to_lonlat.transform(x0 - 200.0, y0 + n * cell + 200.0)
    lon1, lat0 = to_lonlat.transform(x0 + n * cell + 200.0, y0 - 200.0)
    step = 2.0 * cell / 111_000.0
    width, height = int((lon1 - lon0) / step) + 1, int((lat1 - lat0) / step) + 1
    to_utm = Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True)
    for name in FIELDS:
        target = folder / f"{names[name]}_geographic.tif"
        with rasterio.open(
            target,
            "w",
            width=width,
            height=height,
            crs="EPSG:4326",
            transform=from_origin(lon0, lat1, step, step),
            **profile,
        ) as dst:
            for top in range(0, height, 1024):
                rows = min(1024, height - top)
                c, r = np.meshgrid(np.arange(width), np.arange(top, top + rows))
                x, y = to_utm.transform(lon0 + (c + 0.5) * step, lat1 - (r + 0.5) * step)
                window = rasterio.windows.Window(0, top, width, rows)
                dst.write(values(name, np.asarray(x), np.asarray(y)), 1, window=window)
    _table(folder, "")
    _table(folder, "_geographic")
    numbers = "".join(
        f"[scenario.soil.U{i}]\n"
        + "".join(f"{f} = {CONSTANTS[f] + STEPS[f] * i:g}\n" for f in FIELDS)
        for i in range(4)
    )
    for suffix in ("", "_geographic"):
        (folder / f"scenarios{suffix}.toml").write_text(
            '[region]\nname = "cell-field benchmark region (invented)"\ndem = "dem.tif"\n'
            f'soil_units = "soils.gpkg"\nsoil_table = "soils{suffix}.csv"\n'
            "[outputs]\nquicklook_map = true\nzones = true\nreport = false\n"
            '[[scenario]]\nname = "rasters"\nrecharge_mm_day = 20.0\n'
            '[[scenario]]\nname = "constants"\nrecharge_mm_day = 20.0\n' + numbers
        )


def _run(folder: Path, name: str, suffix: str = "") -> float:
    """The scenario step's time (s) of one scenario of scenarios{suffix}.toml."""
    from bench_storm_map import scenario_seconds  # beside this script

    return scenario_seconds(folder, name, f"scenarios{suffix}.toml")


def main() -> None:
    from bench_storm_map import bench_region  # beside this script

    folder, cells = bench_region(__doc__.splitlines()[0], "fields", write_inputs)
    _run(folder, "constants")  # terrain and the compiled kernels warmed up, not timed
    took: dict[str, float] = {}
    for _ in range(2):
        for name, suffix in (("constants", ""), ("rasters", ""), ("rasters", "_geographic")):
            key = name + suffix
            took[key] = min(took.get(key, float("inf")), _run(folder, name, suffix))
    for name, seconds in took.items():
        print(f"{name:22s} {seconds:8.1f} s  {cells / seconds:12,.0f} cells/s")
    print(f"three rasters on the DEM grid / constants: {took['rasters'] / took['constants']:5.2f}x"
          "  (target <= 1.5x)")  # fmt: skip
    print(f"three rasters on another grid / constants: "
          f"{took['rasters_geographic'] / took['constants']:5.2f}x")  # fmt: skip


if __name__ == "__main__":
    main()
