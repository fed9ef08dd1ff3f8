"""Probability of failure and reliability index (numpy only).

Each uncertain input is a :class:`Spread` (normal, lognormal, uniform or triangular, given
by mean and standard deviation or coefficient of variation, or by bounds); the others are
plain numbers or arrays. Two methods:

- **Taylor series / first-order second-moment** (Duncan 2000): FS at the most likely values
  (the means); for each uncertain input, FS at mean + sd and mean - sd; sigma_FS^2 =
  sum((dF_i / 2)^2) + 2 sum(rho_ij dF_i/2 dF_j/2). A point outside the input's physical
  range (c' = 2 - 3 kPa, say) is clipped to it, as Monte Carlo samples are, and dF_i is
  then the slope between the two points times 2 sd. Reliability index
  beta = (FS_mean - 1) / sigma_FS with FS taken as normal (default), or Duncan's lognormal
  form beta_LN = ln(FS / sqrt(1 + V^2)) / sqrt(ln(1 + V^2)), V = sigma_FS / FS. P_f = Phi(-beta).
- **Monte Carlo**: inputs sampled (correlated through a Gaussian copula), FS evaluated for
  each sample, P_f = share of samples with FS < 1, generalised reliability index
  beta = -Phi^-1(P_f). Samples come from ``numpy.random.default_rng(random_state)`` and are
  processed in chunks so memory stays bounded. Samples outside an input's physical range
  (negative cohesion, say) are clipped to that range, as is common practice.

References
----------
Duncan, J.M. (2000). Factors of safety and reliability in geotechnical engineering.
Journal of Geotechnical and Geoenvironmental Engineering 126(4), 307-316.
Christian, J.T., Ladd, C.C. & Baecher, G.B. (1994). Reliability applied to slope stability
analysis. Journal of Geotechnical Engineering 120(12), 2180-2207.
Baecher, G.B. & Christian, J.T. (2003). *Reliability and Statistics in Geotechnical
Engineering*. Wiley (Gaussian copula sampling, generalised reliability index).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked
from slopescreen._normal import normal_cdf, normal_ppf
from slopescreen.errors import InputError

DISTRIBUTIONS = ("normal", "lognormal", "uniform", "triangular")
FS_STAT_CAP = 1e3  # FS above this (flat ground: +inf) counts as this in means and spreads
# physical ranges of the usual inputs: Monte Carlo samples outside are clipped to them
DEFAULT_BOUNDS: dict[str, tuple[float, float]] = {
    "cohesion_kpa": (0.0, math.inf),
    "root_cohesion_kpa": (0.0, math.inf),
    "friction_deg": (0.0, 89.9),
    "tan_friction": (0.0, math.inf),
    "depth_m": (1e-6, math.inf),
    "unit_weight_kn_m3": (1e-6, math.inf),
    "saturated_unit_weight_kn_m3": (9.81, math.inf),
    "saturation": (0.0, 1.0),
    "hydraulic_conductivity_m_s": (1e-15, math.inf),
    "transmissivity_m2_day": (1e-12, math.inf),
}


@dataclass(frozen=True)
class Spread:
    """Uncertainty of one input: a distribution with its mean and standard deviation.

    Build with :meth:`normal`, :meth:`lognormal`, :meth:`uniform` or :meth:`triangular`.
    Fields may be arrays (one value per cell) and broadcast.
    """

    distribution: str
    mean: Any
    sd: Any
    low: Any = math.nan
    mode: Any = math.nan
    high: Any = math.nan

    @classmethod
    def normal(
        cls, mean: ArrayLike, sd: ArrayLike | None = None, cov: ArrayLike | None = None
    ) -> Spread:
        """Normal with standard deviation ``sd`` or coefficient of variation ``cov``."""
        return cls("normal", np.asarray(mean, float), _sd(mean, sd, cov))

    @classmethod
    def lognormal(
        cls, mean: ArrayLike, sd: ArrayLike | None = None, cov: ArrayLike | None = None
    ) -> Spread:
        """Lognormal with the given (arithmetic) mean and sd or cov; mean > 0."""
        checked("lognormal mean", mean, 0.0, low_open=True)
        return cls("lognormal", np.asarray(mean, float), _sd(mean, sd, cov))

    @classmethod
    def uniform(cls, low: ArrayLike, high: ArrayLike) -> Spread:
        lo, hi = np.asarray(low, float), np.asarray(high, float)
        checked("uniform high - low", hi - lo, 0.0)
        return cls("uniform", (lo + hi) / 2.0, (hi - lo) / math.sqrt(12.0), lo, np.nan, hi)

    @classmethod
    def triangular(cls, low: ArrayLike, mode: ArrayLike, high: ArrayLike) -> Spread:
        lo, mo, hi = (np.asarray(v, float) for v in (low, mode, high))
        checked("triangular mode - low", mo - lo, 0.0)
        checked("triangular high - mode", hi - mo, 0.0)
        mean = (lo + mo + hi) / 3.0
        var = (lo**2 + mo**2 + hi**2 - lo * mo - lo * hi - mo * hi) / 18.0
        return cls("triangular", mean, np.sqrt(var), lo, mo, hi)

    def from_standard_normal(self, z: np.ndarray) -> np.ndarray:
        """Values whose standard-normal scores are ``z`` (the inverse-CDF transform)."""
        if self.distribution == "normal":
            return self.mean + self.sd * z
        if self.distribution == "lognormal":
            s2 = np.log1p((self.sd / self.mean) ** 2)
            return np.exp(np.log(self.mean) - s2 / 2.0 + np.sqrt(s2) * z)
        u = normal_cdf(z)
        if self.distribution == "uniform":
            return self.low + u * (self.high - self.low)
        width = self.high - self.low
        with np.errstate(all="ignore"):
            split = np.where(width > 0, (self.mode - self.low) / width, 0.5)
            left = self.low + np.sqrt(u * width * (self.mode - self.low))
            right = self.high - np.sqrt((1.0 - u) * width * (self.high - self.mode))
        return np.where(u < split, left, right)


def _sd(mean: ArrayLike, sd: ArrayLike | None, cov: ArrayLike | None) -> np.ndarray:
    if (sd is None) == (cov is None):
        raise InputError(
            "give exactly one of sd (standard deviation) or cov (coefficient of variation)"
        )
    if sd is not None:
        return checked("sd", sd, 0.0)
    return checked("cov", cov, 0.0) * np.abs(np.asarray(mean, float))


def spread(
    distribution: str,
    *,
    mean: ArrayLike | None = None,
    sd: ArrayLike | None = None,
    cov: ArrayLike | None = None,
    low: ArrayLike | None = None,
    mode: ArrayLike | None = None,
    high: ArrayLike | None = None,
) -> Spread:
    """A Spread by distribution name (for tables and cells)."""
    if distribution in ("normal", "lognormal"):
        if mean is None:
            raise InputError(f"{distribution} spread needs a mean")
        return getattr(Spread, distribution)(mean, sd, cov)
    if distribution == "uniform" and low is not None and high is not None:
        return Spread.uniform(low, high)
    if distribution == "triangular" and None not in (low, mode, high):
        return Spread.triangular(low, mode, high)
    if distribution not in DISTRIBUTIONS:
        raise InputError(
            f"distribution must be one of {', '.join(DISTRIBUTIONS)}, got {distribution!r}"
        )
    raise InputError(
        f"{distribution} spread needs low and high"
        + (" and mode" if distribution == "triangular" else "")
    )


class Reliability(NamedTuple):
    """Results per cell: FS statistics, reliability index and probability of failure."""

    fs_mean: np.ndarray
    fs_sd: np.ndarray
    reliability_index: np.ndarray
    probability_of_failure: np.ndarray


def _means(values: Mapping[str, Any]) -> dict[str, Any]:
    return {k: (v.mean if isinstance(v, Spread) else v) for k, v in values.items()}


def _pair(correlations: Mapping[tuple[str, str], float], a: str, b: str) -> float:
    rho = correlations.get((a, b), correlations.get((b, a), 0.0))
    return float(checked(f"correlation {a}-{b}", rho, -1.0, 1.0))


def _uncertain(
    values: Mapping[str, Any], correlations: Mapping[tuple[str, str], float]
) -> list[str]:
    names = [k for k, v in values.items() if isinstance(v, Spread)]
    for a, b in correlations:
        if a not in names or b not in names:
            raise InputError(f"correlation {a}-{b}: both inputs need a spread")
    return names


def reliability_fosm(
    fs_of: Callable[..., ArrayLike],
    values: Mapping[str, Any],
    correlations: Mapping[tuple[str, str], float] | None = None,
    fs_distribution: str = "normal",
) -> Reliability:
    """Taylor-series (FOSM) reliability of ``fs_of(**values)`` (Duncan 2000).

    Parameters
    ----------
    fs_of : function of the named inputs returning FS (broadcasting).
    values : input name -> number, array or :class:`Spread`.
    correlations : {(name_a, name_b): rho} between uncertain inputs, rho in [-1, 1].
    fs_distribution : "normal" (beta = (FS - 1)/sigma) or "lognormal" (Duncan's form).
    """
    correlations = correlations or {}
    points = taylor_points(values, correlations)
    fs = {key: np.minimum(np.asarray(fs_of(**p), float), FS_STAT_CAP) for key, p in points.items()}
    sd = taylor_sd(fs, correlations, taylor_scales(values, correlations))
    beta = moment_reliability_index(fs[None], sd, fs_distribution)
    return _result(fs[None], sd, beta, normal_cdf(-beta))


TaylorKey = tuple[str, float] | None  # (input, +1 or -1) or None for the means


def _step(spread: Spread, name: str, sign: float) -> np.ndarray:
    """mean + sign sd, clipped to the input's physical range (``DEFAULT_BOUNDS``)."""
    low, high = DEFAULT_BOUNDS.get(name, (-math.inf, math.inf))
    return np.clip(spread.mean + sign * spread.sd, low, high)


def taylor_points(
    values: Mapping[str, Any], correlations: Mapping[tuple[str, str], float] | None = None
) -> dict[TaylorKey, dict[str, Any]]:
    """The inputs of the Taylor-series method: all means (key None), and each uncertain
    input at mean + sd and mean - sd (keys (name, +1) and (name, -1)), clipped to its
    physical range (``DEFAULT_BOUNDS``) as Monte Carlo samples are."""
    names = _uncertain(values, correlations or {})
    base = _means(values)
    points: dict[TaylorKey, dict[str, Any]] = {None: base}
    for name in names:
        points[(name, 1.0)] = base | {name: _step(values[name], name, 1.0)}
        points[(name, -1.0)] = base | {name: _step(values[name], name, -1.0)}
    return points


def taylor_scales(
    values: Mapping[str, Any], correlations: Mapping[tuple[str, str], float] | None = None
) -> dict[str, np.ndarray]:
    """Per uncertain input, 2 sd over the distance between its two (clipped) points: 1
    unless a point was clipped, so that dF_i/2 is the slope between the points times sd.

    >>> float(taylor_scales({"cohesion_kpa": Spread.normal(2.0, 3.0)})["cohesion_kpa"])
    1.2
    """
    scales = {}
    for name in _uncertain(values, correlations or {}):
        width = _step(values[name], name, 1.0) - _step(values[name], name, -1.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            scales[name] = np.where(width > 0, 2.0 * values[name].sd / width, 1.0)
    return scales


def taylor_sd(
    fs: Mapping[TaylorKey, np.ndarray],
    correlations: Mapping[tuple[str, str], float] | None = None,
    scales: Mapping[str, np.ndarray] | None = None,
) -> np.ndarray:
    """sigma_FS of the Taylor-series method from FS at the points of :func:`taylor_points`:
    sigma^2 = sum((dF_i / 2)^2) + 2 sum(rho_ij dF_i/2 dF_j/2) (Duncan 2000); ``scales``
    from :func:`taylor_scales` where points were clipped."""
    correlations = correlations or {}
    scales = scales or {}
    names = [key[0] for key in fs if key is not None and key[1] > 0]
    half = {n: (fs[(n, 1.0)] - fs[(n, -1.0)]) / 2.0 * scales.get(n, 1.0) for n in names}
    var = sum((d * d for d in half.values()), np.zeros_like(fs[None]))
    for i, a in enumerate(names):
        for b in names[i + 1 :]:
            var = var + 2.0 * _pair(correlations, a, b) * half[a] * half[b]
    return np.sqrt(np.maximum(var, 0.0))


def moment_reliability_index(
    fs_mean: ArrayLike, fs_sd: ArrayLike, fs_distribution: str = "normal"
) -> np.ndarray:
    """beta from FS's mean and standard deviation: (FS - 1) / sigma (normal), or Duncan's
    lognormal form ln(FS / sqrt(1 + V^2)) / sqrt(ln(1 + V^2)), V = sigma / FS; +-inf where
    sigma = 0 (Duncan 2000).

    >>> round(float(moment_reliability_index(1.5, 0.25)), 6)
    2.0
    """
    fs = np.asarray(fs_mean, float)
    sd = np.asarray(fs_sd, float)
    with np.errstate(all="ignore"):
        if fs_distribution == "normal":
            return np.where(sd > 0, (fs - 1.0) / sd, np.where(fs >= 1.0, np.inf, -np.inf))
        if fs_distribution == "lognormal":
            v2 = (sd / fs) ** 2
            beta = np.where(
                sd > 0,
                np.log(fs / np.sqrt(1.0 + v2)) / np.sqrt(np.log1p(v2)),
                np.where(fs >= 1.0, np.inf, -np.inf),
            )
            return np.where(fs > 0.0, beta, -np.inf)  # FS = 0: fails for certain
    raise InputError(f"fs_distribution must be normal or lognormal, got {fs_distribution!r}")


def reliability_monte_carlo(
    fs_of: Callable[..., ArrayLike],
    values: Mapping[str, Any],
    correlations: Mapping[tuple[str, str], float] | None = None,
    samples: int = 1000,
    random_state: int = 0,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    max_block: int = 1 << 22,
) -> Reliability:
    """Monte Carlo reliability of ``fs_of(**values)``.

    Parameters
    ----------
    samples : number of samples, 10 to 10^7.
    random_state : integer for ``numpy.random.default_rng``: the same value gives the same
        result.
    bounds : input name -> (low, high) physical range, added to ``DEFAULT_BOUNDS``;
        samples outside are clipped.
    max_block : at most this many FS values are held at once (memory bound).
    """
    correlations = correlations or {}
    n = int(checked("samples", samples, 10, 1e7))
    names = _uncertain(values, correlations)
    bounds = DEFAULT_BOUNDS | dict(bounds or {})
    base = _means(values)
    shape = np.broadcast_shapes(*(np.shape(np.asarray(v)) for v in base.values()))
    cells = int(np.prod(shape)) if shape else 1
    rng = np.random.default_rng(int(random_state))
    k = len(names)
    corr = np.eye(k)
    for i, a in enumerate(names):
        for j, b in enumerate(names):
            if i != j:
                corr[i, j] = _pair(correlations, a, b)
    try:
        chol = np.linalg.cholesky(corr)
    except np.linalg.LinAlgError:
        raise InputError("the correlations do not form a valid correlation matrix") from None
    fails = np.zeros(shape)
    total = np.zeros(shape)
    total_sq = np.zeros(shape)
    chunk = max(1, max_block // max(cells, 1))
    done = 0
    while done < n:
        m = min(chunk, n - done)
        # sample-major draws: the same stream whatever the chunk size
        z = rng.standard_normal((m, k)).T.reshape((k, m) + (1,) * len(shape))
        z = np.tensordot(chol, z, axes=1)
        drawn = dict(base)
        for i, name in enumerate(names):
            x = values[name].from_standard_normal(z[i])
            if name in bounds:
                x = np.clip(x, *bounds[name])
            drawn[name] = x
        fs = np.asarray(fs_of(**drawn), float)
        fs = np.broadcast_to(fs, (m, *shape)) if fs.ndim < len(shape) + 1 else fs
        fails += (fs < 1.0).sum(axis=0)
        capped = np.minimum(fs, FS_STAT_CAP)
        total += capped.sum(axis=0)
        total_sq += (capped * capped).sum(axis=0)
        done += m
    pf = fails / n
    mean = total / n
    sd = np.sqrt(np.maximum(total_sq / n - mean * mean, 0.0) * n / max(n - 1, 1))
    return _result(mean, sd, -normal_ppf(pf), pf)


def _result(*fields: np.ndarray) -> Reliability:
    return Reliability(*(as_result(f) for f in fields))


def slope_reliability(
    values: Mapping[str, Any],
    correlations: Mapping[tuple[str, str], float] | None = None,
    *,
    method: str = "taylor",
    samples: int = 1000,
    random_state: int = 0,
    fs_distribution: str = "normal",
) -> Reliability:
    """Reliability of one infinite slope (or many, broadcasting).

    ``values`` holds the arguments of :func:`slopescreen.stability.factor_of_safety` by
    keyword, each a number, array or :class:`Spread`; ``method`` is "taylor" or
    "monte_carlo".

    >>> r = slope_reliability({"slope_deg": 35.0, "depth_m": 2.0, "unit_weight_kn_m3": 19.0,
    ...                        "cohesion_kpa": Spread.normal(7.0, 1.5),
    ...                        "friction_deg": Spread.normal(31.0, 2.0), "saturation": 0.5})
    >>> round(r.probability_of_failure, 3)
    0.385
    """
    from slopescreen.stability import factor_of_safety

    if method == "taylor":
        return reliability_fosm(factor_of_safety, values, correlations, fs_distribution)
    if method == "monte_carlo":
        return reliability_monte_carlo(
            factor_of_safety, values, correlations, samples=samples, random_state=random_state
        )
    raise InputError(f"method must be taylor or monte_carlo, got {method!r}")
