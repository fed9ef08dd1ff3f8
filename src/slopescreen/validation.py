"""How well a map finds known landslides (numpy only): success-rate curve, ROC, their
areas, the standard error of the ROC area, frequency ratios and the confusion at FS = 1.

Cells are ranked from the least to the most stable (ascending factor of safety, or
descending probability of failure: pass ``-p``). Cells of equal score form one group and
enter the curves as one straight segment, so ties count one half, as in the Mann-Whitney
form of the ROC area.

References
----------
Chung, C.-J. F. & Fabbri, A. G. (2003). Validation of spatial prediction models for
landslide hazard mapping. Natural Hazards 30, 451-472 (success-rate curves).
Hanley, J. A. & McNeil, B. J. (1982). The meaning and use of the area under a receiver
operating characteristic (ROC) curve. Radiology 143, 29-36.
Fawcett, T. (2006). An introduction to ROC analysis. Pattern Recognition Letters 27,
861-874.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from slopescreen.errors import InputError


@dataclass(frozen=True)
class RankCurves:
    """Cumulative shares along the ranking, least stable first, one point per score group
    (starting at 0): of the area (success-rate x), of the landslide cells (y, also the
    ROC's true-positive rate) and of the cells without a landslide (the ROC's false-positive
    rate)."""

    area_share: np.ndarray
    landslide_share: np.ndarray
    stable_share: np.ndarray

    @property
    def success_auc(self) -> float:
        """Area under the success-rate curve (landslide share against area share)."""
        return float(np.trapezoid(self.landslide_share, self.area_share))

    @property
    def roc_auc(self) -> float:
        """Area under the ROC curve (landslide share against stable share)."""
        return float(np.trapezoid(self.landslide_share, self.stable_share))


def rank_curves(
    score: ArrayLike, landslide: ArrayLike, weight: ArrayLike | None = None
) -> RankCurves:
    """Success-rate and ROC curves of ``score`` (low = less stable) against landslide cells.

    Parameters
    ----------
    score : array
        Factor of safety (or any score where lower means less stable); NaN cells are
        left out.
    landslide : array of bool
        True where a mapped landslide covers the cell.
    weight : array, optional
        Ground area of each cell (m2 or any unit); default 1 per cell.

    Returns
    -------
    RankCurves
        The three cumulative shares; ``success_auc`` and ``roc_auc`` their areas. With a
        landslide share p of the weight, success_auc = p / 2 + (1 - p) roc_auc.

    Examples
    --------
    >>> curves = rank_curves([0.8, 1.2, 1.6, 2.0], [True, False, False, False])
    >>> curves.roc_auc, curves.success_auc
    (1.0, 0.875)
    """
    s = np.asarray(score, dtype=float).ravel()
    hit = np.asarray(landslide, dtype=bool).ravel()
    w = np.ones_like(s) if weight is None else np.asarray(weight, dtype=float).ravel()
    if not s.size == hit.size == w.size:
        raise InputError(
            f"score, landslide and weight must have one value per cell, got {s.size}, "
            f"{hit.size} and {w.size}"
        )
    keep = np.isfinite(s) & np.isfinite(w) & (w > 0)
    s, hit, w = s[keep], hit[keep], w[keep]
    if not hit.any() or hit.all():
        raise InputError("landslide cells: need at least one cell with and one without")
    order = np.argsort(s, kind="stable")
    s, hit, w = s[order], hit[order], w[order]
    last = np.flatnonzero(np.r_[s[1:] != s[:-1], True])  # end of each group of equal score
    area = np.cumsum(w)[last]
    slides = np.cumsum(np.where(hit, w, 0.0))[last]
    stable = area - slides
    return RankCurves(
        np.r_[0.0, area / area[-1]],
        np.r_[0.0, slides / slides[-1]],
        np.r_[0.0, stable / stable[-1]],
    )


def auc_standard_error(auc: float, n_landslide: int, n_stable: int) -> float:
    """Standard error of an ROC area (Hanley & McNeil 1982):

    SE^2 = [A (1 - A) + (n1 - 1)(Q1 - A^2) + (n2 - 1)(Q2 - A^2)] / (n1 n2),
    Q1 = A / (2 - A), Q2 = 2 A^2 / (1 + A), with n1 landslide and n2 stable cells.

    >>> round(auc_standard_error(0.5, 100, 100), 4)
    0.0409
    """
    if n_landslide < 1 or n_stable < 1:
        raise InputError("auc_standard_error needs at least one cell of each kind")
    a = float(auc)
    q1, q2 = a / (2.0 - a), 2.0 * a * a / (1.0 + a)
    var = (a * (1.0 - a) + (n_landslide - 1) * (q1 - a * a) + (n_stable - 1) * (q2 - a * a)) / (
        n_landslide * n_stable
    )
    return float(np.sqrt(max(var, 0.0)))


def frequency_ratio(
    classes: ArrayLike, landslide: ArrayLike, n_classes: int, weight: ArrayLike | None = None
) -> np.ndarray:
    """Per class 1..n: (share of the landslide weight in the class) / (share of the area in
    the class); 1 means landslides are as common there as anywhere, NaN for an empty class.
    Class 0 (no data) is left out.

    >>> frequency_ratio([1, 1, 2, 2], [True, False, False, False], 2).tolist()
    [2.0, 0.0]
    """
    c = np.asarray(classes, dtype=np.int64).ravel()
    hit = np.asarray(landslide, dtype=bool).ravel()
    w = np.ones(c.size) if weight is None else np.asarray(weight, dtype=float).ravel()
    keep = (c >= 1) & (c <= n_classes)
    c, hit, w = c[keep], hit[keep], w[keep]
    area = np.bincount(c, weights=w, minlength=n_classes + 1)[1:]
    slides = np.bincount(c, weights=np.where(hit, w, 0.0), minlength=n_classes + 1)[1:]
    with np.errstate(invalid="ignore", divide="ignore"):
        return (slides / slides.sum()) / (area / area.sum())


def failing_confusion(
    factor_of_safety: ArrayLike, landslide: ArrayLike, weight: ArrayLike | None = None
) -> dict[str, float]:
    """The map read at FS = 1: ``captured_share`` (landslide weight where FS < 1),
    ``false_alarm_share`` (stable weight where FS < 1) and ``flagged_share`` (all weight
    where FS < 1); NaN FS is left out.

    >>> failing_confusion([0.9, 0.9, 1.1, 1.5], [True, False, True, False])
    {'captured_share': 0.5, 'false_alarm_share': 0.5, 'flagged_share': 0.5}
    """
    fs = np.asarray(factor_of_safety, dtype=float).ravel()
    hit = np.asarray(landslide, dtype=bool).ravel()
    w = np.ones(fs.size) if weight is None else np.asarray(weight, dtype=float).ravel()
    keep = np.isfinite(fs)
    fs, hit, w = fs[keep], hit[keep], w[keep]
    failing = fs < 1.0

    def share(mask: np.ndarray) -> float:
        total = float(w[mask].sum())
        return float(w[mask & failing].sum()) / total if total else float("nan")

    return {
        "captured_share": share(hit),
        "false_alarm_share": share(~hit),
        "flagged_share": share(np.ones_like(hit)),
    }


def grouped_curves(
    area_between: ArrayLike, area_tied: ArrayLike, landslide_tied: ArrayLike
) -> RankCurves:
    """Success-rate and ROC curves from masses gathered around the landslide scores.

    With t_1 < ... < t_K the distinct scores of the landslide cells, ``area_between[j]`` is
    the weight of all cells scoring strictly between t_j and t_{j+1} (j = 0..K, with
    t_0 = -inf and t_{K+1} = +inf), ``area_tied[j]`` the weight of all cells scoring exactly
    t_{j+1} (landslide cells included) and ``landslide_tied[j]`` the landslide weight among
    them. This is what a map too large for memory is reduced to, tile by tile; the areas
    equal those of :func:`rank_curves` on the same cells (between two landslide scores the
    landslide share is flat, so merging those groups changes no area).

    >>> c = grouped_curves([0.0, 3.0], [1.0], [1.0])  # as in rank_curves' example
    >>> c.roc_auc, c.success_auc
    (1.0, 0.875)
    """
    between = np.asarray(area_between, dtype=float).ravel()
    tied = np.asarray(area_tied, dtype=float).ravel()
    hit = np.asarray(landslide_tied, dtype=float).ravel()
    if not between.size == tied.size + 1 == hit.size + 1:
        raise InputError(
            f"grouped_curves: need K + 1 between-masses for K tied groups, got {between.size} "
            f"and {tied.size}, {hit.size}"
        )
    if hit.sum() <= 0.0 or (between.sum() + tied.sum() - hit.sum()) <= 0.0:
        raise InputError("landslide cells: need at least one cell with and one without")
    area_steps = np.empty(2 * tied.size + 1)
    area_steps[0::2] = between
    area_steps[1::2] = tied
    slide_steps = np.zeros_like(area_steps)
    slide_steps[1::2] = hit
    area = np.cumsum(area_steps)
    slides = np.cumsum(slide_steps)
    stable = area - slides
    return RankCurves(
        np.r_[0.0, area / area[-1]],
        np.r_[0.0, slides / slides[-1]],
        np.r_[0.0, stable / stable[-1]],
    )


def masses_around(
    score: ArrayLike, weight: ArrayLike, thresholds: ArrayLike
) -> tuple[np.ndarray, np.ndarray]:
    """(area_between, area_tied) of :func:`grouped_curves` for one batch of cells: the
    weight strictly between consecutive sorted ``thresholds`` (K + 1 values) and exactly
    at each (K values). NaN scores are left out. Sum the results over batches (tiles).

    >>> b, t = masses_around([0.5, 1.0, 1.5, 3.0], [1, 1, 1, 1], [1.0, 2.0])
    >>> b.tolist(), t.tolist()
    ([1.0, 1.0, 1.0], [1.0, 0.0])
    """
    s = np.asarray(score, dtype=float).ravel()
    w = np.broadcast_to(np.asarray(weight, dtype=float), np.shape(score)).ravel()
    t = np.asarray(thresholds, dtype=float).ravel()
    keep = np.isfinite(s)
    s, w = s[keep], w[keep]
    k = t.size
    at = np.searchsorted(t, s, side="left")  # thresholds below the score
    tie = at < k
    tie[tie] = t[at[tie]] == s[tie]
    between = np.bincount(at[~tie], weights=w[~tie], minlength=k + 1)
    tied = np.bincount(at[tie], weights=w[tie], minlength=k)
    return between, tied


def held_out_blocks(
    block_row: ArrayLike, block_col: ArrayLike, test_share: float, random_state: int
) -> np.ndarray:
    """True for the blocks held out for testing: each block (row, column of the block
    grid) is drawn independently with probability ``test_share`` from a counter-based
    hash of its indices and ``random_state`` (SplitMix64, Steele et al. 2014), so any tile
    of a map can be labelled on its own and the same number gives the same split.

    >>> held_out_blocks([0, 0, 1], [0, 1, 0], 0.0, 3).tolist()
    [False, False, False]
    """
    if not 0.0 <= test_share <= 1.0:
        raise InputError(f"test_share must be in [0, 1], got {test_share:g}")
    r = np.asarray(block_row, dtype=np.uint64)
    c = np.asarray(block_col, dtype=np.uint64)
    with np.errstate(over="ignore"):
        x = (r << np.uint64(32)) ^ c ^ (np.uint64(random_state) * np.uint64(0x9E3779B97F4A7C15))
        x = x + np.uint64(0x9E3779B97F4A7C15)
        x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        x = x ^ (x >> np.uint64(31))
    u = (x >> np.uint64(11)).astype(np.float64) / float(1 << 53)
    return u < test_share
