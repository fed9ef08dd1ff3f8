"""Inverse solutions: plug back, published values, brute-force scans for the first crossing."""

import numpy as np
import pytest

from slopescreen import (
    critical_depth,
    critical_saturation,
    critical_slope_deg,
    factor_of_safety,
    required_cohesion_kpa,
    required_friction_deg,
)


def test_das_example_depth_for_fs_two():
    # Das, Principles of Geotechnical Engineering, infinite-slope example part (b), from
    # memory: the thickness H giving Fs = 2 for gamma = 15.7, c' = 9.6, phi' = 15, beta = 25
    # is printed as H = 1.12 m.
    assert round(critical_depth(25.0, 9.6, 15.0, 15.7, target_fs=2.0), 2) == 1.12


def test_critical_saturation_plugs_back():
    kw = dict(
        saturated_unit_weight_kn_m3=20.5,
        root_cohesion_kpa=1.0,
        surcharge_kpa=2.0,
        seismic_coefficient=0.05,
    )
    m = critical_saturation(33.0, 1.8, 3.0, 32.0, 18.0, target_fs=1.1, **kw)
    assert 0.0 < m < 1.0
    assert factor_of_safety(33.0, 1.8, 3.0, 32.0, 18.0, m, **kw) == pytest.approx(1.1, rel=1e-10)


def test_critical_saturation_raw_outside_unit_interval():
    # Fails even when dry: below 0. Holds even when saturated: above 1.
    assert critical_saturation(45.0, 2.0, 0.0, 30.0, 18.0) < 0.0
    assert critical_saturation(15.0, 2.0, 0.0, 35.0, 18.0) > 1.0


def test_critical_saturation_nan_when_independent_of_water():
    # phi' = 0 with gamma_sat = gamma: FS does not depend on m.
    assert np.isnan(critical_saturation(30.0, 2.0, 10.0, 0.0, 18.0))


def test_critical_depth_plugs_back_and_nan_cases():
    z = critical_depth(38.0, 5.0, 30.0, 18.5, 0.8, saturated_unit_weight_kn_m3=20.0)
    fs = factor_of_safety(38.0, z, 5.0, 30.0, 18.5, 0.8, saturated_unit_weight_kn_m3=20.0)
    assert fs == pytest.approx(1.0, rel=1e-10)
    # Cohesionless and stable: no depth brings FS to 1.
    assert np.isnan(critical_depth(20.0, 0.0, 35.0, 18.0))
    # Cohesive soil whose cohesionless limit stays above the target: never reaches it.
    assert np.isnan(critical_depth(20.0, 5.0, 35.0, 18.0))


def test_required_cohesion_plugs_back():
    c = required_cohesion_kpa(
        40.0,
        1.2,
        28.0,
        19.0,
        0.6,
        saturated_unit_weight_kn_m3=20.0,
        target_fs=1.3,
        root_cohesion_kpa=1.5,
    )
    assert c > 0.0
    fs = factor_of_safety(
        40.0, 1.2, c, 28.0, 19.0, 0.6, saturated_unit_weight_kn_m3=20.0, root_cohesion_kpa=1.5
    )
    assert fs == pytest.approx(1.3, rel=1e-10)
    assert required_cohesion_kpa(15.0, 1.0, 35.0, 18.0) < 0.0  # friction alone suffices
    # flat ground: nothing drives, so no cohesion is needed (never NaN)
    assert required_cohesion_kpa(0.0, 1.0, 35.0, 18.0) == pytest.approx(
        -18.0 * np.tan(np.radians(35.0))
    )


def test_required_friction_plugs_back_and_nan_cases():
    kw = dict(saturated_unit_weight_kn_m3=20.0, root_cohesion_kpa=1.5, seismic_coefficient=0.05)
    phi = required_friction_deg(38.0, 1.4, 3.0, 18.5, 0.7, target_fs=1.2, **kw)
    assert 0.0 < phi < 90.0
    fs = factor_of_safety(38.0, 1.4, 3.0, phi, 18.5, 0.7, **kw)
    assert fs == pytest.approx(1.2, rel=1e-10)
    assert required_friction_deg(10.0, 1.0, 50.0, 18.0) < 0.0  # cohesion alone suffices
    assert required_friction_deg(0.0, 1.0, 5.0, 18.0) < 0.0  # flat: no friction needed
    # fully saturated with gamma_sat = gamma_w: no effective stress for friction to act on
    assert np.isnan(required_friction_deg(30.0, 1.0, 0.0, 9.81, 1.0))


def _first_crossing_by_scan(target, **kw):
    """Independent brute force: FS on a 0.001-degree grid, first angle with FS <= target."""
    beta = np.arange(0.0, 90.0, 0.001)
    fs = factor_of_safety(beta, **kw)
    below = np.nonzero(fs <= target)[0]
    return np.nan if below.size == 0 else beta[below[0]]


@pytest.mark.parametrize(
    "kw, target",
    [
        (dict(depth_m=1.5, cohesion_kpa=4.0, friction_deg=30.0, unit_weight_kn_m3=18.0), 1.0),
        (
            dict(
                depth_m=2.0,
                cohesion_kpa=8.0,
                friction_deg=25.0,
                unit_weight_kn_m3=19.0,
                saturation=1.0,
                saturated_unit_weight_kn_m3=20.0,
            ),
            1.2,
        ),
        (
            dict(
                depth_m=1.0,
                cohesion_kpa=3.0,
                friction_deg=33.0,
                unit_weight_kn_m3=18.0,
                seismic_coefficient=0.2,
            ),
            1.0,
        ),
        (
            dict(
                depth_m=0.5,
                cohesion_kpa=3.0,
                friction_deg=20.0,
                unit_weight_kn_m3=18.0,
                saturation=1.0,
                saturated_unit_weight_kn_m3=20.0,
                seismic_coefficient=0.4,
            ),
            1.0,
        ),
    ],
)
def test_critical_slope_is_first_crossing(kw, target):
    beta = critical_slope_deg(target_fs=target, **kw)
    assert factor_of_safety(beta, **kw) == pytest.approx(target, rel=1e-8)
    assert beta == pytest.approx(_first_crossing_by_scan(target, **kw), abs=2e-3)


def test_critical_slope_none_when_minimum_stays_above_target():
    # Strong cohesion on a shallow plane: the FS minimum over beta stays above 1.
    kw = dict(depth_m=0.5, cohesion_kpa=20.0, friction_deg=30.0, unit_weight_kn_m3=18.0)
    assert np.isnan(critical_slope_deg(**kw))
    assert np.isnan(_first_crossing_by_scan(1.0, **kw))


def test_critical_slope_zero_when_flat_ground_already_fails():
    kw = dict(
        depth_m=2.0,
        cohesion_kpa=0.0,
        friction_deg=10.0,
        unit_weight_kn_m3=18.0,
        seismic_coefficient=0.3,
    )
    assert critical_slope_deg(**kw) == 0.0


def test_critical_slope_cohesionless_is_friction_angle():
    # Dry cohesionless: FS = tan(phi)/tan(beta) = 1 at beta = phi (textbook special case).
    assert critical_slope_deg(1.0, 0.0, np.array([25.0, 35.0]), 18.0) == pytest.approx(
        [25.0, 35.0], rel=1e-10
    )


def test_flat_ground_gives_the_documented_values_never_nan():
    # Slope 0 without seismic load: nothing drives a slide (common practice). The saturation
    # and depth that would bring FS to 1 do not exist: +inf; no strength is needed: <= 0.
    assert critical_saturation(0.0, 1.5, 0.0, 33.0, 18.0) == np.inf
    assert critical_depth(0.0, 2.0, 33.0, 18.0, 1.0) == np.inf
    assert required_cohesion_kpa(0.0, 1.5, 33.0, 18.0, 1.0) <= 0.0
    assert required_friction_deg(0.0, 1.5, 2.0, 18.0, 0.5) <= 0.0
    flat_and_steep = critical_saturation(np.array([0.0, 35.0]), 1.5, 2.0, 33.0, 18.0)
    assert flat_and_steep[0] == np.inf and np.isfinite(flat_and_steep[1])


def test_reliability_on_flat_ground_is_certain_to_hold():
    # FS is +inf on flat ground: capped for the moments, beta +inf, P_f 0 (never NaN)
    from slopescreen.reliability import Spread, slope_reliability

    for method in ("taylor", "monte_carlo"):
        res = slope_reliability(
            {"slope_deg": np.array([0.0, 30.0]), "depth_m": 1.5,
             "cohesion_kpa": Spread.normal(2.0, 3.0), "friction_deg": Spread.normal(33.0, 3.0),
             "unit_weight_kn_m3": 18.0, "saturation": 0.5},
            method=method, samples=200,
        )  # fmt: skip
        for field in res:
            assert not np.isnan(field).any()
        assert res.probability_of_failure[0] == 0.0
        assert 0.0 < res.probability_of_failure[1] < 1.0


def test_back_analysed_depths_stay_within_the_soil_depth_range():
    # The depth at which FS reaches 1 (critical_depth) is a solution of the back-analysis
    # only between the shallowest slip plane and the range table's deepest soil (50 m):
    # a cohesive soil on a gentle slope needs thousands of metres, which is no solution.
    from slopescreen.back_analysis import value_at_failure

    kw = dict(cohesion_kpa=np.array([2.0, 30.0, 0.1]), friction_deg=30.0,
              unit_weight_kn_m3=18.0, depth_m=1.0)  # fmt: skip
    slope = np.array([35.0, 30.05, 40.0])
    raw = critical_depth(slope, kw["cohesion_kpa"], 30.0, 18.0, 0.0)
    assert raw[1] > 1000.0 and 0.05 < raw[0] < 50.0 and raw[2] < 0.05
    found = value_at_failure("depth_m", slope, 0.0, 100.0, **kw)
    assert found[0] == pytest.approx(raw[0]) and np.isnan(found[1]) and np.isnan(found[2])
    shallower = value_at_failure("depth_m", slope, 0.0, 100.0, min_slip_depth_m=0.001, **kw)
    assert shallower[2] == pytest.approx(raw[2])
