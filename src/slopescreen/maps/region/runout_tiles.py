"""Run-out sources and reach of one scenario tile by tile (any grid size, here or on dask
workers): the source patches found in each tile and joined across tile edges, their
volumes and angles of reach, then the tiled sweep (:mod:`slopescreen.maps.terrain.tiled_reach`).

A grid that fits one tile is one tile: the same code, one sweep of the whole grid.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.maps.io.grid import Grid
from slopescreen.maps.io.rasters import read_block
from slopescreen.maps.region.runners import Runner
from slopescreen.maps.region.runout_config import RunoutSpec
from slopescreen.maps.region.terrain_cache import NODATA_F32, ElevationSource
from slopescreen.maps.terrain import reach
from slopescreen.maps.terrain.tiled_reach import SweepRules, elevations, sweep_tiles
from slopescreen.maps.terrain.tiled_routing import Layout, Tile
from slopescreen.runout import reach_ratio

RUNOUT_TILE = 4000  # cells a side of a run-out tile: about 1 GB a task at its peak


@dataclass(frozen=True)
class SourceRule:
    """Which cells are sources: ``values`` is the scenario's FS raster, or its probability
    of failure for ``kind`` "probability"; ``inventory`` the landslide cells by tile."""

    kind: str  # fs | probability | inventory
    values: Path
    threshold: float  # FS below, or probability above
    inventory: dict[int, np.ndarray] | None = None  # tile -> inner flat indices

    @property
    def probability(self) -> bool:
        return self.kind == "probability"


@dataclass(frozen=True)
class GroundSteps:
    """Ground lengths of a column and a row step over a window (any CRS), picklable."""

    grid: Grid

    def __call__(self, rows: slice, cols: slice) -> tuple[np.ndarray, np.ndarray]:
        ue, un, ve, vn = self.grid.ground.vectors(rows, cols)
        return np.hypot(ue, un), np.hypot(ve, vn)


def _read(path: Path, t: Tile) -> np.ndarray:
    out = read_block(path, slice(t.r0, t.r1), slice(t.c0, t.c1)).astype(np.float64)
    out[out == NODATA_F32] = np.nan
    return out


def source_task(
    rule: SourceRule, depth: Path, dem: ElevationSource, grid: Grid, folder: Path, t: Tile
) -> dict[str, object]:
    """A tile's source cells cut into patches (eight neighbours, inside the tile): saves
    the labels and each cell's source value; returns per label its ground area, volume
    (area x soil depth), source weight and cells, and the labels on the tile's edges."""
    values = _read(rule.values, t)
    z = elevations(dem, folder, t, grid.height, grid.width)[1:-1, 1:-1]
    if rule.kind == "probability":
        mask = np.isfinite(values) & (values > rule.threshold)
    elif rule.kind == "fs":
        mask = np.isfinite(values) & (values < rule.threshold)
    else:
        mask = np.zeros(t.shape, bool)
        if rule.inventory is not None and t.index in rule.inventory:
            mask.ravel()[rule.inventory[t.index]] = True
        mask &= np.isfinite(values)
    mask &= np.isfinite(z)
    labels, n = reach.label_patches(mask)
    area = np.broadcast_to(grid.ground.cell_area_m2(slice(t.r0, t.r1), slice(t.c0, t.c1)), t.shape)
    depth_m = np.nan_to_num(_read(depth, t), nan=0.0)
    weight = np.where(mask, values if rule.probability else 1.0, 0.0)
    flat = labels.ravel()
    sums = {
        "area": np.bincount(flat, weights=area.ravel(), minlength=n + 1),
        "volume": np.bincount(flat, weights=(area * depth_m).ravel(), minlength=n + 1),
        "weight": np.bincount(flat, weights=weight.ravel(), minlength=n + 1),
        "cells": np.bincount(flat, minlength=n + 1).astype(np.float64),
    }
    np.save(folder / f"t{t.index}-src-labels.npy", labels.astype(np.int32))
    np.save(folder / f"t{t.index}-src-value.npy", np.where(mask, values, np.nan))
    sides = (labels[0].copy(), labels[-1].copy(), labels[:, 0].copy(), labels[:, -1].copy())
    return {"n": n, "sums": sums, "sides": sides}


def _touching(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Labels facing each other along a tile edge (``a`` and ``b`` the two lines of cells),
    eight neighbours: straight across and one cell either side."""
    x = np.concatenate([a, a[1:], a[:-1]])
    y = np.concatenate([b, b[:-1], b[1:]])
    return x, y


@dataclass(frozen=True)
class Patches:
    """The source patches joined across tiles, and what each tile's sweep starts from."""

    keep: dict[int, np.ndarray]  # tile -> per local label: a kept source patch
    tan_alpha: dict[int, np.ndarray]  # tile -> per local label
    total_weight: float
    cells: int
    count: int
    area_m2: float
    probability: bool
    folder: Path

    def __call__(self, t: Tile) -> tuple[np.ndarray, ...]:
        """The tile's source cells as the sweep takes them: inner flat indices, mass,
        margin (0: every source cell starts a line of reach; below the top of a source the
        top's line carries the larger margin, so a path is measured from the top of its
        source), tan(alpha) and worst value (FS, or -P)."""
        path = self.folder / f"t{t.index}-src-cells.npz"
        if path.exists():  # a later round of the same tile
            with np.load(path) as saved:
                return tuple(saved[k] for k in ("cells", "mass", "margin", "tan_alpha", "worst"))
        labels = np.load(self.folder / f"t{t.index}-src-labels.npy").ravel()
        at = np.flatnonzero(self.keep[t.index][labels])
        value = np.load(self.folder / f"t{t.index}-src-value.npy").ravel()[at]
        weight = value if self.probability else np.ones(at.size)
        out = {
            "cells": at,
            "mass": weight / max(self.total_weight, 1e-300),
            "margin": np.zeros(at.size),
            "tan_alpha": self.tan_alpha[t.index][labels[at]],
            "worst": -value if self.probability else value,
        }
        np.savez(path, **out)
        return tuple(out.values())

    def source_mask(self, t: Tile) -> np.ndarray:
        return self.keep[t.index][np.load(self.folder / f"t{t.index}-src-labels.npy")]


def tan_alpha_of(spec: RunoutSpec, volume_m3: np.ndarray) -> np.ndarray:
    """tan(alpha) of each source patch by the spec's reach rule."""
    if spec.travel_angle_deg is not None:
        return np.full(volume_m3.shape, math.tan(math.radians(spec.travel_angle_deg)))
    if spec.angle_table:
        limits = np.array([v for v, _ in spec.angle_table])
        angles = np.array([a for _, a in spec.angle_table])
        k = np.minimum(np.searchsorted(limits, volume_m3), limits.size - 1)
        return np.tan(np.radians(angles[k]))
    a, b = spec.regression
    return np.asarray(reach_ratio(np.maximum(volume_m3, 1e-3), a, b), float)


def join_patches(
    spec: RunoutSpec, layout: Layout, found: list[dict], probability: bool, folder: Path
) -> Patches:
    """Patches touching across tile edges joined (their areas, volumes and weights summed),
    those under the minimum source area dropped, and each one's angle of reach."""
    tiles = layout.tiles()
    offset = np.cumsum([0] + [f["n"] + 1 for f in found])
    a_all, b_all = [], []
    by_place = {(t.ti, t.tj): t for t in tiles}
    for t, f in zip(tiles, found, strict=True):
        _, bottom, _, right = f["sides"]
        facing = []  # (this tile's cells, the neighbour's cells facing them, the neighbour)
        u = by_place.get((t.ti, t.tj + 1))
        if u is not None:
            facing.append((*_touching(right, found[u.index]["sides"][2]), u))
        u = by_place.get((t.ti + 1, t.tj))
        if u is not None:
            facing.append((*_touching(bottom, found[u.index]["sides"][0]), u))
        u = by_place.get((t.ti + 1, t.tj + 1))  # corner to corner
        if u is not None:
            facing.append((bottom[-1:], found[u.index]["sides"][0][:1], u))
        u = by_place.get((t.ti + 1, t.tj - 1))
        if u is not None:
            facing.append((bottom[:1], found[u.index]["sides"][0][-1:], u))
        for x, y, u in facing:
            both = (x > 0) & (y > 0)
            a_all.append(x[both].astype(np.int64) + offset[t.index])
            b_all.append(y[both].astype(np.int64) + offset[u.index])
    n = int(offset[-1])
    a = np.concatenate(a_all) if a_all else np.zeros(0, np.int64)
    b = np.concatenate(b_all) if b_all else np.zeros(0, np.int64)
    root = reach.join_labels(n, a, b)
    sums = {}
    for name in ("area", "volume", "weight", "cells"):
        each = np.concatenate([f["sums"][name] for f in found])
        sums[name] = np.bincount(root, weights=each, minlength=n)
    keep = sums["area"] >= spec.min_source_area_m2
    keep[offset[:-1]] = False  # label 0 of every tile (never joined): no source
    ta = tan_alpha_of(spec, sums["volume"])
    per_tile_keep, per_tile_ta = {}, {}
    for t in tiles:
        ids = root[offset[t.index] : offset[t.index + 1]]
        per_tile_keep[t.index] = keep[ids]
        per_tile_ta[t.index] = ta[ids]
    roots = np.unique(root[keep[root]])
    return Patches(
        keep=per_tile_keep,
        tan_alpha=per_tile_ta,
        total_weight=float(sums["weight"][roots].sum()),
        cells=int(sums["cells"][roots].sum()),
        count=int(roots.size),
        area_m2=float(sums["area"][roots].sum()),
        probability=probability,
        folder=folder,
    )


def reach_tiles(
    spec: RunoutSpec,
    rule: SourceRule,
    grid: Grid,
    dem: ElevationSource,
    depth: Path,
    folder: Path,
    runner: Runner,
) -> tuple[Layout, Patches, set[int], int]:
    """Sources and reach of a scenario, tile by tile: (layout, patches, tiles swept,
    rounds); each swept tile's results are in ``folder`` (``tiled_reach.tile_outputs``)."""
    layout = Layout(grid.height, grid.width, RUNOUT_TILE)
    tiles = layout.tiles()
    found = list(runner(source_task, [(rule, depth, dem, grid, folder, t) for t in tiles]))
    patches = join_patches(spec, layout, found, rule.probability, folder)
    tan_phi = -1.0
    if spec.friction_angle_deg is not None:
        tan_phi = math.tan(math.radians(spec.friction_angle_deg))
    rules = SweepRules(
        exponent=spec.exponent,
        tan_phi=tan_phi,
        max_energy=spec.max_speed_m_s**2 / 2.0,
        min_mass=spec.min_share / max(patches.cells, 1),
    )
    started = [t.index for t in tiles if patches.keep[t.index].any()]
    swept, rounds = sweep_tiles(
        layout, dem, GroundSteps(grid), patches, folder, runner, rules, started
    )
    return layout, patches, swept, rounds
