"""Run-out physics against its published forms: Corominas (1996) reach regression,
Holmgren (1994) spreading shares, the energy line."""

import math

import numpy as np
import pytest

from slopescreen.runout import (
    DEBRIS_FLOW_A,
    DEBRIS_FLOW_B,
    energy_after_step,
    reach_ratio,
    spreading_shares,
    travel_angle_deg,
)


def test_reach_regression_at_ten_thousand_cubic_metres():
    # Corominas (1996): log10(H/L) = A + B log10(V); at V = 10^4 m3, H/L = 10^(A + 4B)
    assert reach_ratio(1e4) == pytest.approx(10.0 ** (DEBRIS_FLOW_A + 4 * DEBRIS_FLOW_B))
    assert reach_ratio(1e4, a=-0.1, b=-0.2) == pytest.approx(10.0 ** (-0.1 - 0.8))
    # larger slides travel relatively farther (B < 0): the angle falls with volume
    angles = travel_angle_deg(np.array([1e2, 1e4, 1e6]))
    assert np.all(np.diff(angles) < 0)
    assert angles[1] == pytest.approx(math.degrees(math.atan(reach_ratio(1e4))))


def test_spreading_shares_sum_to_one_and_follow_holmgren():
    rng = np.random.default_rng(4)
    slopes = rng.normal(0.0, 0.4, (5000, 8))
    for x in (0.0, 1.0, 4.0, 50.0):
        f = spreading_shares(slopes, x)
        down = (slopes > 0).any(axis=1)
        assert np.abs(f[down].sum(axis=1) - 1.0).max() < 1e-12  # every cell's flow once
        assert (f[~down] == 0).all() and (f[slopes <= 0] == 0).all()
    # Holmgren (1994): f_i = tan_i^x / sum tan_j^x over the downslope neighbours
    t = np.array([0.4, 0.2, 0.1, -0.3])
    hand = np.array([0.4**1.5, 0.2**1.5, 0.1**1.5, 0.0]) / (0.4**1.5 + 0.2**1.5 + 0.1**1.5)
    assert spreading_shares(t, 1.5) == pytest.approx(hand, rel=1e-12)
    # a very large exponent: the steepest path alone
    assert spreading_shares(t, 1e5).tolist() == [1.0, 0.0, 0.0, 0.0]


def test_energy_line_step():
    # E' = E + g dz - g dx tan(phi), capped at v_max^2 / 2 (the friction-limited block)
    g = 9.81
    e = energy_after_step(5.0, 3.0, 10.0, 15.0)
    assert e == pytest.approx(5.0 + g * 3.0 - g * 10.0 * math.tan(math.radians(15.0)))
    assert energy_after_step(100.0, 50.0, 1.0, 5.0, max_speed_m_s=10.0) == pytest.approx(50.0)
    # from rest down a plane of slope theta the speed grows as sqrt(2 g s (sin - cos tan))
    # per unit slope length; here per horizontal step: E = g dx (tan theta - tan phi)
    theta, phi, dx = 35.0, 20.0, 100.0
    e = energy_after_step(0.0, dx * math.tan(math.radians(theta)), dx, phi)
    tan_theta, tan_phi = math.tan(math.radians(theta)), math.tan(math.radians(phi))
    assert e == pytest.approx(g * dx * (tan_theta - tan_phi))
