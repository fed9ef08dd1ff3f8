"""Run-out reach below a failing slope, screening level (numpy only).

Three published pieces, each a plain array function:

- **Angle of reach** (Corominas 1996): the line from the top of the source to the farthest
  deposit falls at tan(alpha) = H / L, and log10(H / L) = A + B log10(V) for a source volume
  V (m3), with A and B fitted by landslide type. The defaults are those for debris flows in
  general, A = -0.012, B = -0.105, as published transcriptions of Corominas's table give
  them; give your own where a local regression exists.
- **Spreading** (Holmgren 1994): flow leaves a cell for its downslope neighbours in the
  shares f_i = tan(beta_i)^x / sum_j tan(beta_j)^x; x = 1 weights by slope, a large x tends
  to the steepest path.
- **Energy line** along a path: E_i = E_(i-1) + g dz_i - g dx_i tan(phi_t) per unit mass,
  speed sqrt(2 E) capped at a stated maximum (E at most v_max^2 / 2), the flow stopping where
  E <= 0 (a friction-limited sliding block, as in screening run-out models).

Reach is an empirical screening estimate: no entrainment, no deposition volume balance, no
impact pressure.

References
----------
Corominas, J. (1996). The angle of reach as a mobility index for small and large
landslides. Canadian Geotechnical Journal 33, 260-271.
Holmgren, P. (1994). Multiple flow direction algorithms for runoff modelling in grid based
elevation models: an empirical evaluation. Hydrological Processes 8, 327-334.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked

DEBRIS_FLOW_A = -0.012  # Corominas (1996), debris flows, as published transcriptions give
DEBRIS_FLOW_B = -0.105
GRAVITY_M_S2 = 9.81


def reach_ratio(
    volume_m3: ArrayLike, a: float = DEBRIS_FLOW_A, b: float = DEBRIS_FLOW_B
) -> ArrayLike:
    """H / L = 10^(A + B log10 V): the tangent of the angle of reach of a source of volume V
    (Corominas 1996).

    Parameters
    ----------
    volume_m3 : V, the source volume, > 0 m3.
    a, b : the regression's constants (default: debris flows, A = -0.012, B = -0.105).

    >>> round(float(reach_ratio(1e4)), 4)
    0.3698
    """
    v = checked("volume_m3", volume_m3, 0.0, low_open=True)
    return as_result(10.0 ** (a + b * np.log10(v)))


def travel_angle_deg(
    volume_m3: ArrayLike, a: float = DEBRIS_FLOW_A, b: float = DEBRIS_FLOW_B
) -> ArrayLike:
    """alpha = arctan(H / L) of :func:`reach_ratio`, degrees.

    >>> round(float(travel_angle_deg(1e4)), 2)
    20.3
    """
    return as_result(np.degrees(np.arctan(reach_ratio(volume_m3, a, b))))


def spreading_shares(tan_slopes: ArrayLike, exponent: float = 1.0) -> np.ndarray:
    """Holmgren (1994) shares of a cell's flow to its neighbours: tan(beta_i)^x over the sum
    for the downslope neighbours (tan beta_i > 0), 0 for the others; the last axis holds
    the neighbours. Computed relative to the steepest neighbour, so a very large exponent
    gives the steepest path (ties shared equally) without overflow. A cell with no
    downslope neighbour sends nothing (all shares 0).

    Parameters
    ----------
    tan_slopes : tan of the slope to each neighbour (drop over ground distance), any sign.
    exponent : x, >= 0 (0: equal shares among the downslope neighbours).

    >>> spreading_shares([0.3, 0.1, -0.2, 0.0], 1.0).round(3).tolist()
    [0.75, 0.25, 0.0, 0.0]
    >>> spreading_shares([0.3, 0.1, 0.3], 1e6).tolist()
    [0.5, 0.0, 0.5]
    """
    t = np.asarray(tan_slopes, float)
    x = float(checked("exponent", exponent, 0.0))
    down = t > 0.0
    steepest = np.max(np.where(down, t, 0.0), axis=-1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore", under="ignore"):
        relative = np.where(down, t / np.where(steepest > 0.0, steepest, 1.0), 0.0)
        power = np.where(down, relative**x, 0.0)
    total = power.sum(axis=-1, keepdims=True)
    return np.where(total > 0.0, power / np.where(total > 0.0, total, 1.0), 0.0)


def energy_after_step(
    energy_j_kg: ArrayLike,
    drop_m: ArrayLike,
    step_m: ArrayLike,
    friction_deg: float,
    max_speed_m_s: float = np.inf,
) -> ArrayLike:
    """Kinetic energy per unit mass after one step along the path:
    E_i = E_(i-1) + g dz - g dx tan(phi_t), at most v_max^2 / 2 (J/kg = m2/s2); the flow
    stops where it is <= 0.

    Parameters
    ----------
    energy_j_kg : E_(i-1), >= 0 J/kg.
    drop_m : dz, the fall over the step (negative uphill), m.
    step_m : dx, the horizontal ground length of the step, >= 0 m.
    friction_deg : phi_t, the travel friction angle, [0, 90) degrees.
    max_speed_m_s : v_max, > 0 m/s (default: no cap).

    >>> round(float(energy_after_step(0.0, 10.0, 20.0, 20.0)), 3)
    26.689
    """
    e = np.asarray(energy_j_kg, float)
    phi = np.radians(float(checked("friction_deg", friction_deg, 0.0, 90.0, high_open=True)))
    cap = float(checked("max_speed_m_s", max_speed_m_s, 0.0, low_open=True)) ** 2 / 2.0
    step = checked("step_m", step_m, 0.0)
    out = e + GRAVITY_M_S2 * np.asarray(drop_m, float) - GRAVITY_M_S2 * step * np.tan(phi)
    return as_result(np.minimum(out, cap))
