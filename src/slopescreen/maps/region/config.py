"""The scenario file (TOML): schema, validation and line numbers for errors.

Example (paths are relative to the scenario file)::

    [region]
    name = "Quillbrook catchment"
    dem = "quillbrook_dem.tif"
    dem_elevation_unit = "m"          # "m" or "ft"
    soil_units = "soil_units.gpkg"
    soil_unit_field = "unit"
    soil_table = "soil_parameters.csv"   # optional; else parameters are polygon fields

    [classes]                         # stability classes (read as [hazard] before 0.2)
    fs_breaks = [1.0, 1.3, 1.5]
    min_zone_area_m2 = 500.0

    [outputs]
    fs_cap = 10.0
    zones = true                      # low-margin zones (read as hazard_zones before 0.2)
    quicklook_map = true
    report = true

    [[scenario]]
    name = "wet_season"
    recharge_mm_day = 40.0            # or "recharge.tif" (mm/day, any grid), or saturation
                                      # = 0.5, or saturation_raster = "m.tif"
    seismic_coefficient = 0.0
    [scenario.soil.COL]               # optional per-unit overrides
    root_cohesion_kpa = 0.0
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from slopescreen._checks import checked
from slopescreen.design_storm import PATTERNS, alternating_block
from slopescreen.errors import InputError
from slopescreen.maps.io.textfiles import read_text
from slopescreen.maps.outputs.output_names import (
    COMPARISON_FOLDER,
    INVENTORY_SCORES,
    MANIFEST,
    REPORT,
    TERRAIN_FOLDER,
    VALIDATION_FOLDER,
)
from slopescreen.maps.region.field_config import (
    DepthModel,
    LandCover,
    land_cover,
    soil_depth_models,
)
from slopescreen.maps.region.gauge_rain import DEFAULT_POWER, WEIGHTINGS
from slopescreen.maps.region.runout_config import RunoutSpec, runout
from slopescreen.maps.region.scenario_schema import (
    SCHEMA,
    allowed,
    limits,
    numeric_keys,
)
from slopescreen.rain_history import rain_steps
from slopescreen.rainfall_frequency import SERIES_KINDS, hazard_class_names, table_reach_yr
from slopescreen.ranges import RANGES
from slopescreen.stability_classes import DEFAULT_FS_BREAKS, check_breaks
from slopescreen.storm import MIN_SLIP_DEPTH_M

_REQUIRED_SOIL = ("cohesion_kpa", "friction_deg", "unit_weight_kn_m3", "depth_m")
SOIL_FIELDS: dict[str, tuple[float, float, bool]] = {
    # field: (low, high, required); the ranges are the one table of slopescreen.ranges
    name: (RANGES[name][0], RANGES[name][1], name in _REQUIRED_SOIL)
    for name in (
        *_REQUIRED_SOIL,
        "saturated_unit_weight_kn_m3",
        "root_cohesion_kpa",
        "hydraulic_conductivity_m_s",
        "transmissivity_m2_day",
        "diffusivity_m2_s",
        "moisture_capacity_per_m",
    )
}
HYDRAULIC_FIELDS = ("hydraulic_conductivity_m_s", "transmissivity_m2_day")
WETNESS_KEYS = ("saturation", "saturation_raster", "recharge_mm_day", "storm", "rainfall")
RAINFALL_KEYS = numeric_keys("scenario.rainfall")
RECHARGE_RANGE = limits("scenario", "recharge_mm_day")
STORM_KEYS = numeric_keys("scenario.storm")


def _whole(table: str, key: str) -> tuple[int, int]:
    """An integer key's (low, high) from the schema."""
    low, high = limits(table, key)
    return int(low), int(high)


RELIABILITY_METHODS = ("taylor", "monte_carlo")
_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,63}")
# names the run gives to its own files and folders beside the scenario folders
RESERVED_NAMES = frozenset(
    {TERRAIN_FOLDER, COMPARISON_FOLDER, VALIDATION_FOLDER, REPORT, MANIFEST, INVENTORY_SCORES}
)


@dataclass(frozen=True)
class Region:
    name: str
    dem: Path
    dem_elevation_unit: str
    soil_units: Path
    soil_unit_field: str
    soil_table: Path | None
    soil_layer: str | None
    soil_depth: tuple[DepthModel, ...] = ()  # [soil_depth]: depth models by unit
    land_cover: LandCover | None = None  # [land_cover]: root cohesion by class
    dem_crs: str | None = None  # the CRS of a DEM that carries none (as pyproj reads it)


@dataclass(frozen=True)
class StormSpec:
    rain_mm_h: float  # NaN where the scenario's rain_raster gives it; a history's mean
    duration_h: float  # a history's: the end of its last step
    later_h: float  # when to look again, hours after the storm began (>= duration)
    initial_water_table_depth_m: float
    long_term_infiltration_mm_day: float = 0.0
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M  # from [slip_planes]
    hyetograph: Path | None = None  # a gauge's record (CSV)
    # an alternating-block design storm: (return period yr, duration h, block h or NaN for
    # the table's shortest duration, pattern), its steps filled from [rainfall_frequency]
    design: tuple[float, float, float, str] | None = None
    ends_h: tuple[float, ...] = ()  # rain in steps: the end of each step (h)
    steps_mm_h: tuple[float, ...] = ()  # and its rain (mm/h)
    # the water table before the storm from a steady recharge (mm/day), cell by cell, in
    # place of one depth (initial_water_table_depth_m is then NaN)
    initial_recharge_mm_day: float | None = None
    # several gauges: their layer, names, positions (in gauge_crs, WKT), rain on the
    # common steps ends_h (gauges x steps; steps_mm_h is then their mean), and how cells
    # take their share ("nearest" or "inverse_distance" with gauge_power)
    gauges: Path | None = None
    gauge_names: tuple[str, ...] = ()
    gauge_records: tuple[Path, ...] = ()
    gauge_xy: tuple[tuple[float, float], ...] = ()
    gauge_crs: str = ""
    gauge_rain: tuple[tuple[float, ...], ...] = ()
    gauge_weighting: str = "nearest"
    gauge_power: float = DEFAULT_POWER
    # rain on a grid in steps (a CF NetCDF file or a folder of rasters; steps_mm_h is
    # then the mean of each step over its grid): maps.io.rain_series.RainSeries
    rain_series: Any = None
    series_resampling: str = "bilinear"  # or "nearest"

    @property
    def files(self) -> list[Path]:
        """The files the storm's rain is read from."""
        files = [p for p in (self.hyetograph, self.gauges) if p is not None]
        files += list(self.gauge_records)
        series = self.rain_series
        if series is not None:
            files += list(series.files) or [series.path]
        return files

    @property
    def initial_state(self) -> str:
        """The water table before the storm, in words."""
        if self.initial_recharge_mm_day is not None:
            return (
                f"water table initially that of a steady recharge of "
                f"{self.initial_recharge_mm_day:g} mm/day"
            )
        return f"water table initially {self.initial_water_table_depth_m:g} m deep"

    @property
    def source(self) -> str:
        """Where the rain comes from, in words."""
        if self.hyetograph is not None:
            return f"hyetograph {self.hyetograph.name} ({len(self.ends_h)} steps)"
        if self.rain_series is not None:
            return (
                f"rain series {self.rain_series.path.name} ({len(self.ends_h)} steps from "
                f"{self.rain_series.start}, resampled by {self.series_resampling})"
            )
        if self.gauges is not None:
            how = (
                "each cell the nearest gauge's (Thiessen)"
                if self.gauge_weighting == "nearest"
                else f"inverse-distance weighted, power {self.gauge_power:g}"
            )
            return (
                f"{len(self.gauge_names)} gauges of {self.gauges.name} "
                f"({', '.join(self.gauge_names)}; {len(self.ends_h)} steps), {how}"
            )
        if self.design is not None:
            period, duration, block, pattern = self.design
            return (
                f"{pattern}-loaded {period:g}-year design storm of {duration:g} h in blocks of "
                f"{block:g} h (alternating block)"
            )
        return ""


@dataclass(frozen=True)
class RainfallSpec:
    """A rainfall-frequency scenario: critical intensities for the table's durations from
    this antecedent water table, then how often they are reached."""

    initial_water_table_depth_m: float
    long_term_infiltration_mm_day: float = 0.0
    uplift: float = 1.0  # every tabulated intensity times this (a climate scenario)
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M  # from [slip_planes]


@dataclass(frozen=True)
class RainfallFrequency:
    """[rainfall_frequency]: the design-rainfall table and the hazard-class breaks."""

    idf_table: Path
    durations_h: tuple[float, ...]
    return_periods_yr: tuple[float, ...]
    intensity_mm_h: tuple[tuple[float, ...], ...]  # durations x return periods; () if gridded
    aep_breaks: tuple[float, ...] = (0.1, 0.01, 0.001)
    after_h: float = 24.0  # each storm is followed this long for the minimum FS
    series: str = "annual_maximum"  # what the return periods count (annual probability)
    series_stated: bool = False  # False: the default was taken (said in the run's output)
    rasters: tuple[tuple[Path, ...], ...] = ()  # gridded design rainfall, same grid
    depth_rasters: bool = False  # the rasters hold depths (mm), not intensities

    @property
    def files(self) -> list[Path]:
        """The table and the rasters it names."""
        return [self.idf_table, *(p for row in self.rasters for p in row)]

    @property
    def reach_yr(self) -> float | None:
        """The table's longest return period where the hazard breaks reach beyond it (cells
        needing rarer rain get the class "beyond the design-rainfall table"), else None."""
        return table_reach_yr(self.aep_breaks, self.return_periods_yr[-1], self.series)

    @property
    def hazard_names(self) -> list[str]:
        """The hazard classes' names, most frequent first (codes 1..n; 0 is no data)."""
        return hazard_class_names(self.aep_breaks, self.reach_yr)


@dataclass(frozen=True)
class ReliabilitySpec:
    method: str = "taylor"
    samples: int = 1000
    random_state: int = 0
    fs_distribution: str = "lognormal"  # Duncan (2000): FS is positive and skewed


@dataclass(frozen=True)
class Scenario:
    name: str
    description: str
    saturation: float | None
    saturation_raster: Path | None
    recharge_mm_day: float | None
    seismic_coefficient: float
    # unit -> field -> a number, or a raster giving the field cell by cell
    soil_overrides: dict[str, dict[str, float | Path]] = field(default_factory=dict)
    storm: StormSpec | None = None
    rainfall: RainfallSpec | None = None
    # a raster in place of the rain number: recharge_mm_day (steady) or the storm's
    # rain_mm_h, on any grid, resampled bilinearly onto the DEM's
    rain_raster: Path | None = None
    year: int | None = None  # the year the scenario is for (roots after a harvest)
    use_soil_depth: bool = True  # [soil_depth]'s models, where the file has them
    use_land_cover: bool = True  # [land_cover]'s roots, where the file has them

    @property
    def steady_recharge(self) -> bool:
        """Wetness from a steady recharge, uniform or from a raster."""
        return self.recharge_mm_day is not None or (
            self.rain_raster is not None and self.storm is None
        )

    @property
    def rain_unit(self) -> tuple[str, float, float]:
        """(key, low, high) of the rain raster's values: mm/day for recharge, mm/h storms."""
        if self.storm is not None:
            return ("rain_mm_h", *STORM_KEYS["rain_mm_h"])
        return ("recharge_mm_day", *RECHARGE_RANGE)

    @property
    def wetness(self) -> str:
        """A one-line description of how wetness is set."""
        if self.rainfall is not None:
            rf = self.rainfall
            uplift = f", design rain x {rf.uplift:g}" if rf.uplift != 1.0 else ""
            return (
                f"rainfall frequency: critical storms of every tabulated duration on a water "
                f"table initially {rf.initial_water_table_depth_m:g} m deep{uplift}"
            )
        if self.storm is not None:
            st = self.storm
            if st.ends_h:
                depth = float(rain_steps(st.ends_h, st.steps_mm_h).depth_mm)
                mean = "the gauges' mean " if st.gauges is not None else ""
                mean = "the grid's mean " if st.rain_series is not None else mean
                return (
                    f"{st.source}: {mean}{depth:.4g} mm in {st.duration_h:g} h (peak "
                    f"{max(st.steps_mm_h):.4g} mm/h), {st.initial_state}; FS the lowest over "
                    f"depth and time to {st.later_h:g} h"
                )
            rain = (
                f"rain from {self.rain_raster.name} (mm/h)"
                if self.rain_raster is not None
                else f"{st.rain_mm_h:g} mm/h"
            )
            return (
                f"design storm {rain} for {st.duration_h:g} h, {st.initial_state}; FS the "
                f"lowest over depth and time to {st.later_h:g} h"
            )
        if self.recharge_mm_day is not None:
            return f"steady recharge {self.recharge_mm_day:g} mm/day"
        if self.rain_raster is not None:
            return f"steady recharge from {self.rain_raster.name} (mm/day)"
        if self.saturation_raster is not None:
            return f"saturation raster {self.saturation_raster.name}"
        return f"uniform saturation m = {self.saturation:g}"

    @property
    def loads(self) -> str:
        """Every load that changes the result: wetness, seismic k_h, soil overrides."""
        over = "; ".join(
            f"{unit}: " + ", ".join(f"{k} = {shown(v)}" for k, v in fields.items())
            for unit, fields in self.soil_overrides.items()
        )
        cells = "".join(
            (
                f"; year {self.year}" if self.year is not None else "",
                "; depth: the units' depth_m" if not self.use_soil_depth else "",
                "; roots: the units' root_cohesion_kpa" if not self.use_land_cover else "",
            )
        )
        return (
            f"{self.wetness}; seismic k_h = {self.seismic_coefficient:g}; "
            f"soil overrides: {over or 'none'}{cells}"
        )


@dataclass(frozen=True)
class ComparisonSpec:
    """The report's scenario comparison: areas against ``baseline`` (default: the first
    scenario run) and a class-change map for each pair (first, second)."""

    baseline: str | None = None
    pairs: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class InventorySpec:
    """Known landslides to score the maps against (``[inventory]``, or ``--inventory``)."""

    path: Path
    key: str | None = None  # field naming each landslide; features sharing a key are one
    date_field: str | None = None
    part: str | None = None  # polygons: "scarp" (the default: highest cells) or "whole"
    split: str = "blocks"  # held out: "date" (the newest, with date_field) or spatial "blocks"
    block_size_m: float = 500.0
    test_share: float = 0.3
    random_state: int = 0

    def with_path(self, path: Path) -> InventorySpec:
        from dataclasses import replace

        return replace(self, path=path)


SCARP_SHARE = 0.2  # polygons, part = "scarp": the highest 20% of the cells by elevation


@dataclass(frozen=True)
class Config:
    path: Path
    text: str
    region: Region
    fs_breaks: tuple[float, ...]
    min_zone_area_m2: float
    fs_cap: float
    zones: bool
    quicklook_map: bool
    report: bool
    scenarios: tuple[Scenario, ...]
    reliability: ReliabilitySpec = ReliabilitySpec()
    # one line per deprecated key read, printed once by the command that loaded the file
    deprecations: tuple[str, ...] = ()
    comparison: ComparisonSpec = ComparisonSpec()
    inventory: InventorySpec | None = None
    rainfall_frequency: RainfallFrequency | None = None
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M  # [slip_planes]
    runout: RunoutSpec | None = None  # [runout]: reach below failing cells

    @property
    def notes(self) -> list[str]:
        """Choices the run made for the user that change results: printed by run and check."""
        rain = self.rainfall_frequency
        if rain is None or not any(s.rainfall is not None for s in self.scenarios):
            return []  # a table read for design storms alone: no annual probability
        out = []
        if not rain.series_stated:
            out.append(
                f"[rainfall_frequency] series not given: the return periods of "
                f"{rain.idf_table.name} are read as annual maxima (annual probability 1/T, "
                'the higher reading); write series = "partial_duration" if they are not'
            )
        reach = rain.reach_yr
        if reach is not None:
            out.append(
                f"[rainfall_frequency] aep_breaks reach beyond {rain.idf_table.name} (longest "
                f"return period {reach:g} yr): cells needing rarer rain are classed 'beyond "
                "the design-rainfall table', not by the breaks"
            )
        return out


def shown(value: float | Path) -> str:
    """A soil override as the file gives it: a number, or a raster's name."""
    return value.name if isinstance(value, Path) else f"{value:g}"


# old names still read for one release: (table, key or "") -> new name
DEPRECATED_NAMES = {("", "hazard"): "classes", ("outputs", "hazard_zones"): "zones"}


def _shown(value: object, limit: int = 60) -> str:
    """A value for an error line: its repr, cut short (a line, not a page)."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


class _Lines:
    """Where each key stands in the file: (table path, key) -> line number."""

    def __init__(self, text: str) -> None:
        self.where: dict[tuple[str, str], int] = {}
        table, scenario_count = "", 0
        for number, raw in enumerate(text.splitlines(), start=1):
            line = raw.split("#", 1)[0].strip()
            if line.startswith("[[") and line.endswith("]]"):
                name = line[2:-2].strip()
                if name == "scenario":
                    scenario_count += 1
                    table = f"scenario#{scenario_count}"
                else:
                    table = name
                self.where.setdefault((table, ""), number)
            elif line.startswith("[") and line.endswith("]"):
                name = line[1:-1].strip()
                if name.startswith("scenario.") and scenario_count:
                    name = f"scenario#{scenario_count}" + name[len("scenario") :]
                table = name
                self.where.setdefault((table, ""), number)
            elif "=" in line:
                key = line.split("=", 1)[0].strip().strip('"')
                self.where.setdefault((table, key), number)

    def line(self, table: str, key: str = "") -> str:
        number = self.where.get((table, key)) or self.where.get((table, ""))
        return f"line {number}" if number else "(no line)"


class _Reader:
    def __init__(self, path: Path, text: str) -> None:
        self.path = path
        self.lines = _Lines(text)
        self.raw_scenarios: list[Any] = []

    def fail(self, table: str, key: str, message: str) -> InputError:
        where = f"[{re.sub(r'#[0-9]+', '', table)}]" if table else "top level"
        label = f"{where} {key}".strip() if key else where
        if len(message) > 300:
            message = message[:297] + "..."
        return InputError(f"{self.path}: {self.lines.line(table, key)}: {label}: {message}")

    def known(self, table: str, data: dict[str, Any], allowed: set[str]) -> None:
        for key in data:
            if key not in allowed:
                raise self.fail(
                    table,
                    key,
                    f"unknown key{did_you_mean(key, allowed)}; allowed: "
                    f"{', '.join(sorted(allowed))}",
                )

    def renamed(self, table: str, data: dict[str, Any], notes: list[str]) -> dict[str, Any]:
        """``data`` with deprecated keys read under their new names, one note per key."""
        data = dict(data)
        for (where, old), new in DEPRECATED_NAMES.items():
            if where != table or old not in data:
                continue
            label = f"[{old}]" if not table else f"[{table}] {old}"
            if new in data:
                raise self.fail(table, old, f"give {new} only ({old} is its old name)")
            where = self.lines.line(table, old) if table else self.lines.line(old)
            notes.append(
                f"{self.path.name}: {where}: {label} is deprecated and read as "
                f"{f'[{new}]' if not table else new} for this release; rename it"
            )
            data[new] = data.pop(old)
        return data

    def number(
        self,
        table: str,
        data: dict[str, Any],
        key: str,
        low: float,
        high: float,
        default: float | None = None,
    ) -> float | None:
        if key not in data:
            return default
        value = data[key]
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(
                table, key, f"must be a number in [{low:g}, {high:g}], got {_shown(value)}"
            )
        try:
            return float(checked(key, value, low, high))
        except InputError as exc:
            raise self.fail(table, key, str(exc)) from None

    def choice(
        self, table: str, data: dict[str, Any], key: str, options: Iterable[str], default: str
    ) -> str:
        """A text that must be one of ``options``."""
        value = self.text(table, data, key, default)
        if value not in options:
            raise self.fail(table, key, f"must be one of {', '.join(options)}, got {_shown(value)}")
        return value

    def text(self, table: str, data: dict[str, Any], key: str, default: str | None = None) -> str:
        value = data.get(key, default)
        if value is None:
            raise self.fail(table, key, "missing (required)")
        if not isinstance(value, str) or not value.strip():
            raise self.fail(table, key, f"must be a non-empty text, got {_shown(value)}")
        return value

    def integer(
        self, table: str, data: dict[str, Any], key: str, low: int, high: int, default: int
    ) -> int:
        value = data.get(key, default)
        if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
            raise self.fail(
                table, key, f"must be a whole number in [{low}, {high}], got {_shown(value)}"
            )
        return value

    def table(self, table: str, data: dict[str, Any], key: str) -> dict[str, Any]:
        value = data.get(key, {})
        if not isinstance(value, dict):
            raise self.fail(table, key, f"must be a table ([{key}]), got {_shown(value)}")
        return value

    def flag(self, table: str, data: dict[str, Any], key: str, default: bool) -> bool:
        value = data.get(key, default)
        if not isinstance(value, bool):
            raise self.fail(table, key, f"must be true or false, got {_shown(value)}")
        return value

    def file(self, table: str, data: dict[str, Any], key: str) -> Path:
        path = (self.path.parent / self.text(table, data, key)).resolve()
        if not path.exists():
            raise self.fail(table, key, f"file not found: {path}")
        return path


def load_config(path: str | Path) -> Config:
    """Read and validate a scenario file; raise InputError with file, line and key.

    Storms (instead of another wetness key)::

        [[scenario]]
        name = "design_storm"
        [scenario.storm]
        rain_mm_h = 20.0
        duration_h = 12.0
        later_h = 24.0                     # look again this long after the start
        initial_water_table_depth_m = 1.0
        long_term_infiltration_mm_day = 0.0

    Probability of failure (used where the soil table gives spreads)::

        [reliability]
        method = "taylor"                  # or "monte_carlo"
        samples = 1000
        random_state = 1                   # same number, same samples
        fs_distribution = "lognormal"      # or "normal" (Taylor method; default lognormal)
    """
    path = Path(path)
    text = read_text(path, "scenario file")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML: {exc}") from None
    except RecursionError:
        raise InputError(f"{path}: not valid TOML: arrays or tables nested too deeply") from None
    r = _Reader(path, text)
    notes: list[str] = []
    data = r.renamed("", data, notes)
    r.known("", data, set(SCHEMA))

    reg = data.get("region")
    if not isinstance(reg, dict) or not reg:
        raise r.fail("region", "", "a [region] table is required")
    r.known("region", reg, allowed("region"))
    unit = r.text("region", reg, "dem_elevation_unit", "m")
    if unit not in ("m", "ft"):
        raise r.fail("region", "dem_elevation_unit", f'must be "m" or "ft", got {_shown(unit)}')
    dem_crs = None
    if "dem_crs" in reg:
        from pyproj import CRS
        from pyproj.exceptions import CRSError

        dem_crs = r.text("region", reg, "dem_crs")
        try:
            CRS.from_user_input(dem_crs)
        except CRSError:
            raise r.fail(
                "region", "dem_crs", f'{_shown(dem_crs)} is not a CRS (e.g. "EPSG:32633", or WKT)'
            ) from None
    region = Region(
        name=r.text("region", reg, "name", path.stem),
        dem=r.file("region", reg, "dem"),
        dem_elevation_unit=unit,
        dem_crs=dem_crs,
        soil_units=r.file("region", reg, "soil_units"),
        soil_unit_field=r.text("region", reg, "soil_unit_field", "unit"),
        soil_table=r.file("region", reg, "soil_table") if "soil_table" in reg else None,
        soil_layer=r.text("region", reg, "soil_layer") if "soil_layer" in reg else None,
        soil_depth=soil_depth_models(r, data),
        land_cover=land_cover(r, data),
    )

    classes_table = "hazard" if ("hazard", "") in r.lines.where else "classes"
    haz = r.table("", data, "classes")
    r.known(classes_table, haz, allowed("classes"))
    raw_breaks = haz.get("fs_breaks", list(DEFAULT_FS_BREAKS))
    if not isinstance(raw_breaks, list) or not all(
        isinstance(b, int | float) and not isinstance(b, bool) for b in raw_breaks
    ):
        raise r.fail(
            classes_table,
            "fs_breaks",
            f"must be a list of 1 to 8 increasing numbers in (0, 1e6], got {_shown(raw_breaks)}",
        )
    try:
        breaks = tuple(float(b) for b in check_breaks(raw_breaks))
    except (InputError, TypeError, ValueError) as exc:
        raise r.fail(classes_table, "fs_breaks", str(exc)) from None
    min_zone = r.number(
        classes_table, haz, "min_zone_area_m2", *limits("classes", "min_zone_area_m2"), 0.0
    )

    out = r.renamed("outputs", r.table("", data, "outputs"), notes)
    r.known("outputs", out, allowed("outputs"))
    fs_cap = r.number("outputs", out, "fs_cap", *limits("outputs", "fs_cap"), 10.0)

    rel = r.table("", data, "reliability")
    r.known("reliability", rel, allowed("reliability"))
    method = r.choice("reliability", rel, "method", RELIABILITY_METHODS, "taylor")
    fs_dist = r.choice("reliability", rel, "fs_distribution", ("lognormal", "normal"), "lognormal")
    _refuse_unused_reliability(r, rel, method, raw_storms=_has_storm(data.get("scenario")))
    reliability = ReliabilitySpec(
        method=method,
        samples=r.integer("reliability", rel, "samples", *_whole("reliability", "samples"), 1000),
        random_state=r.integer(
            "reliability", rel, "random_state", *_whole("reliability", "random_state"), 0
        ),
        fs_distribution=fs_dist,
    )

    raw_scenarios = data.get("scenario")
    if not isinstance(raw_scenarios, list) or not raw_scenarios:
        raise r.fail("", "scenario", "at least one [[scenario]] table is required")
    r.raw_scenarios = raw_scenarios
    scenarios: list[Scenario] = []
    for i, sc in enumerate(raw_scenarios, start=1):
        if not isinstance(sc, dict):
            raise r.fail(
                "", "scenario", f"each scenario must be a [[scenario]] table, got {_shown(sc)}"
            )
        scenarios.append(_scenario(r, f"scenario#{i}", sc, {s.name for s in scenarios}))
    slip = r.table("", data, "slip_planes")
    r.known("slip_planes", slip, allowed("slip_planes"))
    min_slip = float(
        r.number(
            "slip_planes",
            slip,
            "min_slip_depth_m",
            *limits("slip_planes", "min_slip_depth_m"),
            MIN_SLIP_DEPTH_M,
        )
    )
    scenarios = [_with_min_slip_depth(s, min_slip) for s in scenarios]
    scenarios = [_with_cell_fields(r, s, i, region) for i, s in enumerate(scenarios, start=1)]
    rainfall_frequency = _rainfall_frequency(r, data, scenarios)
    scenarios = _with_design_storms(r, scenarios, rainfall_frequency)
    zones = r.flag("outputs", out, "zones", True)
    if not zones and "min_zone_area_m2" in haz:
        raise r.fail(
            classes_table, "min_zone_area_m2", "applies to low-margin zones, and zones = false"
        )
    return Config(
        path=path.resolve(),
        text=text,
        region=region,
        fs_breaks=breaks,
        min_zone_area_m2=float(min_zone),
        fs_cap=float(fs_cap),
        zones=zones,
        quicklook_map=r.flag("outputs", out, "quicklook_map", True),
        report=r.flag("outputs", out, "report", True),
        scenarios=tuple(scenarios),
        reliability=reliability,
        deprecations=tuple(notes),
        comparison=_comparison(r, r.table("", data, "comparison"), [s.name for s in scenarios]),
        inventory=_inventory(r, data["inventory"]) if "inventory" in data else None,
        runout=runout(r, data, [s.name for s in scenarios], "inventory" in data),
        rainfall_frequency=rainfall_frequency,
        min_slip_depth_m=min_slip,
    )


HISTORY_SOURCES = ("rain_mm_h", "hyetograph", "design_return_period_yr", "gauges", "rain_series")
DESIGN_KEYS = ("design_return_period_yr", "design_duration_h", "block_h", "pattern")
GAUGE_KEYS = ("gauges", "gauge_weighting", "gauge_power")
SERIES_KEYS = ("rain_series", "rain_variable", "rain_series_unit", "rain_series_resampling")
SERIES_RESAMPLING = ("bilinear", "nearest")


def _rain_history(
    r: _Reader, sub: str, raw: dict[str, Any]
) -> tuple[dict[str, Any], dict[str, Any]]:
    """The storm's keys left for the constant storm, and a history's StormSpec fields
    (a hyetograph read here; a design storm's steps filled once the table is read)."""
    sources = [k for k in HISTORY_SOURCES if k in raw]
    if len(sources) != 1:
        raise r.fail(
            sub,
            sources[1] if len(sources) > 1 else "",
            "storm needs one rain: rain_mm_h with duration_h, a hyetograph, gauges, a "
            "rain_series, or design_return_period_yr with design_duration_h",
        )
    source = sources[0]
    stray = [k for k in DESIGN_KEYS if k in raw and source != "design_return_period_yr"]
    stray += [k for k in GAUGE_KEYS[1:] if k in raw and source != "gauges"]
    stray += [k for k in SERIES_KEYS[1:] if k in raw and source != "rain_series"]
    stray += ["duration_h"] if source != "rain_mm_h" and "duration_h" in raw else []
    if stray:
        raise r.fail(sub, stray[0], f"cannot matter with {source}: remove it")
    if source == "rain_mm_h":
        return raw, {}
    used = (*DESIGN_KEYS, *GAUGE_KEYS, *SERIES_KEYS, "hyetograph")
    rest = {k: v for k, v in raw.items() if k not in used}
    if source == "gauges":
        return rest, _gauge_fields(r, sub, raw)
    if source == "rain_series":
        return rest, _series_fields(r, sub, raw)
    if source == "hyetograph":
        from slopescreen.maps.io.hyetographs import read_hyetograph

        path = r.file(sub, raw, "hyetograph")
        ends, rain = read_hyetograph(path)
        depth = float(rain_steps(ends, rain).depth_mm)
        return rest, {
            "hyetograph": path,
            "ends_h": tuple(map(float, ends)),
            "steps_mm_h": tuple(map(float, rain)),
            "duration_h": float(ends[-1]),
            "rain_mm_h": depth / float(ends[-1]),
        }
    if "design_duration_h" not in raw:
        raise r.fail(sub, "", "a design storm needs design_duration_h")
    number = {k: float(r.number(sub, raw, k, *STORM_KEYS[k])) for k in DESIGN_KEYS[:3] if k in raw}  # type: ignore[arg-type]
    pattern = r.choice(sub, raw, "pattern", PATTERNS, "centre")
    design = (
        number["design_return_period_yr"],
        number["design_duration_h"],
        number.get("block_h", math.nan),
        pattern,
    )
    return rest, {"design": design, "duration_h": design[1]}


def _gauge_fields(r: _Reader, sub: str, raw: dict[str, Any]) -> dict[str, Any]:
    """A StormSpec's fields for several gauges: the layer and records read and checked,
    the weighting and its power."""
    from slopescreen.maps.io.gauges import read_gauges

    weighting = r.choice(sub, raw, "gauge_weighting", WEIGHTINGS, "nearest")
    if "gauge_power" in raw and weighting != "inverse_distance":
        raise r.fail(sub, "gauge_power", "cannot matter with the nearest gauge: remove it")
    low, high = STORM_KEYS["gauge_power"]
    power = float(r.number(sub, raw, "gauge_power", low, high, DEFAULT_POWER))  # type: ignore[arg-type]
    path = r.file(sub, raw, "gauges")
    found = read_gauges(path)
    mean = found.rain_mm_h.mean(axis=0)
    depth = float(rain_steps(found.ends_h, mean).depth_mm)
    return {
        "gauges": path,
        "gauge_names": found.names,
        "gauge_records": found.records,
        "gauge_xy": found.xy,
        "gauge_crs": found.crs_wkt,
        "gauge_rain": tuple(tuple(map(float, row)) for row in found.rain_mm_h),
        "gauge_weighting": weighting,
        "gauge_power": power,
        "ends_h": tuple(map(float, found.ends_h)),
        "steps_mm_h": tuple(map(float, mean)),
        "duration_h": float(found.ends_h[-1]),
        "rain_mm_h": depth / float(found.ends_h[-1]),
    }


def _series_fields(r: _Reader, sub: str, raw: dict[str, Any]) -> dict[str, Any]:
    """A StormSpec's fields for rain on a grid in steps (maps.io.rain_series)."""
    from slopescreen.maps.io.rain_series import read_series

    variable = r.text(sub, raw, "rain_variable") if "rain_variable" in raw else None
    unit = r.text(sub, raw, "rain_series_unit") if "rain_series_unit" in raw else None
    resampling = r.choice(sub, raw, "rain_series_resampling", SERIES_RESAMPLING, "bilinear")
    found = read_series(r.file(sub, raw, "rain_series"), variable, unit)
    series = found._replace(
        ends_h=tuple(map(float, found.ends_h)),
        to_mm_h=tuple(map(float, found.to_mm_h)),
        mean_mm_h=tuple(map(float, found.mean_mm_h)),
    )
    depth = float(rain_steps(found.ends_h, found.mean_mm_h).depth_mm)
    return {
        "rain_series": series,
        "series_resampling": resampling,
        "ends_h": series.ends_h,
        "steps_mm_h": series.mean_mm_h,
        "duration_h": float(found.ends_h[-1]),
        "rain_mm_h": depth / float(found.ends_h[-1]),
    }


def _with_design_storms(
    r: _Reader, scenarios: list[Scenario], rf: RainfallFrequency | None
) -> list[Scenario]:
    """Design storms' steps from the design-rainfall table (alternating block)."""
    out = []
    for sc in scenarios:
        st = sc.storm
        if st is None or st.design is None:
            out.append(sc)
            continue
        sub = f"scenario {sc.name!r}.storm"
        if rf is None or not rf.intensity_mm_h:
            raise r.fail(
                sub,
                "design_return_period_yr",
                "needs [rainfall_frequency] with an idf_table of numbers (not rasters)",
            )
        period, duration, block, pattern = st.design
        block = rf.durations_h[0] if math.isnan(block) else block
        try:
            ends, rain = alternating_block(
                rf.durations_h, rf.return_periods_yr, rf.intensity_mm_h, period, duration,
                block, pattern,
            )  # fmt: skip
        except ValueError as exc:
            raise r.fail(sub, "design_return_period_yr", str(exc)) from None
        storm = replace(
            st,
            design=(period, duration, block, pattern),
            ends_h=tuple(map(float, ends)),
            steps_mm_h=tuple(map(float, rain)),
            rain_mm_h=float(rain_steps(ends, rain).depth_mm) / duration,
        )
        out.append(replace(sc, storm=storm))
    return out


def _with_cell_fields(r: _Reader, sc: Scenario, number: int, region: Region) -> Scenario:
    """The scenario's year and switches checked against [soil_depth] and [land_cover]:
    a key that would change nothing is refused; the year defaults to [land_cover]'s."""
    from dataclasses import replace

    table = f"scenario#{number}"
    raw = r.raw_scenarios[number - 1]
    if "use_soil_depth" in raw and not region.soil_depth:
        raise r.fail(table, "use_soil_depth", "needs a [soil_depth] table; remove it")
    cover = region.land_cover
    if "use_land_cover" in raw and cover is None:
        raise r.fail(table, "use_land_cover", "needs a [land_cover] table; remove it")
    if "year" in raw:
        if cover is None or not cover.harvests:
            raise r.fail(
                table, "year", "sets roots after a harvest: needs [land_cover] classes with "
                "a harvest_year; remove it"
            )  # fmt: skip
        if not sc.use_land_cover:
            raise r.fail(table, "year", "applies with use_land_cover = true; remove it")
    if cover is not None and cover.harvests and sc.use_land_cover and sc.year is None:
        if cover.year is None:
            raise r.fail(
                table,
                "name",
                f"scenario {sc.name!r} needs a year (or [land_cover] year): "
                f"{cover.table.name} has harvest years",
            )
        return replace(sc, year=cover.year)
    return sc


def _with_min_slip_depth(sc: Scenario, depth_m: float) -> Scenario:
    """The scenario with [slip_planes] min_slip_depth_m in its storm or rainfall spec."""
    if sc.storm is not None:
        return replace(sc, storm=replace(sc.storm, min_slip_depth_m=depth_m))
    if sc.rainfall is not None:
        return replace(sc, rainfall=replace(sc.rainfall, min_slip_depth_m=depth_m))
    return sc


def _rainfall_frequency(
    r: _Reader, data: dict[str, Any], scenarios: list[Scenario]
) -> RainfallFrequency | None:
    """[rainfall_frequency]: required by, and only with, [scenario.rainfall] scenarios."""
    users = [s.name for s in scenarios if s.rainfall is not None]
    designs = [s.name for s in scenarios if s.storm is not None and s.storm.design is not None]
    if "rainfall_frequency" not in data:
        if designs:
            raise r.fail(
                "", "scenario", f"scenario {designs[0]!r} asks for a design storm: add a "
                "[rainfall_frequency] table naming the design-rainfall table (idf_table)"
            )  # fmt: skip
        if users:
            raise r.fail(
                "", "scenario", f"scenario {users[0]!r} uses [scenario.rainfall]: add a "
                "[rainfall_frequency] table naming the design-rainfall table (idf_table)"
            )  # fmt: skip
        return None
    table = r.table("", data, "rainfall_frequency")
    if not users and not designs:
        raise r.fail(
            "rainfall_frequency",
            "",
            "no scenario uses it ([scenario.rainfall] or a design storm); remove it",
        )
    if not users:
        for key in ("aep_breaks", "after_h", "series"):
            if key in table:
                raise r.fail(
                    "rainfall_frequency", key, "applies to [scenario.rainfall] scenarios only"
                )
    r.known("rainfall_frequency", table, allowed("rainfall_frequency"))
    from slopescreen.maps.region.idf_table import read_idf

    path = r.file("rainfall_frequency", table, "idf_table")
    durations, periods, grid, rasters, depths = read_idf(path)
    series = r.choice("rainfall_frequency", table, "series", SERIES_KINDS, "annual_maximum")
    breaks = table.get("aep_breaks", [0.1, 0.01, 0.001])
    shape = "a list of 1 to 8 falling annual probabilities in (0, 1)"
    if (
        not isinstance(breaks, list)
        or not 1 <= len(breaks) <= 8
        or not all(isinstance(b, int | float) and not isinstance(b, bool) for b in breaks)
        or not all(0.0 < b < 1.0 for b in breaks)
        or any(b <= a for a, b in zip(breaks[1:], breaks, strict=False))
    ):
        raise r.fail("rainfall_frequency", "aep_breaks", f"must be {shape}, got {_shown(breaks)}")
    return RainfallFrequency(
        idf_table=path,
        durations_h=tuple(float(d) for d in durations),
        return_periods_yr=tuple(float(t) for t in periods),
        intensity_mm_h=() if grid is None else tuple(tuple(float(x) for x in row) for row in grid),
        rasters=rasters,
        depth_rasters=depths,
        aep_breaks=tuple(float(b) for b in breaks),
        after_h=float(
            r.number(
                "rainfall_frequency",
                table,
                "after_h",
                *limits("rainfall_frequency", "after_h"),
                24.0,
            )
        ),
        series=series,
        series_stated="series" in table,
    )


def _inventory(r: _Reader, data: Any) -> InventorySpec:
    """[inventory]: keys that cannot matter (a date split's block size) are refused."""
    if not isinstance(data, dict):
        raise r.fail("", "inventory", f"must be a table ([inventory]), got {_shown(data)}")
    r.known("inventory", data, allowed("inventory"))
    part = r.text("inventory", data, "part") if "part" in data else None
    if part not in (None, "scarp", "whole"):
        raise r.fail("inventory", "part", f'must be "scarp" or "whole", got {_shown(part)}')
    date_field = r.text("inventory", data, "date_field") if "date_field" in data else None
    split = "date" if date_field else "blocks"  # held out: the newest, or spatial blocks
    if split == "date":
        for key in ("block_size_m", "random_state"):
            if key in data:
                raise r.fail(
                    "inventory",
                    key,
                    "applies to the spatial-block split only (without date_field); remove it",
                )
    share = r.number("inventory", data, "test_share", *limits("inventory", "test_share"), 0.3)
    return InventorySpec(
        path=r.file("inventory", data, "path"),
        key=r.text("inventory", data, "key") if "key" in data else None,
        date_field=date_field,
        part=part,
        split=split,
        block_size_m=float(
            r.number("inventory", data, "block_size_m", *limits("inventory", "block_size_m"), 500.0)
        ),
        test_share=float(share),
        random_state=r.integer(
            "inventory", data, "random_state", *_whole("inventory", "random_state"), 0
        ),
    )


def _comparison(r: _Reader, data: dict[str, Any], names: list[str]) -> ComparisonSpec:
    r.known("comparison", data, allowed("comparison"))
    baseline = r.text("comparison", data, "baseline") if "baseline" in data else None
    if baseline is not None and baseline not in names:
        raise r.fail(
            "comparison",
            "baseline",
            f"no scenario {baseline!r}{did_you_mean(baseline, names)}; scenarios: "
            f"{', '.join(names)}",
        )
    raw = data.get("pairs", [])
    shape = 'a list of [first, second] scenario-name pairs, e.g. [["dry", "wet"]]'
    if not isinstance(raw, list):
        raise r.fail("comparison", "pairs", f"must be {shape}, got {_shown(raw)}")
    pairs = []
    for pair in raw:
        if (
            not isinstance(pair, list)
            or len(pair) != 2
            or not all(isinstance(n, str) for n in pair)
            or pair[0] == pair[1]
        ):
            raise r.fail(
                "comparison", "pairs", f"must be {shape} of two different names, got {_shown(pair)}"
            )
        for name in pair:
            if name not in names:
                raise r.fail(
                    "comparison",
                    "pairs",
                    f"no scenario {name!r}{did_you_mean(name, names)}; scenarios: "
                    f"{', '.join(names)}",
                )
        pairs.append((pair[0], pair[1]))
    return ComparisonSpec(baseline, tuple(pairs))


def did_you_mean(name: str, allowed: Iterable[str]) -> str:
    """' (did you mean X?)' for the closest allowed name, or '' where none is close.

    >>> did_you_mean("friction_dge", ["friction_deg", "depth_m"])
    ' (did you mean friction_deg?)'
    """
    close = difflib.get_close_matches(name, list(allowed), n=1, cutoff=0.75)
    return f" (did you mean {close[0]}?)" if close else ""


def _has_storm(raw: object) -> bool:
    return isinstance(raw, list) and any(isinstance(s, dict) and "storm" in s for s in raw)


def _refuse_unused_reliability(
    r: _Reader, rel: dict[str, Any], method: str, raw_storms: bool
) -> None:
    """Keys that would change nothing are refused: samples and random_state belong to Monte
    Carlo; fs_distribution to the Taylor series (storm scenarios always use it)."""
    if method != "monte_carlo":
        for key in ("samples", "random_state"):
            if key in rel:
                raise r.fail(
                    "reliability", key, 'applies to method = "monte_carlo" only; remove it'
                )
    elif "fs_distribution" in rel and not raw_storms:
        raise r.fail(
            "reliability",
            "fs_distribution",
            'applies to method = "taylor" (and storm scenarios) only; remove it',
        )


STORM_ONLY_FIELDS = ("diffusivity_m2_s", "moisture_capacity_per_m")  # storms and rainfall


def _scenario(r: _Reader, table: str, sc: dict[str, Any], taken: set[str]) -> Scenario:
    r.known(table, sc, allowed("scenario"))
    name = r.text(table, sc, "name")
    if not _NAME.fullmatch(name):
        raise r.fail(
            table,
            "name",
            f"{name!r}: use 1-64 letters, digits, _ . - starting with a letter or digit "
            "(it names a folder)",
        )
    if name.lower() in RESERVED_NAMES:
        raise r.fail(
            table,
            "name",
            f"{name!r} is reserved (it names a file or folder of the run); "
            f"reserved: {', '.join(sorted(RESERVED_NAMES))}",
        )
    if name in taken:
        raise r.fail(table, "name", f"duplicate scenario name {name!r}")
    given = [k for k in WETNESS_KEYS if k in sc]
    if len(given) != 1:
        raise r.fail(
            table,
            given[1] if len(given) > 1 else "name",
            f"scenario {name!r} must set exactly one of {', '.join(WETNESS_KEYS)}",
        )
    overrides: dict[str, dict[str, float | Path]] = {}
    soil = sc.get("soil", {})
    if not isinstance(soil, dict):
        raise r.fail(table, "soil", "must be a table of soil units")
    for unit, fields in soil.items():
        sub = f"{table}.soil.{unit}"
        if not isinstance(fields, dict):
            raise r.fail(sub, "", f"soil override for unit {unit!r} must be a table")
        r.known(sub, fields, set(SOIL_FIELDS))
        for key in STORM_ONLY_FIELDS:
            if key in fields and "storm" not in sc and "rainfall" not in sc:
                raise r.fail(sub, key, "applies to storm and rainfall scenarios only; remove it")
        overrides[str(unit)] = {  # a number, or a raster path (relative to this file)
            k: r.file(sub, fields, k)
            if isinstance(fields[k], str)
            else r.number(sub, fields, k, *SOIL_FIELDS[k][:2])
            for k in fields
        }  # type: ignore[misc]
    storm = None
    rain_raster = None
    if "storm" in sc:
        sub = f"{table}.storm"
        raw = sc["storm"]
        if not isinstance(raw, dict):
            raise r.fail(table, "storm", "must be a table")
        r.known(sub, raw, allowed("scenario.storm"))
        raw, history = _rain_history(r, sub, raw)
        for key in ("rain_mm_h", "duration_h"):
            if key not in raw and not history:
                raise r.fail(sub, "", f"storm needs {key}")
        initial = [
            k for k in ("initial_water_table_depth_m", "initial_recharge_mm_day") if k in raw
        ]
        if not initial:
            raise r.fail(
                sub, "", "storm needs initial_water_table_depth_m (or initial_recharge_mm_day)"
            )
        if len(initial) > 1:
            raise r.fail(
                sub,
                initial[-1],
                "storm needs one initial state: initial_water_table_depth_m or "
                "initial_recharge_mm_day",
            )
        if isinstance(raw.get("rain_mm_h"), str):  # a raster of intensities
            rain_raster = r.file(sub, raw, "rain_mm_h")
            raw = {k: v for k, v in raw.items() if k != "rain_mm_h"}
        values: dict[str, Any] = {k: r.number(sub, raw, k, *STORM_KEYS[k]) for k in raw}
        values.setdefault("rain_mm_h", math.nan)
        values |= history
        values.setdefault("initial_water_table_depth_m", math.nan)  # from the recharge
        values.setdefault("later_h", values["duration_h"])
        if values["later_h"] < values["duration_h"]:
            raise r.fail(
                sub,
                "later_h",
                f"must not be before the end of the storm ({values['duration_h']:g} h)",
            )
        storm = StormSpec(**values)  # type: ignore[arg-type]
    rainfall = None
    if isinstance(sc.get("recharge_mm_day"), str):  # a raster of recharge
        rain_raster = r.file(table, sc, "recharge_mm_day")
        sc = {k: v for k, v in sc.items() if k != "recharge_mm_day"}
    if "rainfall" in sc:
        sub = f"{table}.rainfall"
        raw = sc["rainfall"]
        if not isinstance(raw, dict):
            raise r.fail(table, "rainfall", "must be a table")
        r.known(sub, raw, allowed("scenario.rainfall"))
        if "initial_water_table_depth_m" not in raw:
            raise r.fail(sub, "", "rainfall needs initial_water_table_depth_m")
        rainfall = RainfallSpec(**{k: r.number(sub, raw, k, *RAINFALL_KEYS[k]) for k in raw})  # type: ignore[arg-type]
    return Scenario(
        rainfall=rainfall,
        storm=storm,
        name=name,
        description=r.text(table, sc, "description", "-") if "description" in sc else "",
        saturation=r.number(table, sc, "saturation", *limits("scenario", "saturation")),
        saturation_raster=r.file(table, sc, "saturation_raster")
        if "saturation_raster" in sc
        else None,
        recharge_mm_day=r.number(table, sc, "recharge_mm_day", *RECHARGE_RANGE),
        rain_raster=rain_raster,
        seismic_coefficient=float(
            r.number(
                table, sc, "seismic_coefficient", *limits("scenario", "seismic_coefficient"), 0.0
            )
        ),
        soil_overrides=overrides,
        year=r.integer(table, sc, "year", *_whole("scenario", "year"), 0) if "year" in sc else None,
        use_soil_depth=r.flag(table, sc, "use_soil_depth", True),
        use_land_cover=r.flag(table, sc, "use_land_cover", True),
    )
