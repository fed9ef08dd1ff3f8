"""The run-out reach sweep (:func:`slopescreen.maps.terrain.reach.spread_reach`) tile by
tile, with memory bounded by the tile size, in this process or on dask workers.

Each round maps one task over the tiles that have something to do: a task reads its
window with one ring of neighbouring cells, places its sources and whatever enters it from
its neighbours, sweeps, saves its cells' results and returns what reached its ring (the
flow leaving it). The client joins what leaves every tile into what enters each (masses
summed in tile order, the rest as the best state), and runs again every tile whose entry
changed, from its sources and its whole entry, until none changes. Flow mass moves only
downhill, and the reach, angle, energy and share merge as maxima and minima, so this ends
(a path crossing k tile edges needs up to k + 1 rounds) at what one sweep of the whole grid
gives: the same cells reached and the same angles; the shares differ only in the order in
which masses are summed. Rounds are synchronous and joined in tile order, so any number of
workers gives the same bytes.

A sweep takes the reached cells from the highest down from a heap, so a round costs what
its flow reaches, plus setting up the tile's state (about 60 bytes a cell: the most a task
holds). Work files per tile: its framed elevations (``t{i}-reach-z.npy``, read from the DEM
once, memory-mapped in later rounds) and the cells reached with their share, tan(alpha),
worst source value and cut-off flag (``t{i}-reach.npz``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.maps.region.runners import Runner
from slopescreen.maps.terrain import reach
from slopescreen.maps.terrain.tiled_routing import Layout, Tile, framed_read

# what a tile's flow carries across its edge, merged over tiles: sum, max, min, max, max, min
STATE = ("mass", "margin", "tan_alpha", "energy", "share", "worst")
OUTPUTS = ("share", "tan_alpha", "worst", "cut")


@dataclass(frozen=True)
class SweepRules:
    """The sweep's constants (see ``spread_reach``)."""

    exponent: float
    tan_phi: float  # < 0: no energy line
    max_energy: float  # v_max^2 / 2, J/kg
    min_mass: float


@dataclass(frozen=True)
class ArrayStates:
    """Sources from whole-grid arrays in memory (tests and small grids): mass, margin,
    tan(alpha) and worst value per cell (margin -inf where no source lies)."""

    mass: np.ndarray
    margin: np.ndarray
    tan_alpha: np.ndarray
    worst: np.ndarray

    def __call__(self, t: Tile) -> tuple[np.ndarray, ...]:
        """The tile's sources: inner flat indices, mass, margin, tan(alpha), worst."""
        window = (slice(t.r0, t.r1), slice(t.c0, t.c1))
        at = np.flatnonzero(self.margin[window] >= 0.0)
        return (at, *(np.asarray(a[window], np.float64).ravel()[at] for a in self._fields()))

    def _fields(self) -> tuple[np.ndarray, ...]:
        return self.mass, self.margin, self.tan_alpha, self.worst


@dataclass(frozen=True)
class ArraySteps:
    """Ground lengths of a column and a row step from whole-grid arrays (or scalars)."""

    col_step: np.ndarray
    row_step: np.ndarray

    def __call__(self, rows: slice, cols: slice) -> tuple[np.ndarray, np.ndarray]:
        return tuple(  # type: ignore[return-value]
            a[rows, cols] if np.ndim(a) == 2 else a for a in (self.col_step, self.row_step)
        )


def _framed_steps(steps: Callable, t: Tile) -> tuple[np.ndarray, np.ndarray]:
    """The tile's step lengths framed by one ring (the ring's own are never used: only a
    taken cell, inside the tile, sends flow). A length constant along an axis stays one
    value there (broadcast, no copy): on a projected grid the lengths are two numbers."""
    h, w = t.shape
    out = []
    for a in steps(slice(t.r0, t.r1), slice(t.c0, t.c1)):
        a = np.asarray(a, np.float64)
        a = a.reshape((1,) * (2 - a.ndim) + a.shape)
        pad = [(1, 1) if n > 1 else (0, 0) for n in a.shape]
        out.append(np.broadcast_to(np.pad(a, pad, mode="edge"), (h + 2, w + 2)))
    return out[0], out[1]


def elevations(z_source: Callable, folder: Path, t: Tile, height: int, width: int) -> np.ndarray:
    """The tile's elevations framed by one ring (NaN beyond the grid): read from the DEM
    once (by whichever step of the run-out needs them first), then memory-mapped from the
    tile's work file (a round reads the pages its flow touches)."""
    path = folder / f"t{t.index}-reach-z.npy"
    if not path.exists():
        z = framed_read(z_source, slice(t.r0, t.r1), slice(t.c0, t.c1), height, width)
        np.save(path, z)
        return z
    return np.asarray(np.load(path, mmap_mode="r"))


def sweep_task(
    z_source: Callable,
    steps: Callable,
    sources: Callable,
    folder: Path,
    t: Tile,
    height: int,
    width: int,
    rules: SweepRules,
    entry: dict[str, np.ndarray] | None,
) -> dict[str, np.ndarray]:
    """One tile's sweep from its sources and what enters it (``entry``: inner flat
    indices and the merged state of each, or None); saves the cells it reached and
    returns what reached its ring: the ring cells' grid flat indices and states."""
    z = elevations(z_source, folder, t, height, width)
    col_step, row_step = _framed_steps(steps, t)
    h, w = t.shape
    state = {
        "mass": np.zeros(z.shape),
        "margin": np.full(z.shape, -np.inf),
        "tan_alpha": np.full(z.shape, np.inf),
        "energy": np.zeros(z.shape),
        "share": np.zeros(z.shape),
        "worst": np.full(z.shape, np.inf),
    }
    at, *given = sources(t)
    framed = (at // w + 1) * (w + 2) + at % w + 1
    for name, values in zip(("mass", "margin", "tan_alpha", "worst"), given, strict=True):
        state[name].ravel()[framed] = values
    if entry is not None:
        framed = (entry["cells"] // w + 1) * (w + 2) + entry["cells"] % w + 1
        for name in STATE:
            flat = state[name].ravel()
            if name == "mass":
                flat[framed] += entry[name]
            elif name in ("margin", "energy", "share"):
                flat[framed] = np.maximum(flat[framed], entry[name])
            else:
                flat[framed] = np.minimum(flat[framed], entry[name])
    cut = np.zeros(z.shape, np.uint8)
    reach.spread_reach(
        z, col_step, row_step, state["mass"], state["margin"], state["tan_alpha"],
        state["energy"], rules.exponent, rules.tan_phi, rules.max_energy, rules.min_mass,
        state["share"], cut, state["worst"], 1,
    )  # fmt: skip
    inner = (slice(1, -1), slice(1, -1))
    share = state["share"][inner]
    reached = np.flatnonzero(share > 0.0)
    np.savez(
        folder / f"t{t.index}-reach.npz",
        cells=reached,
        share=share.ravel()[reached],
        tan_alpha=state["tan_alpha"][inner].ravel()[reached],
        worst=state["worst"][inner].ravel()[reached],
        cut=cut[inner].ravel()[reached],
    )
    ring = _ring_index(h, w)
    gone = state["margin"].ravel()[ring] >= 0.0
    rr, cc = ring[gone] // (w + 2) - 1 + t.r0, ring[gone] % (w + 2) - 1 + t.c0
    inside = (rr >= 0) & (rr < height) & (cc >= 0) & (cc < width)
    out = {"cells": rr[inside] * width + cc[inside]}
    for name in STATE:
        out[name] = state[name].ravel()[ring[gone][inside]]
    return out


def _ring_index(h: int, w: int) -> np.ndarray:
    """Flat indices of the ring cells of an (h + 2, w + 2) framed array."""
    top = np.arange(w + 2)
    bottom = (h + 1) * (w + 2) + top
    side = np.arange(1, h + 1) * (w + 2)
    return np.concatenate([top, bottom, side, side + w + 1])


def _entries(
    layout: Layout, tiles: list[Tile], leaving: dict[int, dict[str, np.ndarray]]
) -> dict[int, dict[str, np.ndarray]]:
    """What enters each tile: every tile's outflow, in tile order, merged per cell."""
    parts = [leaving[i] for i in sorted(leaving) if leaving[i]["cells"].size]
    if not parts:
        return {}
    joined = {name: np.concatenate([p[name] for p in parts]) for name in ("cells", *STATE)}
    cells, slot = np.unique(joined["cells"], return_inverse=True)
    merged = {"mass": np.zeros(cells.size)}
    np.add.at(merged["mass"], slot, joined["mass"])  # unbuffered: in tile order
    for name, start, op in (
        ("margin", -np.inf, np.maximum),
        ("tan_alpha", np.inf, np.minimum),
        ("energy", 0.0, np.maximum),
        ("share", 0.0, np.maximum),
        ("worst", np.inf, np.minimum),
    ):
        merged[name] = np.full(cells.size, start)
        op.at(merged[name], slot, joined[name])
    r, c = cells // layout.width, cells % layout.width
    target = (r // layout.size) * layout.tile_cols + c // layout.size
    out: dict[int, dict[str, np.ndarray]] = {}
    for u in np.unique(target):
        here = target == u
        tu = tiles[int(u)]
        entry = {"cells": (r[here] - tu.r0) * (tu.c1 - tu.c0) + c[here] - tu.c0}
        entry |= {name: merged[name][here] for name in STATE}
        out[int(u)] = entry
    return out


def _same(a: dict[str, np.ndarray] | None, b: dict[str, np.ndarray] | None) -> bool:
    if a is None or b is None:
        return a is b
    return all(np.array_equal(a[k], b[k]) for k in ("cells", *STATE))


def sweep_tiles(
    layout: Layout,
    z_source: Callable,
    steps: Callable,
    sources: Callable,
    folder: Path,
    runner: Runner,
    rules: SweepRules,
    started: list[int],
) -> tuple[set[int], int]:
    """Sweep the grid tile by tile from the tiles ``started`` (those holding sources);
    returns the tiles swept (only they have work files: elsewhere nothing is reached) and
    the number of rounds."""
    tiles = layout.tiles()
    h, w = layout.height, layout.width
    entries: dict[int, dict[str, np.ndarray]] = {}
    leaving: dict[int, dict[str, np.ndarray]] = {}
    todo, rounds, swept = sorted(set(started)), 0, set()
    while todo:
        rounds += 1
        jobs = [
            (z_source, steps, sources, folder, tiles[i], h, w, rules, entries.get(i)) for i in todo
        ]
        for i, result in zip(todo, runner(sweep_task, jobs), strict=True):
            leaving[i] = result
        swept |= set(todo)
        joined = _entries(layout, tiles, leaving)
        todo = [i for i in sorted(joined) if not _same(joined[i], entries.get(i))]
        entries = joined
    return swept, rounds


# each output where no flow reached: no share, no angle, no source, not cut off
UNREACHED = {"share": 0.0, "tan_alpha": np.inf, "worst": np.inf, "cut": 0}


def _nothing(shape: tuple[int, int]) -> dict[str, np.ndarray]:
    return {
        name: np.full(shape, value, np.uint8 if name == "cut" else np.float64)
        for name, value in UNREACHED.items()
    }


def tile_outputs(folder: Path, t: Tile, swept: set[int]) -> dict[str, np.ndarray]:
    """A tile's share, tan(alpha), worst source value and cut-off flags (nothing reached
    in a tile never swept)."""
    out = _nothing(t.shape)
    if t.index in swept:
        with np.load(folder / f"t{t.index}-reach.npz") as saved:
            for name in OUTPUTS:
                out[name].ravel()[saved["cells"]] = saved[name]
    return out


def reach_array(
    z: np.ndarray,
    col_step: np.ndarray | float,
    row_step: np.ndarray | float,
    states: ArrayStates,
    rules: SweepRules,
    size: int,
    folder: Path,
    runner: Runner,
) -> tuple[dict[str, np.ndarray], int]:
    """``sweep_tiles`` on arrays in memory, the tiles joined again: (share, tan_alpha,
    worst, cut as whole-grid arrays, rounds)."""
    from slopescreen.maps.terrain.tiled_routing import ArraySource

    layout = Layout(*z.shape, size)
    tiles = layout.tiles()
    started = [t.index for t in tiles if states(t)[0].size]
    steps = ArraySteps(np.asarray(col_step, float), np.asarray(row_step, float))
    swept, rounds = sweep_tiles(
        layout, ArraySource(z), steps, states, folder, runner, rules, started
    )
    out = _nothing(z.shape)
    for t in tiles:
        window = (slice(t.r0, t.r1), slice(t.c0, t.c1))
        for name, a in tile_outputs(folder, t, swept).items():
            out[name][window] = a
    return out, rounds
