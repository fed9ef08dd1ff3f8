"""Steady-state wetness, critical recharge and hazard classes against published forms."""

import math

import numpy as np
import pytest

from slopescreen.hydrology import (
    recharge_for_saturation_mm_day,
    steady_state_saturation,
    transmissivity_m2_day,
)
from slopescreen.scenario import FAILS_WHEN_DRY, HOLDS_WHEN_SATURATED, evaluate_cells
from slopescreen.stability_classes import class_names, classify


def test_steady_state_saturation_formula():
    # Published form (Montgomery & Dietrich 1994; O'Loughlin 1986):
    # m = min(1, R a / (b T sin(theta))), with T = K z cos(theta) (soil thickness normal to
    # the slope).
    k, z, beta, r_mm, sca = 2e-5, 1.5, 30.0, 5.0, 150.0
    t = k * 86400.0 * z * math.cos(math.radians(beta))
    assert transmissivity_m2_day(k, z, beta) == pytest.approx(t, rel=1e-12)
    m = (r_mm / 1000.0) * sca / (t * math.sin(math.radians(beta)))
    assert 0.0 < m < 1.0
    assert steady_state_saturation(r_mm, sca, beta, t) == pytest.approx(m, rel=1e-12)
    assert steady_state_saturation(500.0, sca, beta, t) == 1.0
    assert recharge_for_saturation_mm_day(m, sca, beta, t) == pytest.approx(r_mm, rel=1e-12)


@pytest.mark.parametrize("beta, phi", [(25.0, 35.0), (30.0, 38.0), (20.0, 28.0)])
def test_critical_recharge_matches_montgomery_dietrich(beta, phi):
    # Montgomery & Dietrich (1994), critical steady rainfall for cohesionless soil with one
    # bulk density rho_s (from memory): q_c = T sin(theta) (b/a) (rho_s/rho_w)
    # (1 - tan(theta)/tan(phi)).
    gamma_s, gamma_w, z, k, sca = 19.0, 9.81, 1.2, 1e-5, 200.0
    t = k * 86400.0 * z * math.cos(math.radians(beta))
    expected_m_day = (
        t
        * math.sin(math.radians(beta))
        / sca
        * gamma_s
        / gamma_w
        * (1.0 - math.tan(math.radians(beta)) / math.tan(math.radians(phi)))
    )
    m_crit = gamma_s / gamma_w * (1.0 - math.tan(math.radians(beta)) / math.tan(math.radians(phi)))
    assert 0.0 < m_crit < 1.0  # the cases chosen fail between dry and saturated
    res = evaluate_cells(
        np.array([beta]),
        np.array([sca]),
        cohesion_kpa=0.0,
        friction_deg=phi,
        unit_weight_kn_m3=gamma_s,
        saturated_unit_weight_kn_m3=gamma_s,
        depth_m=z,
        hydraulic_conductivity_m_s=k,
        saturation=0.0,
    )
    assert res.critical_recharge_mm_day[0] == pytest.approx(expected_m_day * 1000.0, rel=1e-9)


def test_critical_recharge_codes():
    common = dict(
        cohesion_kpa=0.0,
        friction_deg=30.0,
        unit_weight_kn_m3=19.0,
        saturated_unit_weight_kn_m3=20.0,
        depth_m=1.0,
        hydraulic_conductivity_m_s=1e-5,
        saturation=0.0,
    )
    res = evaluate_cells(np.array([40.0, 10.0, 0.0]), np.array([100.0, 100.0, 100.0]), **common)
    # 40 deg > phi: fails dry; 10 deg cohesionless with gamma_sat 20: FS saturated =
    # (20 - 9.81)/20 tan 30/tan 10 = 1.67 > 1: holds saturated; flat ground holds too.
    assert res.critical_recharge_mm_day.tolist() == [
        FAILS_WHEN_DRY,
        HOLDS_WHEN_SATURATED,
        HOLDS_WHEN_SATURATED,
    ]
    assert np.isinf(res.factor_of_safety[2])


def test_transmissivity_given_directly_wins():
    res = evaluate_cells(
        np.array([30.0]),
        np.array([100.0]),
        cohesion_kpa=2.0,
        friction_deg=33.0,
        unit_weight_kn_m3=18.0,
        saturated_unit_weight_kn_m3=20.0,
        depth_m=1.0,
        transmissivity_m2_day=np.array([5.0]),
        recharge_mm_day=10.0,
    )
    assert res.saturation[0] == pytest.approx(0.010 * 100.0 / (5.0 * 0.5))


def test_classes_at_breaks():
    # Breaks 1.0 / 1.3 / 1.5 (common practice); a value on a break belongs to the upper class.
    fs = np.array([0.99, 1.0, 1.29, 1.3, 1.49, 1.5, np.inf, np.nan])
    assert classify(fs).tolist() == [1, 2, 2, 3, 3, 4, 4, 0]
    assert class_names([1.0, 1.3, 1.5])[3] == "ample margin (FS >= 1.5)"
    assert class_names([1.2, 2.0]) == ["FS < 1.2", "1.2 <= FS < 2", "FS >= 2"]
    with pytest.raises(ValueError, match="strictly increasing"):
        classify(fs, [1.3, 1.0])
