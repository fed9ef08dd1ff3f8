"""How often the rain that starts a shallow landslide falls (numpy only): from critical
intensities per duration (:mod:`slopescreen.rain_thresholds`) and a design-rainfall table
(intensity-duration-frequency, IDF) to the return period of the triggering storm, its
annual probability and hazard classes.

- **Table.** Intensities (mm/h) on a full grid of durations (h) and return periods (years):
  intensity must fall with duration and rise with return period. An uplift factor (a
  climate scenario) multiplies every intensity.
- **Return period per duration.** Between two tabulated return periods, log(intensity) is
  interpolated linearly in log(return period): exact for the common power-law IDF form
  i = a T^m / (D + b)^n (the form of :func:`idf_formula`), and close to the Gumbel form
  (intensity linear in log T) over a decade. Below the shortest tabulated return period
  the value is the code ``MORE_FREQUENT`` (-1: triggered by rain more frequent than the
  table covers); above the longest, ``RARER`` (-2: no tabulated storm triggers it).
- **Triggering return period**: the shortest over the tabulated durations (the most
  frequent storm of any duration that starts failure).
- **Annual probability** p = 1 - exp(-1/T) (Poisson occurrence of storms at least as
  large, common practice); a ``MORE_FREQUENT`` cell gets the bound of the shortest
  period, a ``RARER`` cell 0 with its code kept in the return-period raster.
- **Hazard classes** by annual probability, breaks 1/10, 1/100, 1/1000 by default (decade
  steps of annual probability: common practice in landslide zoning), named by us
  ``HAZARD_CLASS_NAMES``.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.errors import InputError

MORE_FREQUENT = -1.0  # triggered by rain more frequent than the shortest tabulated period
RARER = -2.0  # no tabulated storm triggers failure
FAILS_WITHOUT_RAIN = -3.0  # the cell fails before any storm
NO_INTENSITY_FAILS = -4.0  # no intensity up to the soil's conductivity fails the cell
DEFAULT_AEP_BREAKS = (0.1, 0.01, 0.001)
BANDS = 256  # bands of storm level for the annual probability with soil spreads


def hazard_class_names(breaks: tuple[float, ...] = DEFAULT_AEP_BREAKS) -> list[str]:
    """Names of the classes, most frequent first, by their return periods.

    >>> hazard_class_names((0.1, 0.01))
    ['1 in 10 years or more often', '1 in 10 to 1 in 100 years', 'rarer than 1 in 100 years']
    """
    periods = [f"{1.0 / b:g}" for b in breaks]
    names = [f"1 in {periods[0]} years or more often"]
    names += [f"1 in {a} to 1 in {b} years" for a, b in itertools.pairwise(periods)]
    return [*names, f"rarer than 1 in {periods[-1]} years"]


def idf_formula(
    durations_h: ArrayLike, return_periods_yr: ArrayLike, a: float, m: float, b: float, n: float
) -> np.ndarray:
    """Intensities (mm/h) i = a T^m / (D + b)^n on the grid (durations x return periods), a
    common IDF form (e.g. Koutsoyiannis et al. 1998, J. Hydrology 206).

    >>> idf_formula([1.0], [10.0], 20.0, 0.2, 0.5, 0.7).round(3).tolist()
    [[23.865]]
    """
    d = np.asarray(durations_h, float)[:, None]
    t = np.asarray(return_periods_yr, float)[None, :]
    return a * t**m / (d + b) ** n


def check_axes(
    durations_h: ArrayLike, return_periods_yr: ArrayLike, where: str
) -> tuple[np.ndarray, np.ndarray]:
    """The table's durations and return periods, sorted; InputError naming ``where`` unless
    there is a duration and two return periods, each > 0 h and > 1 year, none twice."""
    d = np.sort(np.asarray(durations_h, float))
    t = np.sort(np.asarray(return_periods_yr, float))
    if d.size < 1 or t.size < 2:
        raise InputError(f"{where}: needs at least one duration and two return periods")
    if (d <= 0).any() or (t <= 1.0).any():
        raise InputError(f"{where}: durations must be > 0 h and return periods > 1 year")
    if np.unique(d).size != d.size or np.unique(t).size != t.size:
        raise InputError(f"{where}: a duration or return period appears twice")
    return d, t


def check_table(
    durations_h: ArrayLike, return_periods_yr: ArrayLike, intensity_mm_h: ArrayLike, where: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The table as sorted arrays; InputError naming ``where`` and the offending entry for
    negative, missing or non-monotone values."""
    d, t = check_axes(durations_h, return_periods_yr, where)
    i = np.asarray(intensity_mm_h, float)
    if i.shape != (d.size, t.size):
        raise InputError(f"{where}: intensities must fill the grid of durations x return periods")
    order_d, order_t = np.argsort(durations_h), np.argsort(return_periods_yr)
    i = i[np.ix_(order_d, order_t)]
    bad = ~np.isfinite(i) | (i <= 0.0)
    if bad.any():
        r, c = np.argwhere(bad)[0]
        raise InputError(
            f"{where}: duration {d[r]:g} h, return period {t[c]:g} yr: intensity must be a "
            f"number > 0, got {i[r, c]:g}"
        )
    rises = np.diff(i, axis=1) > 0.0
    if not rises.all():
        r, c = np.argwhere(~rises)[0]
        raise InputError(
            f"{where}: duration {d[r]:g} h: intensity must rise with return period "
            f"({t[c]:g} yr: {i[r, c]:g}, {t[c + 1]:g} yr: {i[r, c + 1]:g} mm/h)"
        )
    falls = np.diff(i, axis=0) < 0.0
    if not falls.all():
        r, c = np.argwhere(~falls)[0]
        raise InputError(
            f"{where}: return period {t[c]:g} yr: intensity must fall with duration "
            f"({d[r]:g} h: {i[r, c]:g}, {d[r + 1]:g} h: {i[r + 1, c]:g} mm/h)"
        )
    return d, t, i


def return_period_yr(
    critical_mm_h: ArrayLike,
    return_periods_yr: ArrayLike,
    intensity_mm_h: ArrayLike,
    uplift: float = 1.0,
) -> np.ndarray:
    """Return period (years) of the storm of one duration whose intensity equals
    ``critical_mm_h`` (cells), from that duration's row of the table (intensities rising
    with the sorted return periods), log-log between rows; codes ``MORE_FREQUENT`` and
    ``RARER`` outside the table; the critical-intensity codes -1 and -2 of
    :mod:`slopescreen.rain_thresholds` become ``FAILS_WITHOUT_RAIN`` and
    ``NO_INTENSITY_FAILS``. ``intensity_mm_h`` is one row for all cells, or (gridded
    design rainfall) one row per cell along axis 0: (return periods, cells...).

    >>> t = [2.0, 10.0, 100.0]
    >>> return_period_yr([idf_formula([3.0], [30.0], 20.0, 0.2, 0.5, 0.7)[0, 0]], t,
    ...     idf_formula([3.0], t, 20.0, 0.2, 0.5, 0.7)[0]).round(6).tolist()
    [30.0]
    """
    ic = np.asarray(critical_mm_h, float)
    t = np.log(np.asarray(return_periods_yr, float))
    li = np.log(np.asarray(intensity_mm_h, float) * uplift)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log(np.where(ic > 0.0, ic, np.nan))
    inside = (x >= li[0]) & (x <= li[-1])
    if li.ndim == 1:
        out = np.exp(np.interp(np.where(inside, x, li[0]), li, t))
    else:  # per cell: the segment k with li[k] <= x < li[k + 1], linear in between
        k = np.clip((li <= x).sum(axis=0) - 1, 0, t.size - 2)
        lo = np.take_along_axis(li, k[None], axis=0)[0]
        hi = np.take_along_axis(li, k[None] + 1, axis=0)[0]
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(inside, (x - lo) / (hi - lo), 0.0)
        out = np.exp(t[k] + share * (t[k + 1] - t[k]))
    out = np.where(x < li[0], MORE_FREQUENT, np.where(x > li[-1], RARER, out))
    out = np.where(ic == -1.0, FAILS_WITHOUT_RAIN, out)
    return np.where(ic == -2.0, NO_INTENSITY_FAILS, out)


def triggering_return_period_yr(per_duration: ArrayLike) -> np.ndarray:
    """The most frequent triggering storm over the durations (axis 0): the shortest
    return period; ``MORE_FREQUENT`` if any duration is, the cell codes where all agree,
    else ``RARER`` where no duration triggers.

    >>> triggering_return_period_yr([[30.0, -2.0, -2.0], [12.0, -2.0, -1.0]]).tolist()
    [12.0, -2.0, -1.0]
    """
    v = np.asarray(per_duration, float)
    periods = np.where(v > 0.0, v, np.inf).min(axis=0)
    out = np.where(np.isfinite(periods), periods, RARER)
    out = np.where((v == MORE_FREQUENT).any(axis=0), MORE_FREQUENT, out)
    out = np.where((v == FAILS_WITHOUT_RAIN).any(axis=0), FAILS_WITHOUT_RAIN, out)
    return np.where((v == NO_INTENSITY_FAILS).all(axis=0), NO_INTENSITY_FAILS, out)


def annual_probability(return_period: ArrayLike, shortest_yr: float) -> np.ndarray:
    """p = 1 - exp(-1/T); ``MORE_FREQUENT`` cells get the shortest period's p (a lower
    bound), ``FAILS_WITHOUT_RAIN`` 1, ``RARER`` and ``NO_INTENSITY_FAILS`` 0.

    >>> annual_probability([100.0, -1.0, -2.0, -3.0], 2.0).round(5).tolist()
    [0.00995, 0.39347, 0.0, 1.0]
    """
    t = np.asarray(return_period, float)
    with np.errstate(divide="ignore"):
        p = 1.0 - np.exp(-1.0 / np.where(t > 0.0, t, np.inf))
    p = np.where(t == MORE_FREQUENT, 1.0 - math.exp(-1.0 / shortest_yr), p)
    return np.where(t == FAILS_WITHOUT_RAIN, 1.0, p)


def band_edges(shortest_yr: float, longest_yr: float, bands: int = BANDS) -> np.ndarray:
    """Return periods bounding ``bands`` bands of storm level, equal in log(T), from the
    table's shortest to its longest period."""
    return np.geomspace(shortest_yr, longest_yr, bands + 1)


def annual_probability_over_bands(
    triggered_by: Callable[[float], np.ndarray],
    fails_without_rain: ArrayLike,
    edges_yr: ArrayLike,
) -> np.ndarray:
    """Annual probability of failure with uncertain soil: the sum over bands of storm level
    of P(failure | a storm of the band) x P(the year's storm lies in the band).

    The year's largest storms of every duration are taken at one return-period level T
    (the table's storms of a year rise together: the assumption of the triggering return
    period), exceeded with annual probability p(T) = 1 - exp(-1/T). ``triggered_by(T)``
    gives, per cell, P(the storms of level T start failure), counting cells that fail
    before any rain; it must not fall as T rises. Each band is represented by its stronger
    end, so the sum bounds the integral from above (conservative); the excess is at most
    one band's share ln(e_j+1 / e_j) of the result (|dp/dlnT| <= p), 2.4% for 256 bands
    from 2 to 1000 years (tested against a dense sum). As in :func:`annual_probability`:
    storms weaker than the shortest tabulated period start no failure (only
    ``fails_without_rain``, P of failure before any rain, counts there) and storms beyond
    the longest act as the longest.

    >>> edges = band_edges(2.0, 100.0, 64)  # failure certain from T = 10 yr on
    >>> p = annual_probability_over_bands(lambda t: np.array([float(t >= 10.0)]), [0.0], edges)
    >>> bool(annual_probability([10.0], 2.0)[0] <= p[0] < annual_probability([9.0], 2.0)[0])
    True
    """
    e = np.asarray(edges_yr, float)
    p = 1.0 - np.exp(-1.0 / e)  # p(e_0) > p(e_1) > ...
    total = np.asarray(fails_without_rain, float) * (1.0 - p[0])
    for j in range(e.size - 1):
        total = total + triggered_by(float(e[j + 1])) * (p[j] - p[j + 1])
    return total + triggered_by(float(e[-1])) * p[-1]


def hazard_class(
    annual_probability_: ArrayLike, breaks: tuple[float, ...] = DEFAULT_AEP_BREAKS
) -> np.ndarray:
    """uint8 class 1 (most frequent: p >= breaks[0]) ... len(breaks) + 1; 0 where NaN.

    >>> hazard_class([0.5, 0.05, 0.005, 0.0, float("nan")]).tolist()
    [1, 2, 3, 4, 0]
    """
    p = np.asarray(annual_probability_, float)
    b = np.asarray(breaks, float)
    if not (np.diff(b) < 0).all() or (b <= 0).any() or (b >= 1).any():
        raise InputError(f"annual probability breaks must fall within (0, 1), got {list(breaks)}")
    cls = 1 + np.searchsorted(-b, -p, side="left")  # p on a break: the more frequent class
    return np.where(np.isnan(p), 0, cls).astype(np.uint8)
