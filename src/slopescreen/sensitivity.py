"""One-at-a-time sensitivity of the infinite-slope FS (numpy only): each parameter moved to
a low and a high value with the others held, the swing shown as a tornado chart.

The low and high values are the mean -/+ one standard deviation where a spread is known,
else -/+ ``SHARE`` (20%) of the value: a common screening convention, not a probability
statement (for that see :mod:`slopescreen.reliability`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.hydrology import steady_state_saturation
from slopescreen.scenario import cell_transmissivity_m2_day
from slopescreen.stability import factor_of_safety

SHARE = 0.2
# physical bounds of the parameters a range may not cross
BOUNDS = {"friction_deg": (0.0, 89.9), "depth_m": (0.01, np.inf)}


def parameter_range(
    name: str,
    value: float,
    sd: float | None = None,
    share: float = SHARE,
    upper: float = np.inf,
) -> tuple[float, float, str]:
    """(low, high, how): value -/+ sd, or -/+ share of the value; kept >= 0 and inside the
    parameter's physical bounds, and at most ``upper`` (the moist unit weight is never
    raised above the saturated one).

    >>> parameter_range("cohesion_kpa", 4.0, 1.5)
    (2.5, 5.5, '+-1 sd')
    >>> parameter_range("friction_deg", 30.0)
    (24.0, 36.0, '+-20%')
    >>> parameter_range("unit_weight_kn_m3", 18.0, upper=20.0)
    (14.4, 20.0, '+-20%, at most 20')
    """
    if sd is not None and np.isfinite(sd) and sd > 0.0:
        low, high, how = value - sd, value + sd, "+-1 sd"
    else:
        low, high, how = value * (1.0 - share), value * (1.0 + share), f"+-{100 * share:g}%"
    lo, hi = BOUNDS.get(name, (0.0, np.inf))
    if high > upper:
        hi, how = min(hi, upper), f"{how}, at most {upper:g}"
    return float(np.clip(low, lo, hi)), float(np.clip(high, lo, hi)), how


def steady_fs(
    slope_deg: ArrayLike,
    specific_catchment_area_m: ArrayLike,
    *,
    saturation: ArrayLike | None = None,
    recharge_mm_day: float | None = None,
    seismic_coefficient: float = 0.0,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    unit_weight_kn_m3: ArrayLike,
    depth_m: ArrayLike,
    saturated_unit_weight_kn_m3: ArrayLike | None = None,
    root_cohesion_kpa: ArrayLike = 0.0,
    hydraulic_conductivity_m_s: ArrayLike = np.nan,
    transmissivity_m2_day: ArrayLike = np.nan,
    **_ignored: Any,
) -> np.ndarray:
    """Infinite-slope FS under a steady wetness: the saturation ratio m given, or m from a
    steady recharge (Montgomery & Dietrich 1994: m = min(1, R a / (T sin beta)), with
    T = K z cos beta where only K is given), so a change of depth or conductivity moves the
    water table too.

    >>> round(float(steady_fs(30.0, 50.0, saturation=0.5, cohesion_kpa=5.0,
    ...     friction_deg=32.0, unit_weight_kn_m3=18.0, depth_m=1.5)), 4)
    1.215
    """
    if recharge_mm_day is not None:
        t = cell_transmissivity_m2_day(
            hydraulic_conductivity_m_s, transmissivity_m2_day, depth_m, np.asarray(slope_deg)
        )
        m = steady_state_saturation(recharge_mm_day, specific_catchment_area_m, slope_deg, t)
    else:
        m = 0.0 if saturation is None else saturation
    return np.asarray(
        factor_of_safety(
            slope_deg,
            depth_m,
            cohesion_kpa,
            friction_deg,
            unit_weight_kn_m3,
            m,
            saturated_unit_weight_kn_m3=saturated_unit_weight_kn_m3,
            root_cohesion_kpa=root_cohesion_kpa,
            seismic_coefficient=seismic_coefficient,
        ),
        float,
    )


def one_at_a_time(
    fs_of: Callable[..., ArrayLike],
    base: Mapping[str, Any],
    ranges: Mapping[str, tuple[float, float]],
) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """FS with each parameter of ``ranges`` at its low and at its high value, the others
    as in ``base`` (keyword arguments of ``fs_of``).

    >>> out = one_at_a_time(lambda a, b: a * b, {"a": 2.0, "b": 3.0}, {"a": (1.0, 4.0)})
    >>> out["a"]
    (3.0, 12.0)
    """
    out: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for name, (low, high) in ranges.items():
        at_low = fs_of(**{**base, name: low})
        at_high = fs_of(**{**base, name: high})
        out[name] = (at_low, at_high)
    return out
