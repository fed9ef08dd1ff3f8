"""Flow routing against analytic surfaces and an independent library (pyflwdir)."""

import math

import numpy as np
import pytest

from slopescreen.maps.terrain.routing import fill_depressions, specific_catchment_area


def _plane(rows, cols, d, angle_deg):
    """Elevation falling along a direction angle_deg clockwise from east (y south)."""
    t = math.radians(angle_deg)
    y, x = np.mgrid[0:rows, 0:cols]
    return -(x * d * math.cos(t) + y * d * math.sin(t)) * 0.2


@pytest.mark.parametrize("angle", [0.0, 45.0, 90.0])
def test_plane_along_grid_axes_gives_upslope_length(angle):
    # Analytic: on an inclined plane a/b at a cell = flow-path length from the divide to the
    # cell's lower edge (continuity; Moore et al. 1991 definition of specific catchment area).
    d = 10.0
    _, sca = specific_catchment_area(_plane(40, 40, d, angle), d, d)
    r = c = 25
    if angle == 0.0:
        expected = (c + 1) * d
    elif angle == 90.0:
        expected = (r + 1) * d
    else:
        expected = (min(r, c) + 1) * d * math.sqrt(2.0)
    assert sca[r, c] == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("angle", "square_on", "oblique"),
    [(15.0, (-0.20, 0.02), (-0.19, -0.12)), (30.0, (-0.10, 0.045), (-0.10, -0.07))],
)
def test_plane_at_oblique_angle(angle, square_on, oblique):
    # Analytic upslope length (Moore et al. 1991) against D-infinity's angle-proportional
    # split (Tarboton 1997), which disperses oblique flow: cells fed from the edge the flow
    # crosses nearly square-on (left) and from the edge it crosses obliquely (top), all
    # cells with at least 150 m of upslope length. The ranges are measured and stated in
    # README and slopescreen.maps.terrain.routing: on oblique planes a/b is a flow length only
    # to them.
    d, n = 10.0, 200
    _, sca = specific_catchment_area(_plane(n, n, d, angle), d, d)
    t = math.radians(angle)
    r, c = np.mgrid[2 : n - 2 : 3, 2 : n - 2 : 3]
    from_left, from_top = (c + 0.5) * d / math.cos(t), (r + 0.5) * d / math.sin(t)
    length = np.minimum(from_left, from_top) + 0.5 * d
    error = sca[r, c] / length - 1.0
    use = length >= 150.0
    for fed, (low, high) in ((from_left < from_top, square_on), (from_left >= from_top, oblique)):
        e = error[use & fed]
        assert e.size > 100
        assert low - 0.005 <= e.min() and e.max() <= high + 0.005, (e.min(), e.max())
    assert abs(np.median(error[use & (from_left < from_top)])) < 0.04  # typical cell


def test_cone_divergent_flow():
    # Analytic: on a cone z = -r, area per contour width at radius r is r/2.
    n, d = 201, 10.0
    y, x = np.mgrid[0:n, 0:n]
    r = np.hypot(x - 100, y - 100) * d
    _, sca = specific_catchment_area(1000.0 - 0.3 * r, d, d)
    for radius in (300.0, 600.0):
        ring = np.abs(r - radius) < 0.5 * d
        assert np.median(sca[ring]) == pytest.approx(radius / 2.0, rel=0.05)


def _valley(rows=120, cols=81, d=10.0, side=0.4, down=0.05):
    """V-shaped valley: sides falling towards a central channel that falls south."""
    y, x = np.mgrid[0:rows, 0:cols].astype(float)
    return side * np.abs(x - cols // 2) * d - down * y * d + 1000.0


def test_convergent_valley_channel_area():
    # Analytic: a side cell at lateral distance w reaches the channel w * down/side further
    # south, so the channel area at row i is the area of {y' + |x'| k <= lower edge of i}.
    rows, cols, d, side, down = 120, 81, 10.0, 0.4, 0.05
    area, _ = specific_catchment_area(_valley(rows, cols, d, side, down), d, d)
    centre = cols // 2
    k = down / side
    for row in (60, 100):
        y_edge = (row + 1) * d
        xs = (np.arange(cols) - centre) * d
        # per column: upslope length of the strip from the top edge to where it meets the
        # channel at or above this row's lower edge
        lengths = np.clip(y_edge - np.abs(xs) * k, 0.0, None)
        expected = float(np.sum(lengths * d))
        assert area[row, centre] == pytest.approx(expected, rel=0.03)


def test_mass_is_conserved_and_every_cell_drains():
    # Every cell's area must leave the grid: the areas of edge cells that receive and pass
    # no further sum to the whole grid (common practice check of routing).
    rng = np.random.default_rng(3)
    z = _valley() + rng.normal(0.0, 3.0, (120, 81))  # rough, full of pits
    area, sca = specific_catchment_area(z, 10.0, 10.0)
    assert np.isfinite(sca).all() and (sca > 0).all()
    filled = fill_depressions(z, epsilon=True)
    # on the filled surface every interior cell has a strictly lower neighbour
    interior = filled[1:-1, 1:-1]
    lowest = np.min(
        [
            filled[1 + dr : filled.shape[0] - 1 + dr, 1 + dc : filled.shape[1] - 1 + dc]
            for dr in (-1, 0, 1)
            for dc in (-1, 0, 1)
            if dr or dc
        ],
        axis=0,
    )
    assert (lowest < interior).all()
    outlet = area[-1, 81 // 2]
    assert outlet <= 120 * 81 * 100.0 + 1e-6


def test_fill_matches_pyflwdir():
    # Outside reference: pyflwdir.dem.fill_depressions (priority-flood, Wang & Liu 2006
    # style) on the same grid; level filling (no epsilon) must agree to float32 precision.
    from pyflwdir import dem as pyflwdir_dem

    rng = np.random.default_rng(11)
    z = rng.random((60, 70)) * 10.0 + np.linspace(0, 5, 70)
    ref, _ = pyflwdir_dem.fill_depressions(z.astype(np.float32), nodata=-9999.0)
    ours = fill_depressions(z, epsilon=False)
    assert np.allclose(ours, ref, atol=1e-5)
    assert (ours >= z).all() and (ours > z).sum() > 100


def test_contributing_area_agrees_with_pyflwdir_on_convergent_terrain():
    # Outside reference: pyflwdir D8 upstream area on the same rough convergent valley. D8
    # and D-infinity differ on hillslopes (D8 joins side flow to the channel later), but
    # must agree on the main channel once the side flows have joined. Stated tolerance of
    # this project: per-row channel maximum within 20% and their median within 10% over the
    # lower two thirds of the valley; outlet within 0.1%.
    import pyflwdir
    from rasterio.transform import from_origin

    rng = np.random.default_rng(5)
    z = _valley() + rng.normal(0.0, 1.0, (120, 81))
    ours, _ = specific_catchment_area(z, 10.0, 10.0)
    flw = pyflwdir.from_dem(z.astype(np.float32), transform=from_origin(0, 1200, 10, 10))
    ref = flw.upstream_area(unit="m2")
    ratio = ours.max(axis=1)[40:] / ref.max(axis=1)[40:]
    assert np.all(np.abs(ratio - 1.0) < 0.20)
    assert abs(np.median(ratio) - 1.0) < 0.10
    assert ours.max() == pytest.approx(ref.max(), rel=1e-3)


def test_nodata_cells_stay_nodata():
    z = _valley()
    z[50:55, 10:15] = np.nan
    _area, sca = specific_catchment_area(z, 10.0, 10.0)
    assert np.isnan(sca[50:55, 10:15]).all()
    assert np.isfinite(sca[~np.isnan(z)]).all()


def _priority_flood(z, epsilon):
    """Barnes, Lehman & Mulla (2014), Algorithm 3 (``epsilon``) or 2 (level) as published,
    with Python's heapq: one global priority queue of (elevation, cell), a plain queue for
    pit cells, every data cell next to the grid's edge or to no data an outlet."""
    import heapq

    rows, cols = z.shape
    valid = np.isfinite(z)
    filled = np.where(valid, z, 0.0)
    closed = ~valid
    heap, pit = [], []
    for r in range(rows):
        for c in range(cols):
            if not valid[r, c]:
                continue
            window = valid[max(r - 1, 0) : r + 2, max(c - 1, 0) : c + 2]
            if r in (0, rows - 1) or c in (0, cols - 1) or not window.all():
                closed[r, c] = True
                heapq.heappush(heap, (filled[r, c], r * cols + c))
    head = 0
    while heap or head < len(pit):
        if head < len(pit):
            cell = pit[head]
            head += 1
        else:
            cell = heapq.heappop(heap)[1]
        r, c = divmod(cell, cols)
        step = np.nextafter(filled[r, c], np.inf) if epsilon else filled[r, c]
        for dr, dc in ((0, 1), (-1, 1), (-1, 0), (-1, -1), (0, -1), (1, -1), (1, 0), (1, 1)):
            rr, cc = r + dr, c + dc
            if not (0 <= rr < rows and 0 <= cc < cols) or closed[rr, cc]:
                continue
            closed[rr, cc] = True
            if filled[rr, cc] <= step:
                filled[rr, cc] = step
                pit.append(rr * cols + cc)
            else:
                heapq.heappush(heap, (filled[rr, cc], rr * cols + cc))
    return np.where(valid, filled, np.nan)


def test_fills_equal_the_published_priority_flood():
    # The level fill runs by basins of steepest descent and their passes (Cordonnier, Bovy &
    # Braun 2019), the epsilon fill by a Priority-Flood bucketed by elevation; the published
    # algorithm (Barnes et al. 2014) with one global heap must give the same surface bit
    # for bit: ties, flats, nested pits, pits whose passes are equal, and no data included.
    rng = np.random.default_rng(11)
    for trial in range(16):
        z = rng.normal(size=(50, 60)).cumsum(0).cumsum(1) * 0.1 + rng.normal(size=(50, 60))
        if trial % 3 == 0:
            z[rng.random(z.shape) < 0.05] = np.nan
        if trial % 2 == 0:
            z = np.round(z)  # many equal elevations
        if trial >= 12:
            z = rng.integers(0, 4, size=(40, 45)).astype(float)  # terraces of pits and passes
            z[rng.random(z.shape) < 0.03 * (trial - 12)] = np.nan
        for epsilon in (True, False):
            np.testing.assert_array_equal(
                fill_depressions(z, epsilon=epsilon), _priority_flood(z, epsilon)
            )


def test_flat_steps_are_the_shortest_step_counts_across_each_flat():
    # Outside reference: scipy.sparse.csgraph.dijkstra over 8-connected steps between equal
    # neighbours, from every cell with lower ground or no data beside it (steps 0), on a
    # filled terraced surface with holes: many flats of any shape, several drains each.
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import dijkstra

    from slopescreen.maps.terrain import flow_kernels, routing

    rng = np.random.default_rng(5)
    y, x = np.mgrid[0:70, 0:80]
    z = np.floor(0.04 * x + 0.03 * y + rng.normal(0.0, 0.6, (70, 80)))
    z[rng.random(z.shape) < 0.02] = np.nan
    framed, valid = routing.framed(z)
    routing.fill_framed(framed, valid)
    steps = np.full(framed.shape, flow_kernels.NO_STEPS, np.int32)
    routing.flat_steps(framed, valid, steps)
    filled = np.where(valid, framed, np.nan)
    rows, cols = filled.shape
    index = np.arange(filled.size).reshape(filled.shape)
    pairs, drains = [], np.zeros(filled.shape, bool)
    for dr, dc in ((0, 1), (1, -1), (1, 0), (1, 1)):
        a = filled[1:-1, 1:-1]
        b = filled[1 + dr : rows - 1 + dr, 1 + dc : cols - 1 + dc]
        same = a == b
        pairs.append(
            (index[1:-1, 1:-1][same], index[1 + dr : rows - 1 + dr, 1 + dc : cols - 1 + dc][same])
        )
    for dr in (-1, 0, 1):
        for dc in (-1, 0, 1):
            b = filled[1 + dr : rows - 1 + dr, 1 + dc : cols - 1 + dc]
            drains[1:-1, 1:-1] |= np.isnan(b) | (b < filled[1:-1, 1:-1])
    drains &= valid
    a = np.concatenate([p[0] for p in pairs])
    b = np.concatenate([p[1] for p in pairs])
    graph = coo_matrix((np.ones(a.size), (a, b)), shape=(filled.size, filled.size)).tocsr()
    reference = dijkstra(graph, directed=False, indices=index[drains], min_only=True)
    reference = reference.reshape(filled.shape)
    inner = valid[1:-1, 1:-1]
    ours = steps[1:-1, 1:-1][inner]
    np.testing.assert_array_equal(ours, reference[1:-1, 1:-1][inner])
    assert ours.max() >= 5 and (ours > 0).sum() > 300  # long and many flats were tested
