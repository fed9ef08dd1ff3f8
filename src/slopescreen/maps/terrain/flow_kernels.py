"""Compiled kernels of flow routing on a tile framed by one ring of its neighbours' cells.

Every per-cell array of a tile is (h + 2, w + 2) where the kernel needs the neighbours
(elevation, data mask, flat steps, labels) and (h, w) otherwise. The ring holds the cells
of the neighbouring tiles, or no data beyond the grid; the whole grid is the case of one
tile with a ring of no data. Receivers are indices into the framed tile, so flow that
leaves a tile is addressed to a ring cell. See ``slopescreen.maps.terrain.routing`` for the
method and ``slopescreen.maps.terrain.tiled_routing`` for how tiles are joined.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

# neighbour offsets, counter-clockwise from east: E, NE, N, NW, W, SW, S, SE
DR = np.array([0, -1, -1, -1, 0, 1, 1, 1], dtype=np.int64)
DC = np.array([1, 1, 0, -1, -1, -1, 0, 1], dtype=np.int64)
# Tarboton's facets: (cardinal neighbour, diagonal neighbour) as indices into DR/DC
_F1 = np.array([0, 2, 2, 4, 4, 6, 6, 0], dtype=np.int64)
_F2 = np.array([1, 1, 3, 3, 5, 5, 7, 7], dtype=np.int64)
NO_STEPS = np.iinfo(np.int32).max  # flat steps not (yet) known
_GOLDEN = 2654435761  # multiplicative hashing (Knuth)


@njit(cache=True)
def heap_push(keys, ids, size, key, ident):
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
def heap_pop(keys, ids, size):
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
def _table_put(table_keys, table_values, key, weight):
    """Keep the lowest weight per key in an open-addressing table (float64 keys, exact
    below 2^53; -1: empty); True if the key is new."""
    mask = table_keys.size - 1
    slot = (int(key) * _GOLDEN) & mask
    while True:
        if table_keys[slot] == -1.0:
            table_keys[slot] = key
            table_values[slot] = weight
            return True
        if table_keys[slot] == key:
            table_values[slot] = min(table_values[slot], weight)
            return False
        slot = (slot + 1) & mask


@njit(cache=True)
def _meet(table, used, a, b, n_labels, za, zb):
    """Note that labels a and b meet at spill elevation max(za, zb) in ``table`` (a list:
    keys a * labels + b with a < b, weights), which doubles when half full (kept in a list
    so the flood's own loop holds no array that can be replaced). Returns the pairs held."""
    if _table_put(table[0], table[1], float(min(a, b) * n_labels + max(a, b)), max(za, zb)):
        used += 1
        if 2 * used > table[0].size:
            keys = np.full(2 * table[0].size, -1.0)
            values = np.empty(keys.size)
            for i in range(table[0].size):
                if table[0][i] != -1.0:
                    _table_put(keys, values, table[0][i], table[1][i])
            table[0] = keys
            table[1] = values
    return used


@njit(cache=True, nogil=True)
def fill_tile(z, valid, closed, keys, ids, pit, link, heads):
    """Priority-Flood+epsilon (Barnes, Lehman & Mulla 2014, Algorithm 3) of a framed tile's
    inner cells, in place: a raised cell is one float64 step above the cell it was reached
    from. The queue starts from the inner data cells on the tile's border or next to no
    data.

    The queue is bucketed by elevation: ``heads.size`` equal buckets between the lowest and
    highest data; a cell pushed above the current bucket waits in its bucket's linked list
    (``link``, O(1)), only the current bucket is a binary heap ordered by (elevation, cell
    index). Every push is at or above the current bucket (a raised cell goes to the pit
    queue instead), so cells come out in the same order as from one global heap."""
    rows, cols = z.shape
    n_buckets = heads.size
    lo, hi = np.inf, -np.inf
    for r in range(rows):
        for c in range(cols):
            inner = 0 < r < rows - 1 and 0 < c < cols - 1
            closed[r, c] = not (inner and valid[r, c])
            if inner and valid[r, c]:
                lo = min(lo, z[r, c])
                hi = max(hi, z[r, c])
    if not hi > lo:
        hi = lo + 1.0
    scale = n_buckets / (hi - lo) * (1.0 - 1e-12)
    heads[:] = -1
    current = 0
    size = 0
    for r in range(1, rows - 1):
        for c in range(1, cols - 1):
            if not valid[r, c]:
                continue
            outlet = r == 1 or c == 1 or r == rows - 2 or c == cols - 2
            for k in range(8):
                outlet = outlet or not valid[r + DR[k], c + DC[k]]
            if not outlet:
                continue
            closed[r, c] = True
            cell = r * cols + c
            b = _bucket(z[r, c], lo, scale, n_buckets)
            if b == current:
                size = heap_push(keys, ids, size, z[r, c], cell)
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
            cell, size = heap_pop(keys, ids, size)
        else:  # the next bucket holding cells becomes the heap
            current += 1
            while current < n_buckets and heads[current] == -1:
                current += 1
            if current >= n_buckets:
                break
            waiting = heads[current]
            heads[current] = -1
            while waiting != -1:
                size = heap_push(keys, ids, size, z.flat[waiting], waiting)
                waiting = link[waiting]
            continue
        r = cell // cols
        c = cell % cols
        step = np.nextafter(z[r, c], np.inf)
        for k in range(8):
            rr = r + DR[k]
            cc = c + DC[k]
            if closed[rr, cc]:
                continue
            closed[rr, cc] = True
            if z[rr, cc] <= step:
                z[rr, cc] = step
                pit[pit_tail] = rr * cols + cc
                pit_tail += 1
            else:
                nb = rr * cols + cc
                b = _bucket(z[rr, cc], lo, scale, n_buckets)
                if b <= current:
                    size = heap_push(keys, ids, size, z[rr, cc], nb)
                else:
                    link[nb] = heads[b]
                    heads[b] = nb


@njit(cache=True)
def _lowest_row(z, valid, code, r):
    """``lowest_neighbours`` for framed row r."""
    rows, cols = z.shape
    for c in range(cols):
        if not (0 < r < rows - 1 and 0 < c < cols - 1 and valid[r, c]):
            code[r, c] = -3
            continue
        lowest = z[r, c]
        to = -2
        for k in range(8):
            rr = r + DR[k]
            cc = c + DC[k]
            if not valid[rr, cc]:
                to = -1
                break
            inner = 0 < rr < rows - 1 and 0 < cc < cols - 1
            if inner and z[rr, cc] < lowest:
                lowest = z[rr, cc]
                to = rr * cols + cc
        code[r, c] = to


@njit(cache=True, parallel=True)
def lowest_neighbours(z, valid, code):
    """For every inner data cell of a framed tile, into ``code`` (framed, int32): the index
    of its lowest strictly lower inner neighbour (the first in ``DR``/``DC`` order on
    ties), -1 for a cell next to no data (an outlet) and -2 for one with no lower inner
    neighbour (a pit, a flat, or a cell that descends into the ring); -3 at no data and
    on the ring. Rows in parallel."""
    for r in prange(z.shape[0]):
        _lowest_row(z, valid, code, r)


@njit(cache=True, nogil=True)
def lowest_neighbours_one_thread(z, valid, code):
    """``lowest_neighbours`` on the calling thread, without the GIL (tiles run side by
    side: a parallel kernel called from several threads at once is safe only with some of
    numba's threading layers)."""
    for r in range(z.shape[0]):
        _lowest_row(z, valid, code, r)


@njit(cache=True, nogil=True)
def basin_pairs(z, code):
    """Basins of steepest descent and the lowest pass between each two that touch, on a
    framed tile coded by ``lowest_neighbours`` (Cordonnier, Bovy & Braun 2019).

    Every cell follows its lowest lower neighbours down to a cell without one: basin 0 if
    that cell is an outlet, else the basin of that pit (1, 2, ...). ``code`` is rewritten
    in place to -4 - basin (no data stays -3). Within a basin every cell reaches every
    other below the higher of the two (through the pit), so the level fill of a cell is
    max(its elevation, the minimax pass level of its basin to basin 0) over the graph of
    passes: two touching cells a, b of different basins pass at max(z_a, z_b), the lowest
    per pair kept. Returns (number of basins, table keys a * basins + b with a < b or -1,
    table weights)."""
    rows, cols = z.shape
    flat = code.ravel()
    n_basins = 1
    for i in range(flat.size):
        if flat[i] == -1:
            flat[i] = -4
        elif flat[i] == -2:
            flat[i] = -4 - n_basins
            n_basins += 1
    for i in range(flat.size):  # follow each path down to a coded cell, then code it
        j = i
        while flat[j] >= 0:
            j = flat[j]
        basin = flat[j]
        j = i
        while flat[j] >= 0:
            nxt = flat[j]
            flat[j] = basin
            j = nxt
    capacity = 64
    while capacity < 4 * n_basins:
        capacity *= 2
    table = [np.full(capacity, -1.0), np.empty(capacity)]
    used = 0
    for r in range(1, rows - 1):
        for c in range(1, cols - 1):
            a = -4 - code[r, c]
            if a < 0:
                continue
            for k in range(5, 9):  # SW, S, SE, E: each touching pair once
                b = -4 - code[r + DR[k % 8], c + DC[k % 8]]
                if b >= 0 and b != a and (a > 0 or b > 0):
                    zb = z[r + DR[k % 8], c + DC[k % 8]]
                    used = _meet(table, used, a, b, n_basins, z[r, c], zb)
    return n_basins, table[0], table[1]


@njit(cache=True, nogil=True)
def raise_to_levels(z, labels, level):
    """z = max(z, level of the cell's label) where the label is >= 0 (-1: no data), in
    place, on the calling thread (z and labels: 2-D, of one shape)."""
    rows, cols = z.shape
    for r in range(rows):
        for c in range(cols):
            if labels[r, c] >= 0:
                z[r, c] = max(z[r, c], level[labels[r, c]])


@njit(cache=True)
def spill_levels(n_nodes, start, neighbour, weight):
    """Lowest level at which each label drains to label 0 (level -inf): the minimax path
    over the spill graph (CSR: ``start``, ``neighbour``, ``weight``), by a Dijkstra-like
    Priority-Flood over labels (Barnes 2016). Unreached labels stay +inf."""
    level = np.full(n_nodes, np.inf)
    done = np.zeros(n_nodes, np.bool_)
    keys = np.empty(neighbour.size + 1, np.float64)
    ids = np.empty(neighbour.size + 1, np.int64)
    level[0] = -np.inf
    size = heap_push(keys, ids, 0, -np.inf, 0)
    while size > 0:
        node, size = heap_pop(keys, ids, size)
        if done[node]:
            continue
        done[node] = True
        for e in range(start[node], start[node + 1]):
            other = neighbour[e]
            candidate = max(level[node], weight[e])
            if candidate < level[other]:
                level[other] = candidate
                size = heap_push(keys, ids, size, candidate, other)
    return level


@njit(cache=True, nogil=True)
def flat_steps(z, valid, steps, queue, fresh):
    """Steps to drain across flats (8-connected), on a framed tile of a depression-free
    surface: 0 at a cell with a lower neighbour or next to no data; 1 + the least steps of
    its equal neighbours elsewhere (breadth-first, the ring's known steps as sources in
    order of their steps). Inner cells of ``steps`` are written: from scratch when
    ``fresh``, else lowered where the ring now gives fewer steps (the inner steps are
    upper bounds: a unit-weight Dijkstra from the ring). Only cells with steps 0 beside a
    flat cell start the search, so its work is on the flats. Returns how many cells were
    queued."""
    rows, cols = z.shape
    inner = rows - 1 if fresh else 1
    for r in range(1, inner):
        for c in range(1, cols - 1):
            steps[r, c] = NO_STEPS
            if valid[r, c]:
                for k in range(8):
                    rr = r + DR[k]
                    cc = c + DC[k]
                    if not valid[rr, cc] or z[rr, cc] < z[r, c]:
                        steps[r, c] = 0
                        break
    tail = 0  # sources: cells with steps 0 beside a flat cell at their level, queued once
    for r in range(1, inner):
        for c in range(1, cols - 1):
            if steps[r, c] != NO_STEPS or not valid[r, c]:
                continue
            for k in range(8):
                rr = r + DR[k]
                cc = c + DC[k]
                if 0 < rr < rows - 1 and 0 < cc < cols - 1 and steps[rr, cc] == 0:
                    if z[rr, cc] == z[r, c]:
                        steps[rr, cc] = -1  # marks it queued; 0 again below
                        queue[tail] = rr * cols + cc
                        tail += 1
    sources = tail
    ring = np.empty(2 * (rows + cols), np.int64)
    n_ring = 0
    for r in range(rows):
        for c in range(cols):
            if (r == 0 or c == 0 or r == rows - 1 or c == cols - 1) and steps[r, c] < NO_STEPS:
                ring[n_ring] = r * cols + c
                n_ring += 1
    order = np.argsort(steps.ravel()[ring[:n_ring]], kind="mergesort")
    head = 0
    taken = 0  # ring cells taken so far
    while head < tail or taken < n_ring:
        if taken < n_ring and (
            head >= tail or steps.flat[ring[order[taken]]] <= steps.flat[queue[head]]
        ):
            cell = ring[order[taken]]
            taken += 1
        else:
            cell = queue[head]
            head += 1
        r = cell // cols
        c = cell % cols
        nxt = max(steps[r, c], 0) + 1
        for k in range(8):
            rr = r + DR[k]
            cc = c + DC[k]
            if rr < 1 or cc < 1 or rr > rows - 2 or cc > cols - 2 or not valid[rr, cc]:
                continue  # ring cells (and beyond, from a ring cell) are not ours
            if z[rr, cc] == z[r, c] and steps[rr, cc] > nxt:
                steps[rr, cc] = nxt
                queue[tail] = rr * cols + cc
                tail += 1
    for i in range(sources):
        steps.flat[queue[i]] = 0
    return tail


@njit(cache=True)
def _node_row(values, step_r, last_r, r, out):
    """Values of a lattice at every node column on grid row r (linear between the node
    rows around it; node row i stands at grid row min(i step_r, last_r))."""
    i = min(r // step_r, values.shape[0] - 2)
    r0 = i * step_r
    t = (r - r0) / (min(r0 + step_r, last_r) - r0)
    for j in range(values.shape[1]):
        out[j] = values[i, j] + (values[i + 1, j] - values[i, j]) * t
    return out


@njit(cache=True)
def _along(row, step_c, last_c, c):
    """Value at grid column c of a row of node values (``_node_row``), linear between
    nodes: with ``_node_row``, bilinear on the lattice."""
    j = min(c // step_c, row.size - 2)
    c0 = j * step_c
    return row[j] + (row[j + 1] - row[j]) * ((c - c0) / (min(c0 + step_c, last_c) - c0))


@njit(cache=True)
def _geometry(dx, dy):
    """What the facets of a dx x dy cell need: (dx, dy, 1/dx, 1/dy, diagonal, the facet
    angle atan(d2/d1) with the first side along x, and along y)."""
    return dx, dy, 1.0 / dx, 1.0 / dy, math.hypot(dx, dy), math.atan2(dy, dx), math.atan2(dx, dy)


@njit(cache=True)
def _steepest(e, ok, g):
    """D-infinity on a 3x3 stencil (e: heights of the centre and the 8 neighbours, ok:
    which neighbours count; g: the cell's ``_geometry``): (first neighbour, second
    neighbour or -1, share of the first, contour width), or (-1, -1, 0, 0) where nothing
    is lower. A cell whose facets all lack a neighbour falls back to its steepest lower
    neighbour (D8). Facets are compared by squared slope (no root), and skipped where
    neither neighbour is lower."""
    dx, dy, inv_dx, inv_dy, diag, angle_x, angle_y = g
    e0 = e[8]
    best = 0.0
    best_f = -1
    best_s1 = 0.0
    best_s2 = 0.0
    for f in range(8):
        k1 = _F1[f]
        k2 = _F2[f]
        if not (ok[k1] and ok[k2]) or (e[k1] >= e0 and e[k2] >= e0):
            continue
        along_x = DR[k1] == 0
        s1 = (e0 - e[k1]) * (inv_dx if along_x else inv_dy)
        s2 = (e[k1] - e[k2]) * (inv_dy if along_x else inv_dx)
        # steepest descent within the facet (Tarboton 1997), angles only for the winner
        if s2 <= 0.0:
            squared = s1 * s1 if s1 > 0.0 else 0.0
        elif s2 * (dx if along_x else dy) >= s1 * (dy if along_x else dx):
            s = (e0 - e[k2]) / diag
            squared = s * s if s > 0.0 else 0.0
        else:
            squared = s1 * s1 + s2 * s2
        if squared > best:
            best = squared
            best_f = f
            best_s1 = s1
            best_s2 = s2
    if best_f >= 0:
        k1 = _F1[best_f]
        k2 = _F2[best_f]
        along_x = DR[k1] == 0
        d1 = dx if along_x else dy
        d2 = dy if along_x else dx
        rmax = angle_x if along_x else angle_y
        if best_s2 <= 0.0:  # along the first side
            ang, cos, sin = 0.0, 1.0, 0.0
        elif best_s2 * d1 >= best_s1 * d2:  # along the diagonal
            ang, cos, sin = rmax, d1 / diag, d2 / diag
        else:  # inside: cos and sin of atan2(s2, s1) without evaluating them
            ang = min(math.atan2(best_s2, best_s1), rmax)
            h = math.sqrt(best_s1 * best_s1 + best_s2 * best_s2)
            cos, sin = best_s1 / h, best_s2 / h
        p1 = (rmax - ang) / rmax
        # contour width: cell area over the mean step along the flow
        width = dx * dy / (d1 * cos + (ang / rmax) * d2 * sin)
        if p1 >= 1.0 - 1e-12:
            return k1, -1, 1.0, width
        if p1 <= 1e-12:
            return k2, -1, 1.0, width
        return k1, k2, p1, width
    steepest = 0.0
    to = -1
    width = 0.0
    for k in range(8):
        if not ok[k]:
            continue
        dist = diag if DR[k] != 0 and DC[k] != 0 else (dx if DR[k] == 0 else dy)
        s = (e0 - e[k]) / dist
        if s > steepest:
            steepest = s
            to = k
            width = dx * dy / dist
    return to, -1, 1.0, width


@njit(cache=True)
def _receiver(r, c, rows, cols):
    """Code of framed cell (r, c) as a receiver: its inner index, or -2 - its position in
    the ring's vector."""
    if r == 0 or c == 0 or r == rows - 1 or c == cols - 1:
        return -2 - ring_index(r, c, rows, cols)
    return (r - 1) * (cols - 2) + c - 1


@njit(cache=True)
def _direction_row(z, valid, steps, lattice, row0, col0, r, flow, area):
    """``directions`` for framed row r."""
    rows, cols = z.shape
    w = cols - 2
    recv1, recv2, share1, width = flow
    step_r, step_c, last_r, last_c, along_cols, along_rows, cell_area = lattice
    gr = row0 + r - 1
    du = _node_row(along_cols, step_r, last_r, gr, np.empty(along_cols.shape[1]))
    dv = _node_row(along_rows, step_r, last_r, gr, np.empty(along_rows.shape[1]))
    da = _node_row(cell_area, step_r, last_r, gr, np.empty(cell_area.shape[1]))
    e = np.empty(9)
    ok = np.empty(8, np.bool_)
    g = _geometry(1.0, 1.0)
    for c in range(1, cols - 1):
        gc = col0 + c - 1
        dx = _along(du, step_c, last_c, gc)
        dy = _along(dv, step_c, last_c, gc)
        if dx != g[0] or dy != g[1]:
            g = _geometry(dx, dy)
        cell = (r - 1) * w + c - 1
        area[cell] = _along(da, step_c, last_c, gc) if valid[r, c] else 0.0
        width[cell] = 0.5 * (dx + dy)
        recv1[cell] = -1
        recv2[cell] = -1
        share1[cell] = 0.0
        if not valid[r, c]:
            continue
        flat = steps[r, c] > 0
        if steps[r, c] == NO_STEPS:
            continue  # cannot happen on a filled surface with its steps complete
        e[8] = steps[r, c] if flat else z[r, c]
        for k in range(8):
            rr = r + DR[k]
            cc = c + DC[k]
            ok[k] = valid[rr, cc]
            if flat:
                ok[k] = ok[k] and z[rr, cc] == z[r, c] and steps[rr, cc] < NO_STEPS
                e[k] = steps[rr, cc]
            else:
                e[k] = z[rr, cc]
        k1, k2, p1, wd = _steepest(e, ok, g)
        if k1 < 0:
            continue
        recv1[cell] = _receiver(r + DR[k1], c + DC[k1], rows, cols)
        share1[cell] = p1
        if k2 >= 0:
            recv2[cell] = _receiver(r + DR[k2], c + DC[k2], rows, cols)
        width[cell] = wd


@njit(cache=True, parallel=True)
def directions(z, valid, steps, lattice, row0, col0, flow, area):
    """D-infinity receivers (inner index; -2 - ring position for a ring cell; -1 for none),
    the first receiver's share and the contour width of every inner cell of a framed tile
    whose first inner cell is (row0, col0) of the grid, into ``flow`` = (receiver 1,
    receiver 2, share 1, width), and its ground area (0 at no data) into ``area``; rows in
    parallel. Cells with flat steps > 0 route on the steps among their equal neighbours
    (towards the drain); the others on the surface ``z``. Ground lengths and areas are
    bilinear on the ``lattice`` (see ``routing.route``)."""
    for r in prange(1, z.shape[0] - 1):
        _direction_row(z, valid, steps, lattice, row0, col0, r, flow, area)


@njit(cache=True, nogil=True)
def directions_one_thread(z, valid, steps, lattice, row0, col0, flow, area):
    """``directions`` on the calling thread, without the GIL (tiles run side by side)."""
    for r in range(1, z.shape[0] - 1):
        _direction_row(z, valid, steps, lattice, row0, col0, r, flow, area)


@njit(cache=True)
def ring_index(r, c, rows, cols):
    """Position of framed cell (r, c) of the ring in the ring's vector: top row, bottom
    row, left column, right column (corners in the rows)."""
    if r == 0:
        return c
    if r == rows - 1:
        return cols + c
    if c == 0:
        return 2 * cols + r - 1
    return 2 * cols + rows - 2 + r - 1


@njit(cache=True, nogil=True)
def accumulate(recv1, recv2, share1, values, flags, cells, indeg, stack, ring):
    """Add what flows in to ``values`` (inner cells, h*w) in topological order over
    ``cells`` (closed downstream; empty: every cell), each starting from its own value:
    each cell passes its total times its share to its receivers. ``indeg`` must be 0 on
    those cells (it ends at -1). ``flags`` (h*w or empty) are carried along (a cell
    receiving any share from a flagged cell is flagged). What leaves the tile is summed
    into the ring's vectors ``ring`` = (ring amounts, ring flags), in the order the cells
    are taken (deterministic). Returns how many cells were taken.

    Order: the cells are scanned in turn; a cell nothing flows into any more is passed on
    at once and its receivers followed depth-first (``stack``) while they become complete,
    so the work walks down flow paths near each other in memory (a first-in-first-out
    queue spreads a wave front over the whole grid and misses the cache: 1.9x slower on
    the routing benchmark's 4000 x 4000 grid; the two receivers in a loop over a tuple, or
    through a helper function, were another 3-4x slower)."""
    ring_area, ring_flags = ring
    carry = flags.size == values.size
    every = cells.size == 0
    count = values.size if every else cells.size
    for k in range(count):
        i = k if every else cells[k]
        if recv1[i] >= 0:
            indeg[recv1[i]] += 1
        if recv2[i] >= 0:
            indeg[recv2[i]] += 1
    taken = 0
    for k in range(count):
        start = k if every else cells[k]
        if indeg[start] != 0:
            continue
        stack[0] = start
        top = 1
        while top > 0:
            top -= 1
            i = stack[top]
            indeg[i] = -1
            taken += 1
            a = values[i]
            flag = carry and flags[i] != 0
            for second in range(2):
                j = recv2[i] if second else recv1[i]
                amount = a * (1.0 - share1[i]) if second else a * share1[i]
                if j >= 0:
                    values[j] += amount
                    if flag:
                        flags[j] = 1
                    indeg[j] -= 1
                    if indeg[j] == 0:
                        stack[top] = j
                        top += 1
                elif j < -1:
                    ring_area[-2 - j] += amount
                    if flag:
                        ring_flags[-2 - j] = 1
    return taken


@njit(cache=True, nogil=True)
def downstream(recv1, recv2, entries, seen, cells):
    """Every inner cell downstream of the ``entries`` (inner indices), themselves included,
    into ``cells`` (``seen`` marks them); returns how many."""
    count = 0
    for i in entries:
        if not seen[i]:
            seen[i] = 1
            cells[count] = i
            count += 1
    k = 0
    while k < count:
        i = cells[k]
        k += 1
        for j in (recv1[i], recv2[i]):
            if j >= 0 and not seen[j]:
                seen[j] = 1
                cells[count] = j
                count += 1
    return count
