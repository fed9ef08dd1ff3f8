"""Property tests (hypothesis): monotonic trends and inverse round trips (common practice)."""

import numpy as np
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from slopescreen import (
    critical_depth,
    critical_saturation,
    critical_slope_deg,
    factor_of_safety,
    required_cohesion_kpa,
)

slope = st.floats(5.0, 60.0)
depth = st.floats(0.3, 5.0)
cohesion = st.floats(0.0, 30.0)
friction = st.floats(10.0, 45.0)
gamma = st.floats(15.0, 21.0)
extra = st.floats(0.0, 3.0)  # gamma_sat - max(gamma, gamma_w)
sat = st.floats(0.0, 1.0)
seismic = st.floats(0.0, 0.4)


def _gamma_sat(g, e):
    return max(g, 9.81) + e


@settings(max_examples=200, deadline=None)
@given(slope, depth, cohesion, friction, gamma, extra, sat, sat)
def test_fs_falls_as_saturation_rises(b, z, c, phi, g, e, m1, m2):
    lo, hi = sorted((m1, m2))
    gs = _gamma_sat(g, e)
    f_lo = factor_of_safety(b, z, c, phi, g, lo, saturated_unit_weight_kn_m3=gs)
    f_hi = factor_of_safety(b, z, c, phi, g, hi, saturated_unit_weight_kn_m3=gs)
    assert f_hi <= f_lo * (1 + 1e-12)


@settings(max_examples=200, deadline=None)
@given(slope, depth, cohesion, friction, gamma, sat, seismic, seismic)
def test_fs_falls_as_seismic_coefficient_rises(b, z, c, phi, g, m, k1, k2):
    lo, hi = sorted((k1, k2))
    f_lo = factor_of_safety(b, z, c, phi, g, m, seismic_coefficient=lo)
    f_hi = factor_of_safety(b, z, c, phi, g, m, seismic_coefficient=hi)
    assert f_hi <= f_lo * (1 + 1e-12)


@settings(max_examples=200, deadline=None)
@given(slope, depth, cohesion, cohesion, friction, friction, gamma, sat)
def test_fs_grows_with_strength(b, z, c1, c2, phi1, phi2, g, m):
    c_lo, c_hi = sorted((c1, c2))
    p_lo, p_hi = sorted((phi1, phi2))
    assert factor_of_safety(b, z, c_hi, p_lo, g, m) >= factor_of_safety(b, z, c_lo, p_lo, g, m)
    assert factor_of_safety(b, z, c_lo, p_hi, g, m) >= factor_of_safety(b, z, c_lo, p_lo, g, m)


@settings(max_examples=200, deadline=None)
@given(slope, slope, depth, friction, gamma, sat)
def test_cohesionless_fs_falls_with_slope(b1, b2, z, phi, g, m):
    lo, hi = sorted((b1, b2))
    assert factor_of_safety(hi, z, 0.0, phi, g, m) <= factor_of_safety(lo, z, 0.0, phi, g, m) * (
        1 + 1e-12
    )


@settings(max_examples=300, deadline=None)
@given(slope, depth, cohesion, friction, gamma, extra, sat, st.floats(0.8, 1.5), seismic)
def test_inverse_values_plug_back(b, z, c, phi, g, e, m, target, k):
    gs = _gamma_sat(g, e)
    kw = dict(saturated_unit_weight_kn_m3=gs, seismic_coefficient=k)

    def fs(**over):
        args = (
            dict(
                slope_deg=b,
                depth_m=z,
                cohesion_kpa=c,
                friction_deg=phi,
                unit_weight_kn_m3=g,
                saturation=m,
            )
            | over
        )
        return factor_of_safety(**args, **kw)

    m_crit = critical_saturation(b, z, c, phi, g, target_fs=target, **kw)
    if 0.0 <= m_crit <= 1.0:
        assert np.isclose(fs(saturation=m_crit), target, rtol=1e-7)
    z_crit = critical_depth(b, c, phi, g, m, target_fs=target, **kw)
    if np.isfinite(z_crit) and z_crit > 1e-6:
        assert np.isclose(fs(depth_m=z_crit), target, rtol=1e-7)
    c_req = required_cohesion_kpa(b, z, phi, g, m, target_fs=target, **kw)
    if c_req > 0.0:
        assert np.isclose(fs(cohesion_kpa=c_req), target, rtol=1e-7)
    b_crit = critical_slope_deg(z, c, phi, g, m, target_fs=target, **kw)
    if np.isfinite(b_crit) and b_crit > 0.0:
        assert np.isclose(fs(slope_deg=b_crit), target, rtol=1e-7)
        below = np.linspace(0.0, b_crit, 200, endpoint=False)[1:]
        assert (fs(slope_deg=below) >= target * (1 - 1e-9)).all()


@settings(max_examples=100, deadline=None)
@given(depth, cohesion, friction, gamma, sat)
def test_critical_slope_agrees_with_saturation_inverse(z, c, phi, g, m):
    # Two inverse routes must agree: at the critical slope for saturation m, the critical
    # saturation is m.
    b = critical_slope_deg(z, c, phi, g, m)
    assume(np.isfinite(b) and 1.0 < b < 85.0)
    assert np.isclose(critical_saturation(b, z, c, phi, g), m, atol=1e-6)
