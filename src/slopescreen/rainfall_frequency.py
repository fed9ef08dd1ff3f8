"""How often the rain that starts a shallow landslide falls (numpy only): from critical
intensities per duration (:mod:`slopescreen.rain_thresholds`) and a design-rainfall table
(intensity-duration-frequency, IDF) to the return period of the triggering storm, its
annual probability and hazard classes.

- **Table.** Intensities (mm/h) on a full grid of durations (h) and return periods (years):
  intensity must fall with duration and rise with return period. An uplift factor (a
  climate scenario) multiplies every intensity.
- **Return period per duration.** Between two tabulated return periods two interpolations
  are made and the shorter return period kept (never the longer: a stretched return period
  errs on the unsafe side): log(intensity) linear in log(T), exact for the common
  power-law IDF form i = a T^m / (D + b)^n (the form of :func:`idf_formula`), and
  intensity linear in the Gumbel reduced variate y = -ln(-ln(1 - 1/T)), exact for a
  Gumbel (EV1) table. Each errs long on the other's form; the shorter of the two is never
  longer than the true return period on either form (tested against both, with the
  measured shortening stated in README). Below the shortest tabulated return period
  the value is the code ``MORE_FREQUENT`` (-1: triggered by rain more frequent than the
  table covers); above the longest, ``RARER`` (-2: no tabulated storm triggers it).
- **Triggering return period**: the shortest over the durations (the most frequent storm
  of any duration that starts failure): over the tabulated durations, then, between the
  neighbours of the shortest row, by golden-section search over log duration
  (:func:`refined_return_period_yr`), with the table interpolated in log duration (log
  intensity linear in log D) and the critical intensity computed at each duration tried,
  so a minimum between two rows is not missed.
- **Annual probability** by the table's series (key ``series``): ``annual_maximum``
  p = 1/T (T from annual maxima is defined by the annual exceedance probability), or
  ``partial_duration`` p = 1 - exp(-1/T) (Poisson occurrence of storms at least as large
  with mean interval T; common practice). 1/T is the higher of the two (by 21% at 2 years,
  5% at 10 years) and the default. A ``MORE_FREQUENT`` cell gets the bound of the
  shortest period; a ``RARER`` cell the bound of the longest (an upper bound: its class is
  ``beyond the design-rainfall table`` where the table cannot place it); 0 where no
  intensity fails the cell.
- **Hazard classes** by annual probability, breaks 1/10, 1/100, 1/1000 by default (decade
  steps of annual probability: common practice in landslide zoning), named by us
  ``HAZARD_CLASS_NAMES``.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.errors import InputError

MORE_FREQUENT = -1.0  # triggered by rain more frequent than the shortest tabulated period
RARER = -2.0  # no tabulated storm triggers failure
FAILS_WITHOUT_RAIN = -3.0  # the cell fails before any storm
NO_INTENSITY_FAILS = -4.0  # no intensity up to the soil's conductivity fails the cell
DEFAULT_AEP_BREAKS = (0.1, 0.01, 0.001)
SERIES_KINDS = ("annual_maximum", "partial_duration")
BANDS = 256  # bands of storm level for the annual probability with soil spreads
DURATION_STEPS = 12  # golden-section steps over log duration: two row spacings x 0.618^12


def hazard_class_names(
    breaks: tuple[float, ...] = DEFAULT_AEP_BREAKS, beyond_yr: float | None = None
) -> list[str]:
    """Names of the classes, most frequent first, by their return periods; with
    ``beyond_yr`` (the table's longest return period, where the breaks reach beyond it:
    :func:`table_reach_yr`) one more class for the cells the table cannot place.

    >>> hazard_class_names((0.1, 0.01))
    ['1 in 10 years or more often', '1 in 10 to 1 in 100 years', 'rarer than 1 in 100 years']
    >>> hazard_class_names((0.1, 0.01), 50.0)[-1]
    'beyond the design-rainfall table (> 50 yr)'
    """
    periods = [f"{1.0 / b:g}" for b in breaks]
    names = [f"1 in {periods[0]} years or more often"]
    names += [f"1 in {a} to 1 in {b} years" for a, b in itertools.pairwise(periods)]
    names.append(f"rarer than 1 in {periods[-1]} years")
    if beyond_yr is not None:
        names.append(f"beyond the design-rainfall table (> {beyond_yr:g} yr)")
    return names


def annual_exceedance(return_period_yr: ArrayLike, series: str = "annual_maximum") -> np.ndarray:
    """Annual probability of a storm of return period T: 1/T for an annual-maximum series,
    1 - exp(-1/T) for a partial-duration series (common practice).

    >>> annual_exceedance([2.0, 10.0]).tolist(), annual_exceedance([2.0], "partial_duration")
    ([0.5, 0.1], array([0.39346934]))
    """
    t = np.asarray(return_period_yr, float)
    if series == "annual_maximum":
        return 1.0 / t
    if series == "partial_duration":
        return -np.expm1(-1.0 / t)
    raise InputError(f"series must be one of {', '.join(SERIES_KINDS)}, got {series!r}")


def table_reach_yr(
    breaks: tuple[float, ...], longest_yr: float, series: str = "annual_maximum"
) -> float | None:
    """The table's longest return period where the rarest break lies beyond it (so the
    rarest classes cannot be told apart from "beyond the table"), else None.

    >>> table_reach_yr((0.1, 0.01, 0.001), 500.0), table_reach_yr((0.1, 0.01), 500.0)
    (500.0, None)
    """
    reach = float(annual_exceedance([longest_yr], series)[0])
    return float(longest_yr) if reach > min(breaks) else None


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
    if d[-1] > 1000.0:
        raise InputError(
            f"{where}: duration {d[-1]:g} h is over 1000 h; durations are in hours (minutes given?)"
        )
    if np.unique(d).size != d.size or np.unique(t).size != t.size:
        raise InputError(f"{where}: a duration or return period appears twice")
    return d, t


def plausible_intensity_mm_h(duration_h: ArrayLike) -> np.ndarray:
    """An upper bound of rain intensity over a duration: 500 mm/h for one hour and 100 mm/h
    over 24 hours (above the largest point rainfalls recorded; common practice), a power
    law in duration between and beyond them.

    >>> plausible_intensity_mm_h([1.0, 24.0]).round(1).tolist()
    [500.0, 100.0]
    """
    d = np.asarray(duration_h, float)
    return 500.0 * d ** (np.log(100.0 / 500.0) / np.log(24.0))


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
    limit = plausible_intensity_mm_h(d)[:, None]
    if (i > limit).any():
        r, c = np.argwhere(i > limit)[0]
        raise InputError(
            f"{where}: duration {d[r]:g} h, return period {t[c]:g} yr: {i[r, c]:g} mm/h is "
            f"beyond any rain of that duration (above {limit[r, 0]:.0f} mm/h); intensities "
            "are in mm/h (inches, mm per day, or a depth given?)"
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


def gumbel_variate(return_period_yr: ArrayLike) -> np.ndarray:
    """The Gumbel (EV1) reduced variate y = -ln(-ln(1 - 1/T)) of return periods T > 1.

    >>> round(float(gumbel_variate(100.0)), 4)
    4.6001
    """
    t = np.asarray(return_period_yr, float)
    return -np.log(-np.log1p(-1.0 / t))


def _period_from_variate(y: np.ndarray) -> np.ndarray:
    """T from the Gumbel reduced variate: 1 / (1 - exp(-exp(-y)))."""
    return 1.0 / -np.expm1(-np.exp(-y))


def return_period_yr(
    critical_mm_h: ArrayLike,
    return_periods_yr: ArrayLike,
    intensity_mm_h: ArrayLike,
    uplift: float = 1.0,
) -> np.ndarray:
    """Return period (years) of the storm of one duration whose intensity equals
    ``critical_mm_h`` (cells), from that duration's row of the table (intensities rising
    with the sorted return periods): between rows the shorter of log-log and Gumbel-variate
    interpolation (module docstring); codes ``MORE_FREQUENT`` and ``RARER`` outside the
    table; the critical-intensity codes -1 and -2 of :mod:`slopescreen.rain_thresholds`
    become ``FAILS_WITHOUT_RAIN`` and ``NO_INTENSITY_FAILS``. ``intensity_mm_h`` is one row
    for all cells, or (gridded design rainfall) one row per cell along axis 0: (return
    periods, cells...).

    >>> t = [2.0, 10.0, 100.0]  # a power-law table: log-log would give 30 exactly
    >>> return_period_yr([idf_formula([3.0], [30.0], 20.0, 0.2, 0.5, 0.7)[0, 0]], t,
    ...     idf_formula([3.0], t, 20.0, 0.2, 0.5, 0.7)[0]).round(2).tolist()
    [25.98]
    """
    ic = np.asarray(critical_mm_h, float)
    periods = np.asarray(return_periods_yr, float)
    t, y = np.log(periods), gumbel_variate(periods)
    rows = np.asarray(intensity_mm_h, float) * uplift
    li = np.log(rows)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log(np.where(ic > 0.0, ic, np.nan))
    inside = (x >= li[0]) & (x <= li[-1])
    # the segment k with li[k] <= x <= li[k + 1] (one row for all cells, or a row per cell)
    stacked = li.reshape(li.shape[0], *([1] * x.ndim)) if li.ndim == 1 else li
    k = np.clip((stacked <= x).sum(axis=0) - 1, 0, t.size - 2)
    if li.ndim == 1:
        lo_l, hi_l, lo_i, hi_i = li[k], li[k + 1], rows[k], rows[k + 1]
    else:
        pick = lambda a, j: np.take_along_axis(a, j[None], axis=0)[0]  # noqa: E731
        lo_l, hi_l, lo_i, hi_i = pick(li, k), pick(li, k + 1), pick(rows, k), pick(rows, k + 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        share_log = np.where(inside, (x - lo_l) / (hi_l - lo_l), 0.0)
        share_lin = np.where(inside, (np.exp(np.where(inside, x, 0.0)) - lo_i) / (hi_i - lo_i), 0.0)
    log_log = np.exp(t[k] + share_log * (t[k + 1] - t[k]))
    gumbel = _period_from_variate(y[k] + share_lin * (y[k + 1] - y[k]))
    out = np.minimum(log_log, gumbel)
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


def design_at_duration(
    durations_h: ArrayLike, design_mm_h: ArrayLike, duration_h: np.ndarray
) -> np.ndarray:
    """Design intensities (return periods, cells) at each cell's ``duration_h``, log
    intensity linear in log duration between the table's rows (the power-law form in D,
    common practice). ``design_mm_h``: (durations, return periods) or per cell
    (durations, return periods, cells).

    >>> t = idf_formula([1.0, 4.0], [2.0, 10.0], 20.0, 0.2, 0.0, 0.7)  # b = 0: exact
    >>> design_at_duration([1.0, 4.0], t, np.array([2.0])).ravel().round(4).tolist()
    [14.1421, 19.5123]
    """
    logd = np.log(np.asarray(durations_h, float))
    design = np.asarray(design_mm_h, float)
    x = np.log(np.asarray(duration_h, float))
    j = np.clip(np.searchsorted(logd, x) - 1, 0, max(logd.size - 2, 0))
    if logd.size == 1:
        rows = design[0]
        return rows[:, None] * np.ones(x.size) if rows.ndim == 1 else rows
    w = (x - logd[j]) / (logd[j + 1] - logd[j])
    if design.ndim == 2:
        lo, hi = design[j].T, design[j + 1].T  # (periods, cells)
    else:
        cells = np.arange(x.size)
        lo, hi = design[j, :, cells].T, design[j + 1, :, cells].T
    return np.exp((1.0 - w) * np.log(lo) + w * np.log(hi))


def refined_return_period_yr(
    period: np.ndarray,
    found_mm_h: np.ndarray,
    durations_h: ArrayLike,
    return_periods_yr: ArrayLike,
    design_mm_h: ArrayLike,
    critical_mm_h: Callable[[np.ndarray, np.ndarray], np.ndarray],
    uplift: float = 1.0,
    steps: int = DURATION_STEPS,
) -> np.ndarray:
    """The triggering return period searched between the table's rows, never above
    ``period`` (the shortest over the rows). ``found_mm_h``: the cells' critical
    intensities at the tabulated durations (durations, cells; codes -1, -2);
    ``critical_mm_h(durations, cells)`` gives them at other durations (one per cell);
    ``design_mm_h`` as in :func:`design_at_duration`, before ``uplift``.

    Over duration the return period has up to two minima: where the falling critical
    intensity and the falling design rainfall balance, and where the critical intensity
    first exists (short storms need more than the soil takes in, I_c > K_z, up to some
    duration). So, per cell with a critical intensity: golden-section search over log D
    between the rows beside its shortest row; and where a row without a critical
    intensity is followed by one with it, the duration where it first exists is bisected
    in log D and searched from there to the next row.
    A duration whose storm is more frequent than the table gives ``MORE_FREQUENT``.
    """
    from slopescreen.storm import golden_minimum

    out = np.array(period, float)
    d = np.asarray(durations_h, float)
    ic = np.asarray(found_mm_h, float)
    cand = np.flatnonzero(
        (ic > 0.0).any(axis=0) & (out != MORE_FREQUENT) & (out != FAILS_WITHOUT_RAIN)
    )
    if d.size < 2 or cand.size == 0:
        return out
    design = np.asarray(design_mm_h, float)
    logd, n = np.log(d), d.size
    mine = design if design.ndim == 2 else design[:, :, cand]

    def periods_at(
        duration: np.ndarray, cells: np.ndarray | None, where: np.ndarray, known=None
    ) -> np.ndarray:
        """Return periods of the cells at their durations (0: more frequent than the
        table, inf: none in it); ``known``: their critical intensities where given."""
        rows = design_at_duration(d, mine if mine.ndim == 2 else mine[:, :, where], duration)
        found = critical_mm_h(duration, cells) if known is None else known
        t = return_period_yr(found, return_periods_yr, rows, uplift)
        return np.where(t > 0.0, t, np.where(t == MORE_FREQUENT, 0.0, np.inf))

    every = np.arange(cand.size)
    rows_t = np.array([
        periods_at(np.full(cand.size, dd), None, every, ic[j, cand]) for j, dd in enumerate(d)
    ])  # fmt: skip
    best, k = np.min(rows_t, axis=0), np.argmin(rows_t, axis=0)
    # golden-section search beside the shortest row, where a row lies inside the table
    inside = np.flatnonzero(np.isfinite(best) & (best > 0.0))
    if inside.size:
        cells, j = cand[inside], k[inside]
        value, _ = golden_minimum(
            lambda x: periods_at(np.exp(x), cells, inside),
            logd[np.maximum(j - 1, 0)],
            logd[np.minimum(j + 1, n - 1)],
            steps,
        )
        best[inside] = np.minimum(best[inside], value)
    # where a row without a critical intensity precedes one with it: the duration where
    # it first exists (bisected), and a search from there to the row after
    exists = ic[:, cand] > 0.0
    first = np.argmax(exists, axis=0)
    edge = np.flatnonzero(first > 0)
    if edge.size:
        cells, f = cand[edge], first[edge]
        lo, hi = logd[f - 1], logd[f]
        for _ in range(steps):
            mid = 0.5 * (lo + hi)
            has = critical_mm_h(np.exp(mid), cells) > 0.0
            hi, lo = np.where(has, mid, hi), np.where(has, lo, mid)
        value, _ = golden_minimum(
            lambda x: periods_at(np.exp(x), cells, edge), hi, logd[np.minimum(f + 1, n - 1)], steps
        )
        best[edge] = np.minimum(best[edge], np.minimum(value, periods_at(np.exp(hi), cells, edge)))
    found = np.minimum(np.where(out[cand] > 0.0, out[cand], np.inf), best)
    out[cand] = np.where(
        found == 0.0, MORE_FREQUENT, np.where(np.isfinite(found), found, out[cand])
    )
    return out


def annual_probability(
    return_period: ArrayLike,
    shortest_yr: float,
    series: str = "annual_maximum",
    longest_yr: float | None = None,
) -> np.ndarray:
    """Annual probability of the triggering storm by the table's ``series``
    (:func:`annual_exceedance`); ``MORE_FREQUENT`` cells get the shortest period's p (a
    lower bound), ``RARER`` cells the longest period's (an upper bound; 0 without
    ``longest_yr``), ``FAILS_WITHOUT_RAIN`` 1, ``NO_INTENSITY_FAILS`` 0.

    >>> annual_probability([100.0, -1.0, -2.0, -3.0], 2.0, longest_yr=500.0).tolist()
    [0.01, 0.5, 0.002, 1.0]
    """
    t = np.asarray(return_period, float)
    p = annual_exceedance(np.where(t > 0.0, t, np.inf), series)
    p = np.where(t == MORE_FREQUENT, annual_exceedance(shortest_yr, series), p)
    if longest_yr is not None:
        p = np.where(t == RARER, annual_exceedance(longest_yr, series), p)
    return np.where(t == FAILS_WITHOUT_RAIN, 1.0, p)


def band_edges(shortest_yr: float, longest_yr: float, bands: int = BANDS) -> np.ndarray:
    """Return periods bounding ``bands`` bands of storm level, equal in log(T), from the
    table's shortest to its longest period."""
    return np.geomspace(shortest_yr, longest_yr, bands + 1)


def annual_probability_over_bands(
    triggered_by: Callable[[float], np.ndarray],
    fails_without_rain: ArrayLike,
    edges_yr: ArrayLike,
    series: str = "annual_maximum",
) -> np.ndarray:
    """Annual probability of failure with uncertain soil: the sum over bands of storm level
    of P(failure | a storm of the band) x P(the year's storm lies in the band).

    The year's largest storms of every duration are taken at one return-period level T
    (the table's storms of a year rise together: the assumption of the triggering return
    period), exceeded with annual probability p(T) = 1 - exp(-1/T). ``triggered_by(T)``
    gives, per cell, P(the storms of level T start failure), counting cells that fail
    before any rain; it must not fall as T rises. Each band is represented by its stronger
    end, so the sum bounds the integral from above (conservative); the excess is at most
    one band's share ln(e_j+1 / e_j) of the result (|dp/dlnT| <= p), 1.6% for 256 bands
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
    p = annual_exceedance(e, series)  # p(e_0) > p(e_1) > ...
    total = np.asarray(fails_without_rain, float) * (1.0 - p[0])
    for j in range(e.size - 1):
        total = total + triggered_by(float(e[j + 1])) * (p[j] - p[j + 1])
    return total + triggered_by(float(e[-1])) * p[-1]


def hazard_class(
    annual_probability_: ArrayLike,
    breaks: tuple[float, ...] = DEFAULT_AEP_BREAKS,
    return_period: ArrayLike | None = None,
    beyond_yr: float | None = None,
) -> np.ndarray:
    """uint8 class 1 (most frequent: p >= breaks[0]) ... len(breaks) + 1; 0 where NaN.
    ``MORE_FREQUENT`` cells (of ``return_period``) are class 1; with ``beyond_yr`` (see
    :func:`table_reach_yr`) ``RARER`` cells get the class len(breaks) + 2, "beyond the
    design-rainfall table".

    >>> hazard_class([0.5, 0.05, 0.005, 0.0, float("nan")]).tolist()
    [1, 2, 3, 4, 0]
    >>> hazard_class([0.1, 0.002], return_period=[10.0, RARER], beyond_yr=500.0).tolist()
    [1, 5]
    """
    p = np.asarray(annual_probability_, float)
    b = np.asarray(breaks, float)
    if not (np.diff(b) < 0).all() or (b <= 0).any() or (b >= 1).any():
        raise InputError(f"annual probability breaks must fall within (0, 1), got {list(breaks)}")
    cls = 1 + np.searchsorted(-b, -p, side="left")  # p on a break: the more frequent class
    if return_period is not None:
        t = np.asarray(return_period, float)
        cls = np.where(t == MORE_FREQUENT, 1, cls)
        if beyond_yr is not None:
            cls = np.where(t == RARER, b.size + 2, cls)
    return np.where(np.isnan(p), 0, cls).astype(np.uint8)
