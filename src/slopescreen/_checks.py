"""Range checks shared by the physics modules (numpy only)."""

from __future__ import annotations

import math

import numpy as np

from slopescreen.errors import InputError


def _fmt(x: float) -> str:
    return "inf" if math.isinf(x) else f"{x:g}"


def checked(
    name: str,
    value: object,
    low: float = -math.inf,
    high: float = math.inf,
    *,
    low_open: bool = False,
    high_open: bool = False,
) -> np.ndarray:
    """Return ``value`` as a float array, or raise InputError naming ``name`` and the range.

    ``low_open`` / ``high_open`` exclude the bound itself. NaN is always rejected.

    >>> checked("depth_m", [1.0, 2.0], 0.0)
    array([1., 2.])
    >>> checked("friction_deg", 95.0, 0.0, 90.0, high_open=True)
    Traceback (most recent call last):
    ...
    slopescreen.errors.InputError: friction_deg must be in [0, 90) degrees, got 95
    """
    interval = f"{'(' if low_open else '['}{_fmt(low)}, {_fmt(high)}{')' if high_open else ']'}"
    try:
        arr = np.asarray(value, dtype=float)
    except OverflowError:  # an integer beyond any float
        raise InputError(
            f"{name} must be a number in {interval}, got {str(value)[:20]}..."
        ) from None
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a number, got {value!r}") from None
    if np.isnan(arr).any():
        raise InputError(f"{name} must be a number in {interval}, got NaN")
    too_low = arr <= low if low_open else arr < low
    too_high = arr >= high if high_open else arr > high
    bad = too_low | too_high
    if bad.any():
        first = float(arr[bad].flat[0])
        unit = _unit_of(name)
        raise InputError(f"{name} must be in {interval}{unit}, got {first:g}")
    return arr


def _unit_of(name: str) -> str:
    for suffix, unit in (
        ("_deg", " degrees"),
        ("_kpa", " kPa"),
        ("_m", " m"),
        ("_kn_m3", " kN/m3"),
    ):
        if name.endswith(suffix):
            return unit
    return ""


def as_result(x: np.ndarray) -> np.ndarray | float:
    """A 0-d result comes back as a Python float, anything else as an array."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x
