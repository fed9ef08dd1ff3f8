"""Printed worked examples, each named beside its check (values as printed by the source).

Where no printed worked example with numbers exists (Iverson 2000 pressure heads; Duncan
2000's Taylor-series slope cases), the closed-form limits and the independent numerical
solutions in test_storm.py and test_reliability.py are the outside checks.
"""

import math

import pytest

from slopescreen import factor_of_safety
from slopescreen.inverse import critical_slope_deg
from slopescreen.reliability import Spread, reliability_fosm, reliability_monte_carlo
from slopescreen.strength import (
    failure_plane_angle_deg,
    mohr_circle,
    principal_stress_at_failure_kpa,
)


def test_gate_2014_civil_q16_maximum_slope_with_the_water_table_at_the_surface():
    # GATE 2014 Civil Engineering paper, Q16: infinite slope, c' = 0, phi' = 34 deg,
    # gamma_sat = 18 kN/m3, gamma_w = 10 kN/m3, water table at the surface, seepage
    # parallel to the slope, FS = 1.5: maximum slope 11.3 deg (tan beta = 0.200).
    beta = critical_slope_deg(
        2.0, 0.0, 34.0, 18.0, 1.0, target_fs=1.5, saturated_unit_weight_kn_m3=18.0,
        water_unit_weight_kn_m3=10.0,
    )  # fmt: skip
    assert beta == pytest.approx(11.3, abs=0.05)
    assert math.tan(math.radians(beta)) == pytest.approx(0.200, abs=0.0005)


def test_objective_question_maximum_slope_phi_30():
    # A standard objective question on the same case: phi' = 30 deg, gamma_sat = 20 kN/m3,
    # gamma_w = 10 kN/m3, FS = 1.5: 10.89 deg (tan i = 0.192).
    beta = critical_slope_deg(
        2.0, 0.0, 30.0, 20.0, 1.0, target_fs=1.5, saturated_unit_weight_kn_m3=20.0,
        water_unit_weight_kn_m3=10.0,
    )  # fmt: skip
    assert beta == pytest.approx(10.89, abs=0.005)
    assert math.tan(math.radians(beta)) == pytest.approx(0.192, abs=0.0005)


def test_dry_cohesionless_slope():
    # Common textbook case: dry cohesionless infinite slope at 40 deg, phi = 30 deg:
    # F = tan 30 / tan 40 = 0.69.
    assert factor_of_safety(40.0, 2.0, 0.0, 30.0, 18.0) == pytest.approx(0.69, abs=0.005)


def test_drained_triaxial_failure_plane_and_maximum_shear():
    # A soil-mechanics textbook exercise: drained triaxial, c' = 0, phi' = 29 deg,
    # sigma3' = 200 kPa: failure plane 59.5 deg from the major principal plane (30.5 deg
    # from sigma1's direction); tau_max = 190 kPa as read from the source's graphical
    # solution (closed form 188.2 kPa): checked to graphical precision, about 2%.
    theta = failure_plane_angle_deg(29.0)
    assert theta == pytest.approx(59.5, abs=1e-9)
    assert 90.0 - theta == pytest.approx(30.5, abs=1e-9)
    sigma1 = principal_stress_at_failure_kpa(200.0, 0.0, 29.0)
    tau_max = mohr_circle(sigma1, 200.0).radius_kpa
    assert tau_max == pytest.approx(190.0, rel=0.02)
    assert tau_max == pytest.approx(188.2, abs=0.05)


def test_normal_safety_margin_beta_and_probability():
    # A structural-reliability textbook example: R ~ N(350, 35), S ~ N(200, 40):
    # sigma_M = 53.15, beta = 2.822, P_f = 2.4e-3 (the printed beta of 2.84 is a slip of the
    # source: 150 / 53.15 = 2.822, and its printed P_f agrees with 2.822). As a factor of
    # safety F = M + 1 with failure at F < 1, the normal-case machinery must reproduce it.
    values = {"r": Spread.normal(350.0, 35.0), "s": Spread.normal(200.0, 40.0)}

    def margin_plus_one(r, s):
        return r - s + 1.0

    taylor = reliability_fosm(margin_plus_one, values, fs_distribution="normal")
    assert taylor.fs_sd == pytest.approx(53.15, abs=0.005)
    assert taylor.reliability_index == pytest.approx(2.822, abs=0.0005)
    assert taylor.probability_of_failure == pytest.approx(2.4e-3, rel=0.02)
    mc = reliability_monte_carlo(margin_plus_one, values, samples=400_000, random_state=1)
    assert mc.probability_of_failure == pytest.approx(2.4e-3, rel=0.1)
