"""Rain on a grid, step by step: a NetCDF file following the CF conventions (read with
xarray) or a folder of rasters named by time; each step resampled onto the DEM grid tile by
tile (bilinear, as every rain raster: GDAL's warper), in mm/h.

NetCDF (CF conventions 1.x, "Standard Name Table" and "Units" sections): the variable named
by ``rain_variable``, or else the one whose ``standard_name`` is one of
``STANDARD_NAMES``; dimensions (time, y, x) with regular 1-D coordinates; its CRS from its
``grid_mapping`` variable's ``crs_wkt`` or ``spatial_ref`` attribute, or longitude and
latitude coordinates (EPSG:4326); its ``units`` one of ``UNITS`` (a rate, or an amount in
each interval); each step's interval from the time axis' ``bounds`` variable, or else (a
stated choice) each time marks the end of its interval and the first interval is as long
as the second.

A folder: GeoTIFFs whose names hold a date-time (``rain_2026-11-30T01:00.tif``,
``20261130T0100.tif``, ``202611300100.tif``...), each time the end of its interval (the
first as long as the second), their unit stated by ``rain_series_unit`` ("mm_h" or "mm").
"""

from __future__ import annotations

import itertools
import re
from datetime import datetime
from pathlib import Path
from typing import Any, NamedTuple

import numpy as np

from slopescreen.errors import InputError

MAX_RAIN_MM_H = 1000.0
STANDARD_NAMES = (
    "rainfall_flux",
    "precipitation_flux",
    "lwe_precipitation_rate",
    "rainfall_rate",
    "rainfall_amount",
    "precipitation_amount",
    "lwe_thickness_of_precipitation_amount",
    "thickness_of_rainfall_amount",
)
# unit (spaces single, no ^ or **) -> (factor, kind): a rate times factor is mm/h, an
# amount times factor is mm (1 kg m-2 of water is 1 mm, common practice)
UNITS = {
    "kg m-2 s-1": (3600.0, "rate"),
    "mm s-1": (3600.0, "rate"),
    "mm/s": (3600.0, "rate"),
    "m s-1": (3.6e6, "rate"),
    "m/s": (3.6e6, "rate"),
    "mm h-1": (1.0, "rate"),
    "mm hr-1": (1.0, "rate"),
    "mm/h": (1.0, "rate"),
    "mm/hr": (1.0, "rate"),
    "kg m-2": (1.0, "amount"),
    "mm": (1.0, "amount"),
    "m": (1000.0, "amount"),
}
FOLDER_UNITS = {"mm_h": (1.0, "rate"), "mm": (1.0, "amount")}
_STAMP = re.compile(r"(\d{4})-?(\d{2})-?(\d{2})[T_ -]?(\d{2}):?(\d{2})(?::?(\d{2}))?")


class RainSeries(NamedTuple):
    """A rain series read and checked: where, its steps' ends (h from the first start, the
    first start as text), each step's factor to mm/h, the spatial mean of each step (mm/h)
    and what to read per tile (the rasters, or the NetCDF variable and its grid)."""

    path: Path
    start: str
    ends_h: np.ndarray
    to_mm_h: np.ndarray  # per step: a value times this is mm/h
    mean_mm_h: np.ndarray
    files: tuple[Path, ...] = ()  # a folder's rasters, in time order
    variable: str = ""  # a NetCDF file's variable
    crs_wkt: str = ""
    transform: tuple[float, ...] = ()  # the NetCDF grid's affine (a, b, c, d, e, f)
    flip_rows: bool = False  # its y coordinate rises: rows read upside down


def read_series(path: Path, variable: str | None = None, unit: str | None = None) -> RainSeries:
    """A NetCDF file (``variable`` optional) or a folder of rasters (``unit`` needed),
    checked; one line naming the file for what is wrong."""
    if path.is_dir():
        if variable is not None:
            raise InputError(f"{path}: rain_variable is for NetCDF files, not a folder")
        if unit not in FOLDER_UNITS:
            raise InputError(
                f"{path}: a folder of rain rasters needs rain_series_unit, one of "
                f"{', '.join(FOLDER_UNITS)}"
            )
        return _folder(path, *FOLDER_UNITS[unit])
    if unit is not None:
        raise InputError(f"{path}: a NetCDF file states its unit; remove rain_series_unit")
    return _netcdf(path, variable)


def _intervals(path: Path, ends: list[datetime] | np.ndarray) -> tuple[str, np.ndarray]:
    """(the first start, ends in h from it) from times marking the ends of intervals, the
    first interval as long as the second."""
    hours = np.array([np.datetime64(t, "s").astype("int64") / 3600.0 for t in ends])
    if hours.size < 2:
        raise InputError(f"{path}: a rain series needs two times or more (or time bounds)")
    if (np.diff(hours) <= 0.0).any():
        k = int(np.flatnonzero(np.diff(hours) <= 0.0)[0]) + 1
        raise InputError(f"{path}: time {ends[k]} is not after the one before it")
    start = hours[0] - (hours[1] - hours[0])
    return str(np.datetime64(round(start * 3600.0), "s")), hours - start


def _folder(path: Path, factor: float, kind: str) -> RainSeries:
    import rasterio

    stamped = []
    for file in sorted(path.iterdir()):
        if file.suffix.lower() not in (".tif", ".tiff"):
            continue
        found = _STAMP.search(file.name)
        if found is None:
            raise InputError(f"{file}: no date-time in the name (e.g. rain_2026-11-30T01:00.tif)")
        parts = [int(p) if p else 0 for p in found.groups()]
        try:
            stamped.append((datetime(*parts), file))  # type: ignore[misc]
        except ValueError:
            raise InputError(f"{file}: {found.group(0)!r} is not a date-time") from None
    if not stamped:
        raise InputError(f"{path}: no rain raster (.tif) in the folder")
    stamped.sort()
    times = [t for t, _ in stamped]
    repeated = [t for a, t in itertools.pairwise(times) if a == t]
    if repeated:
        raise InputError(f"{path}: two rasters for {repeated[0].isoformat()}")
    start, ends = _intervals(path, times)
    widths = np.diff(np.r_[0.0, ends])
    to_mm_h = factor / widths if kind == "amount" else np.full(ends.size, factor)
    means = []
    for (_, file), scale in zip(stamped, to_mm_h, strict=True):
        with rasterio.open(file) as src:
            data = src.read(1, masked=True).astype(float) * scale
        means.append(_checked(file, np.ma.filled(data, np.nan)))
    return RainSeries(
        path, start, ends, to_mm_h, np.array(means), files=tuple(f for _, f in stamped)
    )


def _checked(where: Path | str, mm_h: np.ndarray) -> float:
    """The step's mean (mm/h) once its values are checked within 0 to MAX_RAIN_MM_H."""
    values = mm_h[np.isfinite(mm_h)]
    if values.size == 0:
        raise InputError(f"{where}: the step has no rain value")
    low, high = float(values.min()), float(values.max())
    if low < 0.0 or high > MAX_RAIN_MM_H:
        bad = low if low < 0.0 else high
        raise InputError(f"{where}: rain {bad:g} mm/h is beyond 0 to {MAX_RAIN_MM_H:g} mm/h")
    return float(values.mean())


def _variable(path: Path, data: Any, name: str | None) -> str:
    if name is not None:
        if name not in data.data_vars:
            raise InputError(
                f"{path}: no variable {name!r} (has {', '.join(map(str, data.data_vars))})"
            )
        return name
    found = [v for v in data.data_vars if data[v].attrs.get("standard_name") in STANDARD_NAMES]
    if len(found) != 1:
        raise InputError(
            f"{path}: {'no' if not found else 'more than one'} variable with a precipitation "
            f"standard_name ({', '.join(STANDARD_NAMES[:3])}...); name one with rain_variable"
        )
    return str(found[0])


def _netcdf(path: Path, name: str | None) -> RainSeries:
    import xarray as xr

    try:
        data = xr.open_dataset(path, decode_times=True)
    except Exception as exc:
        raise InputError(f"{path}: cannot read as NetCDF ({str(exc).splitlines()[0]})") from None
    with data:
        variable = _variable(path, data, name)
        field = data[variable]
        if field.ndim != 3:
            raise InputError(f"{path}: {variable} needs dimensions (time, y, x), has {field.dims}")
        time_dim, y_dim, x_dim = field.dims
        unit = " ".join(
            str(field.attrs.get("units", "")).replace("**", "").replace("^", "").split()
        )
        if unit not in UNITS:
            raise InputError(f"{path}: {variable} has units {unit!r}; allowed: {', '.join(UNITS)}")
        factor, kind = UNITS[unit]
        times = data[time_dim]
        if not np.issubdtype(times.dtype, np.datetime64):
            raise InputError(f"{path}: the time axis {time_dim!r} is not in a standard calendar")
        bounds = times.attrs.get("bounds")
        if bounds is not None and bounds in data:
            edges = data[bounds].values.astype("datetime64[s]").astype("int64") / 3600.0
            if (np.abs(edges[1:, 0] - edges[:-1, 1]) > 1.0 / 3600.0).any():
                raise InputError(f"{path}: the time bounds leave gaps or overlap")
            if (edges[:, 1] <= edges[:, 0]).any():
                raise InputError(f"{path}: a time interval ends before it starts")
            start = str(np.datetime64(round(edges[0, 0] * 3600.0), "s"))
            ends = edges[:, 1] - edges[0, 0]
        else:
            start, ends = _intervals(path, times.values)
        widths = np.diff(np.r_[0.0, ends])
        to_mm_h = factor / widths if kind == "amount" else np.full(ends.size, factor)
        crs_wkt = _crs(path, data, field, x_dim, y_dim)
        transform, flip = _transform(path, data[x_dim].values, data[y_dim].values)
        means = [
            _checked(f"{path}: step {k + 1}", field.isel({time_dim: k}).values.astype(float) * s)
            for k, s in enumerate(to_mm_h)
        ]
    return RainSeries(
        path, start, ends, to_mm_h, np.array(means), variable=variable, crs_wkt=crs_wkt,
        transform=transform, flip_rows=flip,
    )  # fmt: skip


def _crs(path: Path, data: Any, field: Any, x_dim: str, y_dim: str) -> str:
    """The grid's CRS as WKT: the grid_mapping's crs_wkt or spatial_ref, or longitude and
    latitude (EPSG:4326)."""
    from pyproj import CRS

    mapping = field.attrs.get("grid_mapping") or field.encoding.get("grid_mapping")
    if mapping and mapping in data.variables:
        attrs = data[mapping].attrs
        text = attrs.get("crs_wkt") or attrs.get("spatial_ref")
        if text:
            return CRS.from_wkt(text).to_wkt()
    names = {data[d].attrs.get("standard_name") for d in (x_dim, y_dim)}
    if names == {"longitude", "latitude"}:
        return CRS.from_epsg(4326).to_wkt()
    raise InputError(
        f"{path}: no CRS: give the variable a grid_mapping with crs_wkt, or longitude and "
        "latitude coordinates"
    )


def _transform(path: Path, x: np.ndarray, y: np.ndarray) -> tuple[tuple[float, ...], bool]:
    """The affine of a regular grid of cell centres x, y (y rising: rows flipped)."""
    dx, dy = np.diff(x), np.diff(y)
    if x.size < 2 or y.size < 2:
        raise InputError(f"{path}: the rain grid needs two columns and two rows or more")
    regular = np.allclose(dx, dx[0], rtol=1e-6) and np.allclose(dy, dy[0], rtol=1e-6)
    if not regular or dx[0] <= 0.0 or dy[0] == 0.0:
        raise InputError(f"{path}: the rain grid's x and y coordinates are not evenly spaced")
    step_x, step_y = float(dx[0]), float(abs(dy[0]))
    top = float(max(y[0], y[-1])) + step_y / 2.0
    return (step_x, 0.0, float(x[0]) - step_x / 2.0, 0.0, -step_y, top), bool(dy[0] > 0)


def series_on_tile(
    series: RainSeries, grid: Any, rows: slice, cols: slice, resampling: str = "bilinear"
) -> np.ndarray:
    """The series on a window of the DEM grid, (steps, rows, cols) in mm/h, NaN where a step
    has no value: each step resampled by GDAL's warper, bilinearly (a smooth field, every
    cell its own history) or by the nearest grid cell (each DEM cell its grid cell's
    history: few distinct histories, tabulated, so many times faster)."""
    from slopescreen.maps.io.rasters import read_on_grid

    shape = (len(series.ends_h), rows.stop - rows.start, cols.stop - cols.start)
    out = np.empty(shape)
    if series.files:
        for k, (file, scale) in enumerate(zip(series.files, series.to_mm_h, strict=True)):
            raw = read_on_grid(
                file, grid, "rain_series", (0.0, np.inf), rows, cols, resampling=resampling
            )
            out[k] = raw * scale
        return out
    import rasterio.warp
    import xarray as xr
    from affine import Affine
    from rasterio.crs import CRS

    window = grid.transform * Affine.translation(cols.start, rows.start)
    with xr.open_dataset(series.path) as data:
        field = data[series.variable]
        for k, scale in enumerate(series.to_mm_h):
            step = field.isel({field.dims[0]: k}).values.astype(float)
            step = step[::-1] if series.flip_rows else step
            out[k] = np.nan
            rasterio.warp.reproject(
                np.ascontiguousarray(step * scale), out[k],
                src_transform=Affine(*series.transform), src_crs=CRS.from_wkt(series.crs_wkt),
                src_nodata=np.nan, dst_transform=window, dst_crs=grid.crs, dst_nodata=np.nan,
                resampling=rasterio.warp.Resampling[resampling],
            )  # fmt: skip
    return out
