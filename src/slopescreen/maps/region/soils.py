"""Soil units: polygons (geopandas) and their parameters, rasterized onto the DEM grid."""

from __future__ import annotations

import dataclasses
import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.textfiles import read_csv_dicts
from slopescreen.maps.region.config import (
    HYDRAULIC_FIELDS,
    SOIL_FIELDS,
    Region,
    did_you_mean,
)
from slopescreen.maps.region.scenario_schema import SPREAD_SUFFIXES, UNCERTAIN_FIELDS
from slopescreen.reliability import Spread, spread

EXTRA_COLUMNS = ("c_phi_correlation", "strength_lab_tests")
ALL_COLUMNS = (
    "name",
    "description",
    *SOIL_FIELDS,
    *(f + s for f in UNCERTAIN_FIELDS for s in SPREAD_SUFFIXES),
    *EXTRA_COLUMNS,
)


@dataclass
class SoilUnits:
    """Units numbered 1..N in key order; code 0 is 'no unit'."""

    keys: list[str]
    parameters: dict[str, np.ndarray]  # field -> values by code (index 0 = NaN)
    polygons: Any  # GeoDataFrame of "code" and geometry, in the DEM's CRS
    unmapped_share: float  # share of DEM data cells without a unit
    warnings: list[str] = field(default_factory=list)
    sources: dict[str, str] = field(default_factory=dict)
    spreads: dict[int, dict[str, Spread]] = field(default_factory=dict)  # by unit code
    correlations: dict[int, float] = field(default_factory=dict)  # c'-phi' by unit code
    data_cells: int = 0  # DEM cells with data
    codes_sha256: str = ""  # content of the rasterized unit codes (set with the coverage)
    diffusivity_derived: frozenset[int] = frozenset()  # codes whose D0 is K / C0
    saturated_defaulted: frozenset[int] = frozenset()  # codes whose gamma_sat is gamma
    lab_tests: dict[str, Path] = field(default_factory=dict)  # unit -> lab-test CSV fitted
    # soil fields given as rasters: field (or a spread's field_sd / field_cov) -> code -> path
    rasters: dict[str, dict[int, Path]] = field(default_factory=dict)
    spread_cov: dict[int, dict[str, float]] = field(default_factory=dict)  # code -> cov given
    # code -> field -> distribution of a spread whose sd or cov is a raster
    cell_spreads: dict[int, dict[str, str]] = field(default_factory=dict)
    names: dict[str, str] = field(default_factory=dict)  # unit -> its name in the soil table

    def label(self, key: str) -> str:
        """A unit as people read it: its code and, where the soil table names it, the name."""
        name = self.names.get(key, "")
        return f"{key} ({name})" if name and name != key else key

    def raster(self, name: str, code: int) -> Path | None:
        """The raster giving ``name`` for unit ``code``, or None (a number)."""
        return self.rasters.get(name, {}).get(code)

    def unit_spreads(self, code: int) -> dict[str, Spread]:
        """The unit's spreads, centred on its current (possibly overridden) means."""
        out = {}
        for name, sp in self.spreads.get(code, {}).items():
            shift = float(self.parameters[name][code]) - float(sp.mean)
            out[name] = dataclasses.replace(
                sp,
                mean=sp.mean + shift,
                low=sp.low + shift,
                mode=sp.mode + shift,
                high=sp.high + shift,
            )
        return out

    def rasterize(self, grid: Grid, rows: slice, cols: slice) -> np.ndarray:
        """uint16 unit codes of one tile (0: no unit), from the polygons that touch it."""
        from slopescreen.maps.io.shapes import rasterize_tile

        return rasterize_tile(self.polygons, "code", grid, rows, cols).astype(np.uint16)

    def measure_coverage(self, grid: Grid, valid_tile: Any, sink: Any = None) -> None:
        """Rasterize tile by tile (into ``sink`` when given) and report unmapped cells."""
        from slopescreen.maps.io.rasters import windows

        data_cells = unmapped = 0
        digest = hashlib.sha256()
        for rows, cols in windows(grid):
            codes = self.rasterize(grid, rows, cols)
            valid = valid_tile(rows, cols)
            codes[~valid] = 0
            digest.update(f"{rows.start},{cols.start},{codes.shape}".encode())
            digest.update(np.ascontiguousarray(codes).tobytes())
            data_cells += int(valid.sum())
            unmapped += int((valid & (codes == 0)).sum())
            if sink is not None:
                sink.write(rows, cols, codes)
        self.data_cells = data_cells
        self.codes_sha256 = digest.hexdigest()
        self.unmapped_share = unmapped / data_cells if data_cells else 0.0
        self.warnings = [w for w in self.warnings if "lie in no soil unit" not in w]
        if unmapped:
            self.warnings.append(
                f"{self.unmapped_share:.1%} of the DEM's data cells "
                f"({unmapped} cells) lie in no soil unit and are left unmapped"
            )

    def with_overrides(self, overrides: dict[str, dict[str, Any]], where: str) -> SoilUnits:
        """A copy with per-unit parameter overrides applied (unknown units are errors); an
        override that is a raster path gives the field cell by cell."""
        params = {k: v.copy() for k, v in self.parameters.items()}
        rasters = {k: dict(v) for k, v in self.rasters.items()}
        for unit, fields in overrides.items():
            if unit not in self.keys:
                raise InputError(
                    f"{where}: soil override for unknown unit {unit!r}; units: "
                    f"{', '.join(self.keys)}"
                )
            code = self.keys.index(unit) + 1
            for name, value in fields.items():
                rasters.get(name, {}).pop(code, None)  # the override replaces a raster
                if isinstance(value, Path):
                    params[name][code] = np.nan
                    rasters.setdefault(name, {})[code] = value
                else:
                    params[name][code] = value
                if name in HYDRAULIC_FIELDS:  # one hydraulic property replaces the other
                    other = next(h for h in HYDRAULIC_FIELDS if h != name)
                    params[other][code] = np.nan
                    rasters.get(other, {}).pop(code, None)
            capacity = "moisture_capacity_per_m" in fields
            conductivity = "hydraulic_conductivity_m_s" in fields
            if "diffusivity_m2_s" not in fields and (
                capacity or (conductivity and code in self.diffusivity_derived)
            ):  # D0 = K / C0 follows a new K or C0
                params["diffusivity_m2_s"][code] = (
                    params["hydraulic_conductivity_m_s"][code]
                    / params["moisture_capacity_per_m"][code]
                )
            moist = params["unit_weight_kn_m3"][code]
            wet = params["saturated_unit_weight_kn_m3"][code]
            defaulted = code in self.saturated_defaulted
            if defaulted and "saturated_unit_weight_kn_m3" not in fields:
                wet = params["saturated_unit_weight_kn_m3"][code] = max(moist, 9.81)  # "as above"
            if wet < moist:  # (NaN where one is a raster: checked cell by cell)
                raise InputError(
                    f"{where}: soil override for unit {unit!r}: saturated_unit_weight_kn_m3 "
                    f"{wet:g} would be below unit_weight_kn_m3 ({moist:g}); give both"
                )
        return dataclasses.replace(
            self, parameters=params, rasters={k: v for k, v in rasters.items() if v}
        )


def _to_float(source: str, unit: str, name: str, value: Any) -> float:
    if value is None or (isinstance(value, str) and not value.strip()):
        return math.nan
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(
            f"{source}: unit {unit!r}, field {name}: {value!r} is not a number"
        ) from None
    return number


def _raster_value(source: str, unit: str, name: str, value: Any) -> Path | None:
    """The raster a soil field names in place of a number, or None for a number or a blank
    (a path relative to the soil table; it must exist)."""
    if not isinstance(value, str) or not value.strip():
        return None
    try:
        float(value)
        return None
    except ValueError:
        pass
    path = (Path(source).parent / value.strip()).resolve()
    if not path.is_file():
        raise InputError(
            f"{source}: unit {unit!r}, field {name}: {value.strip()!r} is neither a number "
            f"nor a raster file (not found: {path})"
        )
    return path


def _check_unit(
    source: str, unit: str, values: dict[str, float], given: frozenset[str] = frozenset()
) -> None:
    """Ranges and required fields of one unit; ``given``: fields set cell by cell (a raster
    or a depth model), checked on the cells instead."""
    for name, (low, high, required) in SOIL_FIELDS.items():
        v = values.get(name, math.nan)
        if math.isnan(v):
            if required and name not in given:
                raise InputError(
                    f"{source}: unit {unit!r}, field {name}: missing; required, "
                    f"allowed range [{low:g}, {high:g}]"
                )
            continue
        if not low <= v <= high:
            raise InputError(
                f"{source}: unit {unit!r}, field {name}: {v:g} is outside the "
                f"allowed range [{low:g}, {high:g}]"
            )
    if all(math.isnan(values.get(h, math.nan)) and h not in given for h in HYDRAULIC_FIELDS):
        raise InputError(
            f"{source}: unit {unit!r}: needs hydraulic_conductivity_m_s or transmissivity_m2_day"
        )
    sat = values.get("saturated_unit_weight_kn_m3", math.nan)
    if not math.isnan(sat) and sat < values["unit_weight_kn_m3"]:
        raise InputError(
            f"{source}: unit {unit!r}, field saturated_unit_weight_kn_m3: {sat:g} "
            f"is below unit_weight_kn_m3 ({values['unit_weight_kn_m3']:g})"
        )


def _unit_spreads(
    source: str,
    unit: str,
    record: dict[str, Any],
    values: dict[str, float],
    rasters: dict[str, Path] | None = None,
    cell_given: frozenset[str] = frozenset(),
) -> tuple[dict[str, Spread], float, dict[str, float], dict[str, str]]:
    """Spreads of one unit from its columns (and a lab-test envelope fit, which also sets the
    unit's cohesion and friction means); ``values`` is updated with those means. Also the
    covs given as numbers (a field varying by cell scales its sd with each cell's value) and
    the distributions of spreads whose sd or cov is a raster (``rasters``: field_sd or
    field_cov -> path). ``cell_given``: fields whose values vary by cell."""
    rasters = rasters or {}
    spreads: dict[str, Spread] = {}
    covs: dict[str, float] = {}
    cell_kinds: dict[str, str] = {}
    rho = 0.0
    lab = record.get("strength_lab_tests")
    if isinstance(lab, str) and lab.strip():
        from slopescreen.maps.io.labtests import fit_file

        path = (Path(source).parent / lab.strip()).resolve()
        try:
            _, fit = fit_file(path)
            c, phi, rho = fit.strength_spreads()
        except InputError as exc:
            raise InputError(f"{source}: unit {unit!r}, field strength_lab_tests: {exc}") from None
        values["cohesion_kpa"] = max(float(c.mean), 0.0)
        values["friction_deg"] = float(phi.mean)
        spreads["cohesion_kpa"] = dataclasses.replace(c, mean=np.asarray(values["cohesion_kpa"]))
        spreads["friction_deg"] = phi
    for name in UNCERTAIN_FIELDS:
        raw = {suffix[1:]: record.get(name + suffix) for suffix in SPREAD_SUFFIXES}
        for k in ("low", "mode", "high"):
            if _raster_value(source, unit, f"{name}_{k}", raw[k]) is not None:
                raise InputError(
                    f"{source}: unit {unit!r}, field {name}_{k}: a raster may give a spread's "
                    "_sd or _cov only (one value per cell); give a number"
                )
        cell = [k for k in ("sd", "cov") if f"{name}_{k}" in rasters]
        if cell:
            kind = str(raw.get("distribution") or "").strip() or "normal"
            if kind not in ("normal", "lognormal"):
                raise InputError(
                    f"{source}: unit {unit!r}, field {name}_{cell[0]}: a spread from a raster "
                    f"is normal or lognormal, not {kind}"
                )
            if len([k for k in ("sd", "cov") if k in cell or str(raw[k] or "").strip()]) > 1:
                raise InputError(
                    f"{source}: unit {unit!r}, field {name}: give {name}_sd or {name}_cov, not both"
                )
            cell_kinds[name] = kind
            continue
        given = {
            k: v
            for k, v in raw.items()
            if k != "distribution" and not math.isnan(_to_float(source, unit, name + "_" + k, v))
        }
        if not given:
            continue
        kind = str(raw.get("distribution") or "").strip() or (
            "triangular" if "mode" in given else "uniform" if "low" in given else "normal"
        )
        numbers = {k: _to_float(source, unit, name + "_" + k, v) for k, v in given.items()}
        if "cov" in numbers:
            covs[name] = numbers["cov"]
        if kind in ("normal", "lognormal"):
            numbers["mean"] = values.get(name, math.nan)
            if math.isnan(numbers["mean"]) and name in cell_given:  # the mean varies by cell
                numbers["mean"] = 1.0  # a stand-in: each cell's spread is centred on it
            if math.isnan(numbers["mean"]):
                raise InputError(
                    f"{source}: unit {unit!r}, field {name}: a spread needs the "
                    "mean value in the field itself"
                )
        try:
            spreads[name] = spread(kind, **numbers)
        except InputError as exc:
            raise InputError(f"{source}: unit {unit!r}, field {name} spread: {exc}") from None
        if math.isnan(values.get(name, math.nan)) and name not in cell_given:
            values[name] = float(spreads[name].mean)
    corr = _to_float(source, unit, "c_phi_correlation", record.get("c_phi_correlation"))
    if not math.isnan(corr):
        if not -1.0 <= corr <= 1.0:
            raise InputError(
                f"{source}: unit {unit!r}, field c_phi_correlation: {corr:g} is "
                "outside the allowed range [-1, 1]"
            )
        if not {"cohesion_kpa", "friction_deg"} <= set(spreads) | set(cell_kinds):
            raise InputError(
                f"{source}: unit {unit!r}, field c_phi_correlation: needs spreads "
                "for both cohesion_kpa and friction_deg"
            )
        rho = corr
    return spreads, rho, covs, cell_kinds


def _table_from_csv(path: Path, key_field: str) -> tuple[dict[str, dict[str, Any]], str]:
    """The soil table by unit, and the line to state if it was semicolon-separated."""
    rows, note = read_csv_dicts(path, "soil table")
    if not rows or key_field not in rows[0]:
        found = ", ".join(map(repr, rows[0])) if rows else "no data rows"
        raise InputError(
            f"{path}: soil table needs a column {key_field!r} (soil_unit_field); found {found}"
        )
    unknown = sorted(set(map(str, rows[0])) - set(ALL_COLUMNS) - {key_field})
    if unknown:
        raise InputError(
            f"{path}: unknown column {unknown[0]!r}"
            f"{did_you_mean(unknown[0], [key_field, *ALL_COLUMNS])}; the allowed columns are "
            "listed in docs/scenario-file.md (Soil fields)"
        )
    table: dict[str, dict[str, Any]] = {}
    for line, row in enumerate(rows, start=2):
        key = str(row[key_field] or "").strip()
        if not key:
            raise InputError(
                f"{path}: data row {line - 1} has no value in column {key_field!r} "
                "(soil_unit_field); every row needs a soil unit"
            )
        if key in table:
            raise InputError(f"{path}: unit {key!r} appears twice in the soil table")
        table[key] = row
    return table, note


def read_polygons(region: Region) -> Any:
    from slopescreen.maps.io.shapes import read_layer

    frame = read_layer(
        region.soil_units,
        region.soil_layer,
        region.soil_unit_field,
        "soil_unit_field",
        "soil polygons",
    )
    if frame.empty:
        raise InputError(f"{region.soil_units}: no polygons")
    kinds = set(frame.geometry.geom_type)
    if not kinds <= {"Polygon", "MultiPolygon"}:
        other = sorted(kinds - {"Polygon", "MultiPolygon"})
        raise InputError(
            f"{region.soil_units}: soil units must be polygons, found {', '.join(other)} "
            f"({int((~frame.geometry.geom_type.isin(['Polygon', 'MultiPolygon'])).sum())} "
            "features)"
        )
    labels = frame[region.soil_unit_field]
    blank = labels.isna() | (labels.astype(str).str.strip() == "")
    if blank.any():
        raise InputError(
            f"{region.soil_units}: feature {int(np.flatnonzero(blank.to_numpy())[0])} has no "
            f"value in field {region.soil_unit_field!r} (soil_unit_field); every polygon "
            "needs a soil unit"
        )
    frame[region.soil_unit_field] = labels.astype(str).str.strip()
    return frame


def _overlaps(polygons: Any, key: str, grid: Grid) -> str:
    """A line saying where polygons of different units overlap (and which wins), or ""."""
    import shapely

    geometry = polygons.geometry.to_numpy()
    left, right = polygons.sindex.query(geometry, predicate="intersects")
    pairs = (left < right) & (polygons[key].to_numpy()[left] != polygons[key].to_numpy()[right])
    left, right = left[pairs], right[pairs]
    if left.size == 0:
        return ""
    shared = shapely.intersection(geometry[left], geometry[right])
    shared = shared[shapely.area(shared) > 0.0]
    if shared.size == 0:
        return ""
    from slopescreen.maps.outputs.zones import ground_areas_m2

    area_ha = float(np.sum(ground_areas_m2(shared, grid))) / 10_000.0
    return (
        f"{shared.size} pairs of polygons of different soil units overlap ({area_ha:,.2f} ha "
        "on the ground); where they do, the later polygon in the file wins"
    )


def _depth_model_units(region: Region, keys: list[str]) -> set[str]:
    """The units whose depth a [soil_depth] model sets (unknown names are errors)."""
    out: set[str] = set()
    for model in region.soil_depth:
        for unit in model.units:
            if unit not in keys:
                raise InputError(
                    f"[soil_depth] units: unknown soil unit {unit!r}; units: {', '.join(keys)}"
                )
        out |= set(model.units or keys)
    return out


def load_soils(region: Region, grid: Grid) -> SoilUnits:
    """Read, validate and reproject the soil units onto ``grid``'s CRS (their coverage is
    measured, tile by tile, by :meth:`SoilUnits.measure_coverage`)."""
    from shapely.geometry import box

    frame = read_polygons(region)
    key = region.soil_unit_field
    keys = sorted(frame[key].unique())
    if region.soil_table is not None:
        table, read_note = _table_from_csv(region.soil_table, key)
        source = str(region.soil_table)
        missing = [k for k in keys if k not in table]
        if missing:
            raise InputError(
                f"{source}: unit {missing[0]!r} from {region.soil_units.name} has "
                "no row in the soil table"
            )
        records = {k: table[k] for k in keys}
    else:
        source, read_note = str(region.soil_units), ""
        records = {}
        for k in keys:
            rows = frame[frame[key] == k]
            first = rows.iloc[0]
            for name in ALL_COLUMNS:
                if name in rows.columns and rows[name].nunique(dropna=False) > 1:
                    raise InputError(
                        f"{source}: unit {k!r}, field {name}: polygons of one unit "
                        "disagree; give one value per unit"
                    )
            records[k] = {name: first[name] for name in ALL_COLUMNS if name in rows.columns}
    params = {name: np.full(len(keys) + 1, np.nan) for name in SOIL_FIELDS}
    spreads: dict[int, dict[str, Spread]] = {}
    correlations: dict[int, float] = {}
    rasters: dict[str, dict[int, Path]] = {}
    covs: dict[int, dict[str, float]] = {}
    cell_spreads: dict[int, dict[str, str]] = {}
    modelled = _depth_model_units(region, keys)
    cell_names = (*SOIL_FIELDS, *(f + s for f in UNCERTAIN_FIELDS for s in ("_sd", "_cov")))
    for code, k in enumerate(keys, start=1):
        record = dict(records[k])
        found = {}
        for name in cell_names:
            path = _raster_value(source, k, name, record.get(name))
            if path is not None:
                found[name] = path
                rasters.setdefault(name, {})[code] = path
                record[name] = None
        given = frozenset(found) | ({"depth_m"} if k in modelled else frozenset())
        values = {name: _to_float(source, k, name, record.get(name)) for name in SOIL_FIELDS}
        unit_spreads, rho, unit_covs, kinds = _unit_spreads(source, k, record, values, found, given)
        _check_unit(source, k, values, given)
        for name, v in values.items():
            params[name][code] = v
        if unit_spreads or kinds:
            spreads[code] = unit_spreads
            correlations[code] = rho
        if unit_covs:
            covs[code] = unit_covs
        if kinds:
            cell_spreads[code] = kinds
    # hydraulic diffusivity D0 = K / C0 where only the moisture capacity C0 is given
    derived = params["hydraulic_conductivity_m_s"] / params["moisture_capacity_per_m"]
    from_capacity = np.isnan(params["diffusivity_m2_s"]) & np.isfinite(derived)
    params["diffusivity_m2_s"] = np.where(
        np.isnan(params["diffusivity_m2_s"]), derived, params["diffusivity_m2_s"]
    )
    sat = params["saturated_unit_weight_kn_m3"]
    sat_defaulted = np.flatnonzero(np.isnan(sat))
    sat[1:] = np.where(
        np.isnan(sat[1:]), np.maximum(params["unit_weight_kn_m3"][1:], 9.81), sat[1:]
    )
    params["root_cohesion_kpa"][1:] = np.nan_to_num(params["root_cohesion_kpa"][1:])

    frame = frame.to_crs(grid.crs)
    t = grid.transform
    dem_box = box(t.c, t.f + t.e * grid.height, t.c + t.a * grid.width, t.f)
    inside = frame.intersects(dem_box)
    warnings: list[str] = [read_note] if read_note else []
    if not inside.any():
        x0, y0, x1, y1 = frame.total_bounds
        d0, e0, d1, e1 = dem_box.bounds
        raise InputError(
            f"{region.soil_units}: no soil polygon overlaps the DEM {grid.path.name} (after "
            f"reprojection to the DEM's CRS): polygons span x {x0:.10g} to {x1:.10g}, "
            f"y {y0:.10g} to {y1:.10g}; the DEM x {d0:.10g} to {d1:.10g}, y {e0:.10g} to "
            f"{e1:.10g} ({grid.crs.to_string()})"
        )
    outside = sorted(set(frame.loc[~inside, key]) - set(frame.loc[inside, key]))
    if outside:
        warnings.append(f"soil units entirely outside the DEM: {', '.join(outside)}")
    polygons = frame.loc[inside, [key, "geometry"]].copy()
    polygons["code"] = [keys.index(k) + 1 for k in polygons[key]]
    overlap = _overlaps(polygons.reset_index(drop=True), key, grid)
    if overlap:
        warnings.append(overlap)
    units = SoilUnits(
        keys=keys,
        parameters=params,
        polygons=polygons[["code", "geometry"]].reset_index(drop=True),
        unmapped_share=0.0,
        warnings=warnings,
        sources={"polygons": str(region.soil_units), "parameters": source},
        spreads=spreads,
        correlations=correlations,
        diffusivity_derived=frozenset(int(c) for c in np.flatnonzero(from_capacity)),
        saturated_defaulted=frozenset(int(c) for c in sat_defaulted if c > 0),
        rasters=rasters,
        spread_cov=covs,
        cell_spreads=cell_spreads,
        names={
            k: str(records[k]["name"]).strip()
            for k in keys
            if isinstance(records[k].get("name"), str) and str(records[k]["name"]).strip()
        },
        lab_tests={
            k: (Path(source).parent / str(records[k]["strength_lab_tests"]).strip()).resolve()
            for k in keys
            if isinstance(records[k].get("strength_lab_tests"), str)
            and str(records[k]["strength_lab_tests"]).strip()
        },
    )
    return units
