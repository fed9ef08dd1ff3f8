"""Strength, Mohr circle and failure plane against independent geometry."""

import math

import numpy as np
import pytest

from slopescreen import (
    InputError,
    effective_stress_kpa,
    failure_plane_angle_deg,
    failure_plane_stresses,
    mohr_circle,
    plane_stresses,
    principal_stress_at_failure_kpa,
    shear_strength_kpa,
)


def _rotated_stress(sigma1, sigma3, theta_deg):
    """Independent check: rotate the 2-D principal stress tensor with numpy matrices."""
    t = math.radians(theta_deg)
    rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
    tensor = rot.T @ np.diag([sigma1, sigma3]) @ rot
    return tensor[0, 0], abs(tensor[0, 1])


@pytest.mark.parametrize("theta", [0.0, 17.0, 45.0, 60.0, 89.0])
def test_plane_stresses_match_tensor_rotation(theta):
    # Analytic: the Mohr-circle formulas equal the tensor transformation (common practice).
    normal, shear = plane_stresses(420.0, 130.0, theta)
    n_ref, s_ref = _rotated_stress(420.0, 130.0, theta)
    assert normal == pytest.approx(n_ref, abs=1e-9)
    assert abs(shear) == pytest.approx(s_ref, abs=1e-9)


@pytest.mark.parametrize(
    "c, phi, sigma3",
    [(0.0, 30.0, 100.0), (12.0, 27.0, 60.0), (25.0, 35.0, 300.0), (5.0, 0.0, 80.0)],
)
def test_failure_plane_is_tangent_point(c, phi, sigma3):
    # Mohr-Coulomb geometry (Craig's Soil Mechanics, ch. 5): at failure the circle touches the
    # envelope tau = c + sigma tan(phi) at the plane inclined 45 + phi/2 to the major principal
    # plane; the radius to that point is perpendicular to the envelope.
    sigma1 = principal_stress_at_failure_kpa(sigma3, c, phi)
    normal, shear = failure_plane_stresses(sigma1, sigma3, phi)
    assert shear == pytest.approx(c + normal * math.tan(math.radians(phi)), rel=1e-10)
    centre, radius = mohr_circle(sigma1, sigma3)
    assert math.hypot(normal - centre, shear) == pytest.approx(radius, rel=1e-12)
    radius_dir = np.array([normal - centre, shear])
    envelope_dir = np.array([math.cos(math.radians(phi)), math.sin(math.radians(phi))])
    assert float(radius_dir @ envelope_dir) == pytest.approx(0.0, abs=1e-9 * radius)
    # and that tangent plane is the one found by maximising tau - sigma tan(phi) over angles
    angles = np.linspace(0.0, 180.0, 180001)
    n_all, s_all = plane_stresses(sigma1, sigma3, angles)
    best = angles[np.argmax(s_all - n_all * math.tan(math.radians(phi)))]
    assert best == pytest.approx(failure_plane_angle_deg(phi), abs=2e-3)


def test_failure_angle_values():
    # 45 + phi/2 (common practice).
    assert failure_plane_angle_deg(np.array([0.0, 30.0, 40.0])).tolist() == [45.0, 60.0, 65.0]


def test_shear_strength_effective_stress():
    # tau_f = c' + (sigma - u) tan(phi') (Terzaghi; Mohr-Coulomb; common practice).
    assert shear_strength_kpa(150.0, 8.0, 28.0, 50.0) == pytest.approx(
        8.0 + 100.0 * math.tan(math.radians(28.0)), rel=1e-12
    )
    assert shear_strength_kpa(20.0, 8.0, 28.0, 50.0) == 8.0  # no friction in tension
    assert effective_stress_kpa([100.0, 50.0], 60.0).tolist() == [40.0, -10.0]


def test_mohr_circle_rejects_swapped_stresses():
    with pytest.raises(InputError, match="sigma1_kpa - sigma3_kpa"):
        mohr_circle(100.0, 200.0)
