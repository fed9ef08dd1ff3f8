"""Fitting a Mohr-Coulomb envelope (c', phi') to laboratory tests at failure.

Triaxial tests are fitted on the stress-path Kf line in s'-t space (MIT convention),
t = a + s' tan(alpha), with s' = (sigma1' + sigma3')/2 and t = (sigma1' - sigma3')/2;
then sin(phi') = tan(alpha) and c' = a / cos(phi'). Direct-shear tests are fitted as
tau = c' + sigma' tan(phi') directly. Both are ordinary least squares; standard errors
and the c'-phi' covariance come from the regression covariance by first-order (delta
method) propagation.

References
----------
Lambe, T.W. & Whitman, R.V. (1969). *Soil Mechanics*. Wiley, ch. 8 and 11 (stress paths,
Kf line, sin phi' = tan alpha).
Draper, N.R. & Smith, H. (1998). *Applied Regression Analysis*, 3rd ed. Wiley (OLS
standard errors).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import checked
from slopescreen.errors import InputError

MIN_TESTS_ADVISED = 3  # common practice: at least three specimens per envelope


@dataclass(frozen=True)
class EnvelopeFit:
    """Fitted Mohr-Coulomb parameters and their uncertainty.

    ``covariance`` is the 2 x 2 covariance of (cohesion_kpa, friction_deg) in kPa^2,
    kPa deg and deg^2; standard errors and covariance are NaN with only two tests.
    """

    cohesion_kpa: float
    friction_deg: float
    cohesion_se_kpa: float
    friction_se_deg: float
    covariance: np.ndarray
    r2: float
    n: int
    method: str
    warnings: tuple[str, ...] = field(default=())

    def strength_spreads(self) -> tuple[object, object, float]:
        """(cohesion Spread, friction Spread, correlation): normal distributions from the fit.

        They describe the uncertainty of the fitted mean strength (estimation error), not
        the spatial variability of the soil; with two tests there is none to give.
        """
        from slopescreen.errors import InputError
        from slopescreen.reliability import Spread

        if not np.isfinite(self.cohesion_se_kpa):
            raise InputError(
                "the envelope fit has no standard errors (two tests): at least "
                "three are needed for a strength distribution"
            )
        denominator = self.cohesion_se_kpa * self.friction_se_deg
        rho = float(self.covariance[0, 1] / denominator) if denominator > 0 else 0.0
        return (
            Spread.normal(self.cohesion_kpa, self.cohesion_se_kpa),
            Spread.normal(self.friction_deg, self.friction_se_deg),
            float(np.clip(rho, -1.0, 1.0)),
        )

    def as_dict(self) -> dict[str, object]:
        """Plain-Python view for JSON output."""
        return {
            "cohesion_kpa": self.cohesion_kpa,
            "friction_deg": self.friction_deg,
            "cohesion_se_kpa": self.cohesion_se_kpa,
            "friction_se_deg": self.friction_se_deg,
            "covariance": self.covariance.tolist(),
            "r2": self.r2,
            "n": self.n,
            "method": self.method,
            "warnings": list(self.warnings),
        }


@dataclass(frozen=True)
class _Line:
    intercept: float
    slope: float
    covariance: np.ndarray  # of (intercept, slope)
    r2: float


def _least_squares(x: np.ndarray, y: np.ndarray) -> _Line:
    n = x.size
    x_mean, y_mean = x.mean(), y.mean()
    sxx = float(((x - x_mean) ** 2).sum())
    if sxx <= 0.0:
        raise InputError("tests must be run at two or more different normal stresses")
    slope = float(((x - x_mean) * (y - y_mean)).sum() / sxx)
    intercept = float(y_mean - slope * x_mean)
    residual = y - (intercept + slope * x)
    ssr = float((residual**2).sum())
    sst = float(((y - y_mean) ** 2).sum())
    r2 = 1.0 - ssr / sst if sst > 0.0 else 1.0
    s2 = ssr / (n - 2) if n > 2 else np.nan
    cov = s2 * np.array([[1.0 / n + x_mean**2 / sxx, -x_mean / sxx], [-x_mean / sxx, 1.0 / sxx]])
    return _Line(intercept, slope, cov, r2)


def _result(
    line: _Line,
    cohesion: float,
    friction_rad: float,
    jacobian: np.ndarray,
    n: int,
    method: str,
    notes: list[str],
) -> EnvelopeFit:
    cov = jacobian @ line.covariance @ jacobian.T
    scale = np.diag([1.0, np.degrees(1.0)])
    cov = scale @ cov @ scale
    if n < MIN_TESTS_ADVISED:
        notes.append(
            f"only {n} tests: the envelope is poorly determined "
            f"(at least {MIN_TESTS_ADVISED} specimens are common practice)"
        )
    if cohesion < 0.0:
        notes.append(
            f"fitted cohesion is negative ({cohesion:.3g} kPa): the tests do not "
            "support a cohesion intercept; consider c' = 0"
        )
    return EnvelopeFit(
        cohesion_kpa=float(cohesion),
        friction_deg=float(np.degrees(friction_rad)),
        cohesion_se_kpa=float(np.sqrt(cov[0, 0])),
        friction_se_deg=float(np.sqrt(cov[1, 1])),
        covariance=cov,
        r2=float(line.r2),
        n=n,
        method=method,
        warnings=tuple(notes),
    )


def _paired(name_a: str, a: ArrayLike, name_b: str, b: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    x = checked(name_a, a).ravel()
    y = checked(name_b, b).ravel()
    if x.size != y.size:
        raise InputError(
            f"{name_a} and {name_b} must have the same length, got {x.size} and {y.size}"
        )
    if x.size < 2:
        raise InputError(f"at least 2 tests are needed to fit an envelope, got {x.size}")
    return x, y


def fit_envelope(
    sigma3_kpa: ArrayLike, sigma1_kpa: ArrayLike, pore_pressure_kpa: ArrayLike | None = None
) -> EnvelopeFit:
    """Fit c', phi' to triaxial tests at failure on the s'-t (Kf) line.

    Parameters
    ----------
    sigma3_kpa : total minor principal (cell) stress at failure per test, kPa.
    sigma1_kpa : total major principal stress at failure per test, kPa (>= sigma3).
    pore_pressure_kpa : pore pressure at failure per test, kPa (default 0: drained tests
        or stresses already effective).

    Returns
    -------
    EnvelopeFit. Raises InputError with fewer than 2 tests, all at one confining stress,
    negative effective stress, or a Kf slope tan(alpha) >= 1 (no real phi').

    >>> fit = fit_envelope([50.0, 100.0, 200.0], [170.0, 310.0, 590.0])
    >>> round(fit.cohesion_kpa, 2), round(fit.friction_deg, 2)
    (8.96, 28.27)
    """
    s3, s1 = _paired("sigma3_kpa", sigma3_kpa, "sigma1_kpa", sigma1_kpa)
    u = (
        np.zeros_like(s3)
        if pore_pressure_kpa is None
        else checked("pore_pressure_kpa", pore_pressure_kpa).ravel() * np.ones_like(s3)
    )
    s3e = checked("sigma3_kpa - pore_pressure_kpa", s3 - u, 0.0)
    s1e = s1 - u
    if np.ptp(s3e) == 0.0:
        raise InputError(
            "tests must be run at two or more different confining stresses "
            "sigma3' to define an envelope"
        )
    checked("sigma1_kpa - sigma3_kpa", s1e - s3e, 0.0)
    line = _least_squares((s1e + s3e) / 2.0, (s1e - s3e) / 2.0)
    if not 0.0 <= line.slope < 1.0:
        raise InputError(
            f"the s'-t line slope tan(alpha) = {line.slope:.3g} is outside [0, 1): "
            "the tests do not define a Mohr-Coulomb envelope"
        )
    phi = float(np.arcsin(line.slope))
    cos_phi = float(np.cos(phi))
    cohesion = line.intercept / cos_phi
    # d(c, phi)/d(a, tan alpha): c = a / sqrt(1 - b^2), phi = asin(b)
    jac = np.array(
        [[1.0 / cos_phi, line.intercept * line.slope / cos_phi**3], [0.0, 1.0 / cos_phi]]
    )
    return _result(line, cohesion, phi, jac, s3.size, "triaxial, s'-t least squares", [])


def fit_direct_shear(normal_kpa: ArrayLike, shear_kpa: ArrayLike) -> EnvelopeFit:
    """Fit c', phi' to direct-shear tests: tau_f = c' + sigma'_n tan(phi') by least squares.

    Parameters
    ----------
    normal_kpa : effective normal stress on the shear plane per test, >= 0 kPa.
    shear_kpa : shear stress at failure per test, >= 0 kPa.

    >>> fit = fit_direct_shear([50.0, 100.0, 150.0], [40.0, 69.0, 98.0])
    >>> round(fit.cohesion_kpa, 2), round(fit.friction_deg, 2)
    (11.0, 30.11)
    """
    x, y = _paired("normal_kpa", normal_kpa, "shear_kpa", shear_kpa)
    checked("normal_kpa", x, 0.0)
    checked("shear_kpa", y, 0.0)
    line = _least_squares(x, y)
    if line.slope < 0.0:
        raise InputError(
            f"shear strength falls with normal stress (slope {line.slope:.3g}): "
            "the tests do not define a Mohr-Coulomb envelope"
        )
    phi = float(np.arctan(line.slope))
    jac = np.array([[1.0, 0.0], [0.0, 1.0 / (1.0 + line.slope**2)]])
    return _result(line, line.intercept, phi, jac, x.size, "direct shear, least squares", [])
