"""Build the invented demo region: the fictitious Quillbrook catchment.

Writes quillbrook_dem.tif (450 x 450 cells at 10 m), soil_units.gpkg (five soil units) and
soil_parameters.csv beside this file. The terrain is synthetic: a valley draining south with
convergent hollows, spurs and a little roughness, all from formulas below. It is placed at
sea, off any coast, in UTM zone 25S so it cannot be mistaken for real ground.

    python demo_region/make_demo_region.py

Soil parameters are typical handbook values for such soils (from memory: shallow colluvium
and residual soils c' 0-10 kPa, phi' 28-36 deg; unit weights 17-21 kN/m3; saturated
hydraulic conductivity 1e-6 to 1e-4 m/s for silty to sandy soils; apparent root cohesion
1-10 kPa under forest, as summarised by Sidle & Ochiai 2006, Landslides: Processes,
Prediction, and Land Use, AGU). They are illustrative, not measurements.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SIZE, CELL = 450, 10.0
ORIGIN = (402_000.0, 6_305_000.0)  # UTM 25S, open ocean: no real terrain here
CRS = "EPSG:32725"

COLUMNS = [
    "unit",
    "name",
    "cohesion_kpa",
    "friction_deg",
    "unit_weight_kn_m3",
    "saturated_unit_weight_kn_m3",
    "depth_m",
    "root_cohesion_kpa",
    "hydraulic_conductivity_m_s",
    "diffusivity_m2_s",
    "cohesion_kpa_sd",
    "friction_deg_sd",
    "depth_m_cov",
    "c_phi_correlation",
    "strength_lab_tests",
]
# Spreads (standard deviations, coefficients of variation) are typical of such soils, from
# memory (coefficients of variation of c' 20-50% and of tan phi' 5-15% as summarised by
# Phoon & Kulhawy 1999); hollow colluvium takes its strength and its uncertainty from the
# envelope fitted to lab_tests.csv. Diffusivities are illustrative values of the order
# Iverson (2000) discusses for colluvial soils (1e-5 to 1e-4 m2/s, from memory).
UNITS = [
    (
        "ALV",
        "valley-floor alluvium",
        0.0,
        30.0,
        18.0,
        20.0,
        3.0,
        0.0,
        1e-4,
        1e-4,
        "",
        2.0,
        "",
        "",
        "",
    ),
    (
        "COL",
        "hollow colluvium",
        "",
        "",
        18.0,
        19.5,
        2.0,
        2.0,
        2e-5,
        5e-5,
        "",
        "",
        0.25,
        "",
        "lab_tests.csv",
    ),
    (
        "SLP",
        "weathered siltstone slope soil",
        4.0,
        32.0,
        18.5,
        20.0,
        1.2,
        4.0,
        1e-5,
        3e-5,
        1.5,
        2.0,
        0.25,
        -0.3,
        "",
    ),
    (
        "TIL",
        "compact till of the lower slopes",
        8.0,
        34.0,
        20.0,
        21.5,
        1.5,
        1.0,
        1e-6,
        1e-5,
        3.0,
        2.0,
        0.15,
        -0.3,
        "",
    ),
    (
        "RDG",
        "thin ridge-top residual soil",
        6.0,
        35.0,
        18.5,
        20.0,
        0.6,
        3.0,
        5e-5,
        1e-4,
        2.0,
        2.0,
        0.3,
        "",
        "",
    ),
]


def terrain() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Elevation (m), hollow strength (0-1) and distance from the channel (m)."""
    y_index, x_index = np.mgrid[0:SIZE, 0:SIZE]
    x = (x_index + 0.5) * CELL
    y = (SIZE - y_index - 0.5) * CELL  # metres north of the southern edge
    channel = 2250.0 + 260.0 * np.sin(2.0 * np.pi * y / 3100.0)
    d = x - channel
    z = 180.0 + 0.035 * y + 520.0 * (1.0 - np.exp(-((d / 650.0) ** 2)))
    hollow = np.zeros_like(z)
    # tributary hollows: (start x, start y, end x, end y, depth m, half-width m)
    for x0, y0, x1, y1, depth, width in [
        (300, 4200, 1900, 3300, 55, 110),
        (4300, 4000, 2600, 3000, 60, 120),
        (200, 2600, 1800, 1900, 50, 100),
        (4400, 2300, 2700, 1500, 55, 110),
        (600, 1100, 1900, 600, 40, 90),
        (4100, 800, 2500, 300, 45, 90),
        (1000, 3600, 1900, 2700, 35, 70),
        (3600, 3500, 2700, 2400, 35, 70),
    ]:
        vx, vy = x1 - x0, y1 - y0
        length = np.hypot(vx, vy)
        t = np.clip(((x - x0) * vx + (y - y0) * vy) / length**2, 0.0, 1.0)
        dist = np.hypot(x - (x0 + t * vx), y - (y0 + t * vy))
        shape = np.exp(-((dist / width) ** 2)) * np.sin(np.pi * np.clip(t, 0.0, 1.0)) ** 0.5
        z -= depth * shape
        hollow = np.maximum(hollow, shape)
    rng = np.random.default_rng(20261202)
    for wavelength, amplitude in [(900.0, 9.0), (420.0, 5.0), (180.0, 2.0), (70.0, 0.6)]:
        for _ in range(3):
            angle, phase = rng.uniform(0, np.pi), rng.uniform(0, 2 * np.pi)
            k = 2 * np.pi / wavelength
            z += amplitude / 3 * np.sin(k * (x * np.cos(angle) + y * np.sin(angle)) + phase)
    return z.astype(np.float32), hollow, np.abs(d)


def unit_map(z: np.ndarray, hollow: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """Codes 1..5 in UNITS order from landform, smoothed by a 5 x 5 majority filter."""
    codes = np.full(z.shape, 3, np.int32)  # SLP
    codes[dist < 700.0] = 4  # TIL on the lower slopes
    high = z > np.percentile(z, 80)
    codes[high] = 5  # RDG
    codes[hollow > 0.45] = 2  # COL
    codes[dist < 140.0] = 1  # ALV
    for _ in range(2):
        padded = np.pad(codes, 2, mode="edge")
        votes = np.zeros((len(UNITS) + 1, *codes.shape), np.int32)
        for dr in range(5):
            for dc in range(5):
                window = padded[dr : dr + codes.shape[0], dc : dc + codes.shape[1]]
                for code in range(1, len(UNITS) + 1):
                    votes[code] += window == code
        codes = np.argmax(votes, axis=0).astype(np.int32)
    return codes


def main() -> None:
    import geopandas as gpd
    import rasterio
    from rasterio import features
    from rasterio.transform import from_origin
    from shapely.geometry import shape

    z, hollow, dist = terrain()
    transform = from_origin(ORIGIN[0], ORIGIN[1], CELL, CELL)
    profile = dict(
        driver="GTiff",
        width=SIZE,
        height=SIZE,
        count=1,
        dtype="float32",
        crs=CRS,
        transform=transform,
        nodata=-9999.0,
        tiled=True,
        blockxsize=256,
        blockysize=256,
        compress="deflate",
        predictor=3,
    )
    with rasterio.open(HERE / "quillbrook_dem.tif", "w", **profile) as dst:
        dst.write(z, 1)
        dst.update_tags(description="synthetic DEM of the invented Quillbrook catchment")
    codes = unit_map(z, hollow, dist)
    geoms, keys, names = [], [], []
    for geom, value in features.shapes(codes, transform=transform, connectivity=4):
        unit = UNITS[int(value) - 1]  # (key, name, ...)
        geoms.append(shape(geom).simplify(2.0))
        keys.append(unit[0])
        names.append(unit[1])
    frame = gpd.GeoDataFrame({"unit": keys, "name": names}, geometry=geoms, crs=CRS)
    frame = frame.dissolve(by="unit", as_index=False)
    from pyogrio import set_gdal_config_options

    set_gdal_config_options({"OGR_CURRENT_DATE": "2000-01-01T00:00:00.000Z"})  # same bytes
    target = HERE / "soil_units.gpkg"
    if target.exists():
        target.unlink()
    frame.to_file(target, driver="GPKG", layer="soil_units")
    with open(HERE / "soil_parameters.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        handle.write(
            "# Invented soil parameters for the fictitious Quillbrook catchment "
            "(typical handbook values, not measurements)\n"
        )
        writer.writerow(COLUMNS)
        writer.writerows(UNITS)


if __name__ == "__main__":
    main()
