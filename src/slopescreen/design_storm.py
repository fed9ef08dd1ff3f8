"""Design hyetographs from a design-rainfall (IDF) table: the alternating-block method
(numpy only).

For a return period T, a total duration D = K dt and blocks of dt hours, the depth of the
design storm of each duration k dt is P_k = i(k dt, T) k dt, read from the table with log
intensity linear in log duration between its rows (:func:`slopescreen.rainfall_frequency.
design_at_duration`, the power-law form; no extrapolation: dt and D must lie within the
table's durations). The increments P_k - P_(k-1) are the blocks; the pattern places them:

- ``centre``: the largest in the middle, the others alternately after and before it
  (Chow, Maidment & Mays 1988), so every window of k blocks around the peak holds P_k;
- ``front``: largest first, falling;
- ``end``: rising to the largest last. For the same depth an end-loaded storm raises the
  pressure head most (D'Odorico, Fagherazzi & Rigon 2005; shown in the tests).

References
----------
Chow, V.T., Maidment, D.R. & Mays, L.W. (1988). *Applied Hydrology*. McGraw-Hill,
section 14.4 (the alternating block method).
D'Odorico, P., Fagherazzi, S. & Rigon, R. (2005). Potential for landsliding: dependence on
hyetograph characteristics. Journal of Geophysical Research 110, F01007.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.rainfall_frequency import design_at_duration

PATTERNS = ("front", "centre", "end")


def block_order(blocks: int, pattern: str) -> np.ndarray:
    """Where each block goes: index i of the result is the rank (0 = largest) of the block
    placed i-th in time.

    >>> block_order(5, "centre").tolist(), block_order(4, "end").tolist()
    ([4, 2, 0, 1, 3], [3, 2, 1, 0])
    """
    if pattern not in PATTERNS:
        raise ValueError(f"pattern must be one of {', '.join(PATTERNS)}, got {pattern!r}")
    ranks = np.arange(blocks)
    if pattern == "front":
        return ranks
    if pattern == "end":
        return ranks[::-1]
    order = np.empty(blocks, int)
    middle = (blocks - 1) // 2
    order[middle] = 0
    for rank in range(1, blocks):  # alternately after and before the peak
        step = (rank + 1) // 2
        order[middle + step if rank % 2 else middle - step] = rank
    return order


def alternating_block(
    durations_h: ArrayLike,
    return_periods_yr: ArrayLike,
    design_mm_h: ArrayLike,
    return_period_yr: float,
    total_h: float,
    block_h: float,
    pattern: str = "centre",
) -> tuple[np.ndarray, np.ndarray]:
    """(ends_h, rain_mm_h) of the design storm of ``return_period_yr`` (one of the table's
    return periods) lasting ``total_h`` in blocks of ``block_h`` (``total_h`` a whole
    number of blocks; both within the table's durations). ``design_mm_h``: the table,
    (durations, return periods) in mm/h.

    >>> ends, rain = alternating_block([1.0, 3.0], [10.0], [[30.0], [15.0]], 10.0, 3.0, 1.0)
    >>> ends.tolist(), round(float(rain.sum()), 6)  # 3 h at 15 mm/h: 45 mm
    ([1.0, 2.0, 3.0], 45.0)
    """
    durations = np.asarray(durations_h, float)
    periods = np.asarray(return_periods_yr, float)
    table = np.asarray(design_mm_h, float)
    matches = np.flatnonzero(np.isclose(periods, return_period_yr, rtol=1e-9, atol=0.0))
    if matches.size == 0:
        shown = ", ".join(f"{p:g}" for p in periods)
        raise ValueError(
            f"return_period_yr must be one of the table's ({shown}), got {return_period_yr:g}"
        )
    blocks = total_h / block_h
    if block_h <= 0.0 or abs(blocks - round(blocks)) > 1e-9 or round(blocks) < 1:
        raise ValueError(f"total_h ({total_h:g}) must be a whole number of blocks of {block_h:g} h")
    if block_h < durations[0] * (1 - 1e-12) or total_h > durations[-1] * (1 + 1e-12):
        raise ValueError(
            f"blocks of {block_h:g} h to a total of {total_h:g} h must lie within the table's "
            f"durations ({durations[0]:g} to {durations[-1]:g} h): no extrapolation"
        )
    k = round(blocks)
    spans = block_h * np.arange(1, k + 1)
    intensity = design_at_duration(durations, table[:, matches[:1]], spans)[0]
    depth = intensity * spans
    increments = np.diff(np.concatenate(([0.0], depth)))
    if (increments < -1e-9 * depth[-1]).any():
        raise ValueError("the table's depth must not fall as the duration grows")
    ranked = np.sort(np.maximum(increments, 0.0))[::-1]
    rain = ranked[block_order(k, pattern)] / block_h
    return spans, rain
