"""Flow routing on a DEM: depression filling, D-infinity directions, contributing area.

1. Depressions are filled by Priority-Flood+epsilon (Barnes, Lehman & Mulla 2014,
   Algorithm 3): every cell on the edge of the data is an outlet; each pit and flat is
   raised to a surface with a tiny strict gradient towards its spill point (one float64
   step, ``nextafter``, per cell), so water leaves every cell. The priority queue is
   bucketed by elevation (a binary heap for the current bucket only; see ``_fill``). The
   filled surface is used for routing only; slopes come from the original DEM.
2. Flow directions by D-infinity (Tarboton 1997): the steepest of the eight triangular
   facets around each cell, flow split between the facet's two neighbours in proportion to
   the angles. Cells are rectangles whose ground side lengths and area come from a lattice
   of ground lengths (``slopescreen.maps.ground``; bilinear between nodes), so any CRS
   routes in ground metres. A cell whose facets all lack data falls back to its steepest
   lower neighbour (D8).
3. Contributing area is accumulated in topological order (in-degree queue), each cell
   contributing its own ground area; a flag (cells next to no data or the edge where
   ground beyond would drain in) can be carried downstream with it. Specific catchment
   area a/b = contributing area / contour width b. The width is the cell area over the
   mean step the flow takes along its own direction,
   b = dx dy / (d1 cos(r) + (r / r_max) d2 sin(r)) for facet angle r, which is the cell
   size for flow along a grid axis and d / sqrt(2) for diagonal flow. With it, a plane
   inclined along a grid axis or a diagonal gives a/b = the upslope flow-path length to
   the cell's lower edge (by continuity). On oblique planes D-infinity's angle-proportional
   split disperses the flow: at 15 (30) degrees from an axis a/b is within -20% to +2%
   (-10% to +4.5%) of the flow length for cells fed from the edge the flow crosses nearly
   square-on, typically +2% (+4%), and 12-19% (7-10%) low for cells fed from the edge it
   crosses obliquely (measured, tests/test_routing.py). Geographic grids use the ground
   length of each row along both axes (no mid-latitude spacing).

Memory: the routing holds the whole grid. With the DEM filled in place it needs, at its
peak, the float64 surface (8 bytes per cell), two masks (2), heap keys and indices, the
pit queue and the bucket links (20) and the bucket heads (1) while filling (31 in all);
two int32 receivers, a float32 share and width (16) and the float64 area with an int32
in-degree and queue (16) while accumulating: about 35 bytes per cell at the peak, the DEM
included, 36 with the one-byte cut-off flag (tests/benchmarks/bench_routing.py measures
the bytes per cell above the float64 DEM). All work arrays come from an ``allocate``
function, so grids larger than memory can use memory-mapped files.

References
----------
Barnes, R., Lehman, C. & Mulla, D. (2014). Priority-flood: an optimal depression-filling
and watershed-labeling algorithm for digital elevation models. Computers & Geosciences 62,
117-127.
Tarboton, D.G. (1997). A new method for the determination of flow directions and upslope
areas in grid digital elevation models. Water Resources Research 33(2), 309-319.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from numba import njit, prange

# neighbour offsets, counter-clockwise from east: E, NE, N, NW, W, SW, S, SE
_DR = np.array([0, -1, -1, -1, 0, 1, 1, 1], dtype=np.int64)
_DC = np.array([1, 1, 0, -1, -1, -1, 0, 1], dtype=np.int64)
# Tarboton's facets: (cardinal neighbour, diagonal neighbour) as indices into _DR/_DC
_F1 = np.array([0, 2, 2, 4, 4, 6, 6, 0], dtype=np.int64)
_F2 = np.array([1, 1, 3, 3, 5, 5, 7, 7], dtype=np.int64)


@njit(cache=True)
def _heap_push(keys, ids, size, key, ident):
    i = size
    keys[i] = key
    ids[i] = ident
    while i > 0:
        parent = (i - 1) >> 1
        if keys[parent] < keys[i] or (keys[parent] == keys[i] and ids[parent] < ids[i]):
            break
        keys[parent], keys[i] = keys[i], keys[parent]
        ids[parent], ids[i] = ids[i], ids[parent]
        i = parent
    return size + 1


@njit(cache=True)
def _heap_pop(keys, ids, size):
    top = ids[0]
    size -= 1
    keys[0] = keys[size]
    ids[0] = ids[size]
    i = 0
    while True:
        left = 2 * i + 1
        if left >= size:
            break
        child = left
        right = left + 1
        if right < size and (
            keys[right] < keys[left] or (keys[right] == keys[left] and ids[right] < ids[left])
        ):
            child = right
        if keys[i] < keys[child] or (keys[i] == keys[child] and ids[i] < ids[child]):
            break
        keys[child], keys[i] = keys[i], keys[child]
        ids[child], ids[i] = ids[i], ids[child]
        i = child
    return top, size


@njit(cache=True)
def _bucket(key, lo, scale, n_buckets):
    b = int((key - lo) * scale)
    return min(max(b, 0), n_buckets - 1)


@njit(cache=True)
def _fill(dem, valid, epsilon, closed, keys, ids, pit, link, heads):
    """Fill ``dem`` in place (each cell is read before it is raised) and return it; the
    work arrays (closed: rows x cols, keys/ids/pit/link: one per cell, heads: one per
    bucket) come from the caller.

    The priority queue is bucketed by elevation: ``heads.size`` equal buckets between the
    lowest and highest data; a cell pushed above the current bucket waits in its bucket's
    linked list (``link``, O(1)), and only the current bucket is a binary heap ordered by
    (elevation, cell index). Every push is at or above the current bucket (a raised cell
    goes to the pit queue instead), so cells come out in the same (elevation, index) order
    as from one global heap: the same filled surface, bit for bit (tested)."""
    rows, cols = dem.shape
    filled = dem
    n_buckets = heads.size
    lo, hi = np.inf, -np.inf
    for r in range(rows):
        for c in range(cols):
            closed[r, c] = not valid[r, c]
            if valid[r, c]:
                lo = min(lo, dem[r, c])
                hi = max(hi, dem[r, c])
    if not hi > lo:
        hi = lo + 1.0
    scale = n_buckets / (hi - lo) * (1.0 - 1e-12)
    heads[:] = -1
    current = 0
    size = 0
    for r in range(rows):
        for c in range(cols):
            if not valid[r, c]:
                continue
            edge = r == 0 or c == 0 or r == rows - 1 or c == cols - 1
            if not edge:
                for k in range(8):
                    if not valid[r + _DR[k], c + _DC[k]]:
                        edge = True
                        break
            if edge:
                closed[r, c] = True
                cell = r * cols + c
                b = _bucket(dem[r, c], lo, scale, n_buckets)
                if b == current:
                    size = _heap_push(keys, ids, size, dem[r, c], cell)
                else:
                    link[cell] = heads[b]
                    heads[b] = cell
    pit_head = 0
    pit_tail = 0
    while True:
        if pit_head < pit_tail:
            cell = pit[pit_head]
            pit_head += 1
        elif size > 0:
            cell, size = _heap_pop(keys, ids, size)
        else:  # the next bucket holding cells becomes the heap
            current += 1
            while current < n_buckets and heads[current] == -1:
                current += 1
            if current >= n_buckets:
                break
            waiting = heads[current]
            heads[current] = -1
            while waiting != -1:
                size = _heap_push(keys, ids, size, dem.flat[waiting], waiting)
                waiting = link[waiting]
            continue
        r = cell // cols
        c = cell % cols
        here = filled[r, c]
        step = np.nextafter(here, np.inf) if epsilon else here
        for k in range(8):
            rr = r + _DR[k]
            cc = c + _DC[k]
            if rr < 0 or cc < 0 or rr >= rows or cc >= cols or closed[rr, cc]:
                continue
            closed[rr, cc] = True
            if dem[rr, cc] <= step:
                filled[rr, cc] = step
                pit[pit_tail] = rr * cols + cc
                pit_tail += 1
            else:
                nb = rr * cols + cc
                b = _bucket(dem[rr, cc], lo, scale, n_buckets)
                if b <= current:
                    size = _heap_push(keys, ids, size, dem[rr, cc], nb)
                else:
                    link[nb] = heads[b]
                    heads[b] = nb
    return filled


BUCKET_CELLS = 4  # cells per bucket of the fill's queue, on average (1 byte a cell)


def fill_depressions(elevation_m: np.ndarray, *, epsilon: bool = True) -> np.ndarray:
    """Priority-Flood depression filling (Barnes et al. 2014); NaN cells are no data.

    With ``epsilon`` (default) pits and flats get a minimal strict gradient so every cell
    drains (Algorithm 3); without it they are filled level (Algorithm 2 result).
    """
    dem = np.ascontiguousarray(elevation_m, dtype=np.float64)
    valid = np.isfinite(dem)
    n = dem.size
    filled = _fill(
        np.where(valid, dem, 0.0),
        valid,
        epsilon,
        np.empty(dem.shape, np.bool_),
        np.empty(n, np.float64),
        np.empty(n, np.int32),
        np.empty(n, np.int32),
        np.empty(n, np.int32),
        np.empty(max(1, n // BUCKET_CELLS), np.int32),
    )
    filled[~valid] = np.nan
    return filled


@njit(cache=True)
def _at(values, step_r, step_c, last_r, last_c, r, c):
    """Bilinear value at cell (r, c) of a lattice whose node (i, j) stands at cell
    (min(i step_r, last_r), min(j step_c, last_c))."""
    nr, nc = values.shape
    i = min(r // step_r, nr - 2)
    j = min(c // step_c, nc - 2)
    r0 = i * step_r
    c0 = j * step_c
    r1 = min(r0 + step_r, last_r)
    c1 = min(c0 + step_c, last_c)
    tr = (r - r0) / (r1 - r0)
    tc = (c - c0) / (c1 - c0)
    top = values[i, j] * (1.0 - tc) + values[i, j + 1] * tc
    bottom = values[i + 1, j] * (1.0 - tc) + values[i + 1, j + 1] * tc
    return top * (1.0 - tr) + bottom * tr


@njit(cache=True, parallel=True)
def _dinf(filled, valid, lattice, recv1, recv2, share1, width):
    rows, cols = filled.shape
    step_r, step_c, last_r, last_c, along_cols, along_rows, _ = lattice
    for r in prange(rows):
        for c in range(cols):
            dx = _at(along_cols, step_r, step_c, last_r, last_c, r, c)
            dy = _at(along_rows, step_r, step_c, last_r, last_c, r, c)
            diag = math.hypot(dx, dy)
            cell = r * cols + c
            width[cell] = 0.5 * (dx + dy)
            recv1[cell] = -1
            recv2[cell] = -1
            share1[cell] = 0.0
            if not valid[r, c]:
                continue
            e0 = filled[r, c]
            best = 0.0
            best_f = -1
            best_s1 = 0.0
            best_s2 = 0.0
            for f in range(8):
                k1 = _F1[f]
                k2 = _F2[f]
                r1 = r + _DR[k1]
                c1 = c + _DC[k1]
                r2 = r + _DR[k2]
                c2 = c + _DC[k2]
                if r1 < 0 or c1 < 0 or r1 >= rows or c1 >= cols or not valid[r1, c1]:
                    continue
                if r2 < 0 or c2 < 0 or r2 >= rows or c2 >= cols or not valid[r2, c2]:
                    continue
                along_x = _DR[k1] == 0
                d1 = dx if along_x else dy
                d2 = dy if along_x else dx
                s1 = (e0 - filled[r1, c1]) / d1
                s2 = (filled[r1, c1] - filled[r2, c2]) / d2
                # steepest descent within the facet (Tarboton 1997), angles only for the winner
                if s2 <= 0.0:
                    s = s1
                elif s2 * d1 >= s1 * d2:
                    s = (e0 - filled[r2, c2]) / diag
                else:
                    s = math.sqrt(s1 * s1 + s2 * s2)
                if s > best:
                    best = s
                    best_f = f
                    best_s1 = s1
                    best_s2 = s2
            if best_f >= 0:
                k1 = _F1[best_f]
                k2 = _F2[best_f]
                along_x = _DR[k1] == 0
                d1 = dx if along_x else dy
                d2 = dy if along_x else dx
                rmax = math.atan2(d2, d1)
                ang = min(max(math.atan2(best_s2, best_s1), 0.0), rmax)
                p1 = (rmax - ang) / rmax
                to1 = (r + _DR[k1]) * cols + c + _DC[k1]
                to2 = (r + _DR[k2]) * cols + c + _DC[k2]
                if p1 >= 1.0 - 1e-12:
                    recv1[cell] = to1
                    share1[cell] = 1.0
                elif p1 <= 1e-12:
                    recv1[cell] = to2
                    share1[cell] = 1.0
                else:
                    recv1[cell] = to1
                    recv2[cell] = to2
                    share1[cell] = p1
                # contour width: cell area over the mean step along the flow
                step = d1 * math.cos(ang) + (ang / rmax) * d2 * math.sin(ang)
                width[cell] = dx * dy / step
                continue
            # D8 fallback: steepest strictly lower valid neighbour
            steepest = 0.0
            for k in range(8):
                rr = r + _DR[k]
                cc = c + _DC[k]
                if rr < 0 or cc < 0 or rr >= rows or cc >= cols or not valid[rr, cc]:
                    continue
                dist = math.hypot(dx * _DC[k], dy * _DR[k])
                s = (e0 - filled[rr, cc]) / dist
                if s > steepest:
                    steepest = s
                    recv1[cell] = rr * cols + cc
                    share1[cell] = 1.0
                    width[cell] = dx * dy / dist
    return recv1, recv2, share1, width


@njit(cache=True)
def _accumulate(recv1, recv2, share1, valid, lattice, indegree, area, queue, flags):
    """Contributing area in topological order; ``flags`` (one per cell, or empty) is
    carried downstream: a cell receiving any share from a flagged cell is flagged."""
    n = recv1.size
    cols = valid.shape[1]
    step_r, step_c, last_r, last_c, _, _, cell_area = lattice
    carry = flags.size == n
    for i in range(n):
        indegree[i] = 0
    for i in range(n):
        if recv1[i] >= 0:
            indegree[recv1[i]] += 1
        if recv2[i] >= 0:
            indegree[recv2[i]] += 1
    for i in range(n):  # each cell's own area to start with
        r = i // cols
        c = i - r * cols
        area[i] = _at(cell_area, step_r, step_c, last_r, last_c, r, c) if valid[r, c] else 0.0
    tail = 0
    for i in range(n):
        if indegree[i] == 0:
            queue[tail] = i
            tail += 1
    head = 0
    while head < tail:
        i = queue[head]
        head += 1
        a = area[i]
        j = recv1[i]
        if j >= 0:
            area[j] += a * share1[i]
            if carry and flags[i]:
                flags[j] = 1
            indegree[j] -= 1
            if indegree[j] == 0:
                queue[tail] = j
                tail += 1
        j = recv2[i]
        if j >= 0:
            area[j] += a * (1.0 - share1[i])
            if carry and flags[i]:
                flags[j] = 1
            indegree[j] -= 1
            if indegree[j] == 0:
                queue[tail] = j
                tail += 1
    return area


def uniform_lattice(dx_m: float | np.ndarray, dy_m: float, rows: int, cols: int) -> tuple:
    """The routing lattice of a grid with one east-west spacing per row (or one for all)
    and one north-south spacing: nodes on every row, at the first and last column."""
    dx_rows = np.ascontiguousarray(np.broadcast_to(np.asarray(dx_m, np.float64), (rows,)))
    du = np.repeat(dx_rows[:, None], 2, axis=1)
    dv = np.full((rows, 2), float(dy_m))
    return (np.int64(1), np.int64(max(cols - 1, 1)), np.int64(rows - 1),
            np.int64(max(cols - 1, 1)), du, dv, du * dv)  # fmt: skip


def specific_catchment_area(
    elevation_m: np.ndarray,
    dx_m: float | np.ndarray,
    dy_m: float,
    *,
    overwrite: bool = False,
    allocate: Callable[[tuple[int, ...], type], np.ndarray] | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Contributing area (m2) and specific catchment area a/b (m) by D-infinity, on a grid
    with one east-west spacing per row (or one for all) and one north-south spacing.

    Parameters
    ----------
    elevation_m : 2-D DEM, NaN for no data.
    dx_m : east-west spacing, m: scalar or one value per row.
    dy_m : north-south spacing, m.
    overwrite : fill ``elevation_m`` in place (a float64 array) to save a copy of the grid.
    allocate : makes the work arrays, ``allocate(shape, dtype)``; default ``numpy.empty``.
        Pass one that returns ``numpy.memmap`` arrays to route grids larger than memory.

    Returns
    -------
    (area_m2 float64, sca_m float32), NaN where there is no data; both from ``allocate``.
    """
    rows, cols = np.shape(elevation_m)
    area, sca, _ = route(
        elevation_m,
        uniform_lattice(dx_m, dy_m, rows, cols),
        overwrite=overwrite,
        allocate=allocate,
    )
    return area, sca


def route(
    elevation_m: np.ndarray,
    lattice: tuple,
    sources: np.ndarray | None = None,
    *,
    overwrite: bool = False,
    allocate: Callable[[tuple[int, ...], type], np.ndarray] | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Contributing area (m2), specific catchment area (m) and, with ``sources``, the cells
    downstream of them, on a grid measured by a lattice of ground lengths.

    ``lattice`` is (row step, column step, last row, last column, ground length of a column
    step, of a row step, ground cell area), the last three on lattice nodes (see
    ``slopescreen.maps.ground.Ground.lattice``); values between nodes are bilinear. Cells
    are treated as rectangles with those axis lengths and that area. ``sources`` (uint8,
    one per cell) marks cells whose flag is carried downstream along the D-infinity
    shares: it is updated in place and returned (1 = receives flow from a source).
    """
    new = allocate or (lambda shape, dtype: np.empty(shape, dtype))
    dem = np.asarray(elevation_m, dtype=np.float64)
    rows, cols = dem.shape
    n = rows * cols
    valid = new((rows, cols), np.bool_)
    np.isfinite(dem, out=valid)
    if overwrite and dem is elevation_m and dem.flags.c_contiguous:
        work = dem
    else:
        work = new((rows, cols), np.float64)
        work[...] = dem
    np.copyto(work, 0.0, where=~valid)
    closed = new((rows, cols), np.bool_)
    filled = _fill(
        work,
        valid,
        True,
        closed,
        new((n,), np.float64),
        new((n,), np.int32),
        new((n,), np.int32),
        new((n,), np.int32),
        new((max(1, n // BUCKET_CELLS),), np.int32),
    )
    del closed
    recv1, recv2 = new((n,), np.int32), new((n,), np.int32)
    share1, width = new((n,), np.float32), new((n,), np.float32)
    _dinf(filled, valid, lattice, recv1, recv2, share1, width)
    del filled, work
    area = new((n,), np.float64)
    flags = np.zeros(0, np.uint8) if sources is None else sources.reshape(-1)
    _accumulate(
        recv1,
        recv2,
        share1,
        valid,
        lattice,
        new((n,), np.int32),
        area,
        new((n,), np.int32),
        flags,
    )
    del recv1, recv2, share1
    area = area.reshape(rows, cols)
    np.copyto(area, np.nan, where=~valid)
    sca = new((rows, cols), np.float32)
    np.divide(area, width.reshape(rows, cols), out=sca, casting="same_kind")
    return area, sca, None if sources is None else flags.reshape(rows, cols)
