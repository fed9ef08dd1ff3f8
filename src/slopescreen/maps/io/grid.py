"""Reading the DEM and its grid; the grid's ground geometry comes from ``ground``."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.safe_writes import file_sha256
from slopescreen.maps.terrain.ground import Ground, ground_geometry

FEET_TO_M = 0.3048


@dataclass(frozen=True)
class Grid:
    """The DEM's grid: every output shares it. Ground lengths and areas come from
    ``ground`` (see :mod:`slopescreen.maps.terrain.ground`), never from the map units."""

    path: Path
    width: int
    height: int
    transform: object  # affine.Affine
    crs: object  # rasterio.crs.CRS
    ground: Ground

    @property
    def shape(self) -> tuple[int, int]:
        return (self.height, self.width)

    @property
    def geographic(self) -> bool:
        return self.ground.kind == "geographic"

    @property
    def spacing_note(self) -> str:
        return self.ground.note

    def centre_xy(self, row: int, col: int) -> tuple[float, float]:
        """Map coordinates of the centre of the cell (row, col): where an error points."""
        return self.transform * (col + 0.5, row + 0.5)  # type: ignore[operator]


MAX_CELLS = 2**31 - 1  # routing is tiled; whole-grid steps are checked to 4 x 10^8 cells


def dem_files_sha256(path: Path) -> dict[str, str]:
    """SHA-256 of every file GDAL reads for the DEM (a VRT and each of its sources, side
    files such as .aux.xml), by path relative to the DEM's folder where it lies below it."""
    import rasterio

    with rasterio.open(path) as src:
        files = [Path(f) for f in src.files] or [Path(path)]
    out: dict[str, str] = {}
    base = Path(path).resolve().parent
    for f in files:
        resolved = f.resolve()
        name = str(resolved.relative_to(base)) if resolved.is_relative_to(base) else str(f)
        try:
            out[name] = file_sha256(resolved)
        except OSError as exc:
            raise InputError(f"{path}: cannot read DEM file {f} ({exc.strerror})") from None
    return out


def read_grid(path: Path, dem_crs: str | None = None) -> Grid:
    """The DEM's grid (no elevations read); InputError for rasters we cannot use.
    ``dem_crs``: the scenario file's CRS for a DEM that carries none."""
    import rasterio
    from rasterio.crs import CRS

    try:
        src = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(f"{path}: cannot read DEM ({exc})") from None
    with src:
        if src.count != 1:
            raise InputError(f"{path}: DEM must have one band, found {src.count}")
        crs = src.crs
        if crs is None and dem_crs is None:
            raise InputError(
                f"{path}: DEM has no coordinate reference system; declare it in the scenario "
                'file ([region] dem_crs = "EPSG:...") or assign one to the file'
            )
        if crs is not None and dem_crs is not None:
            raise InputError(
                f"{path}: [region] dem_crs is for a DEM without a coordinate reference system; "
                f"this one has {crs.to_string()}: remove dem_crs"
            )
        if crs is None:
            crs = CRS.from_user_input(dem_crs)
        t = src.transform
        if t.b != 0.0 or t.d != 0.0 or t.e >= 0.0 or t.a <= 0.0:
            raise InputError(
                f"{path}: DEM must be north-up without rotation or mirroring "
                "(pixel width > 0, pixel height < 0); warp it first, e.g. with gdalwarp"
            )
        if src.width < 3 or src.height < 3:
            raise InputError(
                f"{path}: DEM must be at least 3 x 3 cells, got {src.width} x {src.height}"
            )
        if src.width * src.height > MAX_CELLS:
            raise InputError(
                f"{path}: DEM has {src.width * src.height:,} cells; at most {MAX_CELLS:,} "
                "(2^31 - 1) per run: split the region into parts"
            )
        try:
            ground = ground_geometry(t, crs, src.height, src.width)
        except InputError as exc:
            raise InputError(f"{path}: {exc}") from None
        return Grid(
            path=Path(path),
            width=src.width,
            height=src.height,
            transform=t,
            crs=crs,
            ground=ground,
        )


def read_elevations(
    path: Path, elevation_unit: str = "m", rows: slice | None = None, cols: slice | None = None
) -> np.ndarray:
    """Elevations in metres as float64, NaN for no data; a window when rows/cols are given."""
    import rasterio
    from rasterio.windows import Window

    with rasterio.open(path) as src:
        window = None
        if rows is not None and cols is not None:
            window = Window(cols.start, rows.start, cols.stop - cols.start, rows.stop - rows.start)
        z = src.read(1, masked=True, window=window).astype(np.float64).filled(np.nan)
    z[~np.isfinite(z)] = np.nan
    if elevation_unit == "ft":
        z *= FEET_TO_M
    return z


def read_dem(path: Path, elevation_unit: str = "m") -> tuple[Grid, np.ndarray]:
    """The DEM's grid and all its elevations (metres, NaN = no data)."""
    grid = read_grid(path)
    z = read_elevations(path, elevation_unit)
    if np.isnan(z).all():
        raise InputError(f"{path}: DEM holds no data cells")
    return grid, z
