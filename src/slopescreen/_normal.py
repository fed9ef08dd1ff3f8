"""Standard normal distribution functions in plain numpy (no scipy in the core).

- ``erfc``: Chebyshev fit of Press et al., *Numerical Recipes* (2nd ed., 1992, sec. 6.2),
  fractional error below 1.2e-7 everywhere.
- ``normal_ppf``: rational approximation of the inverse CDF by P.J. Acklam (2003),
  relative error below 1.15e-9.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

_ERFC = (
    -1.26551223,
    1.00002368,
    0.37409196,
    0.09678418,
    -0.18628806,
    0.27886807,
    -1.13520398,
    1.48851587,
    -0.82215223,
    0.17087277,
)


def erfc(x: ArrayLike) -> np.ndarray:
    """Complementary error function, vectorised.

    >>> round(float(erfc(1.0)), 7)
    0.1572992
    """
    x = np.asarray(x, dtype=float)
    ans = erfc_of_positive(np.abs(x))
    return np.where(x >= 0.0, ans, 2.0 - ans)


def erfc_of_positive(z: Any) -> Any:
    """erfc(z) for z >= 0 (the fit of :func:`erfc`), in plain arithmetic, so that one source
    serves numpy arrays and compiled scalar kernels (numba)."""
    c = _ERFC
    t = 1.0 / (1.0 + 0.5 * z)
    poly = t * (c[1] + t * (c[2] + t * (c[3] + t * (c[4] + t * (c[5] + t * (
        c[6] + t * (c[7] + t * (c[8] + t * c[9]))))))))  # fmt: skip
    return t * np.exp(-z * z + c[0] + poly)


def normal_cdf(x: ArrayLike) -> np.ndarray:
    """Standard normal CDF Phi(x) = erfc(-x / sqrt 2) / 2.

    >>> round(float(normal_cdf(-2.0)), 5)
    0.02275
    """
    return 0.5 * erfc(-np.asarray(x, dtype=float) / math.sqrt(2.0))


_A = (
    -3.969683028665376e01,
    2.209460984245205e02,
    -2.759285104469687e02,
    1.383577518672690e02,
    -3.066479806614716e01,
    2.506628277459239e00,
)
_B = (
    -5.447609879822406e01,
    1.615858368580409e02,
    -1.556989798598866e02,
    6.680131188771972e01,
    -1.328068155288572e01,
)
_C = (
    -7.784894002430293e-03,
    -3.223964580411365e-01,
    -2.400758277161838e00,
    -2.549732539343734e00,
    4.374664141464968e00,
    2.938163982698783e00,
)
_D = (7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e00, 3.754408661907416e00)


def _poly(coeffs: tuple[float, ...], x: np.ndarray) -> np.ndarray:
    out = np.zeros_like(x)
    for c in coeffs:
        out = out * x + c
    return out


def normal_ppf(p: ArrayLike) -> np.ndarray:
    """Inverse standard normal CDF; -inf at 0, +inf at 1, NaN outside [0, 1].

    >>> round(float(normal_ppf(0.975)), 6)
    1.959964
    """
    p = np.asarray(p, dtype=float)
    with np.errstate(all="ignore"):
        q = p - 0.5
        r = q * q
        central = q * _poly(_A, r) / (_poly(_B, r) * r + 1.0)
        tail_p = np.where(p < 0.5, p, 1.0 - p)
        s = np.sqrt(-2.0 * np.log(tail_p))
        tail = _poly(_C, s) / (_poly(_D, s) * s + 1.0)
        tail = np.where(p < 0.5, tail, -tail)
        x = np.where(np.abs(q) <= 0.47575, central, tail)
    x = np.where(p == 0.0, -np.inf, np.where(p == 1.0, np.inf, x))
    return np.where((p < 0.0) | (p > 1.0) | np.isnan(p), np.nan, x)
