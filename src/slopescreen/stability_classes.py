"""Stability (susceptibility) classes from factor of safety, and probability classes
(numpy only). Neither carries an annual frequency: in zoning guidance (Fell et al. 2008)
that is what makes a *hazard* map, so these are called stability or susceptibility classes.

Classes are numbered from the least stable: with breaks b1 < b2 < ... < bk, class 1 is
FS < b1, class i is b(i-1) <= FS < b(i), class k+1 is FS >= bk; 0 means no data. The
default breaks 1.0 / 1.3 / 1.5 are common practice for screening natural slopes.
"""

from __future__ import annotations

from itertools import pairwise

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import checked
from slopescreen.errors import InputError

DEFAULT_FS_BREAKS: tuple[float, ...] = (1.0, 1.3, 1.5)
# our own class names for the default breaks, least stable first
DEFAULT_CLASS_NAMES: tuple[str, ...] = ("failing", "narrow margin", "modest margin", "ample margin")


def check_breaks(breaks: ArrayLike) -> np.ndarray:
    """Validate class breaks: 1 to 8 strictly increasing values in (0, 1e6]."""
    b = checked("fs_breaks", breaks, 0.0, 1e6, low_open=True).ravel()
    if not 1 <= b.size <= 8 or np.any(np.diff(b) <= 0.0):
        raise InputError(
            f"fs_breaks must be 1 to 8 strictly increasing values > 0, got {b.tolist()}"
        )
    return b


def class_names(breaks: ArrayLike) -> list[str]:
    """Readable names: our own words for the default breaks, FS ranges otherwise.

    >>> class_names([1.0, 1.3, 1.5])[0]
    'failing (FS < 1)'
    """
    b = check_breaks(breaks)
    ranges = [f"FS < {b[0]:g}"]
    ranges += [f"{lo:g} <= FS < {hi:g}" for lo, hi in pairwise(b)]
    ranges.append(f"FS >= {b[-1]:g}")
    if tuple(b) == DEFAULT_FS_BREAKS:
        return [f"{word} ({r})" for word, r in zip(DEFAULT_CLASS_NAMES, ranges, strict=True)]
    return ranges


def classify(factor_of_safety: ArrayLike, breaks: ArrayLike = DEFAULT_FS_BREAKS) -> np.ndarray:
    """uint8 class per cell: 1 = least stable ... len(breaks)+1; 0 where FS is NaN.

    >>> classify([0.8, 1.0, 1.4, 9.0, float("nan")]).tolist()
    [1, 2, 3, 4, 0]
    """
    b = check_breaks(breaks)
    fs = np.asarray(factor_of_safety, dtype=float)
    out = (np.searchsorted(b, fs, side="right") + 1).astype(np.uint8)
    out[np.isnan(fs)] = 0
    return out


# probability-of-failure classes, most likely to fail first, named by their own breaks:
# P is the chance that FS < 1 given the parameter spread, not an annual frequency, so the
# words of annual-likelihood scales (expected, likely, ...) are not used
PF_BREAKS: tuple[float, ...] = (0.01, 0.1, 0.5)
PF_CLASS_NAMES: tuple[str, ...] = (
    "1 in 2 or more (P >= 50%)",
    "1 in 10 to 1 in 2 (10% <= P < 50%)",
    "1 in 100 to 1 in 10 (1% <= P < 10%)",
    "under 1 in 100 (P < 1%)",
)


def classify_probability(probability: ArrayLike) -> np.ndarray:
    """uint8 class of a probability of failure: 1 = P >= 0.5 ... 4 = P < 0.01; 0 for NaN.

    >>> classify_probability([0.7, 0.5, 0.2, 0.05, 0.001, float("nan")]).tolist()
    [1, 1, 2, 3, 4, 0]
    """
    p = np.asarray(probability, dtype=float)
    out = (len(PF_BREAKS) + 1 - np.searchsorted(PF_BREAKS, p, side="right")).astype(np.uint8)
    out[np.isnan(p)] = 0
    return out
