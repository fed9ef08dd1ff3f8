"""Synthetic DEMs for the benchmarks (invented terrain, made from formulas)."""

from __future__ import annotations

import numpy as np


def convergent_dem(n: int, cell_m: float = 5.0) -> np.ndarray:
    """Valleys draining south between winding ridges, with a little roughness: n x n cells,
    float32 metres (few closed depressions, like real convergent terrain)."""
    return convergent_rows(n, 0, n, cell_m)


def convergent_rows(n: int, top: int, rows: int, cell_m: float = 5.0) -> np.ndarray:
    """Rows top .. top+rows of :func:`convergent_dem` (to build large DEMs band by band)."""
    y, x = np.meshgrid(
        np.arange(top, top + rows, dtype=np.float32), np.arange(n, dtype=np.float32), indexing="ij"
    )
    xm, ym = x * cell_m, y * cell_m
    wind = xm + 150.0 * np.sin(ym / 700.0)
    z = 0.06 * (n * cell_m - ym) + 90.0 * np.abs(np.sin(wind / 500.0)) ** 0.8
    z += 2.0 * np.sin(xm / 17.0) * np.cos(ym / 23.0) + 0.5 * np.sin(xm / 5.1 + ym / 7.7)
    return z.astype(np.float32)


def noisy_dem(n: int, cell_m: float = 5.0, random_state: int = 3) -> np.ndarray:
    """Ridges and valleys in two crossing directions under spatially correlated noise (a
    random walk smoothed over about 15 cells) and white noise of 1 m: n x n cells, float32
    metres, with many closed depressions of every size (the fill's hard case)."""
    rng = np.random.default_rng(random_state)
    y, x = np.meshgrid(np.arange(n, dtype=np.float32), np.arange(n, dtype=np.float32),
                       indexing="ij")  # fmt: skip
    xm, ym = x * cell_m, y * cell_m
    z = 40.0 * np.sin(xm / 900.0) * np.cos(ym / 1300.0) + 25.0 * np.sin((xm + ym) / 600.0)
    walk = rng.normal(size=(n, n)).astype(np.float32)
    for axis in (0, 1):  # moving sums over 15 cells along each axis
        walk = np.cumsum(walk, axis=axis)
        walk = walk - np.roll(walk, 15, axis=axis)
    z += 0.8 * walk + rng.normal(scale=1.0, size=(n, n)).astype(np.float32)
    return z.astype(np.float32)


def peak_rss_mb() -> float:
    """Peak resident memory of this process so far, MB (Linux ru_maxrss is in KiB)."""
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
