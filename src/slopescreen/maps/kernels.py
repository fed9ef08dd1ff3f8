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

from slopescreen.hydrology import wetness_ratio
from slopescreen.stability import resisting_stress, slip_plane_terms

_terms = numba.njit(inline="always")(slip_plane_terms)
_resisting = numba.njit(inline="always")(resisting_stress)
_ratio = numba.njit(inline="always")(wetness_ratio)


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
    where given, else K z cos(beta); flat cells saturate when R > 0."""
    r = recharge_mm_day / 1000.0
    for i in numba.prange(tan_slope.size):
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
