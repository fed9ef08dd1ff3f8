"""Compiled per-cell kernels for the map engine (numba).

The physics is not written again here: the kernels compile the core's own arithmetic
(:func:`slopescreen.stability.slip_plane_terms`, :func:`slopescreen.stability.resisting_stress`,
:func:`slopescreen.hydrology.wetness_ratio`) into one fused pass per cell, run on all cores.
Inputs are validated before they get here (soil-table ranges by the engine, terrain by
construction). Slopes come in as tan(beta), stored with the terrain, so no trigonometry is
left per cell: cos = 1 / sqrt(1 + tan^2), sin = tan cos.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from slopescreen._normal import erfc_of_positive
from slopescreen.hydrology import wetness_ratio
from slopescreen.stability import resisting_stress, slip_plane_terms

_terms = numba.njit(inline="always")(slip_plane_terms)
_resisting = numba.njit(inline="always")(resisting_stress)
_ratio = numba.njit(inline="always")(wetness_ratio)
_erfc = numba.njit(inline="always")(erfc_of_positive)


@numba.njit(inline="always")
def _fs(tan_b, depth, c_total, tan_phi, gamma, gamma_sat, m, seismic, gamma_w):
    cos_b = 1.0 / math.sqrt(1.0 + tan_b * tan_b)
    sigma, u, tau = _terms(cos_b, tan_b * cos_b, depth, gamma, gamma_sat, m, 0.0, seismic, gamma_w)
    resisting = _resisting(c_total, tan_phi, sigma, u)
    if tau > 0.0:
        return resisting / tau
    return math.inf if resisting > 0.0 else math.nan


@numba.vectorize(["f8(f8, f8, f8, f8, f8, f8, f8, f8, f8)"], target="parallel", cache=True)
def fs_ufunc(
    tan_slope,
    depth_m,
    cohesion_total_kpa,
    tan_friction,
    unit_weight,
    saturated_unit_weight,
    saturation,
    seismic,
    water_unit_weight,
):
    """Factor of safety per cell, as :func:`slopescreen.stability.factor_of_safety` (no
    surcharge), broadcasting like a numpy ufunc."""
    return _fs(
        tan_slope,
        depth_m,
        cohesion_total_kpa,
        tan_friction,
        unit_weight,
        saturated_unit_weight,
        saturation,
        seismic,
        water_unit_weight,
    )


@numba.njit(parallel=True, cache=True)
def fs_by_unit(
    tan_slope,
    codes,
    saturation,
    depth,
    c_total,
    tan_phi,
    gamma,
    gamma_sat,
    seismic,
    gamma_w,
    out,
):
    """FS per cell with the soil parameters looked up by unit code (tables indexed by code)."""
    for i in numba.prange(tan_slope.size):
        j = codes[i]
        out[i] = _fs(
            np.float64(tan_slope[i]),
            depth[j],
            c_total[j],
            tan_phi[j],
            gamma[j],
            gamma_sat[j],
            np.float64(saturation[i]),
            seismic,
            gamma_w,
        )


@numba.njit(parallel=True, cache=True)
def steady_saturation_by_unit(
    recharge_mm_day,
    tan_slope,
    sca,
    codes,
    depth,
    conductivity,
    transmissivity,
    out,
):
    """Steady-state m = min(1, R (a/b) / (T sin beta)), T from the unit's transmissivity
    where given, else K z cos(beta); flat cells saturate when R > 0. ``recharge_mm_day``:
    one value, or one per cell."""
    uniform = recharge_mm_day.size == 1
    for i in numba.prange(tan_slope.size):
        r = (recharge_mm_day[0] if uniform else recharge_mm_day[i]) / 1000.0
        j = codes[i]
        tb = np.float64(tan_slope[i])
        cos_b = 1.0 / math.sqrt(1.0 + tb * tb)
        t = transmissivity[j]
        if math.isnan(t):
            t = conductivity[j] * 86400.0 * depth[j] * cos_b
        if t * tb * cos_b > 0.0:
            m = _ratio(r, np.float64(sca[i]), tb * cos_b, t)
            out[i] = m if m < 1.0 else 1.0
        else:
            out[i] = 1.0 if r * sca[i] > 0.0 else 0.0


@numba.njit(cache=True, nogil=True)
def add_masses(score, weight, keep, thresholds, between, tied):
    """:func:`slopescreen.validation.masses_around` in one compiled pass, added to
    ``between`` and ``tied``; returns the number of cells counted. ``keep`` is a mask of
    the cells to count, or an empty array for all. Each counted cell (finite score) is
    placed among the sorted thresholds (the first not below it) through a table of
    equal-width buckets over their range, then a short walk, so the cost per cell does not
    grow with their number (a bisection mispredicts a branch at every step)."""
    k = thresholds.size
    masked = keep.size == score.size
    counted = 0
    if k == 0:
        for i in range(score.size):
            if (not masked or keep[i]) and score[i] == score[i]:
                between[0] += weight[i]
                counted += 1
        return counted
    low, high = thresholds[0], thresholds[k - 1]
    buckets = min(max(8 * k, 256), 1 << 22)
    scale = buckets / (high - low) if high > low else 0.0
    edges = low + np.arange(buckets + 1) / scale if scale > 0.0 else np.full(buckets + 1, low)
    start = np.searchsorted(thresholds, edges)
    for i in range(score.size):
        s = np.float64(score[i])
        if (masked and not keep[i]) or s != s:
            continue
        counted += 1
        if s < low:
            between[0] += weight[i]
            continue
        if s > high:
            between[k] += weight[i]
            continue
        j = start[min(int((s - low) * scale), buckets)]
        while j > 0 and thresholds[j - 1] >= s:  # rounding at a bucket edge
            j -= 1
        while j < k and thresholds[j] < s:
            j += 1
        if j < k and thresholds[j] == s:
            tied[j] += weight[i]
        else:
            between[j] += weight[i]
    return counted


@numba.njit(cache=True, nogil=True)
def add_class_areas(fs, codes, area, breaks, classes, table):
    """Add each cell's area to table[unit code, FS class] (class 1 = FS below the first
    break ... len(breaks) + 1), taking the class from ``classes`` where given (a raster of
    the same shape) else from ``fs`` (NaN: no data, left out); returns the area with FS < 1."""
    flagged = 0.0
    given = classes.size == fs.size
    for i in range(fs.size):
        f = np.float64(fs[i])
        if f != f:
            continue
        if given:
            c = classes[i]
        else:
            c = 1
            while c <= breaks.size and f >= breaks[c - 1]:
                c += 1
        table[codes[i], c] += area[i]
        if f < 1.0:
            flagged += area[i]
    return flagged


@numba.njit(inline="always")
def _critical_m(tan_b, z, c_total, tan_phi, gamma, gamma_sat, seismic, gamma_w):
    """Saturation bringing FS to 1 on the plane at depth z: the solution of
    :func:`slopescreen.inverse._solve_linear` (target 1), from the core's stresses at m = 0
    and m = 1 (linear in m); NaN where none (tested equal to critical_saturation)."""
    cos_b = 1.0 / math.sqrt(1.0 + tan_b * tan_b)
    sin_b = tan_b * cos_b
    sg0, u0, t0 = _terms(cos_b, sin_b, z, gamma, gamma_sat, 0.0, 0.0, seismic, gamma_w)
    sg1, u1, t1 = _terms(cos_b, sin_b, z, gamma, gamma_sat, 1.0, 0.0, seismic, gamma_w)
    s0 = sg0 - u0
    s1 = (sg1 - u1) - s0
    t1 = t1 - t0
    den = s1 * tan_phi - t1
    if den != 0.0:
        x = (t0 - c_total - s0 * tan_phi) / den
        scale = max(abs(s0) + abs(s1 * x), 1.0)
        if math.isfinite(x) and s0 + s1 * x >= -1e-9 * scale and t0 + t1 * x > 0.0:
            return x
    if t1 != 0.0:
        x = (c_total - t0) / t1
        if math.isfinite(x) and s0 + s1 * x <= 1e-9 * max(abs(s0), 1.0) and t0 + t1 * x > 0.0:
            return x
    return math.nan


@numba.njit(inline="always")
def response(t):
    """Iverson's R(t*) (slopescreen.storm.response_function, with the core's erfc)."""
    if t <= 0.0:
        return 0.0
    return math.sqrt(t / math.pi) * math.exp(-1.0 / t) - _erfc(1.0 / math.sqrt(t))


@numba.njit(inline="always")
def response_rate(t):
    """dR/dt* (slopescreen.storm.response_rate)."""
    return math.exp(-1.0 / t) / (2.0 * math.sqrt(math.pi * t)) if t > 0.0 else 0.0


@numba.njit(inline="always")
def closed_peak(storm, window, log_grid, offsets):
    """(max of G = R(t*) - R(t* - T*) over [0, window], its t*): slopescreen.storm.peak_time
    (the tabulated offset of the peak after the storm's end, bisection beyond the table)
    and slopescreen.storm.peak_response."""
    lt = math.log10(max(storm, 1e-300))
    if log_grid[0] <= lt <= log_grid[-1]:
        t_peak = storm + np.interp(lt, log_grid, offsets)
    else:
        lo, hi = max(storm, 2.0), storm + 2.0
        for _ in range(64):
            mid = 0.5 * (lo + hi)
            if response_rate(mid) > response_rate(mid - storm):
                lo = mid
            else:
                hi = mid
        t_peak = 0.5 * (lo + hi)
    t_peak = min(t_peak, window)
    g = response(t_peak)
    if t_peak > storm:
        g -= response(t_peak - storm)
    return g, t_peak


@numba.njit(inline="always")
def _intensity_at(z, cell, log_grid, offsets):
    """I_c (m/s) at depth z, or +inf where none (rain_thresholds._at_depth)."""
    (tan_b, z_soil, c_total, tan_phi, gamma, gamma_sat, k, d_hat, d, beta, seismic, gamma_w,
     duration, window, sca, t_m2_s, m0) = cell  # fmt: skip
    cos2 = 1.0 / (1.0 + tan_b * tan_b)
    m_c = _critical_m(tan_b, z, c_total, tan_phi, gamma, gamma_sat, seismic, gamma_w)
    if not (m_c >= 0.0):
        return math.inf
    psi_c = m_c * z * cos2
    if psi_c > beta * z:
        return math.inf
    g = closed_peak(duration * d_hat / (z * z), window * d_hat / (z * z), log_grid, offsets)[0]
    if not (g > 0.0):
        return math.inf
    i_c = k * (psi_c - (z - d) * beta) / (z * g)
    if sca > 0.0:  # the steady water table of the rain added to the initial one
        need = (psi_c / cos2 - z + z_soil) / z_soil
        if need > 1.0:
            return math.inf
        i_c = max(i_c, max(need - m0, 0.0) * t_m2_s * math.sqrt(1.0 - cos2) / sca)
    if not (i_c <= k):
        return math.inf
    return max(i_c, 0.0)


@numba.njit(inline="always")
def _value_at(initial, z, cell, log_grid, offsets):
    """FS before the rain (``initial``) or I_c at depth z; +inf where none, never NaN."""
    if not initial:
        return _intensity_at(z, cell, log_grid, offsets)
    tan_b, c_total, tan_phi, gamma, gamma_sat = cell[0], cell[2], cell[3], cell[4], cell[5]
    d, beta, seismic, gamma_w = cell[8], cell[9], cell[10], cell[11]
    cos2 = 1.0 / (1.0 + tan_b * tan_b)
    psi = min((z - d) * beta, beta * z)
    m = min(max(max(psi, 0.0) / (z * cos2), 0.0), 1.0)
    fs = _fs(tan_b, z, c_total, tan_phi, gamma, gamma_sat, m, seismic, gamma_w)
    return math.inf if math.isnan(fs) else fs


@numba.njit
def _depth_minimum(initial, top, base, planes, brackets, steps, cell, log_grid, offsets):
    """slopescreen.storm.depth_minimum for one cell: the same planes, ranking of local
    minima (only those refined) and golden-section steps."""
    golden = (math.sqrt(5.0) - 1.0) / 2.0
    zs = np.empty(planes)
    vals = np.empty(planes)
    for p in range(planes):
        zs[p] = top + (p / (planes - 1.0)) * (base - top)
        vals[p] = _value_at(initial, zs[p], cell, log_grid, offsets)
    keys = np.empty(planes)
    for p in range(planes):
        local = (p == 0 or vals[p] <= vals[p - 1]) and (p == planes - 1 or vals[p] <= vals[p + 1])
        keys[p] = vals[p] if local else math.inf
    order = np.argsort(keys, kind="mergesort")
    best = vals[order[0]]
    for r in range(min(brackets, planes)):
        q = order[r]
        if keys[q] == math.inf:  # no more local minima (or none with a value)
            break
        a = zs[max(q - 1, 0)]
        b = zs[min(q + 1, planes - 1)]
        x1, x2 = b - golden * (b - a), a + golden * (b - a)
        f1 = _value_at(initial, x1, cell, log_grid, offsets)
        f2 = _value_at(initial, x2, cell, log_grid, offsets)
        best = min(best, f1 if f1 <= f2 else f2)
        for _ in range(steps):
            if f1 <= f2:
                b = x2
                x2, f2 = x1, f1
                x1 = b - golden * (b - a)
                f1 = _value_at(initial, x1, cell, log_grid, offsets)
                best = min(best, f1)
            else:
                a = x1
                x1, f1 = x2, f2
                x2 = a + golden * (b - a)
                f2 = _value_at(initial, x2, cell, log_grid, offsets)
                best = min(best, f2)
    return best


@numba.njit(parallel=True, cache=True)
def critical_intensity_by_unit(
    duration_s,
    window_s,
    tan_slope,
    sca,
    codes,
    depth,
    c_total,
    tan_phi,
    gamma,
    gamma_sat,
    conductivity,
    diffusivity,
    transmissivity_m2_day,
    water_table_depth,
    long_term_infiltration,
    seismic,
    gamma_w,
    search,
    min_slip_depth,
    log_grid,
    offsets,
    fails_code,
    none_code,
    out,
):
    """:func:`slopescreen.rain_thresholds.critical_intensity_mm_h` per cell (mm/h), the
    soil looked up by unit code; ``sca`` an empty array for no steady cap. ``duration_s``
    and ``window_s``: one value for all cells or one per cell. ``search``: (planes,
    brackets, steps) of the storm's initial search, then of the intensity's. The same
    searches as the numpy core (tested equal)."""
    capped = sca.size == tan_slope.size
    one_duration = duration_s.size == 1
    for i in numba.prange(tan_slope.size):
        duration = duration_s[0] if one_duration else duration_s[i]
        window = window_s[0] if one_duration else window_s[i]
        j = codes[i]
        tb = np.float64(tan_slope[i])
        cos2 = 1.0 / (1.0 + tb * tb)
        k = conductivity[j]
        z_soil = depth[j]
        t_day = transmissivity_m2_day[j]
        t_m2_s = k * z_soil * math.sqrt(cos2) if math.isnan(t_day) else t_day / 86400.0
        beta = cos2 - long_term_infiltration / k
        m0 = min(max((z_soil - water_table_depth) / z_soil, 0.0), 1.0)
        cell = (
            tb, z_soil, c_total[j], tan_phi[j], gamma[j], gamma_sat[j], k,
            4.0 * diffusivity[j] * cos2, water_table_depth, beta, seismic, gamma_w,
            duration, window, np.float64(sca[i]) if capped else 0.0, t_m2_s, m0,
        )  # fmt: skip
        top = min(min_slip_depth, z_soil)
        initial = math.inf  # search[0] = 0: the caller knows the cells hold before rain
        if search[0] > 0:
            initial = _depth_minimum(
                True, top, z_soil, search[0], search[1], search[2], cell, log_grid, offsets
            )
        if initial < 1.0:
            out[i] = fails_code
            continue
        best = _depth_minimum(
            False, top, z_soil, search[3], search[4], search[5], cell, log_grid, offsets
        )
        out[i] = best * 1000.0 * 3600.0 if math.isfinite(best) else none_code


@numba.njit(parallel=True, cache=True)
def frequency_by_cell(
    intensity, log_periods, gumbel_y, log_design, bounds, breaks, codes, period, p, cls
):
    """The frequency step of :mod:`slopescreen.rainfall_frequency` in one pass per cell
    (tested equal to it): ``intensity`` (durations, cells) in mm/h with the critical-
    intensity codes -1 and -2; ``log_design`` (durations, return periods) the log of the
    table's intensities times the uplift; ``gumbel_y`` the periods' Gumbel variates;
    ``bounds`` (p of the shortest period, p of the longest, 1 for a partial-duration
    series else 0, 1 where RARER cells get a class of their own else 0); ``codes``
    (MORE_FREQUENT, RARER, FAILS_WITHOUT_RAIN, NO_INTENSITY_FAILS); ``breaks`` falling.
    Writes the triggering return period, the annual probability and the hazard class."""
    more_frequent, rarer, fails_code, none_code = codes[0], codes[1], codes[2], codes[3]
    shortest_p, longest_p, partial, beyond = bounds[0], bounds[1], bounds[2], bounds[3]
    n_d, n_p = log_design.shape
    for i in numba.prange(intensity.shape[1]):
        best = math.inf
        more, fails, all_none = False, False, True
        for d in range(n_d):
            ic = np.float64(intensity[d, i])
            if ic == -1.0:
                fails, all_none = True, False
                continue
            if ic == -2.0:
                continue
            all_none = False
            if not (ic > 0.0):  # as np.interp below the table's first row
                best = min(best, math.exp(log_periods[0]))
                continue
            x = math.log(ic)
            if x < log_design[d, 0]:
                more = True
            elif x <= log_design[d, n_p - 1]:
                k = 0
                while k < n_p - 2 and x >= log_design[d, k + 1]:
                    k += 1
                lo, hi = log_design[d, k], log_design[d, k + 1]
                share = (x - lo) / (hi - lo) if hi > lo else 0.0
                t = math.exp(log_periods[k] + share * (log_periods[k + 1] - log_periods[k]))
                lo_i, hi_i = math.exp(lo), math.exp(hi)
                share = (ic - lo_i) / (hi_i - lo_i) if hi_i > lo_i else 0.0
                y = gumbel_y[k] + share * (gumbel_y[k + 1] - gumbel_y[k])
                best = min(best, t, 1.0 / -math.expm1(-math.exp(-y)))
        value = best if math.isfinite(best) else rarer
        if more:
            value = more_frequent
        if fails:
            value = fails_code
        if all_none:
            value = none_code
        period[i] = value
        if value > 0.0:
            prob = -math.expm1(-1.0 / value) if partial else 1.0 / value
        elif value == more_frequent:
            prob = shortest_p
        elif value == fails_code:
            prob = 1.0
        elif value == rarer:
            prob = longest_p
        else:
            prob = 0.0
        p[i] = prob
        c = 1
        for b in breaks:
            if b > prob:
                c += 1
        if value == more_frequent:
            c = 1
        elif value == rarer and beyond:
            c = breaks.size + 2
        cls[i] = c


@numba.njit(parallel=True, cache=True)
def intensity_from_table(slope_deg, log_sca, codes, tables, flagged, has, origin, step, out, exact):
    """Critical intensity of cells interpolated bilinearly in (slope degrees, log10
    specific catchment area) from their soil unit's table ``tables[code]`` (rows: log10
    SCA, columns: slope; ``has[code]``: the unit has one; ``origin`` and ``step``: the
    first node and the spacing in (slope, log10 SCA)). Cells of units without a table,
    outside it or in a table cell ``flagged[code]`` (see
    :mod:`slopescreen.maps.region.intensity_tables`) are marked in ``exact`` and left."""
    n_s, n_t = tables.shape[1], tables.shape[2]
    for i in numba.prange(slope_deg.size):
        j = codes[i]
        x = (slope_deg[i] - origin[0]) / step[0]
        y = (log_sca[i] - origin[1]) / step[1]
        if not (j < has.size and has[j] and 0.0 <= x < n_t - 1 and 0.0 <= y < n_s - 1):
            exact[i] = True
            continue
        c, r = int(x), int(y)
        if flagged[j, r, c]:
            exact[i] = True
            continue
        a, b = tables[j, r, c], tables[j, r, c + 1]
        d, e = tables[j, r + 1, c], tables[j, r + 1, c + 1]
        if a < 0.0:  # an unflagged table cell of a code: all its corners hold it
            out[i] = a
            continue
        fx, fy = x - c, y - r
        out[i] = (a * (1 - fx) + b * fx) * (1 - fy) + (d * (1 - fx) + e * fx) * fy
