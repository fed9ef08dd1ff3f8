"""Soil fields cell by cell: a scenario's soil values on a tile's cells, from the units'
numbers, rasters given in their place, the ``[soil_depth]`` models and the ``[land_cover]``
roots.

For each field, in this order (later wins on the cells it sets):

1. the unit's number (soil table, polygons, a scenario override);
2. a raster named in the soil table in place of the number, resampled onto the DEM grid
   (bilinear; a scenario's number for the unit replaces it);
3. the depth model of the unit's ``[soil_depth]`` (not where the scenario overrides the
   unit's depth_m, nor with ``use_soil_depth = false``);
4. what follows from the others where a field is blank: D0 = K / C0,
   gamma_sat = max(gamma, 9.81), no root cohesion;
5. the root cohesion of the cell's land-cover class, after a harvest in the scenario's year
   (Sidle 1991) and on the slip plane at the soil's base (its rooting depth and profile)
   (not where the scenario overrides the unit's root_cohesion_kpa, nor with
   ``use_land_cover = false``). Cells in no class keep their unit's root cohesion.

Spreads: a spread's sd or cov may be a raster (``field_sd``); a cov given as a number
scales with each cell's value; other spreads keep their shape, centred on the cell's value;
a land-cover class's sd scales with its root cohesion after harvest and depth. The physics
is the core's (:mod:`slopescreen.soil_depth`, :mod:`slopescreen.root_cohesion`).
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.region.config import SOIL_FIELDS, Region, Scenario
from slopescreen.maps.region.field_config import CoverClass, DepthModel, LandCover
from slopescreen.maps.region.soils import SoilUnits
from slopescreen.root_cohesion import root_cohesion_at_depth_kpa
from slopescreen.soil_depth import (
    elevation_linear_depth_m,
    laplacian_per_m,
    slope_linear_depth_m,
    soil_production_depth_m,
)

# soil parameters the core takes, and every field a tile's cells carry (with C0 for
# D0 = K / C0): the soil fields but C0 in the core's order
CORE_FIELDS = tuple(name for name in SOIL_FIELDS if name != "moisture_capacity_per_m")
CELL_FIELDS = (*CORE_FIELDS, "moisture_capacity_per_m")
SD = "_sd"  # a field's per-cell standard deviation: "depth_m_sd"


@dataclass(frozen=True)
class CellSoil:
    """What sets one scenario's soil fields cell by cell (small and picklable)."""

    rasters: dict[str, dict[int, Path]] = field(default_factory=dict)
    depth: dict[int, DepthModel] = field(default_factory=dict)  # unit code -> model
    cover: LandCover | None = None
    cover_units: frozenset[int] = frozenset()  # the unit codes land cover sets roots on
    cover_sha256: str = ""  # the land-cover file's content (keys its polygons in memory)
    year: int | None = None
    dem: Path | None = None
    dem_unit: str = "m"
    slope_deg: Path | None = None
    elevation_range: tuple[float, float] = (math.nan, math.nan)  # the DEM's data cells
    spread_cov: dict[int, dict[str, float]] = field(default_factory=dict)
    cell_spreads: dict[int, dict[str, str]] = field(default_factory=dict)

    @property
    def varies(self) -> bool:
        """Some field varies within a unit."""
        return bool(self.rasters or self.depth or self.cover is not None)

    @property
    def spreads_by_cell(self) -> bool:
        """Some spread's sd is given cell by cell (a raster, or a land-cover class's)."""
        cover = (
            self.cover is not None
            and bool(self.cover_units)
            and any(
                math.isfinite(c.root_cohesion_sd_kpa) or math.isfinite(c.root_cohesion_cov)
                for c in self.cover.classes.values()
            )
        )
        return cover or any(n.endswith(("_sd", "_cov")) for n in self.rasters)

    def varies_for(self, name: str, code: int) -> bool:
        """Whether ``name`` varies among the cells of unit ``code``."""
        if code in self.rasters.get(name, {}):
            return True
        if name == "depth_m":
            return code in self.depth
        if name == "root_cohesion_kpa":
            return self.cover is not None and code in self.cover_units
        return False

    def varying_units(self) -> frozenset[int]:
        """Unit codes with a field that varies by cell (unit tables cannot stand for them)."""
        codes = {c for by_code in self.rasters.values() for c in by_code} | set(self.depth)
        return frozenset(codes | set(self.cover_units))

    def class_roots(self) -> dict[str, tuple[float, float]]:
        """Per land-cover class: (root cohesion in the scenario's year before depth, the
        share of the full value it is)."""
        assert self.cover is not None
        out = {}
        for name, cls in self.cover.classes.items():
            value, full = cls.roots_in(self.year), cls.root_cohesion_kpa
            out[name] = (value, value / full if full > 0 else 1.0)
        return out


def cell_soil(
    units: SoilUnits, region: Region, sc: Scenario, terrain_dir: Path, elevation_range: Any
) -> CellSoil:
    """The scenario's :class:`CellSoil`: the units' rasters after its overrides, the depth
    models and land cover it uses."""
    over = units.with_overrides(sc.soil_overrides, f"scenario {sc.name}")
    overridden = {
        units.keys.index(u) + 1: set(f) for u, f in sc.soil_overrides.items() if u in units.keys
    }
    depth: dict[int, DepthModel] = {}
    if sc.use_soil_depth:
        for model in region.soil_depth:
            for unit in model.units or units.keys:
                code = units.keys.index(unit) + 1
                if "depth_m" not in overridden.get(code, set()):
                    depth[code] = model
    cover = region.land_cover if sc.use_land_cover else None
    cover_units = frozenset(
        code
        for code in range(1, len(units.keys) + 1)
        if cover is not None and "root_cohesion_kpa" not in overridden.get(code, set())
    )
    rasters = over.rasters
    for code in depth:  # a depth model replaces a depth raster
        rasters = {
            k: ({c: p for c, p in v.items() if c != code} if k == "depth_m" else v)
            for k, v in rasters.items()
        }
    from slopescreen.maps.outputs.output_names import SLOPE_DEG

    return CellSoil(
        rasters={k: v for k, v in rasters.items() if v},
        depth=depth,
        cover=cover,
        cover_units=cover_units,
        cover_sha256=cover_digest(cover),
        year=sc.year,
        dem=region.dem,
        dem_unit=region.dem_elevation_unit,
        slope_deg=terrain_dir / SLOPE_DEG,
        elevation_range=tuple(elevation_range),  # type: ignore[arg-type]
        spread_cov=units.spread_cov,
        cell_spreads=units.cell_spreads,
    )


class SoilBlock(dict):  # type: ignore[type-arg]
    """A tile's arrays by name (cells on the last axis). Where no soil field varies by
    cell (``tables`` given), a soil field is looked up from the unit tables by the cells'
    ``codes`` when first asked for, so a run that needs few fields gathers few: the
    kernels take the unit tables and codes themselves (:attr:`by_unit`)."""

    def __init__(
        self,
        items: Any = (),
        codes: np.ndarray | None = None,
        tables: dict[str, np.ndarray] | None = None,
    ) -> None:
        super().__init__(items)
        self.codes = codes
        self.tables = tables

    @property
    def by_unit(self) -> bool:
        return self.tables is not None

    def __missing__(self, key: str) -> np.ndarray:
        if self.tables is None or self.codes is None or key not in CELL_FIELDS:
            raise KeyError(key)
        values = self.tables.get(key)
        if values is None:
            values = np.full(int(self.codes.max(initial=0)) + 1, np.nan)
        # np.take with native indices: several times faster than a fancy index
        self[key] = np.take(np.asarray(values, np.float64), self.codes.astype(np.intp))
        return self[key]

    def subset(self, mask: np.ndarray) -> SoilBlock:
        """The block at the cells ``mask`` (a mask or index along the cells)."""
        codes = None if self.codes is None else self.codes[mask]
        return SoilBlock({k: v[..., mask] for k, v in self.items()}, codes, self.tables)


def soil_cells(
    cs: CellSoil,
    tables: dict[str, np.ndarray],
    grid: Grid,
    rows: slice,
    cols: slice,
    codes: np.ndarray,
    valid: np.ndarray,
) -> SoilBlock:
    """Every soil field on the tile's ``valid`` cells (``codes``: the tile's unit codes),
    float64, and ``field_sd`` where a spread varies by cell (NaN where none); looked up by
    unit when asked for where no field varies (:class:`SoilBlock`)."""
    c = codes[valid]
    if not cs.varies:
        return SoilBlock(codes=c, tables=tables)
    lookup = SoilBlock(codes=c, tables=tables)
    out = {name: lookup[name].copy() for name in CELL_FIELDS}
    read: dict[Path, np.ndarray] = {}

    def raster(path: Path, what: str, resampling: str = "bilinear") -> np.ndarray:
        if path not in read:
            from slopescreen.maps.io.rasters import read_on_grid

            read[path] = read_on_grid(
                path, grid, what, (-math.inf, math.inf), rows, cols, resampling=resampling
            )[valid]
        return read[path]

    for name, by_code in cs.rasters.items():
        for code, path in by_code.items():
            sel = c == code
            if sel.any():
                values = raster(path, name)
                if name not in out:  # a spread's sd or cov
                    out[name] = np.full(c.shape, np.nan)
                out[name][sel] = values[sel]
    terrain = _Terrain(cs, grid, rows, cols, valid)
    for model in {id(m): m for m in cs.depth.values()}.values():
        sel = np.isin(c, [code for code, m in cs.depth.items() if m is model])
        if sel.any():
            out["depth_m"][sel] = model_depth_m(model, terrain, raster)[sel]
    _fill_blanks(out)
    _spreads_by_cell(cs, out, c)
    if cs.cover is not None and cs.cover_units:
        _cover_roots(cs, out, c, terrain)
    return SoilBlock(out, codes=c)


def _fill_blanks(out: dict[str, np.ndarray]) -> None:
    """Step 4: D0 = K / C0, gamma_sat = max(gamma, 9.81), no root cohesion where blank."""
    d = out["diffusivity_m2_s"]
    blank = np.isnan(d)
    if blank.any():
        d[blank] = out["hydraulic_conductivity_m_s"][blank] / out["moisture_capacity_per_m"][blank]
    sat = out["saturated_unit_weight_kn_m3"]
    blank = np.isnan(sat)
    if blank.any():
        sat[blank] = np.maximum(out["unit_weight_kn_m3"][blank], 9.81)
    np.nan_to_num(out["root_cohesion_kpa"], copy=False, nan=0.0)


def _spreads_by_cell(cs: CellSoil, out: dict[str, np.ndarray], c: np.ndarray) -> None:
    """``field_sd`` from a cov raster (cov times the cell's value) and from a cov given as a
    number where the field varies by cell."""
    for name in [k for k in out if k.endswith("_cov")]:
        field_name = name[: -len("_cov")]
        sd = out.setdefault(field_name + SD, np.full(c.shape, np.nan))
        given = np.isfinite(out[name])
        sd[given] = out[name][given] * np.abs(out[field_name][given])
        del out[name]
    for code, covs in cs.spread_cov.items():
        sel = c == code
        if not sel.any():
            continue
        for name, cov in covs.items():
            sd = out.setdefault(name + SD, np.full(c.shape, np.nan))
            sd[sel] = cov * np.abs(out[name][sel])


class _Terrain:
    """The tile's slope, elevation and ground Laplacian, read when a model asks."""

    def __init__(self, cs: CellSoil, grid: Grid, rows: slice, cols: slice, valid: np.ndarray):
        self.cs, self.grid, self.rows, self.cols, self.valid = cs, grid, rows, cols, valid

    def slope_deg(self) -> np.ndarray:
        from slopescreen.maps.io.rasters import read_block

        assert self.cs.slope_deg is not None
        return read_block(self.cs.slope_deg, self.rows, self.cols)[self.valid].astype(np.float64)

    def elevation_m(self) -> np.ndarray:
        from slopescreen.maps.io.grid import read_elevations

        assert self.cs.dem is not None
        z = read_elevations(self.cs.dem, self.cs.dem_unit, self.rows, self.cols)
        return z[self.valid]

    def laplacian_per_m(self) -> np.ndarray:
        """The ground Laplacian of the tile's cells (a frame of one cell read around it;
        beyond the DEM's edge, as beside a void, the neighbour counts as level)."""
        from slopescreen.maps.io.grid import read_elevations

        assert self.cs.dem is not None
        r0, r1 = max(self.rows.start - 1, 0), min(self.rows.stop + 1, self.grid.height)
        c0, c1 = max(self.cols.start - 1, 0), min(self.cols.stop + 1, self.grid.width)
        z = read_elevations(self.cs.dem, self.cs.dem_unit, slice(r0, r1), slice(c0, c1))
        top, bottom = int(self.rows.start == r0), int(self.rows.stop == r1)
        left, right = int(self.cols.start == c0), int(self.cols.stop == c1)
        z = np.pad(z, ((top, bottom), (left, right)), constant_values=np.nan)
        ue, un, ve, vn = self.grid.ground.vectors(self.rows, self.cols)
        lap = laplacian_per_m(z, np.hypot(ue, un), np.hypot(ve, vn))
        return np.broadcast_to(lap, self.valid.shape)[self.valid]


def model_depth_m(model: DepthModel, terrain: _Terrain, raster: Any) -> np.ndarray:
    """A depth model's soil depth on the tile's valid cells (the core's equations)."""
    v = model.value
    if model.model == "slope_linear":
        return np.asarray(
            slope_linear_depth_m(
                np.clip(terrain.slope_deg(), 0.0, 89.999),
                v("gentle_slope_deg"),
                v("steep_slope_deg"),
                v("gentle_depth_m"),
                v("steep_depth_m"),
            ),
            float,
        )
    if model.model == "elevation_linear":
        low, high = terrain.cs.elevation_range
        return np.asarray(
            elevation_linear_depth_m(
                terrain.elevation_m(),
                v("low_elevation_m", low),
                v("high_elevation_m", high),
                v("low_depth_m"),
                v("high_depth_m"),
            ),
            float,
        )
    if model.model == "soil_production":
        return np.asarray(
            soil_production_depth_m(
                terrain.laplacian_per_m(),
                v("production_m_yr"),
                v("density_ratio"),
                v("creep_diffusivity_m2_yr"),
                v("production_depth_m"),
                v("min_depth_m"),
                v("max_depth_m"),
            ),
            float,
        )
    assert model.path is not None
    return raster(model.path, "depth_m", model.resampling)


def cover_digest(cover: LandCover | None) -> str:
    """sha256 of the land-cover file's bytes ("" without land cover)."""
    from slopescreen.maps.io.safe_writes import file_sha256

    return "" if cover is None else file_sha256(cover.path)


def cover_classes(cs: CellSoil, grid: Grid, rows: slice, cols: slice) -> np.ndarray:
    """The tile's land-cover class per cell: 1 + the index of the class in the table, 0 for
    none. A raster's values are read by nearest cell; a value not in the table is -1."""
    cover = cs.cover
    assert cover is not None
    names = list(cover.classes)
    if cover.polygons:
        frame = _cover_polygons(cover, grid, cs.cover_sha256)
        from slopescreen.maps.io.shapes import rasterize_tile

        return rasterize_tile(frame, "class_code", grid, rows, cols).astype(np.int64)
    from slopescreen.maps.io.rasters import read_on_grid

    values = read_on_grid(
        cover.path, grid, "land cover", (-math.inf, math.inf), rows, cols, resampling="nearest"
    )
    out = np.zeros(values.shape, np.int64)
    found = np.isfinite(values)
    lookup = {}
    for i, name in enumerate(names, start=1):
        try:
            lookup[float(name)] = i
        except ValueError:
            continue
    if found.any():
        keys = np.unique(values[found])
        for key in keys:
            out[values == key] = lookup.get(float(key), -1)
    return out


_POLYGONS: dict[tuple[str, str, str], Any] = {}


def _cover_polygons(cover: LandCover, grid: Grid, digest: str) -> Any:
    """The land-cover polygons in the DEM's CRS with a class_code field (read once per
    process and file content)."""
    # keyed by the file's bytes (hashed once per job): a file rewritten in place is read again
    key = (digest, str(cover.layer), grid.crs.to_wkt())  # type: ignore[attr-defined]
    if key not in _POLYGONS:
        from slopescreen.maps.io.shapes import read_layer

        assert cover.class_field is not None
        frame = read_layer(
            cover.path, cover.layer, cover.class_field, "class_field", "land-cover polygons"
        )
        names = list(cover.classes)
        labels = frame[cover.class_field].astype(str).str.strip()
        frame = frame.assign(
            class_code=[names.index(x) + 1 if x in names else -1 for x in labels]
        ).to_crs(grid.crs)
        _POLYGONS[key] = frame
    return _POLYGONS[key]


def _cover_roots(
    cs: CellSoil, out: dict[str, np.ndarray], c: np.ndarray, terrain: _Terrain
) -> None:
    """Step 5: root cohesion (and its sd) from the cell's land-cover class."""
    assert cs.cover is not None
    classes = cover_classes(cs, terrain.grid, terrain.rows, terrain.cols)[terrain.valid]
    on = np.isin(c, list(cs.cover_units)) & (classes > 0)
    if not on.any():
        return
    roots = cs.class_roots()
    sd = out.setdefault("root_cohesion_kpa" + SD, np.full(c.shape, np.nan))
    for i, (name, cls) in enumerate(cs.cover.classes.items(), start=1):
        sel = on & (classes == i)
        if not sel.any():
            continue
        value, share = roots[name]
        at_depth = np.asarray(
            root_cohesion_at_depth_kpa(
                value, out["depth_m"][sel], cls.rooting_depth_m, cs.cover.root_profile
            ),
            float,
        )
        out["root_cohesion_kpa"][sel] = at_depth
        sd[sel] = class_sd(cls, at_depth, value, share)


def class_sd(cls: CoverClass, at_depth: np.ndarray, value: float, share: float) -> np.ndarray:
    """The sd of a class's root cohesion on its cells: a cov times the cell's value, or the
    sd scaled as the value is (after harvest and with depth); NaN where none is given."""
    if math.isfinite(cls.root_cohesion_cov):
        return cls.root_cohesion_cov * at_depth
    if math.isfinite(cls.root_cohesion_sd_kpa):
        depth_share = at_depth / value if value > 0 else np.zeros_like(at_depth)
        return cls.root_cohesion_sd_kpa * share * depth_share
    return np.full(at_depth.shape, np.nan)


def content_key(cs: CellSoil) -> str:
    """What the cell values depend on beyond the DEM and the unit tables: every raster's
    and land-cover file's bytes, the models, the year (for cache keys and the manifest)."""
    digest = hashlib.sha256()
    files = sorted(
        {p for by_code in cs.rasters.values() for p in by_code.values()}
        | {m.path for m in cs.depth.values() if m.path is not None}
        | ({cs.cover.path, cs.cover.table} if cs.cover is not None else set())
    )
    from slopescreen.maps.io.safe_writes import file_sha256

    for path in files:
        digest.update(str(path.name).encode())
        digest.update(file_sha256(path).encode())
    digest.update(repr(sorted((k, sorted(v)) for k, v in cs.rasters.items())).encode())
    digest.update(repr(sorted((c, m.text, m.units) for c, m in cs.depth.items())).encode())
    if cs.cover is not None:
        digest.update(repr((cs.cover.classes, cs.cover.root_profile, cs.year)).encode())
        digest.update(repr((cs.cover.class_field, cs.cover.layer, sorted(cs.cover_units))).encode())
    digest.update(repr((sorted(cs.spread_cov.items()), sorted(cs.cell_spreads.items()))).encode())
    digest.update(repr(cs.elevation_range).encode())
    return digest.hexdigest()


def elevation_range(region: Region, grid: Grid) -> tuple[float, float]:
    """The DEM's lowest and highest data cell (m), read tile by tile when an elevation
    model needs them (NaN otherwise)."""
    needed = any(
        m.model == "elevation_linear" and math.isnan(m.value("low_elevation_m"))
        for m in region.soil_depth
    )
    if not needed:
        return (math.nan, math.nan)
    from slopescreen.maps.io.grid import read_elevations
    from slopescreen.maps.io.rasters import windows

    low, high = math.inf, -math.inf
    for rows, cols in windows(grid):
        z = read_elevations(region.dem, region.dem_elevation_unit, rows, cols)
        if np.isfinite(z).any():
            low, high = min(low, float(np.nanmin(z))), max(high, float(np.nanmax(z)))
    return (low, high) if high > low else (low, low + 1.0)


def cell_input_files(units: SoilUnits, region: Region) -> list[Path]:
    """Every file soil fields are read from cell by cell (for the manifest's hashes)."""
    files = {p for by_code in units.rasters.values() for p in by_code.values()}
    files |= {m.path for m in region.soil_depth if m.path is not None}
    if region.land_cover is not None:
        files |= {region.land_cover.path, region.land_cover.table}
    return sorted(files)


def field_range(name: str) -> tuple[float, float]:
    """The allowed range of a soil field's cell values (a spread's sd: 0 up; cov: 0 to 5)."""
    if name in SOIL_FIELDS:
        return SOIL_FIELDS[name][:2]
    return (0.0, 5.0) if name.endswith("_cov") else (0.0, math.inf)


def check_cell_inputs(units: SoilUnits, region: Region, grid: Grid, dem_cells: Any) -> None:
    """Before a run, tile by tile: each raster given for a soil field (or as a depth model)
    covers every mapped cell of its units and lies in the field's range, the saturated unit
    weight is not below the moist one on any cell, and every land-cover value on a mapped
    cell is a class of the table. One line naming the raster, the count and one cell."""
    checks: list[tuple[str, Path, frozenset[int], str]] = []
    for name, by_code in units.rasters.items():
        for path in sorted(set(by_code.values())):
            codes = frozenset(c for c, p in by_code.items() if p == path)
            checks.append((name, path, codes, "bilinear"))
    for model in region.soil_depth:
        if model.path is not None:
            codes = frozenset(units.keys.index(u) + 1 for u in model.units or units.keys)
            checks.append(("depth_m", model.path, codes, model.resampling))
    weights = any(n in units.rasters for n in ("unit_weight_kn_m3", "saturated_unit_weight_kn_m3"))
    cover = region.land_cover
    if not checks and not weights and cover is None:
        return
    from slopescreen.maps.io.rasters import read_on_grid, windows

    bad_count: dict[tuple[str, Path, str], int] = {}
    first: dict[tuple[str, Path, str], str] = {}
    every = CellSoil(
        cover=cover,
        cover_units=frozenset(range(1, len(units.keys) + 1)),
        cover_sha256=cover_digest(cover),
    )
    for rows, cols in windows(grid):
        codes = units.rasterize(grid, rows, cols)
        mapped = dem_cells(rows, cols) & (codes > 0)
        if not mapped.any():
            continue
        for name, path, unit_codes, resampling in checks:
            on = mapped & np.isin(codes, list(unit_codes))
            if not on.any():
                continue
            v = read_on_grid(
                path, grid, name, (-math.inf, math.inf), rows, cols, resampling=resampling
            )
            low, high = field_range(name)
            place = _Place(grid, rows, cols, codes, units.keys)
            for kind, bad in (
                ("no value", on & ~np.isfinite(v)),
                ("outside", on & np.isfinite(v) & ((v < low) | (v > high))),
            ):
                key = (name, path, kind)
                n = int(bad.sum())
                if n:
                    bad_count[key] = bad_count.get(key, 0) + n
                    first.setdefault(key, place.first(bad, v))
        if weights:
            _check_weights(units, grid, rows, cols, codes, mapped)
        if cover is not None:
            bad = mapped & (cover_classes(every, grid, rows, cols) < 0)
            if bad.any():
                raise InputError(
                    f"{cover.path}: land-cover values not in {cover.table.name} on "
                    f"{int(bad.sum())} mapped cells of a tile, e.g. "
                    f"{_Place(grid, rows, cols, codes, units.keys).first(bad)}; classes: "
                    f"{', '.join(cover.classes)}"
                )
    for (name, path, kind), n in bad_count.items():
        low, high = field_range(name)
        what = "has no value" if kind == "no value" else f"is outside [{low:g}, {high:g}]"
        raise InputError(
            f"{path}: {name} raster {what} on {n} mapped cells, e.g. {first[(name, path, kind)]}"
        )


@dataclass(frozen=True)
class _Place:
    """Where a tile's cell lies, for an error line."""

    grid: Grid
    rows: slice
    cols: slice
    codes: np.ndarray
    keys: list[str]

    def first(self, bad: np.ndarray, values: np.ndarray | None = None) -> str:
        r, c = np.argwhere(bad)[0]
        x, y = self.grid.centre_xy(self.rows.start + r, self.cols.start + c)
        value = ""
        if values is not None:
            value = "no value " if not np.isfinite(values[r, c]) else f"{values[r, c]:g} "
        return (
            f"{value}at x = {x:.6g}, y = {y:.6g} (row {self.rows.start + r}, column "
            f"{self.cols.start + c}, unit {self.keys[int(self.codes[r, c]) - 1]!r})"
        )


def _check_weights(
    units: SoilUnits, grid: Grid, rows: slice, cols: slice, codes: np.ndarray, mapped: np.ndarray
) -> None:
    """The saturated unit weight is not below the moist one on any mapped cell."""
    v = soil_cells(
        CellSoil(rasters=units.rasters), units.parameters, grid, rows, cols, codes, mapped
    )
    bad_cells = v["saturated_unit_weight_kn_m3"] < v["unit_weight_kn_m3"]
    if bad_cells.any():
        i = int(np.flatnonzero(bad_cells)[0])
        bad = np.zeros(mapped.shape, bool)
        bad[tuple(np.argwhere(mapped)[i])] = True
        raise InputError(
            f"saturated_unit_weight_kn_m3 is below unit_weight_kn_m3 on "
            f"{int(bad_cells.sum())} mapped cells of a tile, e.g. "
            f"{v['saturated_unit_weight_kn_m3'][i]:g} < {v['unit_weight_kn_m3'][i]:g} "
            f"{_Place(grid, rows, cols, codes, units.keys).first(bad)}"
        )


def soil_at(
    cs: CellSoil,
    tables: dict[str, np.ndarray],
    grid: Grid,
    codes_path: Path,
    rows: np.ndarray,
    cols: np.ndarray,
) -> dict[str, np.ndarray]:
    """Each soil field at the cells (rows, cols) of the grid (repeats allowed; NaN at cells
    without a unit), read tile by tile (only the tiles holding one of the cells)."""
    from slopescreen.maps.io.rasters import read_block, windows

    out: dict[str, np.ndarray] = {}
    for r, c in windows(grid):
        inside = (rows >= r.start) & (rows < r.stop) & (cols >= c.start) & (cols < c.stop)
        if not inside.any():
            continue
        codes = read_block(codes_path, r, c).astype(np.int64)
        mask = np.zeros(codes.shape, bool)
        mask[rows[inside] - r.start, cols[inside] - c.start] = True
        mask &= codes > 0
        values = soil_cells(cs, tables, grid, r, c, codes, mask)
        index = np.full(codes.shape, -1)
        index[mask] = np.arange(int(mask.sum()))
        at = index[rows[inside] - r.start, cols[inside] - c.start]
        for name in (*CELL_FIELDS, *(k for k in values if k not in CELL_FIELDS)):
            target = out.setdefault(name, np.full(rows.shape, np.nan))
            target[np.flatnonzero(inside)[at >= 0]] = values[name][at[at >= 0]]
    return out
