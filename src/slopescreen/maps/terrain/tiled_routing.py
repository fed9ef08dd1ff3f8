"""Flow routing tile by tile: the same depression filling, flat steps and D-infinity
contributing area as ``slopescreen.maps.terrain.routing.route`` with memory bounded by the tile
size.

Each stage maps one function over the tiles (in this process or on dask workers, through a
runner); a task reads its window (with one ring of neighbouring cells) from the DEM or from
the tile's own work files, and returns only what lies on its edges. The client joins the
edges and sends each tile what it needs from its neighbours.

1. Fill (after Barnes 2016): each tile is cut into basins of steepest descent inside it
   (``routing.fill_framed``; a basin draining to no data is label 0, the outlet), the
   lowest pass between two touching basins kept; border cells of neighbouring tiles join
   their basins at max(elevation a, elevation b). The lowest level at which each basin
   drains to label 0 (minimax over this graph of passes, solved once on the client)
   raises each cell to max(its elevation, its basin's level): the whole-grid fill, bit for
   bit.
2. Flat steps: each tile counts steps to drain across its flats from its own drains and
   from the steps its ring holds; tiles whose ring would shorten a border cell's steps run
   again until none would (a flat spanning k tiles needs up to k rounds).
3. Directions and contributing area: each tile's own area accumulated inside it; what
   leaves into a neighbour's cells enters there in the next round and is carried
   downstream of those cells only (contributing area is linear in what flows in), until
   nothing crosses a tile edge. The area equals the whole-grid area but for the order of
   summation. Both are sums of positive terms, each an area times the shares along a flow
   path; with at most 9 roundings a step (the share's product, the sum over up to 8 donors)
   and one more a round, each is within (9 L + R + 1) u of the exact sum for u = 2^-53, L
   the longest flow path in cells and R the rounds, so they differ by at most
   2 (9 L + R + 1) u: 2e-9 for a path of 10^6 cells, below the float32 of the output (6e-8)
   up to 3 x 10^7 cells. The same bytes for any number of workers (rounds are synchronous,
   inflows summed in tile order).

Work files: at most 29 bytes per cell on disk at the end (receivers, shares, widths, area,
flags; the basin labels, filled surface and steps on the way), in a folder every worker can
reach.

References
----------
Barnes, R. (2016). Parallel priority-flood depression filling for trillion cell digital
elevation models on desktops or clusters. Computers & Geosciences 96, 56-68.
Barnes, R. (2017). Parallel non-divergent flow accumulation for trillion cell digital
elevation models on desktops or clusters. Environmental Modelling & Software 92, 202-212.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.maps.region.runners import Runner
from slopescreen.maps.terrain import flow_kernels as fk
from slopescreen.maps.terrain import routing

Echo = Callable[[str], None]


@dataclass(frozen=True)
class Tile:
    """Tile ``index`` at tile row ``ti``, tile column ``tj``: grid rows r0:r1, cols c0:c1."""

    index: int
    ti: int
    tj: int
    r0: int
    r1: int
    c0: int
    c1: int

    @property
    def shape(self) -> tuple[int, int]:
        return self.r1 - self.r0, self.c1 - self.c0


@dataclass(frozen=True)
class Layout:
    """A grid of ``height`` x ``width`` cells cut into tiles of ``size`` x ``size``."""

    height: int
    width: int
    size: int

    @property
    def tile_rows(self) -> int:
        return -(-self.height // self.size)

    @property
    def tile_cols(self) -> int:
        return -(-self.width // self.size)

    def tiles(self) -> list[Tile]:
        out = []
        for ti in range(self.tile_rows):
            for tj in range(self.tile_cols):
                r0, c0 = ti * self.size, tj * self.size
                out.append(
                    Tile(
                        len(out),
                        ti,
                        tj,
                        r0,
                        min(r0 + self.size, self.height),
                        c0,
                        min(c0 + self.size, self.width),
                    )
                )
        return out

    def ring_cells(self, t: Tile) -> tuple[np.ndarray, np.ndarray]:
        """Grid (row, column) of a tile's ring cells in ``flow_kernels.ring_index`` order."""
        h, w = t.shape
        cols = np.arange(t.c0 - 1, t.c1 + 1)
        rows = np.arange(t.r0, t.r1)
        r = np.concatenate([np.full(w + 2, t.r0 - 1), np.full(w + 2, t.r1), rows, rows])
        c = np.concatenate([cols, cols, np.full(h, t.c0 - 1), np.full(h, t.c1)])
        return r, c


class Seams:
    """Values on the border cells of every tile, joined into whole rows and columns along
    the tile edges, from which each tile's ring is cut."""

    def __init__(self, layout: Layout, dtype: type, fill: float) -> None:
        self.layout, self.fill = layout, fill
        self.top = np.full((layout.tile_rows, layout.width), fill, dtype)
        self.bottom = np.full((layout.tile_rows, layout.width), fill, dtype)
        self.left = np.full((layout.tile_cols, layout.height), fill, dtype)
        self.right = np.full((layout.tile_cols, layout.height), fill, dtype)

    def put(self, t: Tile, sides: tuple[np.ndarray, ...]) -> None:
        """Store a tile's border (top row, bottom row, left column, right column)."""
        top, bottom, left, right = sides
        self.top[t.ti, t.c0 : t.c1] = top
        self.bottom[t.ti, t.c0 : t.c1] = bottom
        self.left[t.tj, t.r0 : t.r1] = left
        self.right[t.tj, t.r0 : t.r1] = right

    def _row(self, seam: np.ndarray, at: int, t: Tile) -> np.ndarray:
        row = np.full(t.c1 - t.c0 + 2, self.fill, seam.dtype)
        if 0 <= at < seam.shape[0]:
            lo, hi = max(t.c0 - 1, 0), min(t.c1 + 1, self.layout.width)
            row[lo - (t.c0 - 1) : hi - (t.c0 - 1)] = seam[at, lo:hi]
        return row

    def ring(self, t: Tile) -> np.ndarray:
        """The tile's ring in ``flow_kernels.ring_index`` order (``fill`` beyond the grid)."""
        beyond = np.full(t.r1 - t.r0, self.fill, self.top.dtype)
        left = self.right[t.tj - 1, t.r0 : t.r1] if t.tj > 0 else beyond
        right = self.left[t.tj + 1, t.r0 : t.r1] if t.tj + 1 < self.layout.tile_cols else beyond
        return np.concatenate(
            [self._row(self.bottom, t.ti - 1, t), self._row(self.top, t.ti + 1, t), left, right]
        )


def sides(a: np.ndarray) -> tuple[np.ndarray, ...]:
    """Top row, bottom row, left column and right column of a tile's array (copies)."""
    return a[0].copy(), a[-1].copy(), a[:, 0].copy(), a[:, -1].copy()


def frame(inner: np.ndarray, ring: np.ndarray) -> np.ndarray:
    """A tile's (h, w) array framed by its ring vector: (h + 2, w + 2)."""
    h, w = inner.shape
    out = np.empty((h + 2, w + 2), inner.dtype)
    out[1:-1, 1:-1] = inner
    out[0], out[-1] = ring[: w + 2], ring[w + 2 : 2 * w + 4]
    out[1:-1, 0], out[1:-1, -1] = ring[2 * w + 4 : 2 * w + 4 + h], ring[2 * w + 4 + h :]
    return out


# --- sources of cells -------------------------------------------------------------------
class ArraySource:
    """Windows of an array in memory (tests and small grids), as copies: the tasks write
    into the windows they read."""

    def __init__(self, array: np.ndarray) -> None:
        self.array = array

    def __call__(self, rows: slice, cols: slice) -> np.ndarray:
        return np.array(self.array[rows, cols], dtype=np.float64)


class NpySource:
    """Windows of a .npy file, memory-mapped (rows read in blocks, never at random)."""

    def __init__(self, path: Path) -> None:
        self.path = path

    def __call__(self, rows: slice, cols: slice) -> np.ndarray:
        return np.array(np.load(self.path, mmap_mode="r")[rows, cols])


def framed_read(source: Callable, rows: slice, cols: slice, height: int, width: int) -> np.ndarray:
    """A window of a grid of ``height`` x ``width`` cells with one ring of neighbouring
    cells, NaN beyond the grid."""
    out = np.full((rows.stop - rows.start + 2, cols.stop - cols.start + 2), np.nan)
    r0, r1 = max(rows.start - 1, 0), min(rows.stop + 1, height)
    c0, c1 = max(cols.start - 1, 0), min(cols.stop + 1, width)
    out[r0 - rows.start + 1 : r1 - rows.start + 1, c0 - cols.start + 1 : c1 - cols.start + 1] = (
        source(slice(r0, r1), slice(c0, c1))
    )
    return out


# --- work files -------------------------------------------------------------------------
def _save(folder: Path, t: Tile, name: str, a: np.ndarray) -> None:
    """Write a tile's work file; the inner part of a framed array is copied first (numpy
    writes a strided view element by element: 18x slower for a 4000 x 4000 tile)."""
    np.save(folder / f"t{t.index}-{name}.npy", np.ascontiguousarray(a))


def _load(folder: Path, t: Tile, name: str, mode: str | None = None) -> np.ndarray:
    """A tile's work file; memory-mapped with ``mode`` (a round of flow between tiles reads
    and changes only the cells downstream of what enters)."""
    return np.load(folder / f"t{t.index}-{name}.npy", mmap_mode=mode)


# --- stage 1: fill each tile on its own -------------------------------------------------
def _fill_task(source: Callable, folder: Path, t: Tile, height: int, width: int) -> dict:
    z, valid = routing.surface(
        framed_read(source, slice(t.r0, t.r1), slice(t.c0, t.c1), height, width)
    )
    labels, a, b, weight = routing.fill_framed(z, valid, labelled=True, parallel=False)
    lab = labels[1:-1, 1:-1]
    _save(folder, t, "labels", lab)
    border = zip(sides(z[1:-1, 1:-1]), sides(valid[1:-1, 1:-1]), strict=True)
    return {
        "labels": int(lab.max(initial=0)) + 1,
        "pairs": (a, b, weight),
        "z": tuple(np.where(v, e, np.nan) for e, v in border),  # elevations: the basins
        "label": sides(lab),  # are raised once their levels are known
    }


def _seam_pairs(upper: tuple, lower: tuple) -> Iterator[tuple[np.ndarray, ...]]:
    """Spill pairs between two facing lines of border cells (values, global labels):
    each cell with the three cells facing it, at max(elevation a, elevation b)."""
    (zu, lu), (zl, ll) = upper, lower
    n = zu.size
    for shift in (-1, 0, 1):
        a = slice(max(0, -shift), min(n, n - shift))
        b = slice(max(0, shift), min(n, n + shift))
        ok = (lu[a] >= 0) & (ll[b] >= 0)
        yield lu[a][ok], ll[b][ok], np.maximum(zu[a][ok], zl[b][ok])


def _spill_levels(layout: Layout, tiles: list[Tile], filled: list[dict]) -> list[np.ndarray]:
    """Each tile's label levels (index: local label), from the spill graph of all tiles."""
    offsets = np.cumsum([0] + [r["labels"] - 1 for r in filled])
    z_seams = Seams(layout, np.float64, np.nan)
    l_seams = Seams(layout, np.int64, -1)
    parts = []
    for t, result in zip(tiles, filled, strict=True):
        to_global = np.concatenate([[0], np.arange(1, result["labels"]) + offsets[t.index]])
        a, b, weight = result["pairs"]
        parts.append((to_global[a], to_global[b], weight))
        z_seams.put(t, result["z"])
        l_seams.put(t, tuple(np.where(s >= 0, to_global[np.maximum(s, 0)], -1)
                             for s in result["label"]))  # fmt: skip
    for i in range(layout.tile_rows - 1):
        parts += _seam_pairs(
            (z_seams.bottom[i], l_seams.bottom[i]), (z_seams.top[i + 1], l_seams.top[i + 1])
        )
    for j in range(layout.tile_cols - 1):
        parts += _seam_pairs(
            (z_seams.right[j], l_seams.right[j]), (z_seams.left[j + 1], l_seams.left[j + 1])
        )
    a = np.concatenate([p[0] for p in parts]).astype(np.int64)
    b = np.concatenate([p[1] for p in parts]).astype(np.int64)
    weight = np.concatenate([p[2] for p in parts])
    level = routing.spill_graph_levels(int(offsets[-1]) + 1, a, b, weight)
    return [
        np.concatenate([[-np.inf], level[offsets[t.index] + 1 : offsets[t.index] + r["labels"]]])
        for t, r in zip(tiles, filled, strict=True)
    ]


# --- stage 2: raise each tile, count steps across flats ---------------------------------
def _raise_task(
    source: Callable, folder: Path, t: Tile, level: np.ndarray, ring_z: np.ndarray
) -> dict:
    """Raise the tile's elevations (read again from ``source``) to its labels' levels and
    count its flat steps from its own drains (and the ring's no data)."""
    labels = _load(folder, t, "labels")
    own = source(slice(t.r0, t.r1), slice(t.c0, t.c1))
    fk.raise_to_levels(own, labels, level)
    del labels
    _save(folder, t, "z", own)
    (folder / f"t{t.index}-labels.npy").unlink()
    z, valid = routing.surface(frame(own, ring_z))
    steps = np.full(z.shape, fk.NO_STEPS, np.int32)  # nothing known of the ring yet
    routing.flat_steps(z, valid, steps)
    _save(folder, t, "steps", steps[1:-1, 1:-1])
    return {"steps": sides(steps[1:-1, 1:-1])}


def _steps_task(folder: Path, t: Tile, ring_z: np.ndarray, ring_steps: np.ndarray) -> dict:
    """Lower the tile's flat steps where its ring now offers fewer."""
    z, valid = routing.surface(frame(_load(folder, t, "z"), ring_z))
    steps = frame(_load(folder, t, "steps"), ring_steps)
    routing.flat_steps(z, valid, steps, fresh=False)
    _save(folder, t, "steps", steps[1:-1, 1:-1])
    return {"steps": sides(steps[1:-1, 1:-1])}


def _final_borders(layout: Layout, tiles: list[Tile], filled: list[dict], levels: list) -> Seams:
    """The filled surface on every tile's border: max(elevation, its label's level)."""
    seams = Seams(layout, np.float64, np.nan)
    for t, result in zip(tiles, filled, strict=True):
        level = levels[t.index]
        pairs = zip(result["z"], result["label"], strict=True)
        seams.put(t, tuple(np.where(b >= 0, np.maximum(a, level[np.maximum(b, 0)]), np.nan)
                           for a, b in pairs))  # fmt: skip
    return seams


def _shortened(t: Tile, z: Seams, steps: Seams) -> bool:
    """Would the tile's ring shorten the flat steps of any of its border cells?"""
    h, w = t.shape
    ring_z, ring_s = z.ring(t), steps.ring(t).astype(np.int64)
    own_z = (z.top[t.ti, t.c0 : t.c1], z.bottom[t.ti, t.c0 : t.c1],
             z.left[t.tj, t.r0 : t.r1], z.right[t.tj, t.r0 : t.r1])  # fmt: skip
    own_s = (steps.top[t.ti, t.c0 : t.c1], steps.bottom[t.ti, t.c0 : t.c1],
             steps.left[t.tj, t.r0 : t.r1], steps.right[t.tj, t.r0 : t.r1])  # fmt: skip
    top, bottom = slice(0, w + 2), slice(w + 2, 2 * w + 4)
    left = np.r_[0, 2 * w + 4 : 2 * w + 4 + h, w + 2]
    right = np.r_[w + 1, 2 * w + 4 + h : 2 * w + 4 + 2 * h, 2 * w + 3]
    for line, oz, os in zip((top, bottom, left, right), own_z, own_s, strict=True):
        rz, rs = ring_z[line], ring_s[line]
        n = oz.size
        for k in range(3):
            near = (rz[k : k + n] == oz) & (rs[k : k + n] < fk.NO_STEPS)
            if np.any(near & (rs[k : k + n] + 1 < os)):
                return True
    return False


# --- stage 3: directions and contributing area -----------------------------------------
def _route_task(
    folder: Path,
    t: Tile,
    lattice: tuple,
    ring_z: np.ndarray,
    ring_steps: np.ndarray,
    sources: Callable | None,
) -> dict:
    """Directions and each cell's own contributing area inside the tile; returns what
    leaves into its ring."""
    z, valid = routing.surface(frame(_load(folder, t, "z"), ring_z))
    steps = frame(_load(folder, t, "steps"), ring_steps)
    flags = (
        np.zeros(0, np.uint8)
        if sources is None
        else np.ascontiguousarray(sources(slice(t.r0, t.r1), slice(t.c0, t.c1)), np.uint8).ravel()
    )
    flow, area, ring = routing.route_framed(
        z, valid, steps, lattice, (t.r0, t.c0), flags, parallel=False
    )  # one thread a tile: tiles run side by side
    for name, a in zip(("recv1", "recv2", "share1", "width"), flow, strict=True):
        _save(folder, t, name, a)
    area[~valid[1:-1, 1:-1].ravel()] = np.nan  # no flow reaches a no-data cell
    _save(folder, t, "area", area)
    _save(folder, t, "flags", flags)
    for name in ("steps", "z"):
        (folder / f"t{t.index}-{name}.npy").unlink()
    return {"ring": ring}


def _inflow_task(
    folder: Path, t: Tile, entries: np.ndarray, amounts: np.ndarray, flags_in: np.ndarray
) -> dict:
    """A round of flow between tiles: what enters is carried down the cells below it;
    returns what leaves into the ring."""
    flow = tuple(_load(folder, t, name, "r") for name in ("recv1", "recv2", "share1"))
    area, flags = _load(folder, t, "area", "r+"), _load(folder, t, "flags", "r+")
    ring = routing.propagate(flow, t.shape, area, flags, entries, amounts, flags_in)
    area.flush()
    if flags.size:
        flags.flush()
    return {"ring": ring}


def _inflows(
    layout: Layout, tiles: list[Tile], results: list[tuple[Tile, dict]]
) -> dict[int, tuple[np.ndarray, ...]]:
    """What each tile receives from its neighbours' rings: (inner cells, amounts, flags),
    in tile order (so the sums are the same whatever ran where)."""
    got: dict[int, list[tuple[np.ndarray, ...]]] = {}
    for t, result in results:
        amounts, flags = result["ring"]
        leaving = amounts > 0.0
        if not leaving.any():
            continue
        r, c = (x[leaving] for x in layout.ring_cells(t))
        target = (r // layout.size) * layout.tile_cols + c // layout.size
        for u in np.unique(target):
            here = target == u
            tu = tiles[int(u)]
            inner = (r[here] - tu.r0) * (tu.c1 - tu.c0) + c[here] - tu.c0
            got.setdefault(int(u), []).append((inner, amounts[leaving][here], flags[leaving][here]))
    return {
        u: tuple(np.concatenate([p[k] for p in parts]) for k in range(3))
        for u, parts in sorted(got.items())
    }


def fill_tiles(
    source: Callable[[slice, slice], np.ndarray],
    layout: Layout,
    folder: Path,
    runner: Runner,
    lap: Callable[[str], None] = lambda stage: None,
) -> tuple[Seams, Seams, int]:
    """Stages 1 and 2: every tile filled (``folder``/t{i}-z.npy, the whole-grid fill bit
    for bit) and its flat steps counted (t{i}-steps.npy). Returns the tiles' borders of
    both and the rounds across flats."""
    tiles = layout.tiles()
    h, w = layout.height, layout.width
    filled = list(runner(_fill_task, [(source, folder, t, h, w) for t in tiles]))
    lap("fill")
    levels = _spill_levels(layout, tiles, filled)
    z_seams = _final_borders(layout, tiles, filled, levels)
    lap("spill graph")
    steps = Seams(layout, np.int32, fk.NO_STEPS)
    jobs = [(source, folder, t, levels[t.index], z_seams.ring(t)) for t in tiles]
    for t, result in zip(tiles, runner(_raise_task, jobs), strict=True):
        steps.put(t, result["steps"])
    del filled, levels
    todo, flat_rounds = [t for t in tiles if _shortened(t, z_seams, steps)], 1
    while todo:
        flat_rounds += 1
        jobs = [(folder, t, z_seams.ring(t), steps.ring(t)) for t in todo]
        for t, result in zip(todo, runner(_steps_task, jobs), strict=True):
            steps.put(t, result["steps"])
        todo = [t for t in tiles if _shortened(t, z_seams, steps)]
    lap("raise and flat steps")
    return z_seams, steps, flat_rounds


def route_tiles(
    source: Callable[[slice, slice], np.ndarray],
    layout: Layout,
    lattice: tuple,
    folder: Path,
    runner: Runner,
    sources: Callable[[slice, slice], np.ndarray] | None = None,
    echo: Echo | None = None,
) -> dict:
    """Route the grid read by ``source`` (new float64 windows, NaN for no data) tile by tile;
    per tile, ``folder`` ends with t{i}-area.npy (m2), -width.npy (contour width, m) and
    -flags.npy (with ``sources``: the cells downstream of them). Returns the tile and
    round counts and the seconds of each stage (the spill graph and the edge exchange are
    the client's own work)."""
    tiles = layout.tiles()
    seconds: dict[str, float] = {}
    clock = [time.perf_counter()]

    def lap(stage: str) -> None:
        now = time.perf_counter()
        seconds[stage] = seconds.get(stage, 0.0) + now - clock[0]
        clock[0] = now

    z_seams, steps, flat_rounds = fill_tiles(source, layout, folder, runner, lap)
    jobs = [(folder, t, lattice, z_seams.ring(t), steps.ring(t), sources) for t in tiles]
    results = list(zip(tiles, runner(_route_task, jobs), strict=True))
    lap("directions and area")
    flow_rounds = 1
    while True:
        inflows = _inflows(layout, tiles, results)
        lap("edge exchange")
        if not inflows:
            break
        flow_rounds += 1
        jobs = [(folder, tiles[u], *inflows[u]) for u in inflows]
        results = list(zip([tiles[u] for u in inflows], runner(_inflow_task, jobs), strict=True))
        lap("flow rounds")
    (echo or (lambda _: None))(
        f"routing: {len(tiles)} tiles of up to {layout.size} x {layout.size} cells; "
        f"{flat_rounds} round(s) across flats, {flow_rounds} of flow between tiles; "
        + ", ".join(f"{stage} {s:.1f} s" for stage, s in seconds.items())
    )
    return {
        "tiles": len(tiles),
        "flat_rounds": flat_rounds,
        "flow_rounds": flow_rounds,
        "seconds": seconds,
    }


def tile_outputs(folder: Path, t: Tile) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A routed tile's contributing area (m2, NaN at no data), specific catchment area (m,
    float32) and flags."""
    area = _load(folder, t, "area").reshape(t.shape)
    width = _load(folder, t, "width").reshape(t.shape)
    flags = _load(folder, t, "flags")
    return area, (area / width).astype(np.float32), flags.reshape(t.shape) if flags.size else flags


def route_array(
    elevation_m: np.ndarray,
    lattice: tuple,
    size: int,
    folder: Path,
    runner: Runner,
    sources: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, dict]:
    """``route_tiles`` on an array in memory, the tiles joined again: (area, sca, flags or
    None, round counts), as ``slopescreen.maps.terrain.routing.route`` returns them."""
    layout = Layout(*np.shape(elevation_m), size)
    info = route_tiles(
        ArraySource(elevation_m),
        layout,
        lattice,
        folder,
        runner,
        None if sources is None else ArraySource(sources),
    )
    area = np.empty((layout.height, layout.width))
    sca = np.empty(area.shape, np.float32)
    flags = None if sources is None else np.empty(area.shape, np.uint8)
    for t in layout.tiles():
        window = (slice(t.r0, t.r1), slice(t.c0, t.c1))
        area[window], sca[window], tile_flags = tile_outputs(folder, t)
        if flags is not None:
            flags[window] = tile_flags
    return area, sca, flags, info
