"""The storm search compiled (numba): per cell, the lowest factor of safety over depth and
time under a constant storm or rain in steps, where and when it lies, and when FS first
falls below 1.

No physics is written again here. The columns are built and checked by the numpy core
(:class:`slopescreen.storm.StormColumns`), the stresses are
:func:`slopescreen.stability.slip_plane_terms` and
:func:`slopescreen.stability.resisting_stress` compiled, the peak of a history's head is
read from the core's own tables (:func:`slopescreen.rain_history.peak_table` and
:func:`slopescreen.rain_history.time_table`) or the core's closed form for a constant
storm (:data:`slopescreen.storm.PEAK_OFFSET`), and the searches are the core's step for
step, with its constants: :func:`slopescreen.storm.depth_minimum` (slip planes from the
minimum slip depth, the lowest local minima refined by golden section),
``rain_history._peak_response`` for rain that varies cell by cell, and the two
first-failure searches (``storm._first_failure``, ``rain_history._first_failure``).
Only the order of work differs: cell by cell, a candidate scan stopping at its first
failing time (the result is the same), on all cores. Tested equal to the core on 10^4
random cells (tests/region/test_storm_kernels.py).

Three ways to the head's peak at a plane of response time s = Z^2 / D_hat:

- ``CLOSED``: one step of rain: the closed-form peak of Iverson's step response;
- ``TABLE``: rain in steps, the same for many cells: tabulated once per history against
  log10 s (``rain_history.LOG_SCALE``), read by linear interpolation;
- ``DIRECT``: rain in steps that varies cell by cell: candidate times and golden section.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor, as_completed

import numba
import numpy as np
from numpy.typing import ArrayLike

from slopescreen import rain_history as rh
from slopescreen import storm as st
from slopescreen._checks import as_result
from slopescreen.maps.region.kernels import closed_peak, response
from slopescreen.stability import resisting_stress, slip_plane_terms
from slopescreen.storm import StormSummary

CLOSED, TABLE, DIRECT = 0, 1, 2  # how the peak of the head is found
# what a search over depth minimises: FS at a time or at the peak; a first failure
INITIAL, AT_END, AT_LATER, WINDOW, STORM_CROSSING, HISTORY_CROSSING = range(6)
# a plane whose FS at the tabulated peak of its head is at least 1 + PEAK_MARGIN is not
# searched for a first failure: the tables' error in FS is far below it (tested)
PEAK_MARGIN = 1e-3
# a cell's parameters, one row per cell
COS, SIN, GAMMA, GAMMA_SAT, GAMMA_W, COHESION, TAN_PHI, K_H, BETA, WT_DEPTH, D_HAT = range(11)
PARAMETERS = 11
# the numbers of knobs_for, by position
(KNOB_MODE, KNOB_END, KNOB_LATER, KNOB_TABLE_FIRST, KNOB_TABLE_STEP, KNOB_PLANES,
 KNOB_BRACKETS, KNOB_STEPS, KNOB_STORM_PLANES, KNOB_STORM_BISECTION, KNOB_STORM_STEPS,
 KNOB_HISTORY_PLANES, KNOB_HISTORY_BISECTION, KNOB_HISTORY_STEPS, KNOB_TIME_BRACKETS,
 KNOB_TIME_STEPS, KNOB_PEAK_CANDIDATES, KNOB_FAILURE_CANDIDATES) = range(18)  # fmt: skip
NOT_BY_LATER, FAILS_BEFORE_STORM = st.NOT_BY_LATER, st.FAILS_BEFORE_STORM
PART_CELLS = 16_384  # cells a thread takes at once (and between progress reports)
CELLS_PER_TABLE = 500  # cells per history above which histories beyond 64 are tabulated
GOLDEN = st.GOLDEN

_terms = numba.njit(inline="always")(slip_plane_terms)
_resisting = numba.njit(inline="always")(resisting_stress)


@numba.njit(inline="always")
def _fs_at_head(z, psi, cell):
    """StormColumns.fs_at_head: FS on the plane at depth z under head psi; +inf where
    nothing drives (never NaN)."""
    cos = cell[COS]
    m = min(max(max(psi, 0.0) / (z * cos * cos), 0.0), 1.0)
    sigma, u, tau = _terms(
        cos, cell[SIN], z, cell[GAMMA], cell[GAMMA_SAT], m, 0.0, cell[K_H], cell[GAMMA_W]
    )
    resisting = _resisting(cell[COHESION], cell[TAN_PHI], sigma, u)
    return resisting / tau if tau > 0.0 else math.inf


@numba.njit(inline="always")
def _head(z, g, cell):
    """psi = (Z - d) beta + Z G, capped at beta Z."""
    return min((z - cell[WT_DEPTH]) * cell[BETA] + z * g, cell[BETA] * z)


@numba.njit
def _g_at(t, s, jumps, starts):
    """G(t) = sum_n J_n R((t - t_(n-1)) / s) (rain_history._response_sum)."""
    total = 0.0
    for n in range(starts.size):
        if starts[n] < t:
            total += jumps[n] * response((t - starts[n]) / s)
    return total


@numba.njit
def _fs_at(z, t, cell, jumps, starts):
    """FS at depth z and time t (s), the head summed directly."""
    g = _g_at(t, z * z / cell[D_HAT], jumps, starts)
    return _fs_at_head(z, _head(z, g, cell), cell)


@numba.njit(inline="always")
def _table_at(tables, k, h, s, knobs):
    """(table k of history h read at log10 s, whether s lies in the table)."""
    x = (math.log10(s) - knobs[KNOB_TABLE_FIRST]) / knobs[KNOB_TABLE_STEP]
    last = tables.shape[2] - 1.0
    i = int(min(max(math.floor(x), 0.0), last - 1.0))
    w = min(max(x - i, 0.0), 1.0)
    return (1.0 - w) * tables[k, h, i] + w * tables[k, h, i + 1], 0.0 <= x <= last


@numba.njit(inline="always")
def _golden_step(a, b, x1, x2, f1, f2):
    """One step of slopescreen.storm.golden_minimum: the bracket kept (the part holding the
    lower of the two interior values) and the next point to evaluate."""
    if f1 <= f2:
        return a, x2, x2 - GOLDEN * (x2 - a), True
    return x1, b, x1 + GOLDEN * (b - x1), False


@numba.njit(inline="always")
def _golden_keep(left, x_new, f_new, x1, x2, f1, f2):
    """The interior points and values after a step (see :func:`_golden_step`)."""
    if left:
        return x_new, x1, f_new, f1
    return x2, x_new, f2, f_new


@numba.njit
def _highest_g(a, b, steps, s, jumps, starts):
    """slopescreen.storm.golden_minimum of -G over time in [a, b]: (lowest -G, when)."""
    x1, x2 = b - GOLDEN * (b - a), a + GOLDEN * (b - a)
    f1, f2 = -_g_at(x1, s, jumps, starts), -_g_at(x2, s, jumps, starts)
    best, where = (f1, x1) if f1 <= f2 else (f2, x2)
    for _ in range(steps):
        a, b, x_new, left = _golden_step(a, b, x1, x2, f1, f2)
        f_new = -_g_at(x_new, s, jumps, starts)
        x1, x2, f1, f2 = _golden_keep(left, x_new, f_new, x1, x2, f1, f2)
        if f_new < best:
            best, where = f_new, x_new
    return best, where


@numba.njit
def _peak_direct(s, jumps, starts, window, knobs):
    """rain_history._peak_response for one plane: (max of G over [0, window], when)."""
    peak_candidates = knobs[KNOB_PEAK_CANDIDATES]
    brackets, steps = knobs[KNOB_TIME_BRACKETS], knobs[KNOB_TIME_STEPS]
    n = starts.size
    times = np.empty(n + 1 + n * len(peak_candidates))
    for k in range(n):
        times[k] = starts[k]
        for c in range(len(peak_candidates)):
            times[n + 1 + k * len(peak_candidates) + c] = starts[k] + peak_candidates[c] * s
    times[n] = window
    times = np.sort(np.minimum(np.maximum(times, 0.0), window))
    values = np.empty(times.size)
    for k in range(times.size):
        values[k] = _g_at(times[k], s, jumps, starts)
    last = times.size - 1
    keys = np.empty(times.size)
    for k in range(times.size):
        local = (k == 0 or values[k] >= values[k - 1]) and (k == last or values[k] >= values[k + 1])
        keys[k] = -values[k] if local else math.inf
    ranked = np.argsort(keys, kind="mergesort")
    best, when = values[ranked[0]], times[ranked[0]]
    for r in range(min(brackets, times.size)):
        k = ranked[r]
        low, t = _highest_g(times[max(k - 1, 0)], times[min(k + 1, last)], steps, s, jumps, starts)
        if -low > best:
            best, when = -low, t
    return best, when


@numba.njit
def _peak(z, cell, jumps, h, knobs, starts, tables, curve):
    """(max over the window of G at depth z, when in s) by the cell's way."""
    mode, window = knobs[KNOB_MODE], knobs[KNOB_LATER]
    s = z * z / cell[D_HAT]
    if mode == CLOSED:
        g, t_peak = closed_peak(starts[1] / s, window / s, curve[0], curve[1])
        return jumps[0] * g, t_peak * s
    if mode == TABLE:
        g, inside = _table_at(tables, 0, h, s, knobs)
        if inside:
            return g, _table_at(tables, 1, h, s, knobs)[0]
    return _peak_direct(s, jumps, starts, window, knobs)


@numba.njit
def _storm_crossing(z, hi, cell, jumps, h, knobs, starts, tables, curve):
    """storm._first_failure's crossing on a plane: FS falls until the head's peak, so the
    crossing before it is bisected from 0, the earlier end kept; +inf where FS >= 1 at
    the peak (or at ``hi`` when given, not NaN)."""
    if math.isnan(hi):
        hi = _peak(z, cell, jumps, h, knobs, starts, tables, curve)[1]
    if not _fs_at(z, hi, cell, jumps, starts) < 1.0:
        return math.inf
    return _bisected(z, 0.0, hi, knobs[KNOB_STORM_BISECTION], cell, jumps, starts)


@numba.njit(inline="always")
def _bisected(z, lo, hi, steps, cell, jumps, starts):
    """The crossing of FS = 1 between ``lo`` (FS >= 1) and ``hi`` (FS < 1) on the plane at
    depth z, bisected ``steps`` times: the earlier end of the last bracket."""
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        if _fs_at(z, mid, cell, jumps, starts) < 1.0:
            hi = mid
        else:
            lo = mid
    return lo


@numba.njit
def _history_crossing(z, t_min, limit, cell, jumps, h, knobs, starts, tables, curve, times):
    """rain_history._first_failure's crossing on a plane: the first candidate time with
    FS < 1 (the start, every change of the rain, the later time, after each change the
    multiples FAILURE_CANDIDATES of the plane's response time, the plane's peak and the
    cell's critical time), bisected back towards the candidate before it (earlier end
    kept); +inf where no candidate fails. Two shortcuts leave the earliest crossing over
    planes as it is: a plane whose FS at the head's peak is at least 1 + PEAK_MARGIN has no
    candidate below 1 (+inf), and the scan stops once the candidate before the next one is
    at or beyond ``limit`` (the earliest crossing found on other planes): the crossing
    reported would be no earlier than that candidate (+inf)."""
    window, candidates = knobs[KNOB_LATER], knobs[KNOB_FAILURE_CANDIDATES]
    g_peak, t_peak = _peak(z, cell, jumps, h, knobs, starts, tables, curve)
    if _fs_at_head(z, _head(z, g_peak, cell), cell) >= 1.0 + PEAK_MARGIN:
        return math.inf
    s = z * z / cell[D_HAT]
    n, c = starts.size, len(candidates)
    for k in range(n):
        times[k] = min(max(starts[k], 0.0), window)
        for j in range(c):
            times[n + 1 + k * c + j] = min(max(starts[k] + candidates[j] * s, 0.0), window)
    times[n] = window
    times[-2] = t_peak
    times[-1] = t_min
    times.sort()
    first = -1
    for k in range(times.size):
        if k > 0 and times[k - 1] >= limit:  # a crossing from here is no earlier
            return math.inf
        if _fs_at(z, times[k], cell, jumps, starts) < 1.0:
            first = k
            break
    if first < 0:
        return math.inf
    lo, hi = times[max(first - 1, 0)], times[first]
    return _bisected(z, lo, hi, knobs[KNOB_HISTORY_BISECTION], cell, jumps, starts)


@numba.njit(inline="always")
def _objective(what, x, aux, limit, cell, jumps, h, knobs, starts, tables, curve, buf):
    """What a search over depth minimises at depth x: FS at the start, at the end of the
    rain, at the later time or at the head's peak over the window; or the plane's first
    failure (``aux``: the time bisected from, or NaN, for a constant storm; the cell's
    critical time for rain in steps)."""
    if what == STORM_CROSSING:
        return _storm_crossing(x, aux, cell, jumps, h, knobs, starts, tables, curve)
    if what == HISTORY_CROSSING:
        return _history_crossing(x, aux, limit, cell, jumps, h, knobs, starts, tables, curve, buf)
    if what == WINDOW:
        g = _peak(x, cell, jumps, h, knobs, starts, tables, curve)[0]
    elif what == INITIAL:
        g = 0.0
    else:
        s = x * x / cell[D_HAT]
        inside = False
        if knobs[KNOB_MODE] == TABLE:
            g, inside = _table_at(tables, what + 1, h, s, knobs)
        if not inside:
            t = knobs[KNOB_END] if what == AT_END else knobs[KNOB_LATER]
            g = _g_at(t, s, jumps, starts)
    return _fs_at_head(x, _head(x, g, cell), cell)


@numba.njit
def _golden(what, a, b, steps, aux, cell, jumps, h, knobs, starts, tables, curve, buf):
    """slopescreen.storm.golden_minimum over depth in [a, b]: (lowest value, where). One
    call of the objective in the loop (the first two passes evaluate the two interior
    points), so that it is compiled inline once."""
    x1, x2 = b - GOLDEN * (b - a), a + GOLDEN * (b - a)
    f1 = f2 = best = where = math.inf
    left = True
    for k in range(steps + 2):
        if k == 0:
            x = x1
        elif k == 1:
            x = x2
        else:
            a, b, x, left = _golden_step(a, b, x1, x2, f1, f2)
        f = _objective(what, x, aux, math.inf, cell, jumps, h, knobs, starts, tables, curve, buf)
        if k == 0:
            f1 = f
        elif k == 1:
            f2 = f
            best, where = (f1, x1) if f1 <= f2 else (f2, x2)
        else:
            x1, x2, f1, f2 = _golden_keep(left, x, f, x1, x2, f1, f2)
            if f < best:
                best, where = f, x
    return best, where


@numba.njit
def _depth_minimum(what, top, base, cell, jumps, h, knobs, starts, tables, curve, buf):
    """slopescreen.storm.depth_minimum for one cell: (minimum, depth). The lowest local
    minima of the scan are taken in the order of a stable sort (ties: the shallower)."""
    planes, brackets, steps = knobs[KNOB_PLANES], knobs[KNOB_BRACKETS], knobs[KNOB_STEPS]
    zs, values, keys = buf[:planes], buf[planes : 2 * planes], buf[2 * planes : 3 * planes]
    for k in range(planes):
        zs[k] = top + (k / (planes - 1.0)) * (base - top)
        values[k] = _objective(
            what, zs[k], 0.0, math.inf, cell, jumps, h, knobs, starts, tables, curve, buf
        )
    for k in range(planes):
        local = (k == 0 or values[k] <= values[k - 1]) and (
            k == planes - 1 or values[k] <= values[k + 1]
        )
        keys[k] = values[k] if local else math.inf
    best, where = math.inf, top
    prev_key, prev = -math.inf, -1
    for r in range(min(brackets, planes)):
        k = -1
        for q in range(planes):  # the next lowest key after the previous, equals by depth
            after = keys[q] > prev_key or (keys[q] == prev_key and q > prev)
            if after and (k < 0 or keys[q] < keys[k]):
                k = q
        prev_key, prev = keys[k], k
        if r == 0:
            best, where = values[k], zs[k]
        if keys[k] == math.inf:  # no more local minima (or none with a value)
            break
        a, b = zs[max(k - 1, 0)], zs[min(k + 1, planes - 1)]
        value, z = _golden(
            what, a, b, steps, 0.0, cell, jumps, h, knobs, starts, tables, curve, buf
        )
        if value < best:
            best, where = value, z
    return best, where


@numba.njit
def _earliest(what, aux, planes, steps, top, base, z_min, t_min, cell, jumps, h, knobs, starts,
              tables, curve, buf):  # fmt: skip
    """The earliest crossing (``what``) over ``planes`` evenly spaced planes, then golden
    section over depth around the earliest plane (``steps``), and on the critical plane
    ``z_min`` at its time ``t_min``."""
    earliest, k_first = math.inf, 0
    for k in range(planes):
        z = top + (k / (planes - 1.0)) * (base - top)
        t = _objective(what, z, aux, earliest, cell, jumps, h, knobs, starts, tables, curve, buf)
        if t < earliest:
            earliest, k_first = t, k
    a = top + (max(k_first - 1, 0) / (planes - 1.0)) * (base - top)
    b = top + (min(k_first + 1, planes - 1) / (planes - 1.0)) * (base - top)
    refined = _golden(what, a, b, steps, aux, cell, jumps, h, knobs, starts, tables, curve, buf)
    critical = _objective(
        what, z_min, t_min, earliest, cell, jumps, h, knobs, starts, tables, curve, buf
    )
    return min(min(earliest, refined[0]), critical)


@numba.njit
def _first_failure(top, base, z_min, t_min, cell, jumps, h, knobs, starts, tables, curve, buf):
    """The earliest time FS < 1 (s): storm._first_failure for one step of rain,
    rain_history._first_failure for rain in steps."""
    if knobs[KNOB_MODE] == CLOSED:
        planes, steps = knobs[KNOB_STORM_PLANES], knobs[KNOB_STORM_STEPS]
        return _earliest(STORM_CROSSING, math.nan, planes, steps, top, base, z_min, t_min,
                         cell, jumps, h, knobs, starts, tables, curve, buf)  # fmt: skip
    planes, steps = knobs[KNOB_HISTORY_PLANES], knobs[KNOB_HISTORY_STEPS]
    return _earliest(HISTORY_CROSSING, t_min, planes, steps, top, base, z_min, t_min,
                     cell, jumps, h, knobs, starts, tables, curve, buf)  # fmt: skip


@numba.njit(cache=True, nogil=True)
def storm_cells(params, top, base, rows, jumps, knobs, starts, tables, curve, out, first, stop):
    """The storm summary of the cells ``first`` to ``stop`` (rows of ``out``, as
    slopescreen.storm.StormSummary: initial, end and later minima over depth, the end's
    critical depth, the time to failure in h (codes: not failing by the later time,
    failing before the rain), the window minimum and its depth and time in h).

    ``params`` (cells, PARAMETERS); ``top``, ``base``: the shallowest slip plane and the
    soil base; ``rows``: each cell's row of ``jumps`` (its history in ``TABLE`` mode);
    ``jumps`` (rows, steps + 1): (I_Z,n - I_Z,n-1) / K_z; ``knobs``: numbers (see
    :func:`knobs_for`); ``starts``: the changes of the rain (s); ``tables`` (4, histories,
    LOG_SCALE size): the peak of G, its time, G at the end and at the later time;
    ``curve``: the closed form's log storm grid and peak offsets. No GIL: the caller runs
    parts of the cells on threads. Arrays go to the searches as arguments, never in a
    tuple: a tuple's arrays are counted in and out at every use (measured: ten times
    slower)."""
    n_starts, n_candidates = starts.size, len(knobs[KNOB_FAILURE_CANDIDATES])
    n_times = n_starts + 3 + n_starts * n_candidates  # a history's candidate times
    buf = np.empty(max(3 * knobs[KNOB_PLANES], n_times))
    end_s, later_s = knobs[KNOB_END], knobs[KNOB_LATER]
    for i in range(first, stop):
        p = params[i]
        cell = (p[0], p[1], p[2], p[3], p[4], p[5], p[6], p[7], p[8], p[9], p[10])
        jump, h = jumps[rows[i]], rows[i]
        lo, hi = top[i], base[i]
        arrays = (knobs, starts, tables, curve, buf)
        initial, z_initial = _depth_minimum(INITIAL, lo, hi, cell, jump, h, *arrays)
        end, z_end = _depth_minimum(AT_END, lo, hi, cell, jump, h, *arrays)
        later, z_later = end, z_end
        if later_s > end_s:
            later, z_later = _depth_minimum(AT_LATER, lo, hi, cell, jump, h, *arrays)
        window, z_min = _depth_minimum(WINDOW, lo, hi, cell, jump, h, *arrays)
        t_min = _peak(z_min, cell, jump, h, knobs, starts, tables, curve)[1]
        if later < window:  # a fixed-time search found lower: keep the window consistent
            window, z_min, t_min = later, z_later, later_s
        if end < window:
            window, z_min, t_min = end, z_end, end_s
        if initial < window:
            window, z_min, t_min = initial, z_initial, 0.0
        if initial < 1.0:
            failure = FAILS_BEFORE_STORM
        elif window < 1.0:
            found = _first_failure(lo, hi, z_min, t_min, cell, jump, h, knobs, starts, tables,
                                   curve, buf[:n_times])  # fmt: skip
            failure = found / 3600.0
        else:
            failure = NOT_BY_LATER
        out[0, i], out[1, i], out[2, i], out[3, i] = initial, end, z_end, later
        out[4, i], out[5, i], out[6, i], out[7, i] = failure, window, z_min, t_min / 3600.0


def compiled_summary(
    *,
    soil_depth_m: ArrayLike,
    later_h: float,
    ends_h: ArrayLike,
    rain_mm_h: ArrayLike,
    min_slip_depth_m: float = st.MIN_SLIP_DEPTH_M,
    progress: Callable[[int], object] | None = None,
    **kwargs: ArrayLike,
) -> StormSummary:
    """:func:`slopescreen.rain_history.history_summary` (and, for one step,
    :func:`slopescreen.storm.storm_summary`) by the compiled kernel: the same arguments,
    checks and result. ``rain_mm_h``: one row per step, one value or one per cell.
    The cells are worked ``PART_CELLS`` at a time on numba's number of threads;
    ``progress`` is called with the number of cells each time a part is done."""
    steps = rh.rain_steps(ends_h, rain_mm_h)
    soil, later, end, shallowest = rh.search_inputs(soil_depth_m, later_h, steps, min_slip_depth_m)
    shape = np.broadcast_shapes(
        soil.shape,
        steps.rain_mm_h.shape[1:],
        *(np.shape(v) for v in kwargs.values() if v is not None),
    )
    size = math.prod(shape)
    cols = st.StormColumns(0.0, later, shape, rain_mm_h=0.0, **kwargs)  # checked there
    params = np.empty((size, PARAMETERS))
    for k, value in enumerate(
        (cols.cos, cols.sin, cols.gamma, cols.gamma_sat, cols.gamma_w, cols.c, cols.tan_phi,
         cols.k_h, cols.beta, cols.d, cols.d_hat)
    ):  # fmt: skip
        params[:, k] = np.ravel(value)
    base = np.broadcast_to(soil, shape).astype(float).ravel()
    top = np.minimum(shallowest, base)
    conductivity = np.broadcast_to(np.asarray(kwargs["hydraulic_conductivity_m_s"], float), shape)
    jumps, rows = histories(steps, conductivity.ravel())
    starts_s = np.concatenate(([0.0], steps.ends_h)) * st.SECONDS_PER_HOUR
    times_s = np.array([end, later]) * st.SECONDS_PER_HOUR
    mode = way_to_peak(steps.ends_h.size, jumps.shape[0], size)
    tables, first = np.zeros((4, 1, 2)), 0
    if mode == TABLE:
        first, last = _scale_range(top, base, params[:, D_HAT])
        tables = _tables(jumps, tuple(map(float, starts_s)), times_s, first, last)
    knobs = knobs_for(mode, times_s, first)
    curve = np.stack((st.LOG_STORM, st.PEAK_OFFSET))
    out = np.empty((8, size))
    arrays = (params, top, base, rows, jumps, knobs, starts_s, tables, curve, out)
    parts = np.unique(np.r_[np.arange(0, size, PART_CELLS), size])
    with ThreadPoolExecutor(numba.get_num_threads()) as pool:
        done = {
            pool.submit(storm_cells, *arrays, a, b): b - a for a, b in itertools.pairwise(parts)
        }
        for part in as_completed(done):
            part.result()
            if progress is not None:
                progress(done[part])
    return StormSummary(*(as_result(row.reshape(shape)) for row in out))


def knobs_for(mode: int, times_s: np.ndarray, first: int = 0) -> tuple:
    """The numbers the kernel reads (a tuple of numbers, no array), indexed by ``KNOB_*``:
    the way to the peak, the end of the rain and the later time (s: the window of the
    search ends there, as the core's), the
    tables' grid (log10 s of their first node, LOG_SCALE[first], and the core's
    spacing), and the core's search constants."""
    return (
        mode, float(times_s[0]), float(times_s[1]),
        float(rh.LOG_SCALE[first]), float(rh.LOG_SCALE[1] - rh.LOG_SCALE[0]),
        st.DEPTH_PLANES, st.DEPTH_BRACKETS, st.DEPTH_REFINE_STEPS,
        st.FAILURE_PLANES, st.TIME_BISECTION_STEPS, st.DEPTH_REFINE_STEPS // 2,
        rh.HISTORY_FAILURE_PLANES, rh.FAILURE_BISECTION_STEPS, rh.FAILURE_DEPTH_STEPS,
        rh.TIME_BRACKETS, rh.TIME_REFINE_STEPS,
        tuple(map(float, rh.PEAK_CANDIDATES)), tuple(map(float, rh.FAILURE_CANDIDATES)),
    )  # fmt: skip


def way_to_peak(steps: int, histories: int, cells: int = 0) -> int:
    """CLOSED for one step of rain; TABLE for up to ``rain_history.TABLE_HISTORIES``
    distinct histories (as the core tabulates), or more where each serves at least
    ``CELLS_PER_TABLE`` cells on average (a table costs about as much as a direct search
    of a few hundred cells); DIRECT beyond."""
    if steps == 1:
        return CLOSED
    limit = max(rh.TABLE_HISTORIES, cells // CELLS_PER_TABLE)
    return TABLE if histories <= limit else DIRECT


def histories(steps: rh.RainSteps, conductivity: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(distinct rows of infiltration jumps (histories, steps + 1), each cell's row): rain
    the same for every cell differs only by its cap at K, found per distinct K."""
    if steps.rain_mm_h.ndim == 1:
        distinct, rows = np.unique(conductivity, return_inverse=True)
        per_k = rh.infiltration_jumps(steps, distinct)
    else:
        rain = np.broadcast_to(steps.rain_mm_h, (steps.ends_h.size, conductivity.size))
        per_cell = rh.infiltration_jumps(rh.RainSteps(steps.ends_h, rain), conductivity)
        return _distinct_rows(np.stack(per_cell, axis=1))
    return np.ascontiguousarray(np.stack(per_k, axis=1)), rows.astype(np.int64)


def _distinct_rows(table: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(distinct rows, each row's index among them), found by a key per row (the row's dot
    product with fixed numbers) and checked row by row; a sort of whole rows where two
    distinct rows share a key."""
    key = table @ np.linspace(1.0, 2.0, table.shape[1]) ** 0.5
    _, first, rows = np.unique(key, return_index=True, return_inverse=True)
    distinct = table[first]
    if not np.array_equal(distinct[rows], table):
        distinct, rows = np.unique(table, axis=0, return_inverse=True)
    return np.ascontiguousarray(distinct), rows.ravel().astype(np.int64)


def _scale_range(top: np.ndarray, base: np.ndarray, d_hat: np.ndarray) -> tuple[int, int]:
    """The LOG_SCALE indices around every response time s = Z^2 / D_hat the cells' planes
    can have (one node beyond each end): the tables need no more."""
    low = np.log10(float(np.min(top)) ** 2 / float(np.max(d_hat)))
    high = np.log10(float(np.max(base)) ** 2 / float(np.min(d_hat)))
    step = rh.LOG_SCALE[1] - rh.LOG_SCALE[0]
    first = int(np.clip(np.floor((low - rh.LOG_SCALE[0]) / step) - 1, 0, rh.LOG_SCALE.size - 2))
    last = int(
        np.clip(np.ceil((high - rh.LOG_SCALE[0]) / step) + 1, first + 1, rh.LOG_SCALE.size - 1)
    )
    return first, last


def _tables(
    jumps: np.ndarray, starts_s: tuple[float, ...], times_s: np.ndarray, first: int, last: int
) -> np.ndarray:
    """The core's tables of each history at LOG_SCALE[first:last + 1]: the peak of G over
    the window, its time, and G at the end of the rain and at the later time."""
    tables = np.empty((4, jumps.shape[0], last + 1 - first))
    for h, row in enumerate(jumps):
        history = tuple(map(float, row))
        found = rh.peak_table(history, starts_s, float(times_s[1]), first, last)
        tables[0, h], tables[1, h] = found
        tables[2, h] = rh.time_table(history, starts_s, float(times_s[0]))[first : last + 1]
        tables[3, h] = rh.time_table(history, starts_s, float(times_s[1]))[first : last + 1]
    return tables
