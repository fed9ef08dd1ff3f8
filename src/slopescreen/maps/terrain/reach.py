"""Run-out reach on the DEM grid: flow from source cells spread downslope over the eight
neighbours in Holmgren (1994) shares until the angle of reach or the energy line is spent
(the core's physics, :mod:`slopescreen.runout`, compiled into one sweep).

The sweep takes the cells from the highest down, once each. A cell holds the flow that
reached it, as one state that is at least as far-reaching as every path that brought flow
(so the reach errs on the far side, never short):

- ``mass``: the share of all source flow passing the cell (the sources' masses summed, each
  path's share of it by the spreading shares);
- ``margin``: the horizontal ground distance the flow may still travel on the angle of
  reach, the largest over the arriving paths: margin' = margin + dz / tan(alpha) - dx,
  spent where it falls below 0 (at a source: the horizontal distance the top of the source
  patch allows, (z_top - z) / tan(alpha) - L(top to cell));
- ``tan_alpha``: the smallest tan(alpha) (the most mobile source) among them;
- ``energy``: the largest kinetic energy per unit mass, E' = E + g dz - g dx tan(phi_t), at
  most v_max^2 / 2, spent where it falls to 0 or below (without a travel friction angle the
  energy line is not applied).

On level ground (no lower neighbour) the flow stays where it is, but its reach goes on to
every level neighbour, so a flow running out of a slope onto a flat continues until its
margin or energy is spent (level cells are taken as they receive flow, so the sweep stays
one pass). A cell next to the DEM's edge or to no data, whose flow has margin and energy to
spare, is marked cut off: the reach there is a lower bound.

Tiles (:mod:`slopescreen.maps.region.runout_tiles`): the sweep takes a framed window whose
outer ring of cells (``ring`` = 1) belongs to the neighbouring tiles. Those cells are never
taken: what arrives in them is the tile's outflow, and what a neighbour sends in is placed
on the tile's own cells before the sweep (``mass`` summed, the rest as the best state).
Every merge is a sum, a max or a min, so the result does not depend on which cells were
taken first, and a tile run again with everything that enters it gives what one sweep of
the whole grid gives (but for the order in which flow masses are summed).

Ground lengths of the steps come from the grid's ground geometry (any CRS).
"""

from __future__ import annotations

import heapq
import math

import numba
import numpy as np

from slopescreen.runout import GRAVITY_M_S2

# the eight neighbours, clockwise from north: row and column offsets
D_ROW = np.array([-1, -1, 0, 1, 1, 1, 0, -1], np.int64)
D_COL = np.array([0, 1, 1, 1, 0, -1, -1, -1], np.int64)


@numba.njit(cache=True)
def _step_m(r, c, k, col_step, row_step):
    """Horizontal ground length from cell (r, c) to its neighbour k."""
    dx = col_step[r, c] * abs(D_COL[k])
    dy = row_step[r, c] * abs(D_ROW[k])
    return math.sqrt(dx * dx + dy * dy)


@numba.njit(cache=True, nogil=True)
def spread_reach(
    z,
    col_step,
    row_step,
    mass,
    margin,
    tan_alpha,
    energy,
    exponent,
    tan_phi,
    max_energy,
    min_mass,
    share,
    cut_off,
    worst,
    ring=0,
):
    """Spread the sources' flow over the grid in place (see the module docstring).

    ``z`` (rows, cols) elevations, NaN for no data; ``col_step`` and ``row_step`` the ground
    lengths of one column and one row step at each cell (m); ``mass``, ``margin`` and
    ``tan_alpha`` hold the sources' values (mass 0 elsewhere, margin -inf, tan_alpha +inf)
    and are filled for the cells reached, ``energy`` likewise (0 at the start of a path);
    a cell with margin >= 0 is taken (a source, or flow entering from a neighbouring tile);
    the outer ``ring`` cells of the arrays are never taken: they receive the outflow;
    ``tan_phi`` < 0: no energy line; ``max_energy``: v_max^2 / 2 (+inf: no cap);
    ``min_mass``: a move carrying less flow is dropped.
    Writes ``share`` (the source flow reaching each cell, 0 where none: a cell on level
    ground that the flow crosses takes the largest share of the cells it came from) and
    ``cut_off`` (uint8); ``worst`` holds a value of each source (its FS, say; +inf
    elsewhere) and is filled with the least of the sources whose flow reaches a cell.
    Returns (flow stopped where the ground levels out or the sweep found no lower cell,
    flow dropped where the margin or energy was spent or the move was too small): with
    every source's flow counted once, their sum is the sources' total."""
    rows, cols = z.shape
    spread = np.zeros(z.shape)  # flow already sent on (or stopped) at each cell
    stopped, dropped = 0.0, 0.0
    dirty = np.zeros(z.shape, np.bool_)  # reached, or improved, since last taken
    # the cells to take, highest first (ties by index, as a stable sort of the grid would
    # order them): only cells that flow reaches are ever pushed, so a sweep costs what it
    # reaches, not the size of the grid
    heap = [(0.0, np.int64(0))]
    heap.pop()
    for r in range(ring, rows - ring):
        for c in range(ring, cols - ring):
            if margin[r, c] >= 0.0 and not math.isnan(z[r, c]):
                dirty[r, c] = True
                heap.append((-z[r, c], np.int64(r * cols + c)))
    heapq.heapify(heap)
    shares = np.zeros(8)
    slopes = np.zeros(8)
    while len(heap) > 0:
        _, i = heapq.heappop(heap)
        r, c = i // cols, i % cols
        if not dirty[r, c] or margin[r, c] < 0.0:
            continue
        dirty[r, c] = False
        fresh = mass[r, c] - spread[r, c]
        spread[r, c] = mass[r, c]
        share[r, c] = max(share[r, c], mass[r, c])
        lower = 0
        steepest = 0.0
        for k in range(8):
            rr, cc = r + D_ROW[k], c + D_COL[k]
            slopes[k] = -1.0
            if rr < 0 or rr >= rows or cc < 0 or cc >= cols or math.isnan(z[rr, cc]):
                cut_off[r, c] = 1  # flow with room to travel at the edge: a lower bound
                continue
            slopes[k] = (z[r, c] - z[rr, cc]) / _step_m(r, c, k, col_step, row_step)
            if slopes[k] > 0.0:
                lower += 1
                steepest = max(steepest, slopes[k])
        total = 0.0
        for k in range(8):
            shares[k] = 0.0
            if lower > 0 and slopes[k] > 0.0:
                shares[k] = (slopes[k] / steepest) ** exponent
            elif lower == 0 and slopes[k] == 0.0:
                shares[k] = 1.0  # level ground: the reach goes on, the flow stays
            total += shares[k]
        if lower == 0 and fresh > 0.0:
            stopped += fresh
        for k in range(8):
            if shares[k] <= 0.0:
                continue
            rr, cc = r + D_ROW[k], c + D_COL[k]
            step = _step_m(r, c, k, col_step, row_step)
            drop = z[r, c] - z[rr, cc]
            room = margin[r, c] + drop / tan_alpha[r, c] - step
            power = energy[r, c] + GRAVITY_M_S2 * drop
            if tan_phi >= 0.0:
                power -= GRAVITY_M_S2 * step * tan_phi
            power = min(power, max_energy)
            spent = room < 0.0 or (tan_phi >= 0.0 and power <= 0.0)
            part = share[r, c] * shares[k] / total if lower > 0 else share[r, c]
            if lower > 0:  # down the slope: the flow splits
                moved = fresh * shares[k] / total
                if spent or (moved < min_mass and part < min_mass):
                    dropped += moved
                    continue
                mass[rr, cc] += moved
                improved = moved > 0.0
            elif spent:
                continue
            else:
                improved = False
            if (
                room > margin[rr, cc]
                or power > energy[rr, cc]
                or part > share[rr, cc]
                or tan_alpha[r, c] < tan_alpha[rr, cc]
                or worst[r, c] < worst[rr, cc]
            ):
                improved = True
            margin[rr, cc] = max(margin[rr, cc], room)
            tan_alpha[rr, cc] = min(tan_alpha[rr, cc], tan_alpha[r, c])
            worst[rr, cc] = min(worst[rr, cc], worst[r, c])
            energy[rr, cc] = max(energy[rr, cc], power)
            share[rr, cc] = max(share[rr, cc], part)
            inside = ring <= rr < rows - ring and ring <= cc < cols - ring
            if improved and not dirty[rr, cc] and inside:
                heapq.heappush(heap, (-z[rr, cc], np.int64(rr * cols + cc)))
            if improved:
                dirty[rr, cc] = True
    return stopped, dropped


@numba.njit(cache=True, nogil=True)
def label_patches(mask):
    """Connected patches of ``mask`` (eight neighbours): labels 1..n (0 outside), and n."""
    rows, cols = mask.shape
    labels = np.zeros(mask.shape, np.int64)
    stack = np.empty(rows * cols, np.int64)
    n = 0
    for start in range(rows * cols):
        r0, c0 = start // cols, start % cols
        if not mask[r0, c0] or labels[r0, c0]:
            continue
        n += 1
        labels[r0, c0] = n
        stack[0] = start
        top = 1
        while top > 0:
            top -= 1
            r, c = stack[top] // cols, stack[top] % cols
            for k in range(8):
                rr, cc = r + D_ROW[k], c + D_COL[k]
                if 0 <= rr < rows and 0 <= cc < cols and mask[rr, cc] and not labels[rr, cc]:
                    labels[rr, cc] = n
                    stack[top] = rr * cols + cc
                    top += 1
    return labels, n


@numba.njit(cache=True)
def join_labels(n, a, b):
    """Patches joined across tile edges: for ids 0..n-1 and pairs (a[k], b[k]) that touch,
    the smallest id of each joined patch (union-find with path halving)."""
    parent = np.arange(n)
    for k in range(a.size):
        x, y = a[k], b[k]
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        while parent[y] != y:
            parent[y] = parent[parent[y]]
            y = parent[y]
        if x != y:
            parent[max(x, y)] = min(x, y)
    for i in range(n):  # ids in increasing order: a parent is already final
        parent[i] = parent[parent[i]]
    return parent
