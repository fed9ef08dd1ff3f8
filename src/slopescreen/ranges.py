"""Allowed ranges of the quantities a user types: one table for the shell's options, the
soil table and scenario file, and the spreadsheet cells, so the same value is accepted or
refused alike everywhere (numpy only, through ``_checks``).

The physics functions keep their own, wider mathematical domains (a friction angle below
90 degrees, say); these are the plausible ranges of natural soils and slopes.

>>> check_ranges({"unit_weight_kn_m3": 19.0, "note": "not checked"})
>>> check_ranges({"unit_weight_kn_m3": 190.0})
Traceback (most recent call last):
...
slopescreen.errors.InputError: unit_weight_kn_m3 must be in [5, 30] kN/m3, got 190
"""

from __future__ import annotations

from collections.abc import Mapping

from slopescreen._checks import checked

# quantity: (low, high, high bound excluded)
RANGES: dict[str, tuple[float, float, bool]] = {
    "slope_deg": (0.0, 90.0, True),
    "depth_m": (0.05, 50.0, False),
    "cohesion_kpa": (0.0, 1000.0, False),
    "friction_deg": (0.0, 70.0, False),
    "unit_weight_kn_m3": (5.0, 30.0, False),
    "saturated_unit_weight_kn_m3": (9.81, 30.0, False),
    "root_cohesion_kpa": (0.0, 200.0, False),
    "surcharge_kpa": (0.0, 10_000.0, False),
    "saturation": (0.0, 1.0, False),
    "seismic_coefficient": (0.0, 0.99, False),
    "water_unit_weight_kn_m3": (9.0, 10.5, False),
    "hydraulic_conductivity_m_s": (1e-12, 1.0, False),
    "transmissivity_m2_day": (1e-9, 1e5, False),
    "diffusivity_m2_s": (1e-9, 1.0, False),
    "moisture_capacity_per_m": (1e-6, 10.0, False),
    "cohesion_sd_kpa": (0.0, 1000.0, False),
    "friction_sd_deg": (0.0, 70.0, False),
}


def check_ranges(values: Mapping[str, object]) -> None:
    """Raise InputError for the first value of a known quantity outside its range (None
    and names not in the table are skipped)."""
    for name, value in values.items():
        if name in RANGES and value is not None:
            low, high, high_open = RANGES[name]
            checked(name, value, low, high, high_open=high_open)


def range_text(name: str) -> str:
    """The range of a quantity as help and messages print it, e.g. "[0, 90)".

    >>> range_text("slope_deg"), range_text("depth_m")
    ('[0, 90)', '[0.05, 50]')
    """
    low, high, high_open = RANGES[name]
    return f"[{low:g}, {high:g}{')' if high_open else ']'}"
