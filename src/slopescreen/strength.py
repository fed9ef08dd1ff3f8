"""Mohr-Coulomb shear strength on effective stress, Mohr circles and the failure plane.

All functions take numbers or numpy arrays and broadcast like numpy ufuncs. Stresses are in
kPa, compression positive; angles in degrees.

References
----------
Terzaghi, K. (1943). *Theoretical Soil Mechanics*. Wiley (effective stress).
Craig, R.F. & Knappett, J.A. (2012). *Craig's Soil Mechanics*, 8th ed., Spon, ch. 5
(Mohr circle, Mohr-Coulomb criterion, failure-plane orientation).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from slopescreen._checks import as_result, checked

FRICTION_RANGE = (0.0, 90.0)


class MohrCircle(NamedTuple):
    """Centre and radius of a Mohr circle, kPa."""

    centre_kpa: np.ndarray | float
    radius_kpa: np.ndarray | float


class PlaneStresses(NamedTuple):
    """Normal and shear stress on a plane, kPa."""

    normal_kpa: np.ndarray | float
    shear_kpa: np.ndarray | float


def effective_stress_kpa(total_stress_kpa: ArrayLike, pore_pressure_kpa: ArrayLike) -> ArrayLike:
    """Terzaghi's effective stress sigma' = sigma - u.

    Parameters
    ----------
    total_stress_kpa : total normal stress sigma, kPa (any real value).
    pore_pressure_kpa : pore-water pressure u, kPa (any real value; negative is suction).

    Returns
    -------
    sigma' in kPa. It may be negative; the strength functions treat negative effective
    stress as zero (no tensile strength from friction).

    >>> effective_stress_kpa(100.0, 30.0)
    70.0
    """
    s = checked("total_stress_kpa", total_stress_kpa)
    u = checked("pore_pressure_kpa", pore_pressure_kpa)
    return as_result(s - u)


def shear_strength_kpa(
    normal_stress_kpa: ArrayLike,
    cohesion_kpa: ArrayLike,
    friction_deg: ArrayLike,
    pore_pressure_kpa: ArrayLike = 0.0,
) -> ArrayLike:
    """Mohr-Coulomb shear strength tau_f = c' + max(sigma - u, 0) tan(phi').

    Parameters
    ----------
    normal_stress_kpa : total normal stress on the plane, kPa.
    cohesion_kpa : effective cohesion c' >= 0, kPa.
    friction_deg : effective friction angle phi' in [0, 90) degrees.
    pore_pressure_kpa : pore pressure u on the plane, kPa (default 0: stresses given are
        already effective).

    Notes
    -----
    Effective stress below zero contributes no friction (tension cut-off at zero normal
    stress, common practice for soils).

    >>> round(shear_strength_kpa(100.0, 10.0, 30.0, 20.0), 3)
    56.188
    """
    c = checked("cohesion_kpa", cohesion_kpa, 0.0)
    phi = checked("friction_deg", friction_deg, *FRICTION_RANGE, high_open=True)
    sigma_eff = np.maximum(
        np.asarray(effective_stress_kpa(normal_stress_kpa, pore_pressure_kpa)), 0.0
    )
    return as_result(c + sigma_eff * np.tan(np.radians(phi)))


def mohr_circle(sigma1_kpa: ArrayLike, sigma3_kpa: ArrayLike) -> MohrCircle:
    """Centre (sigma1 + sigma3)/2 and radius (sigma1 - sigma3)/2 of the Mohr circle.

    Parameters
    ----------
    sigma1_kpa, sigma3_kpa : major and minor principal stresses, kPa, sigma1 >= sigma3.

    >>> mohr_circle(300.0, 100.0)
    MohrCircle(centre_kpa=200.0, radius_kpa=100.0)
    """
    s1 = checked("sigma1_kpa", sigma1_kpa)
    s3 = checked("sigma3_kpa", sigma3_kpa)
    checked("sigma1_kpa - sigma3_kpa", s1 - s3, 0.0)
    return MohrCircle(as_result((s1 + s3) / 2.0), as_result((s1 - s3) / 2.0))


def plane_stresses(
    sigma1_kpa: ArrayLike, sigma3_kpa: ArrayLike, angle_deg: ArrayLike
) -> PlaneStresses:
    """Normal and shear stress on a plane at ``angle_deg`` from the major principal plane.

    sigma_n = (s1 + s3)/2 + (s1 - s3)/2 cos(2 theta); tau = (s1 - s3)/2 sin(2 theta).

    >>> [round(x, 6) for x in plane_stresses(300.0, 100.0, 45.0)]
    [200.0, 100.0]
    """
    centre, radius = mohr_circle(sigma1_kpa, sigma3_kpa)
    two_theta = np.radians(2.0 * checked("angle_deg", angle_deg, 0.0, 180.0))
    normal = np.asarray(centre) + np.asarray(radius) * np.cos(two_theta)
    shear = np.asarray(radius) * np.sin(two_theta)
    return PlaneStresses(as_result(normal), as_result(shear))


def failure_plane_angle_deg(friction_deg: ArrayLike) -> ArrayLike:
    """Angle of the failure plane from the major principal plane, theta_f = 45 + phi'/2.

    Parameters
    ----------
    friction_deg : phi' in [0, 90) degrees.

    >>> failure_plane_angle_deg(30.0)
    60.0
    """
    phi = checked("friction_deg", friction_deg, *FRICTION_RANGE, high_open=True)
    return as_result(45.0 + phi / 2.0)


def failure_plane_stresses(
    sigma1_eff_kpa: ArrayLike, sigma3_eff_kpa: ArrayLike, friction_deg: ArrayLike
) -> PlaneStresses:
    """Effective normal and shear stress on the failure plane (theta_f = 45 + phi'/2).

    sigma'_f = s' - t sin(phi'), tau_f = t cos(phi'), with s' = (s1' + s3')/2 and
    t = (s1' - s3')/2: the point where the envelope touches the Mohr circle at failure.

    >>> [round(x, 4) for x in failure_plane_stresses(300.0, 100.0, 30.0)]
    [150.0, 86.6025]
    """
    return plane_stresses(sigma1_eff_kpa, sigma3_eff_kpa, failure_plane_angle_deg(friction_deg))


def principal_stress_at_failure_kpa(
    sigma3_eff_kpa: ArrayLike, cohesion_kpa: ArrayLike, friction_deg: ArrayLike
) -> ArrayLike:
    """sigma1' at failure for a given sigma3' (Rankine form of Mohr-Coulomb).

    sigma1' = sigma3' tan^2(45 + phi'/2) + 2 c' tan(45 + phi'/2).

    >>> round(principal_stress_at_failure_kpa(100.0, 0.0, 30.0), 6)
    300.0
    """
    s3 = checked("sigma3_eff_kpa", sigma3_eff_kpa)
    c = checked("cohesion_kpa", cohesion_kpa, 0.0)
    k = np.tan(np.radians(np.asarray(failure_plane_angle_deg(friction_deg))))
    return as_result(s3 * k * k + 2.0 * c * k)


__all__ = [
    "MohrCircle",
    "PlaneStresses",
    "effective_stress_kpa",
    "failure_plane_angle_deg",
    "failure_plane_stresses",
    "mohr_circle",
    "plane_stresses",
    "principal_stress_at_failure_kpa",
    "shear_strength_kpa",
]
