"""The scenario file's per-cell soil inputs: ``[soil_depth]`` (depth models) and
``[land_cover]`` (root cohesion by land-cover class, with its CSV table), read and checked
with the file's line numbers. The models' physics is the core's
(:mod:`slopescreen.soil_depth`, :mod:`slopescreen.root_cohesion`)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from slopescreen.errors import InputError
from slopescreen.maps.io.textfiles import read_csv_dicts
from slopescreen.maps.region.scenario_schema import SCHEMA, limits
from slopescreen.ranges import RANGES
from slopescreen.root_cohesion import (
    DEFAULT_CONSTANTS,
    ROOT_PROFILES,
    root_cohesion_after_harvest_kpa,
)

DEPTH_MODELS: dict[str, tuple[str, ...]] = {  # model -> its keys (required first)
    "slope_linear": ("gentle_slope_deg", "steep_slope_deg", "gentle_depth_m", "steep_depth_m"),
    "elevation_linear": ("low_depth_m", "high_depth_m", "low_elevation_m", "high_elevation_m"),
    "soil_production": (
        "production_m_yr",
        "creep_diffusivity_m2_yr",
        "production_depth_m",
        "max_depth_m",
        "density_ratio",
        "min_depth_m",
    ),
    "raster": ("path", "resampling"),
}
REQUIRED_KEYS = {
    "slope_linear": 4,
    "elevation_linear": 2,
    "soil_production": 4,
    "raster": 1,
}
RESAMPLING = ("bilinear", "nearest")


@dataclass(frozen=True)
class DepthModel:
    """One depth model and the units it sets (none listed: every unit)."""

    model: str
    units: tuple[str, ...]
    values: tuple[tuple[str, float], ...]  # its numeric keys, sorted
    path: Path | None = None  # model "raster"
    resampling: str = "bilinear"

    def value(self, key: str, default: float = math.nan) -> float:
        return dict(self.values).get(key, default)

    @property
    def text(self) -> str:
        """One line for the report and the manifest."""
        if self.model == "raster":
            return f"depth raster {self.path.name if self.path else ''} ({self.resampling})"
        keys = ", ".join(f"{k} = {v:g}" for k, v in self.values)
        return f"{self.model.replace('_', ' ')}: {keys}"


@dataclass(frozen=True)
class CoverClass:
    """One land-cover class's roots (kPa, m; NaN: not given)."""

    root_cohesion_kpa: float
    rooting_depth_m: float
    root_cohesion_sd_kpa: float = math.nan
    root_cohesion_cov: float = math.nan
    harvest_year: float = math.nan
    regrown_root_cohesion_kpa: float = math.nan
    constants: tuple[float, float, float, float] = DEFAULT_CONSTANTS
    description: str = ""

    def roots_in(self, year: int | None) -> float:
        """Root cohesion (kPa) in ``year``: after the harvest, decay and regrowth (Sidle
        1991 forms, :func:`slopescreen.root_cohesion.root_cohesion_after_harvest_kpa`);
        the stand's value without a harvest year or a year."""
        if not math.isfinite(self.harvest_year) or year is None:
            return self.root_cohesion_kpa
        regrown = self.regrown_root_cohesion_kpa
        if math.isnan(regrown):
            regrown = self.root_cohesion_kpa
        return float(
            root_cohesion_after_harvest_kpa(
                year - self.harvest_year, self.root_cohesion_kpa, regrown, *self.constants
            )
        )


@dataclass(frozen=True)
class LandCover:
    """``[land_cover]``: the map of classes and each class's roots."""

    path: Path
    table: Path
    classes: dict[str, CoverClass] = field(default_factory=dict)
    class_field: str | None = None  # polygons
    layer: str | None = None
    year: int | None = None
    root_profile: str = "step"

    @property
    def polygons(self) -> bool:
        return self.class_field is not None

    @property
    def harvests(self) -> bool:
        return any(math.isfinite(c.harvest_year) for c in self.classes.values())


COVER_COLUMNS: dict[str, tuple[float, float]] = {
    "root_cohesion_kpa": RANGES["root_cohesion_kpa"][:2],
    "rooting_depth_m": RANGES["depth_m"][:2],
    "root_cohesion_kpa_sd": RANGES["root_cohesion_kpa"][:2],
    "root_cohesion_kpa_cov": (0.0, 5.0),
    "harvest_year": limits("land_cover", "year"),
    "regrown_root_cohesion_kpa": RANGES["root_cohesion_kpa"][:2],
    "decay_rate": (1e-3, 10.0),
    "decay_exponent": (0.1, 3.0),
    "regrowth_shape": (1e-3, 1e6),
    "regrowth_rate": (1e-3, 10.0),
}
CONSTANT_COLUMNS = ("decay_rate", "decay_exponent", "regrowth_shape", "regrowth_rate")


def soil_depth_models(r: Any, data: dict[str, Any]) -> tuple[DepthModel, ...]:
    """``[soil_depth]`` (a table) or ``[[soil_depth]]`` (several, each with its units)."""
    raw = data.get("soil_depth")
    if raw is None:
        return ()
    tables = raw if isinstance(raw, list) else [raw]
    if not tables or not all(isinstance(t, dict) for t in tables):
        raise r.fail("soil_depth", "", "must be a table, or a list of [[soil_depth]] tables")
    models: list[DepthModel] = []
    taken: dict[str, int] = {}
    for i, t in enumerate(tables, start=1):
        r.known("soil_depth", t, {row[0] for row in SCHEMA["soil_depth"]})
        model = r.choice("soil_depth", t, "model", tuple(DEPTH_MODELS), "")
        own = DEPTH_MODELS[model]
        for key in t:
            if key not in ("model", "units", *own):
                raise r.fail(
                    "soil_depth", key, f"does not apply to model {model!r}; its keys: "
                    f"{', '.join(own)}"
                )  # fmt: skip
        for key in own[: REQUIRED_KEYS[model]]:
            if key not in t:
                raise r.fail("soil_depth", "", f"model {model!r} needs {key}")
        units = t.get("units", [])
        if not isinstance(units, list) or not all(isinstance(u, str) and u for u in units):
            raise r.fail("soil_depth", "units", "must be a list of soil-unit names")
        for unit in units or ["*"]:
            if unit in taken:
                raise r.fail(
                    "soil_depth",
                    "units",
                    f"unit {unit!r} is set by [[soil_depth]] table {taken[unit]} already"
                    if unit != "*"
                    else "a table without units sets every unit: give units to each",
                )
            taken[unit] = i
        if "*" in taken and len(tables) > 1:
            raise r.fail("soil_depth", "units", "with several [[soil_depth]] tables, give units")
        values = {
            k: float(r.number("soil_depth", t, k, *limits("soil_depth", k)))
            for k in own
            if k in t and k not in ("path", "resampling")
        }
        _check_model(r, model, values)
        models.append(
            DepthModel(
                model=model,
                units=tuple(units),
                values=tuple(sorted(values.items())),
                path=r.file("soil_depth", t, "path") if model == "raster" else None,
                resampling=r.choice("soil_depth", t, "resampling", RESAMPLING, "bilinear"),
            )
        )
    return tuple(models)


def _check_model(r: Any, model: str, v: dict[str, float]) -> None:
    if model == "slope_linear" and v["steep_slope_deg"] <= v["gentle_slope_deg"]:
        raise r.fail(
            "soil_depth",
            "steep_slope_deg",
            f"must be above gentle_slope_deg ({v['gentle_slope_deg']:g})",
        )
    if model == "elevation_linear" and "low_elevation_m" in v and "high_elevation_m" in v:
        if v["high_elevation_m"] <= v["low_elevation_m"]:
            raise r.fail(
                "soil_depth",
                "high_elevation_m",
                f"must be above low_elevation_m ({v['low_elevation_m']:g})",
            )
    if model == "elevation_linear" and ("low_elevation_m" in v) != ("high_elevation_m" in v):
        raise r.fail("soil_depth", "", "give both low_elevation_m and high_elevation_m, or neither")
    if model == "soil_production":
        v.setdefault("density_ratio", 2.0)
        v.setdefault("min_depth_m", RANGES["depth_m"][0])
        if v["max_depth_m"] < v["min_depth_m"]:
            raise r.fail(
                "soil_depth", "max_depth_m", f"must be at least min_depth_m ({v['min_depth_m']:g})"
            )


def land_cover(r: Any, data: dict[str, Any]) -> LandCover | None:
    """``[land_cover]`` and its table of classes, or None."""
    if "land_cover" not in data:
        return None
    t = r.table("", data, "land_cover")
    r.known("land_cover", t, {row[0] for row in SCHEMA["land_cover"]})
    path = r.file("land_cover", t, "path")
    table = r.file("land_cover", t, "table")
    year = t.get("year")
    if year is not None:
        year = r.integer("land_cover", t, "year", *map(int, limits("land_cover", "year")), 0)
    cover = LandCover(
        path=path,
        table=table,
        classes=read_cover_table(table),
        class_field=r.text("land_cover", t, "class_field") if "class_field" in t else None,
        layer=r.text("land_cover", t, "layer") if "layer" in t else None,
        year=year,
        root_profile=r.choice("land_cover", t, "root_profile", ROOT_PROFILES, "step"),
    )
    if cover.layer is not None and cover.class_field is None:
        raise r.fail("land_cover", "layer", "applies to polygons (with class_field); remove it")
    return cover


def read_cover_table(path: Path) -> dict[str, CoverClass]:
    """The land-cover table: one row per class (see ``[land_cover] table``)."""
    rows, _ = read_csv_dicts(path, "land-cover table")
    allowed = ["class", "description", *COVER_COLUMNS]
    if not rows or "class" not in rows[0]:
        raise InputError(f"{path}: land-cover table needs a column 'class' and a row per class")
    unknown = [c for c in rows[0] if c not in allowed]
    if unknown:
        raise InputError(f"{path}: unknown column {unknown[0]!r}; allowed: {', '.join(allowed)}")
    for required in ("root_cohesion_kpa", "rooting_depth_m"):
        if required not in rows[0]:
            raise InputError(f"{path}: land-cover table needs a column {required!r}")
    out: dict[str, CoverClass] = {}
    for number, row in enumerate(rows, start=2):
        name = str(row.get("class") or "").strip()
        if not name:
            raise InputError(f"{path}: line {number}: no class")
        if name in out:
            raise InputError(f"{path}: line {number}: class {name!r} appears twice")
        v: dict[str, float] = {}
        for col, (low, high) in COVER_COLUMNS.items():
            raw = str(row.get(col) or "").strip()
            if not raw:
                if col in ("root_cohesion_kpa", "rooting_depth_m"):
                    raise InputError(f"{path}: line {number}: class {name!r}: {col} missing")
                continue
            try:
                x = float(raw)
            except ValueError:
                raise InputError(
                    f"{path}: line {number}: class {name!r}, {col}: {raw!r} is not a number"
                ) from None
            if not low <= x <= high:
                raise InputError(
                    f"{path}: line {number}: class {name!r}, {col}: {x:g} is outside the "
                    f"allowed range [{low:g}, {high:g}]"
                )
            v[col] = x
        if "root_cohesion_kpa_sd" in v and "root_cohesion_kpa_cov" in v:
            raise InputError(
                f"{path}: line {number}: class {name!r}: give root_cohesion_kpa_sd or _cov, "
                "not both"
            )
        out[name] = CoverClass(
            root_cohesion_kpa=v["root_cohesion_kpa"],
            rooting_depth_m=v["rooting_depth_m"],
            root_cohesion_sd_kpa=v.get("root_cohesion_kpa_sd", math.nan),
            root_cohesion_cov=v.get("root_cohesion_kpa_cov", math.nan),
            harvest_year=v.get("harvest_year", math.nan),
            regrown_root_cohesion_kpa=v.get("regrown_root_cohesion_kpa", math.nan),
            constants=tuple(  # type: ignore[arg-type]
                v.get(c, d) for c, d in zip(CONSTANT_COLUMNS, DEFAULT_CONSTANTS, strict=True)
            ),
            description=str(row.get("description") or "").strip(),
        )
        after = (*CONSTANT_COLUMNS, "regrown_root_cohesion_kpa")
        if not math.isfinite(out[name].harvest_year) and any(c in v for c in after):
            raise InputError(
                f"{path}: line {number}: class {name!r}: {next(c for c in after if c in v)} "
                "applies to a class with a harvest_year; remove it"
            )
    return out
