"""Flow routing on a DEM: depression filling, D-infinity directions, contributing area.

1. Depressions are filled level: every cell on the edge of the data is an outlet, and each
   cell is raised to the lowest level at which water can leave it, the minimax over paths
   to an outlet (the surface of Priority-Flood, Barnes, Lehman & Mulla 2014, Algorithm 2,
   bit for bit). It is computed by basins (Cordonnier, Bovy & Braun 2019): each cell
   follows its lowest lower neighbour down to a pit or an outlet; two touching basins pass
   at the higher of two touching cells, the lowest such pass kept; the minimax level of
   each basin over this small graph raises its cells. Four passes over the grid and a
   graph of one node per pit, where a priority queue touches every cell in elevation
   order (measured in README, "Scale and performance"). The epsilon variant (Algorithm 3)
   stays a Priority-Flood with its queue bucketed by elevation
   (``flow_kernels.fill_tile``). The filled surface is used for routing only; slopes come
   from the original DEM.
2. Flats (filled pits and level ground) drain by steps: each flat cell counts the
   8-connected steps to the nearest cell of its flat with lower ground (or no data) next
   to it, and routes down those steps among its equal neighbours; every other cell routes
   on the filled surface. The steps are the same whatever the tiling (tested against a
   chessboard distance transform), which a float64 epsilon gradient raised along the
   fill's queue (Algorithm 3, still in ``fill_depressions(epsilon=True)``) is not.
3. Flow directions by D-infinity (Tarboton 1997): the steepest of the eight triangular
   facets around each cell, flow split between the facet's two neighbours in proportion to
   the angles. Cells are rectangles whose ground side lengths and area come from a lattice
   of ground lengths (``slopescreen.maps.terrain.ground``; bilinear between nodes), so any CRS
   routes in ground metres. A cell whose facets all lack data falls back to its steepest
   lower neighbour (D8).
4. Contributing area is accumulated in topological order (in-degree counts; a cell is
   passed on once nothing more flows into it, its receivers followed depth-first), each
   cell contributing its own ground area; a flag (cells next to no data or the edge where
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

The kernels work on a tile framed by one ring of its neighbours' cells
(``slopescreen.maps.terrain.flow_kernels``); ``route`` treats the whole grid as one tile with
a ring of no data, and ``slopescreen.maps.terrain.tiled_routing`` joins many tiles into the
same result.

Memory of ``route`` (the whole grid at once): the framed float64 surface (8 bytes per
cell), the data mask (1) and the basin codes (4) while filling; then the steps (4), two
int32 receivers, a float32 share and width (16), the float64 area (8) and the in-degree
and stack of the accumulation (up to 8): about 40 bytes per cell above the DEM at the
peak (tests/benchmarks/bench_routing.py measures it). Beyond one routing tile, use the
tiles.

References
----------
Barnes, R., Lehman, C. & Mulla, D. (2014). Priority-flood: an optimal depression-filling
and watershed-labeling algorithm for digital elevation models. Computers & Geosciences 62,
117-127.
Cordonnier, G., Bovy, B. & Braun, J. (2019). A versatile, linear complexity algorithm for
flow routing in topographies with depressions. Earth Surface Dynamics 7, 549-562 (cited
from memory).
Tarboton, D.G. (1997). A new method for the determination of flow directions and upslope
areas in grid digital elevation models. Water Resources Research 33(2), 309-319.
"""

from __future__ import annotations

import numpy as np

from slopescreen.maps.terrain import flow_kernels as fk

BUCKET_CELLS = 4  # cells per bucket of the fill's queue, on average (1 byte a cell)


def surface(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """A framed elevation (NaN for no data) as the kernels take it, in place: 0 at no data,
    and the data mask."""
    valid = np.isfinite(z)
    np.copyto(z, 0.0, where=~valid)
    return z, valid


def framed(elevation_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The grid as one tile with a ring of no data: (elevation, 0 at no data; data mask)."""
    rows, cols = np.shape(elevation_m)
    z = np.full((rows + 2, cols + 2), np.nan)
    z[1:-1, 1:-1] = elevation_m
    return surface(z)


def fill_framed(
    z: np.ndarray,
    valid: np.ndarray,
    *,
    labelled: bool = False,
    epsilon: bool = False,
    parallel: bool = True,
) -> tuple[np.ndarray | None, np.ndarray, np.ndarray, np.ndarray]:
    """Fill a framed tile; returns (labels or None, and the spill pairs: label a, label b,
    lowest pass elevation).

    Level (default): by basins of steepest descent inside the tile and the passes between
    them (``flow_kernels.basin_pairs``), every value an elevation of the grid chosen by
    min and max only, so the surface equals the published Priority-Flood bit for bit
    (tested). The basins are the labels: label 0 drains to no data, the others are raised
    to the lowest level at which they drain (``spill_graph_levels``). Without ``labelled``
    the ring must be no data and ``z`` is filled in place; with it, ``z`` is left as it is
    for the caller to raise once the levels across tiles are known (Barnes 2016), and the
    labels (framed, -1 at no data) are returned.

    With ``epsilon``: Priority-Flood+epsilon (``flow_kernels.fill_tile``) in place, no
    labels. Without ``parallel`` the calling thread only (as in ``route_framed``)."""
    n = z.size
    if epsilon:
        fk.fill_tile(
            z,
            valid,
            np.empty(z.shape, np.bool_),
            np.empty(n, np.float64),
            np.empty(n, np.int32),
            np.empty(n, np.int32),
            np.empty(n, np.int32),
            np.empty(max(1, n // BUCKET_CELLS), np.int32),
        )
        nothing = np.zeros(0, np.int64)
        return None, nothing, nothing, np.zeros(0)
    code = np.empty(z.shape, np.int32)
    (fk.lowest_neighbours if parallel else fk.lowest_neighbours_one_thread)(z, valid, code)
    n_basins, keys, weights = fk.basin_pairs(z, code)
    used = keys >= 0
    pairs = keys[used].astype(np.int64)
    a, b, weight = pairs // n_basins, pairs % n_basins, weights[used]
    labels = np.subtract(-4, code, out=code)  # basin ids; -1 at no data
    if labelled:
        return labels, a, b, weight
    fk.raise_to_levels(z, labels, spill_graph_levels(n_basins, a, b, weight))
    return None, a, b, weight


def spill_graph_levels(
    n_nodes: int, a: np.ndarray, b: np.ndarray, weight: np.ndarray
) -> np.ndarray:
    """Lowest level at which each node of a spill graph (edges a - b at ``weight``)
    drains to node 0: the minimax path (``flow_kernels.spill_levels``); node 0 -inf."""
    source = np.concatenate([a, b])
    order = np.argsort(source, kind="stable")
    start = np.searchsorted(source[order], np.arange(n_nodes + 1))
    return fk.spill_levels(n_nodes, start, np.concatenate([b, a])[order], np.tile(weight, 2)[order])


def flat_steps(z: np.ndarray, valid: np.ndarray, steps: np.ndarray, fresh: bool = True) -> int:
    """Steps to drain across flats of a framed, filled tile (``flow_kernels.flat_steps``);
    the ring of ``steps`` holds the neighbours' steps. Returns how many cells were queued."""
    return fk.flat_steps(z, valid, steps, np.empty(z.size, np.int32), fresh)


def _ring_vectors(rows: int, cols: int) -> tuple[np.ndarray, np.ndarray]:
    """Empty vectors of what leaves a framed tile of rows x cols into its ring: (amounts,
    flags), in ``flow_kernels.ring_index`` order."""
    return np.zeros(2 * (rows + cols) - 4), np.zeros(2 * (rows + cols) - 4, np.uint8)


def route_framed(
    z: np.ndarray,
    valid: np.ndarray,
    steps: np.ndarray,
    lattice: tuple,
    origin: tuple[int, int],
    flags: np.ndarray,
    parallel: bool = True,
) -> tuple[tuple[np.ndarray, ...], np.ndarray, tuple[np.ndarray, np.ndarray]]:
    """D-infinity receivers of a framed, filled tile whose first inner cell is ``origin``
    (row, column) of the grid, and each cell's own contributing area accumulated inside
    the tile. ``flags`` (h*w uint8, or empty) are carried downstream in place. With
    ``parallel`` the directions use every core; without, the calling thread only (and
    release the GIL, like every kernel of a tile, so tiles can run side by side).

    Returns ((receiver 1, receiver 2, share 1, contour width), area (h*w), (amounts and
    flags leaving into the ring, in ``flow_kernels.ring_index`` order))."""
    rows, cols = z.shape
    n = (rows - 2) * (cols - 2)
    flow = (np.empty(n, np.int32), np.empty(n, np.int32), np.empty(n, np.float32),
            np.empty(n, np.float32))  # fmt: skip
    area = np.empty(n)
    kernel = fk.directions if parallel else fk.directions_one_thread
    kernel(z, valid, steps, lattice, origin[0], origin[1], flow, area)
    ring = _ring_vectors(rows, cols)
    every = np.zeros(0, np.int32)
    fk.accumulate(*flow[:3], area, flags, every, np.zeros(n, np.int32), np.empty(n, np.int32),
                  ring)  # fmt: skip
    return flow, area, ring


def propagate(
    flow: tuple[np.ndarray, ...],
    shape: tuple[int, int],
    area: np.ndarray,
    flags: np.ndarray,
    entries: np.ndarray,
    amounts: np.ndarray,
    entry_flags: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Add area flowing into a tile at inner cells ``entries`` (amounts, flags) to
    ``area`` and ``flags`` of every cell downstream, in place (contributing area is linear
    in what flows in); the work is on those cells only (``area`` and ``flags`` may be
    memory-mapped). Returns what leaves into the ring (amounts, flags)."""
    rows, cols = shape[0] + 2, shape[1] + 2
    recv1, recv2, share1 = flow[:3]
    n = recv1.size
    cells = np.empty(n, np.int32)
    count = fk.downstream(recv1, recv2, entries, np.zeros(n, np.uint8), cells)
    cells = cells[:count].copy()
    extra = np.zeros(n)  # untouched pages cost nothing
    np.add.at(extra, entries, amounts)
    cone_flags = np.zeros(0, np.uint8)
    if flags.size:
        cone_flags = np.zeros(n, np.uint8)
        cone_flags[cells] = flags[cells]
        cone_flags[entries[entry_flags != 0]] = 1
    ring = _ring_vectors(rows, cols)
    fk.accumulate(recv1, recv2, share1, extra, cone_flags, cells, np.zeros(n, np.int32),
                  np.empty(count, np.int32), ring)  # fmt: skip
    area[cells] += extra[cells]
    if flags.size:
        flags[cells] = cone_flags[cells]
    return ring


def fill_depressions(elevation_m: np.ndarray, *, epsilon: bool = False) -> np.ndarray:
    """Priority-Flood depression filling (Barnes et al. 2014); NaN cells are no data.

    Level by default (Algorithm 2): every depression filled flat to its spill elevation,
    as routing uses it; with ``epsilon`` pits and flats get a minimal strict gradient
    instead (Algorithm 3, one float64 step per cell).
    """
    z, valid = framed(np.asarray(elevation_m, dtype=np.float64))
    fill_framed(z, valid, epsilon=epsilon)
    return np.where(valid, z, np.nan)[1:-1, 1:-1]


def uniform_lattice(dx_m: float | np.ndarray, dy_m: float, rows: int, cols: int) -> tuple:
    """The routing lattice of a grid with one east-west spacing per row (or one for all)
    and one north-south spacing: nodes on every row, at the first and last column."""
    dx_rows = np.ascontiguousarray(np.broadcast_to(np.asarray(dx_m, np.float64), (rows,)))
    du = np.repeat(dx_rows[:, None], 2, axis=1)
    dv = np.full((rows, 2), float(dy_m))
    return (np.int64(1), np.int64(max(cols - 1, 1)), np.int64(rows - 1),
            np.int64(max(cols - 1, 1)), du, dv, du * dv)  # fmt: skip


def specific_catchment_area(
    elevation_m: np.ndarray, dx_m: float | np.ndarray, dy_m: float
) -> tuple[np.ndarray, np.ndarray]:
    """Contributing area (m2) and specific catchment area a/b (m) by D-infinity, on a grid
    with one east-west spacing per row (or one for all) and one north-south spacing.

    Parameters
    ----------
    elevation_m : 2-D DEM, NaN for no data.
    dx_m : east-west spacing, m: scalar or one value per row.
    dy_m : north-south spacing, m.

    Returns
    -------
    (area_m2 float64, sca_m float32), NaN where there is no data.
    """
    rows, cols = np.shape(elevation_m)
    area, sca, _ = route(elevation_m, uniform_lattice(dx_m, dy_m, rows, cols))
    return area, sca


def route(
    elevation_m: np.ndarray, lattice: tuple, sources: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Contributing area (m2), specific catchment area (m) and, with ``sources``, the cells
    downstream of them, on a grid measured by a lattice of ground lengths, in one piece
    (``slopescreen.maps.terrain.tiled_routing`` routes tile by tile to the same result).

    ``lattice`` is (row step, column step, last row, last column, ground length of a column
    step, of a row step, ground cell area), the last three on lattice nodes (see
    ``slopescreen.maps.terrain.ground.Ground.lattice``); values between nodes are bilinear. Cells
    are treated as rectangles with those axis lengths and that area. ``sources`` (uint8,
    one per cell) marks cells whose flag is carried downstream along the D-infinity
    shares: a copy is returned (1 = receives flow from a source).
    """
    rows, cols = np.shape(elevation_m)
    z, valid = framed(np.asarray(elevation_m, dtype=np.float64))
    fill_framed(z, valid)
    steps = np.full(z.shape, fk.NO_STEPS, np.int32)
    flat_steps(z, valid, steps)
    flags = np.zeros(0, np.uint8) if sources is None else sources.astype(np.uint8).ravel()
    flow, area, _ = route_framed(z, valid, steps, lattice, (0, 0), flags)
    del z, steps
    inner = valid[1:-1, 1:-1]
    area = area.reshape(rows, cols)
    np.copyto(area, np.nan, where=~inner)
    sca = (area / flow[3].reshape(rows, cols)).astype(np.float32)
    return area, sca, None if sources is None else flags.reshape(rows, cols)
