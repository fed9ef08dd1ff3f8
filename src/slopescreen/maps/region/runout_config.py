"""The scenario file's ``[runout]`` table: which scenarios start run-out, from which cells,
with which reach rule, and the assets to check (read with the file's line numbers)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from slopescreen.errors import InputError
from slopescreen.maps.io.textfiles import read_csv_dicts
from slopescreen.maps.region.scenario_schema import allowed, limits
from slopescreen.runout import DEBRIS_FLOW_A, DEBRIS_FLOW_B

SOURCES = ("fs", "probability", "inventory")
DEFAULT_EXPONENT = 4.0  # Holmgren's exponent: 4 to 6 for debris spreading (from memory)


@dataclass(frozen=True)
class RunoutSpec:
    """``[runout]``: see docs/scenario-file.md."""

    scenarios: tuple[str, ...]
    source: str = "fs"
    fs_below: float = 1.0
    probability_above: float = 0.5
    min_source_area_m2: float = 0.0
    travel_angle_deg: float | None = None
    regression: tuple[float, float] = (DEBRIS_FLOW_A, DEBRIS_FLOW_B)
    angle_table: tuple[tuple[float, float], ...] = ()  # (largest volume m3, angle deg)
    angle_file: Path | None = None
    exponent: float = DEFAULT_EXPONENT
    friction_angle_deg: float | None = None
    max_speed_m_s: float = math.inf
    min_share: float = 1e-4
    assets: Path | None = None
    asset_layer: str | None = None
    asset_field: str | None = None

    @property
    def reach_rule(self) -> str:
        """One line: how the angle of reach is set, and the energy line."""
        if self.travel_angle_deg is not None:
            rule = f"travel angle {self.travel_angle_deg:g} deg for every source"
        elif self.angle_table:
            name = self.angle_file.name if self.angle_file else "a table"
            rule = f"travel angle by source volume from {name}"
        else:
            a, b = self.regression
            sign = "+" if b >= 0 else "-"
            rule = (
                f"angle of reach from the source volume: log10(H/L) = {a:g} {sign} "
                f"{abs(b):g} log10(V)"
            )
        if self.friction_angle_deg is not None:
            cap = (
                ""
                if math.isinf(self.max_speed_m_s)
                else f", speed at most {self.max_speed_m_s:g} m/s"
            )
            rule += f"; energy line, travel friction {self.friction_angle_deg:g} deg{cap}"
        return rule + f"; spreading exponent {self.exponent:g}"


def runout(
    r: Any, data: dict[str, Any], names: list[str], has_inventory: bool
) -> RunoutSpec | None:
    """``[runout]``, or None."""
    if "runout" not in data:
        return None
    t = r.table("", data, "runout")
    r.known("runout", t, allowed("runout"))
    chosen = t.get("scenarios")
    if not isinstance(chosen, list) or not chosen or not all(isinstance(s, str) for s in chosen):
        raise r.fail("runout", "scenarios", "must be a list of scenario names")
    for name in chosen:
        if name not in names:
            raise r.fail(
                "runout", "scenarios", f"no scenario {name!r}; scenarios: {', '.join(names)}"
            )
    source = r.choice("runout", t, "source", SOURCES, "fs")
    if source == "inventory" and not has_inventory:
        raise r.fail("runout", "source", 'source = "inventory" needs an [inventory] table')
    for key, needs in (("fs_below", "fs"), ("probability_above", "probability")):
        if key in t and source != needs:
            raise r.fail("runout", key, f'applies to source = "{needs}"; remove it')
    rules = [k for k in ("travel_angle_deg", "angle_table") if k in t]
    if len(rules) > 1 or (rules and ({"regression_a", "regression_b"} & set(t))):
        raise r.fail(
            "runout",
            rules[-1],
            "give one reach rule: the regression, travel_angle_deg or angle_table",
        )
    if "max_speed_m_s" in t and "friction_angle_deg" not in t:
        raise r.fail("runout", "max_speed_m_s", "caps the energy line: needs friction_angle_deg")
    if ("asset_layer" in t or "asset_field" in t) and "assets" not in t:
        key = "asset_layer" if "asset_layer" in t else "asset_field"
        raise r.fail("runout", key, "applies with assets; remove it")

    def number(key: str, default: float | None) -> float | None:
        return r.number("runout", t, key, *limits("runout", key), default)

    angle_file = r.file("runout", t, "angle_table") if "angle_table" in t else None
    return RunoutSpec(
        scenarios=tuple(chosen),
        source=source,
        fs_below=float(number("fs_below", 1.0)),  # type: ignore[arg-type]
        probability_above=float(number("probability_above", 0.5)),  # type: ignore[arg-type]
        min_source_area_m2=float(number("min_source_area_m2", 0.0)),  # type: ignore[arg-type]
        travel_angle_deg=number("travel_angle_deg", None),
        regression=(
            float(number("regression_a", DEBRIS_FLOW_A)),  # type: ignore[arg-type]
            float(number("regression_b", DEBRIS_FLOW_B)),  # type: ignore[arg-type]
        ),
        angle_table=read_angle_table(angle_file) if angle_file is not None else (),
        angle_file=angle_file,
        exponent=float(number("exponent", DEFAULT_EXPONENT)),  # type: ignore[arg-type]
        friction_angle_deg=number("friction_angle_deg", None),
        max_speed_m_s=float(number("max_speed_m_s", math.inf)),  # type: ignore[arg-type]
        min_share=float(number("min_share", 1e-4)),  # type: ignore[arg-type]
        assets=r.file("runout", t, "assets") if "assets" in t else None,
        asset_layer=r.text("runout", t, "asset_layer") if "asset_layer" in t else None,
        asset_field=r.text("runout", t, "asset_field") if "asset_field" in t else None,
    )


def read_angle_table(path: Path) -> tuple[tuple[float, float], ...]:
    """Rows (largest volume m3, travel angle deg), volumes rising; a source larger than the
    last row takes the last row's angle."""
    rows, _ = read_csv_dicts(path, "travel-angle table")
    if not rows or {"max_volume_m3", "travel_angle_deg"} - set(rows[0]):
        raise InputError(
            f"{path}: travel-angle table needs columns max_volume_m3, travel_angle_deg"
        )
    out = []
    for number, row in enumerate(rows, start=2):
        try:
            v, a = float(row["max_volume_m3"]), float(row["travel_angle_deg"])
        except (TypeError, ValueError):
            raise InputError(f"{path}: line {number}: numbers required") from None
        if not (v > 0 and 1.0 <= a <= 60.0):
            raise InputError(
                f"{path}: line {number}: max_volume_m3 must be > 0 and travel_angle_deg in [1, 60]"
            )
        if out and v <= out[-1][0]:
            raise InputError(f"{path}: line {number}: max_volume_m3 must rise from row to row")
        out.append((v, a))
    return tuple(out)
