"""Infinite-slope factor of safety against textbook special cases and worked examples."""

import math

import numpy as np
import pytest

from slopescreen import InputError, factor_of_safety, slip_plane_stresses

GAMMA_W = 9.81


@pytest.mark.parametrize("beta, phi", [(20.0, 30.0), (35.0, 35.0), (10.0, 25.0), (45.0, 40.0)])
def test_dry_cohesionless_is_tan_ratio(beta, phi):
    # Textbook special case (Craig's Soil Mechanics, infinite slope; Das, Principles of
    # Geotechnical Engineering, ch. on slope stability): FS = tan(phi)/tan(beta).
    fs = factor_of_safety(beta, 2.0, 0.0, phi, 18.0)
    assert fs == pytest.approx(
        math.tan(math.radians(phi)) / math.tan(math.radians(beta)), rel=1e-12
    )


@pytest.mark.parametrize("gamma_sat", [19.0, 20.5, 22.0])
def test_cohesionless_full_seepage(gamma_sat):
    # Textbook special case (Craig; Das): water table at the surface, slope-parallel seepage:
    # FS = (gamma_sat - gamma_w)/gamma_sat * tan(phi)/tan(beta).
    beta, phi = 25.0, 33.0
    fs = factor_of_safety(beta, 3.0, 0.0, phi, 17.0, 1.0, saturated_unit_weight_kn_m3=gamma_sat)
    expected = (
        (gamma_sat - GAMMA_W)
        / gamma_sat
        * math.tan(math.radians(phi))
        / math.tan(math.radians(beta))
    )
    assert fs == pytest.approx(expected, rel=1e-12)


def test_undrained_phi_zero():
    # Textbook special case (Craig; Das): phi = 0 gives FS = c / (gamma z sin(beta) cos(beta)).
    beta, z, c, gamma = 28.0, 2.5, 25.0, 19.0
    b = math.radians(beta)
    expected = c / (gamma * z * math.sin(b) * math.cos(b))
    assert factor_of_safety(beta, z, c, 0.0, gamma) == pytest.approx(expected, rel=1e-12)


def test_das_example_dry_cohesive_slope():
    # Das, B.M., Principles of Geotechnical Engineering, infinite-slope example without
    # seepage (from memory): gamma = 15.7 kN/m3, c' = 9.6 kPa, phi' = 15 deg, beta = 25 deg,
    # vertical thickness H = 2.4 m; printed Fs = 0.665 + 0.575 = 1.24.
    fs = factor_of_safety(25.0, 2.4, 9.6, 15.0, 15.7)
    assert round(fs, 2) == 1.24


def test_craig_example_long_slope_with_seepage():
    # Craig, R.F., Craig's Soil Mechanics, worked example on a long natural slope in fissured
    # overconsolidated clay (from memory): beta = 12 deg, water table at the surface with
    # slope-parallel seepage, slip plane 5 m deep, gamma_sat = 20 kN/m3, gamma_w = 9.8;
    # peak c' = 10 kPa, phi' = 26 deg -> F = 1.66; residual c' = 0, phi' = 18 deg -> F = 0.78.
    common = dict(saturated_unit_weight_kn_m3=20.0, water_unit_weight_kn_m3=9.8)
    peak = factor_of_safety(12.0, 5.0, 10.0, 26.0, 20.0, 1.0, **common)
    residual = factor_of_safety(12.0, 5.0, 0.0, 18.0, 20.0, 1.0, **common)
    assert round(peak, 2) == 1.66
    assert round(residual, 2) == 0.78


def test_stresses_match_slice_equilibrium():
    # Analytic: a slice of horizontal width b and vertical height z has weight W = gamma z b;
    # its base has length b / cos(beta); the normal and shear components of W per base area
    # are gamma z cos^2(beta) and gamma z sin(beta) cos(beta) (common practice).
    beta, z, gamma = math.radians(31.0), 1.7, 18.2
    s = slip_plane_stresses(31.0, z, gamma)
    weight_per_base = gamma * z * math.cos(beta)
    assert s.normal_kpa == pytest.approx(weight_per_base * math.cos(beta), rel=1e-12)
    assert s.driving_shear_kpa == pytest.approx(weight_per_base * math.sin(beta), rel=1e-12)
    assert s.pore_pressure_kpa == 0.0


def test_seismic_coefficient_resolves_horizontal_force():
    # Analytic (Kramer 1996, pseudo-static infinite slope): a horizontal force k_h W per unit
    # horizontal area resolved onto the plane adds k_h W cos^2(beta) to the driving stress and
    # removes k_h W sin(beta) cos(beta) from the normal stress.
    beta, z, gamma, k = math.radians(20.0), 2.0, 19.0, 0.15
    w = gamma * z
    s = slip_plane_stresses(20.0, z, gamma, seismic_coefficient=k)
    assert s.normal_kpa == pytest.approx(
        w * (math.cos(beta) ** 2 - k * math.sin(beta) * math.cos(beta)), rel=1e-12
    )
    assert s.driving_shear_kpa == pytest.approx(
        w * (math.sin(beta) * math.cos(beta) + k * math.cos(beta) ** 2), rel=1e-12
    )


def test_root_cohesion_and_surcharge_terms():
    # Common practice (root cohesion adds to c'; surcharge adds to the vertical load).
    base = factor_of_safety(30.0, 1.0, 2.0, 30.0, 18.0, root_cohesion_kpa=3.0, surcharge_kpa=5.0)
    b = math.radians(30.0)
    load = 18.0 + 5.0
    expected = (5.0 + load * math.cos(b) ** 2 * math.tan(b)) / (load * math.sin(b) * math.cos(b))
    assert base == pytest.approx(expected, rel=1e-12)


def test_flat_ground_is_infinite_without_warnings():
    with np.errstate(all="raise"):
        fs = factor_of_safety(
            np.array([0.0, 0.0, 10.0]), 1.0, np.array([0.0, 5.0, 5.0]), 30.0, 18.0
        )
    assert np.isinf(fs[0]) and np.isinf(fs[1]) and np.isfinite(fs[2])


def test_effective_stress_never_negative():
    # Pore pressure cannot exceed total normal stress in the model: sigma' clipped at 0.
    s = slip_plane_stresses(30.0, 2.0, 10.0, 1.0, seismic_coefficient=0.9)
    assert s.effective_normal_kpa == 0.0


def test_broadcasting_scalar_and_grid():
    slopes = np.linspace(5.0, 45.0, 12).reshape(3, 4)
    fs = factor_of_safety(slopes, 1.5, 4.0, 32.0, 18.0, 0.5)
    assert fs.shape == (3, 4)
    assert fs[1, 2] == pytest.approx(
        factor_of_safety(float(slopes[1, 2]), 1.5, 4.0, 32.0, 18.0, 0.5)
    )
    assert isinstance(factor_of_safety(30.0, 1.0, 0.0, 30.0, 18.0), float)


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        (dict(slope_deg=90.0), "slope_deg must be in [0, 90)"),
        (dict(slope_deg=-1.0), "slope_deg must be in [0, 90)"),
        (dict(depth_m=-0.5), "depth_m must be in [0, inf]"),
        (dict(cohesion_kpa=-1.0), "cohesion_kpa must be in [0, inf]"),
        (dict(friction_deg=90.0), "friction_deg must be in [0, 90)"),
        (dict(saturation=1.2), "saturation must be in [0, 1]"),
        (dict(saturation=float("nan")), "saturation must be a number"),
        (dict(saturated_unit_weight_kn_m3=9.0), "unit weight of water"),
        (dict(seismic_coefficient=1.0), "seismic_coefficient must be in [0, 1)"),
    ],
)
def test_invalid_inputs_name_argument_and_range(kwargs, fragment):
    args = dict(
        slope_deg=30.0, depth_m=1.0, cohesion_kpa=1.0, friction_deg=30.0, unit_weight_kn_m3=18.0
    )
    args.update(kwargs)
    with pytest.raises(
        InputError, match=fragment.replace("[", r"\[").replace("(", r"\(").replace(")", r"\)")
    ):
        factor_of_safety(**args)


def test_input_error_is_value_error():
    with pytest.raises(ValueError):
        factor_of_safety(30.0, 1.0, 1.0, 30.0, 18.0, saturation=[0.5, 2.0])
