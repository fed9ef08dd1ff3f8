"""Rain from several gauges: their records on one set of steps, and each cell's share of
each gauge, by the nearest gauge (Thiessen polygons) or inverse-distance weighting.

Both are the common interpolations of gauge rainfall (Thiessen 1911; inverse distance
after Shepard 1968, as used for rainfall since the 1970s): a cell takes the rain of its
nearest gauge, or the mean of all gauges weighted by distance^-p (a cell at a gauge takes
that gauge's rain). Distances are on the ground (:func:`ground_distances_m`). Rain in
steps is piecewise constant, so putting the records on the union of their steps is exact.

References
----------
Thiessen, A.H. (1911). Precipitation averages for large areas. Monthly Weather Review
39(7), 1082-1084.
Shepard, D. (1968). A two-dimensional interpolation function for irregularly-spaced data.
Proceedings of the 23rd ACM National Conference, 517-524.
"""

from __future__ import annotations

import numpy as np

WEIGHTINGS = ("nearest", "inverse_distance")
DEFAULT_POWER = 2.0  # inverse distance squared, the common choice (Shepard 1968)
EDGE_DIGITS = 9  # step ends closer than 10^-9 h (3.6 microseconds) are one


def common_steps(
    starts_h: list[float], ends_h: list[np.ndarray], rain_mm_h: list[np.ndarray]
) -> tuple[np.ndarray, np.ndarray]:
    """(ends of the common steps in h from the earliest start, rain (gauges, steps) in
    mm/h): the union of every record's step ends; a gauge gives no rain before its start
    or after its end.

    >>> ends, rain = common_steps([0.0, 1.0], [np.array([2.0]), np.array([1.0, 3.0])],
    ...                           [np.array([10.0]), np.array([4.0, 6.0])])
    >>> ends.tolist(), rain.tolist()
    ([1.0, 2.0, 4.0], [[10.0, 10.0, 0.0], [0.0, 4.0, 6.0]])
    """
    origin = min(starts_h)
    shifts = [s - origin for s in starts_h]
    edges = np.concatenate(
        [[0.0], *(shift + np.r_[0.0, e] for shift, e in zip(shifts, ends_h, strict=True))]
    )
    edges = np.unique(np.round(edges, EDGE_DIGITS))
    middles = 0.5 * (edges[:-1] + edges[1:])
    rain = np.zeros((len(starts_h), middles.size))
    for g, (shift, ends, amounts) in enumerate(zip(shifts, ends_h, rain_mm_h, strict=True)):
        local = middles - shift
        inside = (local > 0.0) & (local < ends[-1])
        step = np.minimum(np.searchsorted(ends, local, side="right"), ends.size - 1)
        rain[g] = np.where(inside, amounts[step], 0.0)
    return edges[1:], rain


def gauge_weights(
    distance_m: np.ndarray, weighting: str, power: float = DEFAULT_POWER
) -> np.ndarray:
    """Each cell's share of each gauge, (gauges, cells...), summing to 1 over gauges:
    ``"nearest"`` 1 for the nearest gauge (the first of equals), ``"inverse_distance"``
    d^-power normalised (a cell at a gauge: that gauge alone).

    >>> gauge_weights(np.array([[1.0, 3.0], [3.0, 1.0]]), "inverse_distance", 1.0).tolist()
    [[0.75, 0.25], [0.25, 0.75]]
    """
    d = np.asarray(distance_m, float)
    if weighting == "nearest" or d.shape[0] == 1:
        nearest = np.argmin(d, axis=0)
        return (np.arange(d.shape[0]).reshape(-1, *([1] * nearest.ndim)) == nearest).astype(float)
    if weighting != "inverse_distance":
        raise ValueError(f"weighting must be one of {', '.join(WEIGHTINGS)}, got {weighting!r}")
    at_gauge = d <= 0.0
    on = at_gauge.any(axis=0)
    with np.errstate(divide="ignore"):
        inverse = np.where(at_gauge, 0.0, d ** -float(power))
    weights = inverse / inverse.sum(axis=0)
    first = np.argmax(at_gauge, axis=0)
    one_hot = (np.arange(d.shape[0]).reshape(-1, *([1] * first.ndim)) == first).astype(float)
    return np.where(on, one_hot, weights)
