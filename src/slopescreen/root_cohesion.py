"""Root cohesion: its change after a harvest and its decline with depth (numpy only).

After a clear-cut the old roots decay while new vegetation roots again, so the net root
cohesion falls to a minimum some years after the harvest and then recovers (Sidle 1991).
Sidle's conceptual model adds an exponential decay of the old roots to a sigmoid regrowth
of the new ones::

    C(t) = C_full exp(-k t^n) + C_regrown S(t),
    S(t) = (1 / (1 + b exp(-c t)) - 1 / (1 + b)) / (1 - 1 / (1 + b))

with t the years since the harvest. S is the sigmoid rescaled here so that regrowth starts
from nothing at the harvest (S(0) = 0) and reaches the regrown value (S(inf) = 1): C(0) =
C_full, C(inf) = C_regrown. Before the harvest (t < 0) the roots are whole: C = C_full.

The default constants (``DEFAULT_CONSTANTS``: k = 0.5 /yr^n, n = 0.7, b = 20, c = 0.12 /yr)
are screening values of the order Sidle (1991) used for conifer forest (from memory), set
so that with C_regrown = C_full the weakest year falls about 10 years after the harvest
(9.75 years, where C is 18% of C_full). That matches the observation that the largest
slides after logging come 9-14 years after it (Reid & Keppeler, in redwood; from a
published summary). Give each land-cover class its own where better values are known.

Roots reinforce only the soil they reach. With ``"step"``, a slip plane deeper than the
rooting depth d_r gets no root cohesion; with ``"exponential"``, root cohesion declines as
C exp(-z / d_r) (d_r then the depth over which it falls by a factor e).

References
----------
Sidle, R.C. (1991). A conceptual model of changes in root cohesion in response to
vegetation management. Journal of Environmental Quality 20(1), 43-52.
Sidle, R.C. (1992). A theoretical model of the effects of disturbance, species
composition, and stand structure on root cohesion. Water Resources Research 28(7).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked

ROOT_PROFILES = ("step", "exponential")
# (decay rate k per yr^n, decay exponent n, regrowth shape b, regrowth rate c per yr)
DEFAULT_CONSTANTS = (0.5, 0.7, 20.0, 0.12)
WEAKEST_SCAN_YEARS = 300.0  # the weakest year is looked for in [0, 300] years
WEAKEST_SCAN_STEP = 0.1  # years between the scan's points, then refined by golden section


def root_cohesion_after_harvest_kpa(
    years_since_harvest: ArrayLike,
    full_kpa: ArrayLike,
    regrown_kpa: ArrayLike | None = None,
    decay_rate: ArrayLike = DEFAULT_CONSTANTS[0],
    decay_exponent: ArrayLike = DEFAULT_CONSTANTS[1],
    regrowth_shape: ArrayLike = DEFAULT_CONSTANTS[2],
    regrowth_rate: ArrayLike = DEFAULT_CONSTANTS[3],
) -> ArrayLike:
    """Net root cohesion t years after a harvest: decay of the old roots plus sigmoid
    regrowth of new ones (Sidle 1991; see the module's notes), kPa.

    Parameters
    ----------
    years_since_harvest : t, years (negative: the harvest has not come yet, C = C_full).
    full_kpa : C_full, root cohesion of the stand before the harvest, >= 0 kPa.
    regrown_kpa : C_regrown, the value regrowth reaches, >= 0 kPa (default C_full).
    decay_rate : k, > 0 per yr^n.
    decay_exponent : n, > 0.
    regrowth_shape : b, > 0 (the regrowth is half done at t = ln(b) / c for large b).
    regrowth_rate : c, > 0 per yr.

    >>> float(root_cohesion_after_harvest_kpa(0.0, 5.0))
    5.0
    >>> round(float(root_cohesion_after_harvest_kpa(10.0, 5.0)), 3)
    0.905
    """
    t = np.asarray(years_since_harvest, float)
    full = checked("full_kpa", full_kpa, 0.0)
    regrown = full if regrown_kpa is None else checked("regrown_kpa", regrown_kpa, 0.0)
    k = checked("decay_rate", decay_rate, 0.0, low_open=True)
    n = checked("decay_exponent", decay_exponent, 0.0, low_open=True)
    b = checked("regrowth_shape", regrowth_shape, 0.0, low_open=True)
    c = checked("regrowth_rate", regrowth_rate, 0.0, low_open=True)
    after = np.maximum(t, 0.0)
    start = 1.0 / (1.0 + b)
    with np.errstate(over="ignore"):
        grown = (1.0 / (1.0 + b * np.exp(-c * after)) - start) / (1.0 - start)
    value = full * np.exp(-k * after**n) + regrown * grown
    return as_result(np.where(t < 0.0, full, value))


def weakest_year_after_harvest(
    full_kpa: float = 1.0,
    regrown_kpa: float | None = None,
    decay_rate: float = DEFAULT_CONSTANTS[0],
    decay_exponent: float = DEFAULT_CONSTANTS[1],
    regrowth_shape: float = DEFAULT_CONSTANTS[2],
    regrowth_rate: float = DEFAULT_CONSTANTS[3],
) -> tuple[float, float]:
    """(years after the harvest when the net root cohesion is least, that cohesion in kPa).

    Found from a scan of [0, 300] years every 0.1 year, the lowest point refined by golden
    section between its neighbours (tested against a dense reference). Where the cohesion
    still falls at 300 years (no regrowth), the answer is (inf, its limit C_regrown).

    >>> t, c = weakest_year_after_harvest()
    >>> round(t, 2), round(c, 4)
    (9.75, 0.181)
    """

    def value(t: np.ndarray | float) -> np.ndarray:
        constants = (decay_rate, decay_exponent, regrowth_shape, regrowth_rate)
        return np.asarray(root_cohesion_after_harvest_kpa(t, full_kpa, regrown_kpa, *constants))

    ts = np.arange(0.0, WEAKEST_SCAN_YEARS + WEAKEST_SCAN_STEP / 2, WEAKEST_SCAN_STEP)
    vs = value(ts)
    i = int(np.argmin(vs))
    if i == ts.size - 1:
        regrown = full_kpa if regrown_kpa is None else regrown_kpa
        return math.inf, float(regrown)
    a, b = ts[max(i - 1, 0)], ts[min(i + 1, ts.size - 1)]
    golden = (math.sqrt(5.0) - 1.0) / 2.0
    best_t, best = float(ts[i]), float(vs[i])
    for _ in range(60):
        x1, x2 = b - golden * (b - a), a + golden * (b - a)
        f1, f2 = float(value(x1)), float(value(x2))
        if f1 <= f2:
            b = x2
            if f1 < best:
                best_t, best = float(x1), f1
        else:
            a = x1
            if f2 < best:
                best_t, best = float(x2), f2
    return best_t, best


def root_cohesion_at_depth_kpa(
    root_cohesion_kpa: ArrayLike,
    depth_m: ArrayLike,
    rooting_depth_m: ArrayLike,
    profile: str = "step",
) -> ArrayLike:
    """Root cohesion on a slip plane at depth z below the surface, kPa.

    ``"step"``: C where z <= d_r, 0 deeper. ``"exponential"``: C exp(-z / d_r).

    Parameters
    ----------
    root_cohesion_kpa : C, root cohesion near the surface, >= 0 kPa.
    depth_m : z, depth of the slip plane, >= 0 m.
    rooting_depth_m : d_r, > 0 m.
    profile : "step" or "exponential".

    >>> root_cohesion_at_depth_kpa(4.0, [0.5, 1.5], 1.0)
    array([4., 0.])
    >>> round(float(root_cohesion_at_depth_kpa(4.0, 1.0, 1.0, "exponential")), 4)
    1.4715
    """
    c = checked("root_cohesion_kpa", root_cohesion_kpa, 0.0)
    z = checked("depth_m", depth_m, 0.0)
    d = checked("rooting_depth_m", rooting_depth_m, 0.0, low_open=True)
    if profile == "step":
        return as_result(np.where(z <= d, c, 0.0))
    if profile == "exponential":
        return as_result(c * np.exp(-z / d))
    from slopescreen.errors import InputError

    raise InputError(f"root profile must be one of {', '.join(ROOT_PROFILES)}, got {profile!r}")
