"""Ground geometry of a DEM grid: every length and area the engine measures, in ground
metres, whatever the DEM's CRS (pyproj).

For each cell the layer gives two ground vectors in the local east-north frame (metres):
``u``, the step of one column (towards increasing x), and ``v``, the step of one row
towards the top of the grid. They are measured on the CRS's ellipsoid: the cell centre and
the points half a cell either side along each grid axis are converted to latitude and
longitude and the geodesics between them taken with ``pyproj.Geod``, so the same code
serves geographic grids (exact spacing per row), conformal projections (UTM, Lambert
conformal conic, Web Mercator: |u| = |v|, orthogonal) and non-conformal ones (Albers,
Lambert azimuthal equal-area far from their centres: the full local Jacobian). From them:

- the ground gradient g (east, north) from the grid gradient (dz per column, dz per row
  upwards) by solving ``[u v]^T g = [dz/dcol, dz/drow_up]``;
- the ground cell area |u x v|, and the ground lengths |u|, |v| of the grid axes;
- the map scale along each axis, map length / ground length, for projected CRSs;
- the meridian convergence: the angle from true north to the grid's up direction.

The vectors are computed on a lattice of nodes and interpolated bilinearly between them:
every row where the geometry depends on the row alone (geographic grids, Mercator), else
every ``step`` cells with the step halved until the interpolation error, checked against
exact values at the midpoints between nodes, is below ``MAX_INTERPOLATION_ERROR``.

A CRS with no datum (a local or engineering grid) is taken at scale 1: map units, converted
to metres, are ground metres. A CRS whose coordinates cannot be converted to latitude and
longitude is refused (InputError).

References
----------
Snyder, J.P. (1987). *Map Projections: A Working Manual*. USGS Professional Paper 1395
(scale factors, convergence, angular distortion).
Karney, C.F.F. (2013). Algorithms for geodesics. Journal of Geodesy 87, 43-55 (the
geodesics behind ``pyproj.Geod``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from slopescreen.errors import InputError

GROUND_VERSION = "1"  # bump when this layer's arithmetic changes: terrain caches are rebuilt
MAX_INTERPOLATION_ERROR = 1e-6  # relative, on the ground vectors between lattice nodes
FIRST_STEP = 64  # lattice spacing tried first (cells), halved until the error is met


@dataclass(frozen=True)
class Ground:
    """Ground vectors on a lattice of nodes (cell centres), small and picklable."""

    node_rows: np.ndarray  # int64, 0 ... height - 1, uniform step ``row_step`` (last may be less)
    node_cols: np.ndarray
    row_step: int
    col_step: int
    u: np.ndarray  # (rows, cols, 2): ground east, north metres of one column step
    v: np.ndarray  # (rows, cols, 2): of one row step towards the top of the grid
    map_step: tuple[float, float]  # one column and one row in metres of the CRS's unit
    kind: str  # "geographic", "projected" or "local"
    interpolation_error: float  # largest relative error measured between nodes

    # --- per block -------------------------------------------------------------------
    def vectors(
        self, rows: slice, cols: slice
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(u_east, u_north, v_east, v_north) for a block, broadcastable to its shape."""
        fields = (self.u[..., 0], self.u[..., 1], self.v[..., 0], self.v[..., 1])
        out = [self._interpolate(field, rows, cols) for field in fields]
        return out[0], out[1], out[2], out[3]

    def _node_areas(self) -> np.ndarray:
        """Ground cell area |u x v| on the lattice nodes."""
        return np.abs(self.u[..., 0] * self.v[..., 1] - self.u[..., 1] * self.v[..., 0])

    def cell_area_at(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        """Ground cell area at the given cells (index arrays), bilinear between nodes."""
        area = self._node_areas()
        ir, tr = _weights(self.node_rows, self.row_step, np.asarray(rows, np.int64))
        ic, tc = _weights(self.node_cols, self.col_step, np.asarray(cols, np.int64))
        top = area[ir, ic] * (1 - tc) + area[ir, ic + 1] * tc
        bottom = area[ir + 1, ic] * (1 - tc) + area[ir + 1, ic + 1] * tc
        return top * (1 - tr) + bottom * tr

    def _interpolate(self, field: np.ndarray, rows: slice, cols: slice) -> np.ndarray:
        """Bilinear values of a field on the nodes over a block (a column where the field
        depends on the row only)."""
        r = np.arange(rows.start, rows.stop)
        ir, tr = _weights(self.node_rows, self.row_step, r)
        if field.shape[1] == 2 and np.array_equal(field[:, 0], field[:, 1]):
            return ((1 - tr) * field[ir, 0] + tr * field[ir + 1, 0])[:, None]
        ic, tc = _weights(self.node_cols, self.col_step, np.arange(cols.start, cols.stop))
        used = slice(ir.min(), ir.max() + 2)  # the node rows this block needs
        along = field[used][:, ic] * (1 - tc) + field[used][:, ic + 1] * tc
        i = ir - used.start
        return along[i] * (1 - tr)[:, None] + along[i + 1] * tr[:, None]

    def cell_area_m2(self, rows: slice, cols: slice) -> np.ndarray:
        """Ground area of each cell of a block (broadcastable to the block): |u x v| on the
        nodes, bilinear between them, as the routing takes it (one field to interpolate)."""
        area = self._node_areas()
        return self._interpolate(area, rows, cols)

    def ground_gradient(
        self, rows: slice, cols: slice, dz_dcol: np.ndarray, dz_drow_up: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Ground gradient (dz/d east, dz/d north) from the grid gradient of a block."""
        return gradient_on_ground(self.vectors(rows, cols), dz_dcol, dz_drow_up)

    # --- for the compiled routing kernels --------------------------------------------
    def lattice(self) -> tuple:
        """For ``slopescreen.maps.terrain.routing.route``: (row step, column step, last row,
        last column, |u|, |v| and the cell area on the nodes)."""
        du = np.hypot(self.u[..., 0], self.u[..., 1])
        dv = np.hypot(self.v[..., 0], self.v[..., 1])
        area = self._node_areas()
        return (
            np.int64(self.row_step),
            np.int64(self.col_step),
            np.int64(self.node_rows[-1]),
            np.int64(self.node_cols[-1]),
            np.ascontiguousarray(du),
            np.ascontiguousarray(dv),
            np.ascontiguousarray(area),
        )

    # --- what the run states -----------------------------------------------------------
    def scale_range(self) -> tuple[float, float]:
        """Smallest and largest map scale (map length / ground length) along the two axes
        over the grid; (1, 1) for a local CRS, NaN for a geographic one (degrees)."""
        if self.kind == "geographic":
            return (math.nan, math.nan)
        k = np.concatenate(
            [
                (self.map_step[0] / np.hypot(self.u[..., 0], self.u[..., 1])).ravel(),
                (self.map_step[1] / np.hypot(self.v[..., 0], self.v[..., 1])).ravel(),
            ]
        )
        return float(k.min()), float(k.max())

    def convergence_range_deg(self) -> tuple[float, float]:
        """Angle from true north to the grid's up direction, clockwise, degrees."""
        gamma = np.degrees(np.arctan2(self.v[..., 0], self.v[..., 1]))
        return float(gamma.min()), float(gamma.max())

    def max_axis_skew_deg(self) -> float:
        """Largest departure of the angle between the grid's axes on the ground from 90
        degrees (zero for conformal projections and geographic grids)."""
        dot = self.u[..., 0] * self.v[..., 0] + self.u[..., 1] * self.v[..., 1]
        norm = np.hypot(self.u[..., 0], self.u[..., 1]) * np.hypot(self.v[..., 0], self.v[..., 1])
        return float(np.degrees(np.max(np.abs(np.arcsin(np.clip(dot / norm, -1, 1))))))

    def ground_spacing_m(self) -> tuple[float, float, float, float]:
        """Smallest and largest |u| and |v| (ground lengths of a column and a row step)."""
        du = np.hypot(self.u[..., 0], self.u[..., 1])
        dv = np.hypot(self.v[..., 0], self.v[..., 1])
        return float(du.min()), float(du.max()), float(dv.min()), float(dv.max())

    @property
    def note(self) -> str:
        """One line for the console, the manifest, the raster tags and the report."""
        du0, du1, dv0, dv1 = self.ground_spacing_m()
        cells = f"cells {_span(du0, du1)} m x {_span(dv0, dv1)} m on the ground"
        if self.kind == "local":
            return f"local CRS without a datum: map units taken as ground metres (scale 1); {cells}"
        if self.kind == "geographic":
            return (
                f"geographic CRS: {cells}, measured on the ellipsoid; slope, flow lengths and "
                "areas in ground metres"
            )
        k0, k1 = self.scale_range()
        g0, g1 = (round(g, 3) + 0.0 for g in self.convergence_range_deg())  # no "-0.000"
        skew = self.max_axis_skew_deg()
        note = (
            f"projected CRS, map scale {_span(k0, k1, 4)}; slope, flow lengths and areas "
            f"corrected to the ground ({cells}); grid north {g0:+.3f} to {g1:+.3f} deg from "
            "true north"
        )
        if skew > 0.01:
            note += f"; grid axes up to {skew:.2g} deg from square on the ground"
        return note


def gradient_on_ground(
    vectors: tuple[np.ndarray, ...], dz_dcol: np.ndarray, dz_drow_up: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Ground gradient (dz/d east, dz/d north) solving u . g = dz/dcol, v . g = dz/drow_up.

    >>> gradient_on_ground((2.0, 0.0, 0.0, 4.0), 1.0, 1.0)  # 2 m columns, 4 m rows
    (0.5, 0.25)
    """
    ue, un, ve, vn = vectors
    det = ue * vn - un * ve
    return (dz_dcol * vn - dz_drow_up * un) / det, (ue * dz_drow_up - ve * dz_dcol) / det


def _span(a: float, b: float, digits: int = 4) -> str:
    lo, hi = f"{a:.{digits}g}", f"{b:.{digits}g}"
    return lo if lo == hi else f"{lo}-{hi}"


def _nodes(n: int, step: int) -> np.ndarray:
    nodes = np.arange(0, n, step, dtype=np.int64)
    return nodes if nodes[-1] == n - 1 else np.append(nodes, n - 1)


def _weights(nodes: np.ndarray, step: int, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lower node index and fraction of the way to the next node, for each index."""
    i = np.minimum(idx // step, nodes.size - 2)
    lo, hi = nodes[i], nodes[i + 1]
    return i, (idx - lo) / (hi - lo)


class _Measure:
    """Ground vectors at cell centres, from the CRS (pyproj)."""

    def __init__(self, transform: object, crs: object) -> None:
        from pyproj import CRS, Transformer

        self.t = transform
        self.crs = CRS.from_user_input(crs.to_wkt())  # type: ignore[attr-defined]
        geodetic = self.crs.geodetic_crs
        self.kind = (
            "local"
            if geodetic is None
            else ("geographic" if self.crs.is_geographic else "projected")
        )
        if self.kind == "local":
            self.factor = _unit_factor(self.crs)
            return
        from pyproj.exceptions import ProjError

        self.geod = self.crs.get_geod()
        try:
            self.to_lonlat = Transformer.from_crs(self.crs, geodetic, always_xy=True)
        except ProjError as exc:
            raise InputError(
                f"DEM CRS {self.crs.name!r}: pyproj cannot convert it to latitude and "
                f"longitude ({str(exc).splitlines()[0][:120]}); reproject the DEM first"
            ) from None

    def __call__(self, rows: np.ndarray, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """u and v, each (len(rows), len(cols), 2), at the centres of those cells."""
        t = self.t
        a, e = t.a, t.e  # type: ignore[attr-defined]
        shape = (rows.size, cols.size, 2)
        if self.kind == "local":
            u = np.broadcast_to([a * self.factor, 0.0], shape).copy()
            v = np.broadcast_to([0.0, -e * self.factor], shape).copy()
            return u, v
        x = t.c + (cols[None, :] + 0.5) * a + 0 * rows[:, None]  # type: ignore[attr-defined]
        y = t.f + (rows[:, None] + 0.5) * e + 0 * cols[None, :]  # type: ignore[attr-defined]
        centre = self._lonlat(x, y)
        steps = []
        for dx, dy in ((a / 2, 0.0), (-a / 2, 0.0), (0.0, -e / 2), (0.0, e / 2)):
            lon, lat = self._lonlat(x + dx, y + dy)
            az, _, dist = self.geod.inv(centre[0], centre[1], lon, lat)
            az = np.radians(az)
            steps.append(np.stack([dist * np.sin(az), dist * np.cos(az)], axis=-1))
        east, west, north, south = steps
        return east - west, north - south

    def _lonlat(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        from pyproj.exceptions import ProjError

        try:
            lon, lat = self.to_lonlat.transform(x, y, errcheck=True)
        except ProjError as exc:
            raise InputError(
                f"DEM CRS {self.crs.name!r}: cannot convert its coordinates to latitude and "
                f"longitude ({str(exc).splitlines()[0]}); reproject the DEM first"
            ) from None
        lon, lat = np.asarray(lon, float), np.asarray(lat, float)
        if not (np.isfinite(lon).all() and np.isfinite(lat).all()):
            raise InputError(
                f"DEM CRS {self.crs.name!r}: some cells have no latitude and longitude "
                "(outside the projection's domain); reproject the DEM first"
            )
        return lon, lat


def _unit_factor(crs: object) -> float:
    try:
        return float(crs.axis_info[0].unit_conversion_factor)  # type: ignore[attr-defined]
    except (AttributeError, IndexError, TypeError):
        return 1.0


def ground_geometry(transform: object, crs: object, height: int, width: int) -> Ground:
    """The ground vectors of a north-up grid (pixel width > 0, height < 0)."""
    measure = _Measure(transform, crs)
    a, e = transform.a, transform.e  # type: ignore[attr-defined]
    factor = _unit_factor(measure.crs) if measure.kind != "geographic" else 1.0
    map_step = (abs(a) * factor, abs(e) * factor)
    probe_rows = _nodes(height, max(1, height // 4))
    ends = np.array([0, width // 2, width - 1], dtype=np.int64)
    u, v = measure(probe_rows, ends)
    by_row_only = all(
        np.allclose(w[:, k], w[:, 0], rtol=1e-12, atol=1e-9) for w in (u, v) for k in (1, 2)
    )
    if by_row_only:  # geographic grids, Mercator: exact on every row
        rows = np.arange(height, dtype=np.int64)
        cols = np.array([0, width - 1], dtype=np.int64)
        u, v = measure(rows, cols[:1])
        u, v = np.repeat(u, 2, axis=1), np.repeat(v, 2, axis=1)
        return Ground(rows, cols, 1, width - 1, u, v, map_step, measure.kind, 0.0)
    step = FIRST_STEP
    while True:
        rows, cols = _nodes(height, step), _nodes(width, step)
        u, v = measure(rows, cols)
        ground = Ground(rows, cols, step, step, u, v, map_step, measure.kind, 0.0)
        error = _midpoint_error(ground, measure)
        if error <= MAX_INTERPOLATION_ERROR or step == 1:
            return Ground(rows, cols, step, step, u, v, map_step, measure.kind, error)
        step //= 2


def _midpoint_error(ground: Ground, measure: _Measure) -> float:
    """Largest relative error of the interpolated vectors at midpoints between nodes."""
    rows = (ground.node_rows[:-1] + ground.node_rows[1:]) // 2
    cols = (ground.node_cols[:-1] + ground.node_cols[1:]) // 2
    pick_r = rows[:: max(1, rows.size // 12)]
    pick_c = cols[:: max(1, cols.size // 12)]
    u, v = measure(pick_r, pick_c)
    worst = 0.0
    for r_i, r in enumerate(pick_r):
        for c_i, c in enumerate(pick_c):
            ue, un, ve, vn = ground.vectors(slice(r, r + 1), slice(c, c + 1))
            for exact, approx in ((u[r_i, c_i], (ue, un)), (v[r_i, c_i], (ve, vn))):
                got = np.array([float(np.ravel(approx[0])[0]), float(np.ravel(approx[1])[0])])
                worst = max(worst, float(np.hypot(*(got - exact)) / np.hypot(*exact)))
    return worst


def ground_distances_m(
    transform: object,
    crs: object,
    rows: slice,
    cols: slice,
    points_x: np.ndarray,
    points_y: np.ndarray,
) -> np.ndarray:
    """Ground distances (m) from each point (map coordinates in the grid's CRS) to the
    centre of each cell of the window: (points, rows, cols). Geodesic on the CRS's
    ellipsoid (pyproj.Geod, Karney 2013) wherever the CRS has one, whatever its
    projection; grid units times their length in metres on a local CRS."""
    measure = _Measure(transform, crs)
    t = transform
    r = np.arange(rows.start, rows.stop)
    c = np.arange(cols.start, cols.stop)
    x = t.c + (c[None, :] + 0.5) * t.a + 0.0 * r[:, None]  # type: ignore[attr-defined]
    y = t.f + (r[:, None] + 0.5) * t.e + 0.0 * c[None, :]  # type: ignore[attr-defined]
    out = np.empty((len(points_x), r.size, c.size))
    if measure.kind == "local":
        for k, (px, py) in enumerate(zip(points_x, points_y, strict=True)):
            out[k] = np.hypot(x - px, y - py) * measure.factor
        return out
    lon, lat = measure._lonlat(x, y)
    p_lon, p_lat = measure._lonlat(np.asarray(points_x, float), np.asarray(points_y, float))
    for k in range(len(points_x)):
        _, _, dist = measure.geod.inv(
            np.full(lon.shape, p_lon[k]), np.full(lat.shape, p_lat[k]), lon, lat
        )
        out[k] = dist
    return out
