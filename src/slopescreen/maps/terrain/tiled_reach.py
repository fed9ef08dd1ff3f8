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

Work files per tile (``t{i}-reach-*.npy``): share, tan(alpha), worst source value (float64)
and the cut-off flags: 25 bytes a cell. A task holds about 110 bytes a cell of its tile at
its peak.
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
    tan(alpha) and worst value per cell (mass 0, margin -inf, tan(alpha) and worst +inf
    where no source lies)."""

    mass: np.ndarray
    margin: np.ndarray
    tan_alpha: np.ndarray
    worst: np.ndarray

    def __call__(self, t: Tile) -> tuple[np.ndarray, ...]:
        window = (slice(t.r0, t.r1), slice(t.c0, t.c1))
        return tuple(np.array(a[window], np.float64) for a in self._fields())

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
    taken cell, inside the tile, sends flow)."""
    window = (slice(t.r0, t.r1), slice(t.c0, t.c1))
    return tuple(  # type: ignore[return-value]
        np.pad(np.ascontiguousarray(np.broadcast_to(a, t.shape), np.float64), 1, mode="edge")
        for a in steps(*window)
    )


def _framed(inner: np.ndarray, outside: float) -> np.ndarray:
    out = np.full((inner.shape[0] + 2, inner.shape[1] + 2), outside)
    out[1:-1, 1:-1] = inner
    return out


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
    indices and the merged state of each, or None); saves its outputs and returns what
    reached its ring: the ring cells' grid flat indices and states."""
    z = framed_read(z_source, slice(t.r0, t.r1), slice(t.c0, t.c1), height, width)
    col_step, row_step = _framed_steps(steps, t)
    mass, margin, tan_alpha, worst = sources(t)
    state = {
        "mass": _framed(mass, 0.0),
        "margin": _framed(margin, -np.inf),
        "tan_alpha": _framed(tan_alpha, np.inf),
        "energy": np.zeros(z.shape),
        "share": np.zeros(z.shape),
        "worst": _framed(worst, np.inf),
    }
    h, w = t.shape
    if entry is not None:
        at = (entry["cells"] // w + 1) * (w + 2) + entry["cells"] % w + 1
        for name in STATE:
            flat = state[name].ravel()
            if name == "mass":
                flat[at] += entry[name]
            elif name in ("margin", "energy", "share"):
                flat[at] = np.maximum(flat[at], entry[name])
            else:
                flat[at] = np.minimum(flat[at], entry[name])
    cut = np.zeros(z.shape, np.uint8)
    reach.spread_reach(
        z, col_step, row_step, state["mass"], state["margin"], state["tan_alpha"],
        state["energy"], rules.exponent, rules.tan_phi, rules.max_energy, rules.min_mass,
        state["share"], cut, state["worst"], 1,
    )  # fmt: skip
    inner = (slice(1, -1), slice(1, -1))
    for name, a in (("share", state["share"]), ("tan_alpha", state["tan_alpha"]),
                    ("worst", state["worst"]), ("cut", cut)):  # fmt: skip
        np.save(folder / f"t{t.index}-reach-{name}.npy", np.ascontiguousarray(a[inner]))
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


def _nothing(shape: tuple[int, int]) -> dict[str, np.ndarray]:
    return {
        "share": np.zeros(shape),
        "tan_alpha": np.full(shape, np.inf),
        "worst": np.full(shape, np.inf),
        "cut": np.zeros(shape, np.uint8),
    }


def tile_outputs(folder: Path, t: Tile, swept: set[int]) -> dict[str, np.ndarray]:
    """A tile's share, tan(alpha), worst source value and cut-off flags (nothing reached
    in a tile never swept)."""
    if t.index not in swept:
        return _nothing(t.shape)
    return {name: np.load(folder / f"t{t.index}-reach-{name}.npy") for name in OUTPUTS}


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
    started = [t.index for t in tiles if (states(t)[1] >= 0.0).any()]
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
