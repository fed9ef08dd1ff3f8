"""Pressure head and factor of safety under a rainfall history: rain in steps (numpy only).

Iverson's (2000) linearised solution is linear in the surface flux below the hydrostatic
cap, so rain that comes in steps is the sum of step responses (Duhamel superposition). For
steps of rain I_n on [t_(n-1), t_n), n = 1..N, t_0 = 0, with I_Z,n = min(I_n, K_z) the
infiltration of step n and I_Z,0 = I_Z,N+1 = 0 (no rain before the record or after it)::

    psi(Z, t) = (Z - d) beta + Z sum_(n=1..N+1) ((I_Z,n - I_Z,n-1) / K_z) R((t - t_(n-1)) / s)

with s = Z^2 / D_hat, capped at beta Z after the sum (no more than hydrostatic with the
water table at the ground surface); beta, D_hat and R(t*) as in :mod:`slopescreen.storm`.
One step is the constant storm of :mod:`slopescreen.storm` (within 1e-12, tested). The
factor of safety at depth Z and time t is the storm's: FS falls as the head rises.

Validity: as the constant storm's (Iverson 2000): a wet soil near a steady state, soil
depth small against the slope's length; the sum is exact for the linear equation below the
cap (tested against a Crank-Nicolson solution of the same equation).

References
----------
Iverson, R.M. (2000). Landslide triggering by rain infiltration. Water Resources Research
36(7), 1897-1910.
Carslaw, H.S. & Jaeger, J.C. (1959). *Conduction of Heat in Solids*, 2nd ed. Oxford
University Press, section 1.14 (Duhamel's theorem: a variable boundary flux as a sum of
step responses).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen.stability import factor_of_safety
from slopescreen.storm import (
    MIN_SLIP_DEPTH_M,
    SECONDS_PER_HOUR,
    StormColumns,
    StormSummary,
    columns_summary,
    equivalent_saturation,
    golden_minimum,
    response_function,
    slip_planes,
    storm_inputs,
    storm_summary,
    summary_in_chunks,
)

# candidate times of the head's peak after each change of the rain, in units of the
# plane's response time s = Z^2 / D_hat: the response rate r(t*) peaks at t* = 2, and a
# step's own peak comes within 2 s of its end (storm.peak_time)
PEAK_CANDIDATES = (0.05, 0.25, 0.5, 1.0, 1.5, 2.0, 3.0, 5.0)
# fewer for a plane's first failure: the peak time of the plane is added to them
FAILURE_CANDIDATES = (0.5, 2.0)
FAILURE_BISECTION_STEPS = 14  # a bracket between candidates / 2^14
FAILURE_DEPTH_STEPS = 5  # golden-section steps over depth around the earliest plane
TIME_BRACKETS = 2  # highest local maxima of the candidates refined (golden section)
TIME_REFINE_STEPS = 30  # golden-section steps on a bracket between two candidates
HISTORY_CHUNK_CELLS = 2048  # cells searched at once
# log10 of the response time s = Z^2 / D_hat (s) at which a history's peak is tabulated:
# 0.01 decade apart, from a millimetre plane in a fast soil to a deep one in a slow soil
LOG_SCALE = np.linspace(-6.0, 14.0, 2001)
TABLE_HISTORIES = 64  # distinct histories (rain x K cap) tabulated; beyond: direct search
HISTORY_FAILURE_PLANES = 24  # planes searched for a history's first failure, then refined


class RainSteps(NamedTuple):
    """Rain in steps: step n falls from ``ends_h[n-1]`` (0 for the first) to ``ends_h[n]``
    at ``rain_mm_h[n]`` (an array over the steps, or steps x cells)."""

    ends_h: np.ndarray
    rain_mm_h: np.ndarray

    @property
    def duration_h(self) -> float:
        return float(self.ends_h[-1])

    @property
    def depth_mm(self) -> np.ndarray:
        """Rain of the whole record (mm), per cell where the rain varies by cell."""
        widths = np.diff(np.concatenate(([0.0], self.ends_h)))
        return np.tensordot(widths, self.rain_mm_h, axes=(0, 0))


def rain_steps(ends_h: ArrayLike, rain_mm_h: ArrayLike) -> RainSteps:
    """Checked steps: ends strictly increasing and > 0 h; rain in [0, 1000] mm/h, one row
    per step (a row may hold one value per cell).

    >>> rain_steps([1.0, 3.0], [10.0, 2.0]).depth_mm.item()
    14.0
    """
    ends = np.asarray(ends_h, dtype=float)
    if ends.ndim != 1 or ends.size == 0:
        raise ValueError("ends_h must be a list of one or more step end times (h)")
    checked("ends_h", ends, 0.0, low_open=True)
    if (np.diff(ends) <= 0.0).any():
        raise ValueError("ends_h must increase strictly: each step ends after the previous")
    rain = np.asarray(checked("rain_mm_h", rain_mm_h, 0.0, 1000.0), dtype=float)
    if rain.ndim == 0 or rain.shape[0] != ends.size:
        raise ValueError(f"rain_mm_h needs one row per step ({ends.size}), got {rain.shape}")
    return RainSteps(ends, rain)


def infiltration_jumps(steps: RainSteps, k: np.ndarray) -> list[np.ndarray]:
    """(I_Z,n - I_Z,n-1) / K_z at t_0 .. t_N: N + 1 jumps of the infiltration ratio (rain
    of one value a step applies to every cell of ``k``)."""
    rain = steps.rain_mm_h
    if rain.ndim == 1:
        rain = rain.reshape(rain.shape[0], *([1] * np.ndim(k)))
    ratio = np.minimum(rain / 1000.0 / SECONDS_PER_HOUR, k) / k
    padded = np.concatenate((np.zeros((1, *ratio.shape[1:])), ratio))
    padded = np.concatenate((padded, np.zeros((1, *ratio.shape[1:]))))
    return list(np.diff(padded, axis=0))


def history_pressure_head_m(
    depth_m: ArrayLike,
    time_h: ArrayLike,
    *,
    ends_h: ArrayLike,
    rain_mm_h: ArrayLike,
    slope_deg: ArrayLike,
    water_table_depth_m: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike = 0.0,
) -> ArrayLike:
    """Pressure head psi (m of water) at vertical depth Z (> 0 m) and time t (>= 0 h since
    the record began) under rain in steps (see the module's equation).

    ``ends_h``: end of each step (h, strictly increasing); ``rain_mm_h``: the rain of each
    step, [0, 1000] mm/h (a row per step, values per cell allowed). The other arguments are
    those of :func:`slopescreen.storm.pressure_head_m`.

    >>> from slopescreen.storm import pressure_head_m
    >>> soil = dict(slope_deg=30.0, water_table_depth_m=0.5,
    ...             hydraulic_conductivity_m_s=1e-5, diffusivity_m2_s=1e-4)
    >>> one = history_pressure_head_m(1.0, 3.0, ends_h=[2.0], rain_mm_h=[10.0], **soil)
    >>> abs(one - pressure_head_m(1.0, 3.0, rain_mm_h=10.0, duration_h=2.0, **soil)) < 1e-12
    True
    """
    z = checked("depth_m", depth_m, 0.0, low_open=True)
    t = checked("time_h", time_h, 0.0) * SECONDS_PER_HOUR
    steps = rain_steps(ends_h, rain_mm_h)
    beta, d, _, _, d_hat = storm_inputs(
        slope_deg,
        water_table_depth_m,
        0.0,
        0.0,
        hydraulic_conductivity_m_s,
        diffusivity_m2_s,
        long_term_infiltration_m_s,
    )
    k = np.asarray(hydraulic_conductivity_m_s, dtype=float)
    starts = tuple(s * SECONDS_PER_HOUR for s in (0.0, *map(float, steps.ends_h)))
    total = _response_sum(tuple(infiltration_jumps(steps, k)), starts, t, z * z / d_hat)
    return as_result(_capped_head(z, d, beta, total))


def _capped_head(z: ArrayLike, d: ArrayLike, beta: ArrayLike, rise: ArrayLike) -> np.ndarray:
    """psi = (Z - d) beta + Z G, capped at beta Z (the water table at the surface)."""
    z = np.asarray(z)
    return np.minimum((z - d) * beta + z * rise, beta * z)


def history_factor_of_safety(
    depth_m: ArrayLike,
    time_h: ArrayLike,
    *,
    ends_h: ArrayLike,
    rain_mm_h: ArrayLike,
    slope_deg: ArrayLike,
    water_table_depth_m: ArrayLike,
    hydraulic_conductivity_m_s: ArrayLike,
    diffusivity_m2_s: ArrayLike,
    long_term_infiltration_m_s: ArrayLike = 0.0,
    **soil: ArrayLike,
) -> ArrayLike:
    """FS on the plane at depth Z (m) at time t (h) under rain in steps: the storm's
    :func:`slopescreen.storm.storm_factor_of_safety` with the head of
    :func:`history_pressure_head_m`. ``soil``: cohesion_kpa, friction_deg,
    unit_weight_kn_m3 and the optional arguments of
    :func:`slopescreen.stability.factor_of_safety`."""
    psi = history_pressure_head_m(
        depth_m,
        time_h,
        ends_h=ends_h,
        rain_mm_h=rain_mm_h,
        slope_deg=slope_deg,
        water_table_depth_m=water_table_depth_m,
        hydraulic_conductivity_m_s=hydraulic_conductivity_m_s,
        diffusivity_m2_s=diffusivity_m2_s,
        long_term_infiltration_m_s=long_term_infiltration_m_s,
    )
    m = equivalent_saturation(psi, depth_m, slope_deg)
    return factor_of_safety(slope_deg, depth_m, saturation=m, **soil)  # type: ignore[arg-type]


def _response_sum(
    jumps: tuple[np.ndarray, ...], starts_s: tuple[float, ...], t_s: ArrayLike, scale_s: ArrayLike
) -> np.ndarray:
    """G(t) = sum_n J_n R((t - t_(n-1)) / s): the head's rise per metre of depth (at one
    time t, the changes after it add nothing and are skipped)."""
    t = np.asarray(t_s)
    pairs = zip(jumps, starts_s, strict=True)
    if t.ndim == 0:
        pairs = [(j, s) for j, s in pairs if s < float(t)]  # type: ignore[assignment]
    return sum(
        (jump * response_function((t - start) / scale_s) for jump, start in pairs),
        np.zeros(np.broadcast_shapes(np.shape(scale_s), t.shape)),
    )


def _peak_response(
    jumps: tuple[np.ndarray, ...], starts_s: tuple[float, ...], scale_s: np.ndarray, window_s: float
) -> tuple[np.ndarray, np.ndarray]:
    """(max of G over [0, window], when in s) for response times ``scale_s``: candidate
    times (every change of the rain, the window's ends, and after each change the multiples
    ``PEAK_CANDIDATES`` of s), the ``TIME_BRACKETS`` highest local maxima refined by golden
    section between their neighbours; never below the candidates' own maximum."""
    shape = np.shape(scale_s)
    times = [np.broadcast_to(np.float64(s), shape) for s in (*starts_s, window_s)]
    times += [s + c * scale_s for s in starts_s for c in PEAK_CANDIDATES]
    times_s = np.sort(np.clip(np.stack(times), 0.0, window_s), axis=0)
    values = _response_sum(jumps, starts_s, times_s, scale_s)
    local = np.ones(values.shape, bool)
    local[1:] &= values[1:] >= values[:-1]
    local[:-1] &= values[:-1] >= values[1:]
    ranked = np.argsort(np.where(local, -values, np.inf), axis=0, kind="stable")
    best = np.take_along_axis(values, ranked[:1], axis=0)[0]
    when = np.take_along_axis(times_s, ranked[:1], axis=0)[0]
    last = times_s.shape[0] - 1
    for k in ranked[:TIME_BRACKETS]:
        a = np.take_along_axis(times_s, np.maximum(k - 1, 0)[None], axis=0)[0]
        b = np.take_along_axis(times_s, np.minimum(k + 1, last)[None], axis=0)[0]
        low, t = golden_minimum(
            lambda s: -_response_sum(jumps, starts_s, s, scale_s), a, b, TIME_REFINE_STEPS
        )
        higher = -low > best
        best, when = np.where(higher, -low, best), np.where(higher, t, when)
    return best, when


@functools.lru_cache(maxsize=256)
def peak_table(
    jumps: tuple[float, ...],
    starts_s: tuple[float, ...],
    window_s: float,
    first: int = 0,
    last: int = LOG_SCALE.size - 1,
) -> tuple[np.ndarray, np.ndarray]:
    """(max of G, when in s) at the ``LOG_SCALE`` response times ``first`` to ``last``
    (default: all) for one history, each the same as in the whole table: built once and
    kept (the same history serves every tile of a map and every soil unit with the same K
    cap)."""
    scales = 10.0 ** LOG_SCALE[first : last + 1]
    return _peak_response(
        tuple(np.full(scales.shape, j) for j in jumps), starts_s, scales, window_s
    )


@functools.lru_cache(maxsize=256)
def time_table(jumps: tuple[float, ...], starts_s: tuple[float, ...], t_s: float) -> np.ndarray:
    """G(t; s) at one time for every ``LOG_SCALE`` response time, for one history."""
    scales = 10.0**LOG_SCALE
    return _response_sum(tuple(np.full(scales.shape, j) for j in jumps), starts_s, t_s, scales)


class _PeakTables(NamedTuple):
    """max of G over the window and when, tabulated against log10 of the response time s
    for each distinct rain history of the columns (its infiltration capped at their K)."""

    peak: np.ndarray  # (histories, LOG_SCALE.size)
    when_s: np.ndarray


class HistoryColumns(StormColumns):
    """:class:`slopescreen.storm.StormColumns` under rain in steps: the head by
    superposition, and its highest value over the window at each depth. The head is
    psi = min((Z - d) beta + Z G(t; s), beta Z) with G depending on the plane only through
    its response time s = Z^2 / D_hat (and on the column through the infiltration's cap at
    K_z), so max over t of G is tabulated once per distinct history against log10 s
    (``LOG_SCALE``) and read by linear interpolation; columns with more distinct histories
    than ``TABLE_HISTORIES`` (rain that varies cell by cell), and response times beyond the
    table, are searched directly (:func:`_peak_response`)."""

    def __init__(
        self, steps: RainSteps, later_h: float, shape: tuple[int, ...], **kw: ArrayLike
    ) -> None:
        super().__init__(0.0, later_h, shape, rain_mm_h=0.0, **kw)
        k = np.broadcast_to(np.asarray(kw["hydraulic_conductivity_m_s"], float), shape)
        self.jumps = tuple(np.broadcast_to(j, shape) for j in infiltration_jumps(steps, k))
        self.starts_h = (0.0, *map(float, steps.ends_h))  # a tuple: not per cell
        self.starts_s = tuple(s * SECONDS_PER_HOUR for s in self.starts_h)
        stacked = np.stack([np.ravel(j) for j in self.jumps])
        distinct, which = np.unique(stacked, axis=1, return_inverse=True)
        self.tables: _PeakTables | None = None
        if distinct.shape[1] <= TABLE_HISTORIES:
            self.history = which.reshape(shape)
            self.histories = tuple(
                tuple(map(float, distinct[:, g])) for g in range(distinct.shape[1])
            )  # a tuple: not per cell
            found = [peak_table(h, self.starts_s, self.window) for h in self.histories]
            self.tables = _PeakTables(
                np.stack([f[0] for f in found]), np.stack([f[1] for f in found])
            )

    def subset(self, cells: np.ndarray) -> HistoryColumns:
        sub = super().subset(cells)
        sub.jumps = tuple(j[cells] for j in self.jumps)  # type: ignore[attr-defined]
        return sub  # type: ignore[return-value]

    def head(self, z: np.ndarray, t_h: float | np.ndarray) -> np.ndarray:
        t = np.asarray(t_h, float) * SECONDS_PER_HOUR
        scale = z * z / self.d_hat
        if t.ndim == 0 and self.tables is not None:  # one time for all: G(t; s) tabulated
            rows = np.stack([time_table(h, self.starts_s, float(t)) for h in self.histories])
            (total,) = self._read_tables(
                (rows,), scale, lambda s: (_response_sum(self._jumps_at(s, z.shape),
                                                          self.starts_s, t, scale[s]),)
            )  # fmt: skip
        else:
            total = _response_sum(self.jumps, self.starts_s, t, scale)
        return _capped_head(z, self.d, self.beta, total)

    def _jumps_at(self, part: np.ndarray, shape: tuple[int, ...]) -> tuple[np.ndarray, ...]:
        """The jumps of the planes ``part`` (a mask over ``shape``)."""
        return tuple(np.broadcast_to(j, shape)[part] for j in self.jumps)

    def _read_tables(
        self,
        tables: tuple[np.ndarray, ...],
        scale: np.ndarray,
        direct: Callable[[np.ndarray], tuple[np.ndarray, ...]],
    ) -> tuple[np.ndarray, ...]:
        """Tables (histories x ``LOG_SCALE``) read at each plane's response time by linear
        interpolation in log10 s; ``direct`` (given a mask) beyond them, once for all."""
        x = (np.log10(scale) - LOG_SCALE[0]) / (LOG_SCALE[1] - LOG_SCALE[0])
        inside = (x >= 0.0) & (x <= LOG_SCALE.size - 1)
        i = np.clip(np.floor(x), 0, LOG_SCALE.size - 2).astype(np.intp)
        w = np.clip(x - i, 0.0, 1.0)
        h = np.broadcast_to(self.history, scale.shape)
        values = tuple((1.0 - w) * rows[h, i] + w * rows[h, i + 1] for rows in tables)
        if not inside.all():
            for value, outside in zip(values, direct(~inside), strict=True):
                value[~inside] = outside
        return values

    def candidate_times_h(self, z: np.ndarray) -> np.ndarray:
        """Sorted times in [0, later] (axis 0) where a plane's first failure is sought: the
        start, every change of the rain, the later time, and after each change the
        multiples ``FAILURE_CANDIDATES`` of the plane's response time."""
        scale_h = z * z / self.d_hat / SECONDS_PER_HOUR
        window_h = self.window / SECONDS_PER_HOUR
        times = [np.broadcast_to(np.float64(s), z.shape) for s in (*self.starts_h, window_h)]
        times += [s + c * scale_h for s in self.starts_h for c in FAILURE_CANDIDATES]
        return np.sort(np.clip(np.stack(times), 0.0, window_h), axis=0)

    def _peak_g(self, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(max over the window of G at depth z, when in s)."""
        scale = z * z / self.d_hat
        if self.tables is None:
            return _peak_response(self.jumps, self.starts_s, scale, self.window)
        peak, when = self._read_tables(
            (self.tables.peak, self.tables.when_s),
            scale,
            lambda s: _peak_response(self._jumps_at(s, z.shape), self.starts_s, scale[s],
                                     self.window),
        )  # fmt: skip
        return peak, when

    def peak_head(self, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(highest head at depth z over [0, later], when in h)."""
        peak, when = self._peak_g(z)
        return _capped_head(z, self.d, self.beta, peak), when / SECONDS_PER_HOUR

    def peak_time_h(self, z: np.ndarray) -> np.ndarray:
        return self.peak_head(z)[1]

    def peak_fs(self, z: np.ndarray) -> np.ndarray:
        """The lowest FS on the plane at depth z over [0, later]: FS at the highest head."""
        return self.fs_at_head(z, self.peak_head(z)[0])


def history_summary(
    *,
    soil_depth_m: ArrayLike,
    later_h: float,
    ends_h: ArrayLike,
    rain_mm_h: ArrayLike,
    min_slip_depth_m: float = MIN_SLIP_DEPTH_M,
    **kwargs: ArrayLike,
) -> StormSummary:
    """:func:`slopescreen.storm.storm_summary` for rain in steps: minimum FS over depth at
    the start, at the end of the record (``ends_h[-1]``) and at ``later_h``, over depth and
    time in [0, later_h], and the time FS first falls below 1 (codes as the storm's).

    One step is the constant storm itself (:func:`storm_summary`). Otherwise depth: as the
    storm's (:func:`slopescreen.storm.depth_minimum` from ``min_slip_depth_m``); time: at
    each depth the lowest FS is at the highest head (:meth:`HistoryColumns.peak_head`).
    Time to failure: on ``HISTORY_FAILURE_PLANES`` planes and the critical one, the first
    candidate time with FS < 1, bisected back to the candidate before it (the earlier end
    kept). Tested against a dense reference of planes and times.

    >>> s = history_summary(soil_depth_m=1.5, later_h=36.0, ends_h=[4.0, 8.0, 12.0],
    ...     rain_mm_h=[10.0, 60.0, 10.0], slope_deg=35.0, cohesion_kpa=2.0,
    ...     friction_deg=33.0, unit_weight_kn_m3=19.0, water_table_depth_m=1.5,
    ...     hydraulic_conductivity_m_s=2e-5, diffusivity_m2_s=5e-5)
    >>> round(float(s.window_min_fs), 3), round(float(s.time_to_failure_h), 1)
    (0.996, 13.3)
    """
    steps = rain_steps(ends_h, rain_mm_h)
    if steps.ends_h.size == 1:
        return storm_summary(
            soil_depth_m=soil_depth_m,
            later_h=later_h,
            duration_h=steps.duration_h,
            rain_mm_h=steps.rain_mm_h[0],
            min_slip_depth_m=min_slip_depth_m,
            **kwargs,
        )
    soil, later, end, shallowest = search_inputs(soil_depth_m, later_h, steps, min_slip_depth_m)
    if "rain_mm_h" in kwargs or "duration_h" in kwargs:
        raise TypeError("history_summary takes the rain as ends_h and rain_mm_h steps")
    shape = np.broadcast_shapes(
        soil.shape,
        steps.rain_mm_h.shape[1:],
        *(np.shape(v) for v in kwargs.values() if v is not None),
    )
    size = math.prod(shape)
    if size > HISTORY_CHUNK_CELLS:  # bounded memory: (times x planes x cells) arrays
        rain = steps.rain_mm_h
        n = rain.shape[0]
        by_cell = rain.ndim > 1
        if by_cell:
            rain = np.broadcast_to(rain, (n, *shape)).reshape(n, size)

        def block(chunk: dict[str, np.ndarray | None], part: slice) -> StormSummary:
            return history_summary(
                soil_depth_m=chunk.pop("soil_depth_m"),  # type: ignore[arg-type]
                later_h=later,
                ends_h=steps.ends_h,
                rain_mm_h=rain[:, part] if by_cell else rain,
                min_slip_depth_m=shallowest,
                **chunk,  # type: ignore[arg-type]
            )

        return summary_in_chunks(
            shape, HISTORY_CHUNK_CELLS, {"soil_depth_m": soil, **kwargs}, block
        )
    cols = HistoryColumns(steps, later, shape, **kwargs)
    base = np.broadcast_to(soil, shape).astype(float)

    def first_failure(
        todo: np.ndarray, top: np.ndarray, base: np.ndarray, z_min: np.ndarray, t_min: np.ndarray
    ) -> np.ndarray:
        return _first_failure(cols.subset(todo), top[todo], base[todo], z_min[todo], t_min[todo])

    summary = columns_summary(cols, base, shallowest, end, later, first_failure)
    return StormSummary(*(as_result(field) for field in summary))


def search_inputs(
    soil_depth_m: ArrayLike, later_h: float, steps: RainSteps, min_slip_depth_m: float
) -> tuple[np.ndarray, float, float, float]:
    """(soil depth, later time, end of the rain, shallowest slip plane) of a search, checked:
    the later time not before the end of the rain."""
    soil = checked("soil_depth_m", soil_depth_m, 0.0, low_open=True)
    later = float(checked("later_h", later_h, 0.0))
    end = steps.duration_h
    shallowest = float(checked("min_slip_depth_m", min_slip_depth_m, 0.0, low_open=True))
    if later < end:
        raise ValueError(f"later_h ({later:g}) must not be before the end of the rain ({end:g})")
    return soil, later, end, shallowest


def _first_failure(
    cols: HistoryColumns,
    top: np.ndarray,
    base: np.ndarray,
    z_min: np.ndarray,
    t_min: np.ndarray,
) -> np.ndarray:
    """The earliest time FS < 1 over ``HISTORY_FAILURE_PLANES`` planes and the critical plane
    ``z_min`` (where FS < 1 at ``t_min``): on each, the first candidate time where FS < 1,
    bisected back towards the candidate before it (the earlier end kept); then
    golden-section search over depth around the earliest plane, as the storm's."""

    def crossing(z: np.ndarray) -> np.ndarray:
        times = cols.candidate_times_h(z)
        extra = (cols.peak_time_h(z), np.broadcast_to(t_min, z.shape))
        times = np.sort(np.concatenate((times, *(e[None] for e in extra))), axis=0)
        below = cols.fs(z, times) < 1.0
        first = np.argmax(below, axis=0)
        hi = np.take_along_axis(times, first[None], axis=0)[0]
        lo = np.take_along_axis(times, np.maximum(first - 1, 0)[None], axis=0)[0]
        for _ in range(FAILURE_BISECTION_STEPS):
            mid = 0.5 * (lo + hi)
            under = cols.fs(z, mid) < 1.0
            hi, lo = np.where(under, mid, hi), np.where(under, lo, mid)
        return np.where(below.any(axis=0), lo, np.inf)

    zs = slip_planes(top, base, HISTORY_FAILURE_PLANES)
    times = crossing(zs)
    k = np.argmin(times, axis=0)
    a = np.take_along_axis(zs, np.maximum(k - 1, 0)[None], axis=0)[0]
    b = np.take_along_axis(zs, np.minimum(k + 1, HISTORY_FAILURE_PLANES - 1)[None], axis=0)[0]
    refined, _ = golden_minimum(crossing, a, b, FAILURE_DEPTH_STEPS)
    return np.minimum(np.minimum(times.min(axis=0), refined), crossing(z_min))
