"""Build the invented demo region: the fictitious Quillbrook catchment.

Writes quillbrook_dem.tif (450 x 450 cells at 10 m), soil_units.gpkg (five soil units),
soil_parameters.csv, the land cover (quillbrook_land_cover.gpkg and .csv), invented roads
and buildings (quillbrook_assets.gpkg) and mapped_landslides.gpkg (an invented inventory
of slides drawn from a hidden soil table, see HIDDEN_CHANGES) beside this file. The
terrain is synthetic: a valley draining south, fractal relief by spectral synthesis, then
a few thousand years of stream incision and hillslope diffusion so that tributaries,
hollows and spurs form as on real ground, all from the formulas below (numpy only; the
same numbers every run). It is placed at sea, off any coast, in UTM zone 25S so it cannot
be mistaken for real ground.

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


RANDOM_STATE = 20261202  # same number, same landscape
MEDIAN_SLOPE_DEG = 18.0


def _spectral_surface(rng: np.random.Generator, beta: float = 2.8) -> np.ndarray:
    """Fractal relief by spectral synthesis: white noise whose Fourier amplitudes fall as
    k^(-beta/2) (a power spectrum k^-beta; natural topography has beta about 2 to 3,
    from memory of the spectral analyses summarised by Turcotte 1997, Fractals and Chaos
    in Geology and Geophysics), scaled to unit standard deviation."""
    noise = rng.standard_normal((SIZE, SIZE))
    ky = np.fft.fftfreq(SIZE)[:, None]
    kx = np.fft.rfftfreq(SIZE)[None, :]
    k = np.hypot(kx, ky)
    k[0, 0] = 1.0
    # above wavelengths of 15 cells the relief is left to the erosion pass below
    spectrum = np.fft.rfft2(noise) * k ** (-beta / 2.0) * np.exp(-((k * 15.0) ** 2))
    spectrum[0, 0] = 0.0
    surface = np.fft.irfft2(spectrum, s=(SIZE, SIZE))
    return surface / surface.std()


_STEPS = [(-1, -1), (-1, 0), (-1, 1), (0, -1), (0, 1), (1, -1), (1, 0), (1, 1)]


def _drainage(z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Depressions filled by priority flood (Barnes et al. 2014, in plain Python with
    heapq), then D8 receivers (steepest descent on the filled surface; the outlet row
    drains off the southern edge), the cells in upstream-to-downstream order, and the
    contributing area in cells. Flat filled ground drains towards its spill point."""
    import heapq

    h, w = z.shape
    flat = z.ravel().astype(float)
    filled = flat.copy()
    done = np.zeros(h * w, bool)
    receiver = np.full(h * w, -1, np.int64)
    heap: list[tuple[float, int, int]] = []
    counter = 0
    for c in range(w):  # only the southern edge is open: the valley drains south
        i = (h - 1) * w + c
        heapq.heappush(heap, (filled[i], counter, i))
        done[i] = True
        counter += 1
    order = []
    while heap:
        level, _, i = heapq.heappop(heap)
        order.append(i)
        r, c = divmod(i, w)
        for dr, dc in _STEPS:
            rr, cc = r + dr, c + dc
            if 0 <= rr < h and 0 <= cc < w:
                j = rr * w + cc
                if not done[j]:
                    done[j] = True
                    filled[j] = max(filled[j], level + 1e-4)
                    receiver[j] = i
                    counter += 1
                    heapq.heappush(heap, (filled[j], counter, j))
    upstream_first = np.array(order[::-1], np.int64)
    area = np.ones(h * w)
    for i in upstream_first:
        if receiver[i] >= 0:
            area[receiver[i]] += area[i]
    return receiver, upstream_first, area.reshape(h, w)


def _laplacian(z: np.ndarray) -> np.ndarray:
    """Sum of the four neighbours minus four times the cell (edges repeated), m."""
    padded = np.pad(z, 1, mode="edge")
    return padded[:-2, 1:-1] + padded[2:, 1:-1] + padded[1:-1, :-2] + padded[1:-1, 2:] - 4 * z


def _erode(z: np.ndarray, steps: int = 14) -> tuple[np.ndarray, np.ndarray]:
    """A simple landscape-evolution pass: stream-power incision solved implicitly along the
    drainage (Braun & Willett 2013, E = K A^0.5 S) with uplift, and linear hillslope
    diffusion (Culling 1960). Returns the eroded surface and its contributing area (cells)."""
    dt, uplift = 1000.0, 2e-3  # years, m/yr
    # erodibility 1/yr (with A in m2 to the 0.5); diffusivity m2/yr, D dt / dx^2 = 0.2 keeps
    # the explicit diffusion step stable (it must stay at or below 0.25)
    erodibility, diffusivity = 4e-4, 0.02
    z = z.astype(float).copy()
    area = np.ones_like(z)
    for _ in range(steps):
        receiver, upstream_first, area = _drainage(z)
        flat = z.ravel()
        flat[:-SIZE] += uplift * dt  # the southern edge is base level
        a_m2 = area.ravel() * CELL * CELL
        for i in upstream_first[::-1]:  # downstream first
            j = receiver[i]
            if j < 0:
                continue
            dist = CELL * (np.sqrt(2.0) if abs(i - j) in (SIZE - 1, SIZE + 1) else 1.0)
            f = erodibility * dt * np.sqrt(a_m2[i]) / dist
            flat[i] = (flat[i] + f * flat[j]) / (1.0 + f)
        z = flat.reshape(z.shape)
        z = z + diffusivity * dt * _laplacian(z) / CELL**2
    _, _, area = _drainage(z)
    return z, area


def terrain() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Elevation (m), hollows (0-1: convergent ground off the channels) and contributing
    area (m2): a valley draining south, fractal relief by spectral synthesis, then shaped
    by stream incision and hillslope diffusion."""
    rng = np.random.default_rng(RANDOM_STATE)
    y_index, x_index = np.mgrid[0:SIZE, 0:SIZE]
    x = (x_index + 0.5) * CELL
    y = (SIZE - y_index - 0.5) * CELL  # metres north of the southern edge
    channel = 2250.0 + 260.0 * np.sin(2.0 * np.pi * y / 3100.0)
    d = x - channel
    valley = 180.0 + 0.035 * y + 420.0 * (1.0 - np.exp(-((d / 800.0) ** 2)))
    rough = _spectral_surface(rng)
    z = valley + 55.0 * rough * (0.35 + 0.65 * (1.0 - np.exp(-((d / 400.0) ** 2))))
    z, area = _erode(z)
    # relief scaled about the outlet so that the median slope is MEDIAN_SLOPE_DEG: hills
    # with a few percent of failing ground in the wet season, not badlands
    gy, gx = np.gradient(z, CELL)
    z = z.min() + (z - z.min()) * np.tan(np.radians(MEDIAN_SLOPE_DEG)) / np.median(np.hypot(gx, gy))
    a_m2 = area * CELL * CELL
    laplace = _laplacian(z)
    # hollows: concave ground draining 0.3 to 8 ha, off the channels
    hollow = ((laplace > 0.0) & (a_m2 > 3_000.0) & (a_m2 < 80_000.0)).astype(float)
    for _ in range(2):  # widen the hollow axes into the hollows they drain
        padded = np.pad(hollow, 1, mode="edge")
        hollow = np.maximum.reduce(
            [hollow, padded[:-2, 1:-1], padded[2:, 1:-1], padded[1:-1, :-2], padded[1:-1, 2:]]
        ) * (laplace > -0.5)
    return z.astype(np.float32), hollow, a_m2


def unit_map(z: np.ndarray, hollow: np.ndarray, area_m2: np.ndarray) -> np.ndarray:
    """Codes 1..5 in UNITS order from landform, smoothed by a 5 x 5 majority filter:
    alluvium along channels, colluvium in hollows, ridge soils on the highest convex
    ground, till low on the valley sides, weathered slope soil elsewhere."""
    codes = np.full(z.shape, 3, np.int32)  # SLP
    channel = area_m2 > 400_000.0
    height_above = z - _channel_level(z, channel)
    codes[height_above < 45.0] = 4  # TIL on the lower slopes
    codes[(z > np.percentile(z, 75)) & (area_m2 < 1_500.0)] = 5  # RDG
    codes[hollow > 0.3] = 2  # COL
    wide = channel.copy()
    for _ in range(3):  # the channel belt, three cells either side
        padded = np.pad(wide, 1, mode="edge")
        wide = wide | padded[:-2, 1:-1] | padded[2:, 1:-1] | padded[1:-1, :-2] | padded[1:-1, 2:]
    codes[wide | (height_above < 6.0)] = 1  # ALV
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


def _channel_level(z: np.ndarray, channel: np.ndarray) -> np.ndarray:
    """The elevation of the nearest channel cell along each row (the valley runs north to
    south, so a row is a cross-section)."""
    level = np.empty_like(z)
    cols = np.arange(z.shape[1])
    for r in range(z.shape[0]):
        where = np.flatnonzero(channel[r])
        if where.size == 0:
            level[r] = z[r].min()
            continue
        nearest = where[np.abs(cols[:, None] - where[None, :]).argmin(axis=1)]
        level[r] = z[r, nearest]
    return level


# The invented landslide inventory is drawn from a *hidden* soil table that the demo's
# scenario file does not use: the weathered siltstone's c' is 30% lower than the table
# says. Calibration against the inventory should move it back towards this value.
HIDDEN_CHANGES = {"SLP": {"cohesion_kpa": 2.8}}
HIDDEN_SCENARIO = "wet_season_units"  # the wetness (and per-unit soils) of the hidden slides
SLIDE_CHANCE = 0.06  # chance that a cell far below FS = 1 holds a mapped slide
SLIDE_SPREAD = 0.08  # FS width over which the chance falls (logistic)
YEARS = (1996, 2025)  # invented dates of the mapped slides


def hidden_fs() -> np.ndarray:
    """FS of the wet-season scenario under the hidden soil table, by slopescreen itself."""
    import tempfile
    import tomllib

    from slopescreen.maps.region.engine import run

    with tempfile.TemporaryDirectory() as work:
        folder = Path(work)
        rows = list(csv.reader(open(HERE / "soil_parameters.csv", newline="")))
        header = rows[1]
        for row in rows[2:]:
            for name, value in HIDDEN_CHANGES.get(row[0], {}).items():
                row[header.index(name)] = str(value)
        with open(folder / "hidden.csv", "w", newline="") as handle:
            handle.write(rows[0][0] + "\n")
            csv.writer(handle).writerows(rows[1:])
        text = (HERE / "quillbrook_scenarios.toml").read_text()
        cfg = tomllib.loads(text)
        wetness = next(s for s in cfg["scenario"] if s["name"] == HIDDEN_SCENARIO)
        (folder / "hidden.toml").write_text(
            "[region]\n"
            f'dem = "{(HERE / "quillbrook_dem.tif").as_posix()}"\n'
            f'soil_units = "{(HERE / "soil_units.gpkg").as_posix()}"\n'
            'soil_table = "hidden.csv"\n'
            "[outputs]\nquicklook_map = false\nreport = false\nzones = false\n"
            f'[[scenario]]\nname = "hidden"\nrecharge_mm_day = {wetness["recharge_mm_day"]}\n'
        )
        # the lab-test file the soil table names sits beside the real table
        (folder / "lab_tests.csv").write_bytes((HERE / "lab_tests.csv").read_bytes())
        run(folder / "hidden.toml", folder / "out", progress=False, echo=lambda _: None)
        import rasterio

        with rasterio.open(folder / "out" / "hidden" / "fs.tif") as src:
            fs = src.read(1, masked=True).astype(float).filled(np.nan)
    return fs


def landslide_inventory(transform: object) -> object:
    """Invented mapped slides (points at the head scarp): each cell holds one with a chance
    that rises as the hidden FS falls, at a random place in the cell, with a random date."""
    import geopandas as gpd
    from shapely.geometry import Point

    fs = hidden_fs()
    rng = np.random.default_rng(RANDOM_STATE + 1)
    chance = SLIDE_CHANCE / (1.0 + np.exp((np.nan_to_num(fs, nan=99.0) - 1.0) / SLIDE_SPREAD))
    rows, cols = np.nonzero(rng.random(fs.shape) < chance)
    x0, y0 = ORIGIN
    points = [
        Point(x0 + (c + rng.random()) * CELL, y0 - (r + rng.random()) * CELL)
        for r, c in zip(rows, cols, strict=True)
    ]
    days = rng.integers(0, 365 * (YEARS[1] - YEARS[0] + 1), size=len(points))
    dates = np.datetime64(f"{YEARS[0]}-01-01") + days.astype("timedelta64[D]")
    return gpd.GeoDataFrame(
        {
            "slide_id": [f"QB-{i + 1:04d}" for i in range(len(points))],
            "observed": [str(d) for d in dates],
        },
        geometry=points,
        crs=CRS,
    )


# Invented design rainfall for the demo: i = a T^m / (D + b)^n (a common IDF form) with
# invented coefficients, on the durations and return periods an agency might tabulate.
IDF_COEFFICIENTS = {"a": 30.0, "m": 0.2, "b": 0.3, "n": 0.75}
IDF_DURATIONS_H = (1, 3, 6, 12, 24, 48, 72)
IDF_RETURN_PERIODS_YR = (2, 5, 10, 25, 50, 100, 200, 500)


def design_rainfall() -> None:
    """quillbrook_design_rainfall.csv: intensity (mm/h) per duration and return period."""
    from slopescreen.rainfall_frequency import idf_formula

    grid = idf_formula(IDF_DURATIONS_H, IDF_RETURN_PERIODS_YR, **IDF_COEFFICIENTS)
    c = IDF_COEFFICIENTS
    lines = [
        "# Invented design rainfall for the fictitious Quillbrook catchment (demo data only):",
        f"# intensity = {c['a']:g} T^{c['m']:g} / (D + {c['b']:g})^{c['n']:g} mm/h, "
        "D in hours, T in years",
        "duration_h,return_period_yr,intensity_mm_h",
    ]
    for i, d in enumerate(IDF_DURATIONS_H):
        for j, t in enumerate(IDF_RETURN_PERIODS_YR):
            lines.append(f"{d},{t},{grid[i, j]:.3f}")
    (HERE / "quillbrook_design_rainfall.csv").write_text("\n".join(lines) + "\n")


# an invented gauge record of one night: a wet evening, a burst after midnight, a tail
GAUGE_START = "2026-11-30T18:00:00+00:00"
GAUGE_RAIN_MM = (1.2, 2.5, 3.1, 2.0, 4.4, 6.8, 12.5, 21.0, 34.0, 18.5, 9.0, 4.2, 2.1, 0.8)


def gauge_record() -> None:
    """quillbrook_gauge_record.csv: hourly rain depths (mm) of an invented night's storm,
    as a gauge logger writes them (ISO times with a zone; the first row the start)."""
    from datetime import datetime, timedelta

    start = datetime.fromisoformat(GAUGE_START)
    lines = [
        "# Invented hourly gauge record for the fictitious Quillbrook catchment (demo data only)",
        "end_time,rain_mm",
        f"{start.isoformat()},",
    ]
    for hour, rain in enumerate(GAUGE_RAIN_MM, start=1):
        lines.append(f"{(start + timedelta(hours=hour)).isoformat()},{rain:g}")
    (HERE / "quillbrook_gauge_record.csv").write_text("\n".join(lines) + "\n")


# Invented land cover: pasture on the valley floor and lower slopes, forest above, a block
# clear-cut in 2019 on the western slopes and a block due to be cut in 2027 on the eastern
# ones. Root cohesion under forest 1-10 kPa and under grass about 1-2 kPa, rooting depths
# about 1-2 m and 0.3-0.5 m, are of the order summarised by Sidle & Ochiai (2006) (from
# memory); the values are illustrative, not measurements.
COVER_CLASSES = [
    ("forest", "mature conifer forest", 6.0, 2.0, 1.5, ""),
    ("pasture", "grazed pasture", 1.5, 0.5, 0.4, ""),
    ("clearcut_2019", "forest clear-cut in 2019", 6.0, 2.0, 1.5, "2019"),
    ("planned_cut", "forest due to be clear-cut in 2027", 6.0, 2.0, 1.5, "2027"),
]
CUT_BLOCKS = {  # class -> (first row, last row, first column, last column) of the block
    "clearcut_2019": (90, 190, 40, 170),
    "planned_cut": (200, 300, 290, 420),
}


def land_cover(codes: np.ndarray, transform: object) -> None:
    """quillbrook_land_cover.gpkg (polygons, field cover) and quillbrook_land_cover.csv
    (each class's roots) from the soil-unit map: pasture on alluvium and till, forest
    elsewhere, and the two cut blocks on forest ground."""
    import geopandas as gpd
    from rasterio import features
    from shapely.geometry import shape

    names = [c[0] for c in COVER_CLASSES]
    cover = np.full(codes.shape, names.index("forest") + 1, np.int32)
    cover[np.isin(codes, (1, 4))] = names.index("pasture") + 1  # ALV, TIL
    for name, (r0, r1, c0, c1) in CUT_BLOCKS.items():
        block = np.zeros(codes.shape, bool)
        block[r0:r1, c0:c1] = True
        cover[block & (cover == names.index("forest") + 1)] = names.index(name) + 1
    geoms, classes = [], []
    for geom, value in features.shapes(cover, transform=transform, connectivity=4):
        geoms.append(shape(geom).simplify(2.0))
        classes.append(names[int(value) - 1])
    frame = gpd.GeoDataFrame({"cover": classes}, geometry=geoms, crs=CRS)
    frame = frame.dissolve(by="cover", as_index=False)
    target = HERE / "quillbrook_land_cover.gpkg"
    if target.exists():
        target.unlink()
    frame.to_file(target, driver="GPKG", layer="land_cover")
    with open(HERE / "quillbrook_land_cover.csv", "w", newline="") as handle:
        handle.write(
            "# Invented land-cover classes of the fictitious Quillbrook catchment "
            "(illustrative values, not measurements)\n"
        )
        writer = csv.writer(handle)
        writer.writerow(
            ["class", "description", "root_cohesion_kpa", "root_cohesion_kpa_sd",
             "rooting_depth_m", "harvest_year"]
        )  # fmt: skip
        writer.writerows(COVER_CLASSES)


# Invented assets: a road up the valley floor (along the channel line of the terrain
# formula) and a few buildings, some at the foot of the slopes and some on open ground
BUILDINGS = [  # (name, metres east of the western edge, metres north of the southern one)
    ("farm house", 465.0, 3895.0),  # on the valley floor below the western slopes
    ("mill", 4305.0, 2815.0),  # by the eastern stream, below steep ground
    ("school", 2600.0, 2500.0),  # in the open valley
    ("pump house", 2300.0, 1200.0),
    ("barn", 3600.0, 4200.0),
]


def assets() -> None:
    """quillbrook_assets.gpkg: the valley road (a line) and the buildings (points)."""
    import geopandas as gpd
    from shapely.geometry import LineString, Point

    x0, y_top = ORIGIN
    south = y_top - SIZE * CELL  # northings of the grid's southern edge
    ys = np.linspace(60.0, SIZE * CELL - 60.0, 90)
    road = LineString(
        [(x0 + 2250.0 + 260.0 * np.sin(2.0 * np.pi * y / 3100.0) + 35.0, south + y) for y in ys]
    )
    names = ["valley road", *(b[0] for b in BUILDINGS)]
    kinds = ["road", *("building" for _ in BUILDINGS)]
    geoms = [road, *(Point(x0 + bx, south + by) for _, bx, by in BUILDINGS)]
    target = HERE / "quillbrook_assets.gpkg"
    if target.exists():
        target.unlink()
    gpd.GeoDataFrame({"name": names, "kind": kinds}, geometry=geoms, crs=CRS).to_file(
        target, driver="GPKG", layer="assets"
    )


def main() -> None:
    import geopandas as gpd
    import rasterio
    from rasterio import features
    from rasterio.transform import from_origin
    from shapely.geometry import shape

    z, hollow, area_m2 = terrain()
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
    codes = unit_map(z, hollow, area_m2)
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
    design_rainfall()
    gauge_record()
    land_cover(codes, transform)
    assets()
    slides = landslide_inventory(transform)
    target = HERE / "mapped_landslides.gpkg"
    if target.exists():
        target.unlink()
    slides.to_file(target, driver="GPKG", layer="mapped_landslides")


if __name__ == "__main__":
    main()
