"""Transient storm response against an independent numerical solution and limits."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from slopescreen import factor_of_safety
from slopescreen.storm import (
    pressure_head_m,
    response_function,
    storm_factor_of_safety,
    storm_summary,
)

STORM = dict(
    slope_deg=32.0,
    water_table_depth_m=1.5,
    rain_mm_h=20.0,
    duration_h=6.0,
    hydraulic_conductivity_m_s=1e-5,
    diffusivity_m2_s=5e-5,
)
SOIL = dict(cohesion_kpa=3.0, friction_deg=34.0, unit_weight_kn_m3=19.0)


def _numerical_transient(
    depths, times_h, rain_ratio, diffusivity, duration_h, length=12.0, nodes=1201
):
    """Method of lines with scipy's stiff solver (an independent numerical solution): the
    transient head psi1 obeys d(psi1)/dt = D d2(psi1)/dZ2 with D = D0 cos^2(alpha), flux
    d(psi1)/dZ = -I/K at the surface during the storm and 0 after, psi1 = 0 far below."""
    z = np.linspace(0.0, length, nodes)
    h = z[1] - z[0]

    def rhs(t, psi):
        grad = -rain_ratio if t <= duration_h * 3600.0 else 0.0
        padded = np.concatenate(([psi[1] - 2 * h * grad], psi, [0.0]))
        out = diffusivity * (padded[2:] - 2 * psi + padded[:-2]) / h**2
        out[-1] = 0.0
        return out

    times_s = np.asarray(times_h) * 3600.0
    sol = solve_ivp(
        rhs,
        (0.0, times_s[-1]),
        np.zeros(nodes),
        method="BDF",
        t_eval=times_s,
        rtol=1e-8,
        atol=1e-11,
        max_step=600.0,
        first_step=1.0,
    )
    return np.array([[np.interp(d, z, sol.y[:, j]) for d in depths] for j in range(len(times_h))])


def test_matches_numerical_diffusion_solution():
    alpha = math.radians(STORM["slope_deg"])
    cos2 = math.cos(alpha) ** 2
    depths = np.array([0.5, 1.0, 2.0])
    times = np.array([1.0, 3.0, 6.0, 9.0, 15.0])
    ratio = (STORM["rain_mm_h"] / 1000 / 3600) / STORM["hydraulic_conductivity_m_s"]
    numerical = _numerical_transient(
        depths, times, ratio, STORM["diffusivity_m2_s"] * cos2, STORM["duration_h"]
    )
    for j, t in enumerate(times):
        steady = (depths - STORM["water_table_depth_m"]) * cos2
        psi = pressure_head_m(depths, t, **STORM)
        uncapped = psi < cos2 * depths - 1e-12
        transient = psi - steady
        assert np.allclose(transient[uncapped], numerical[j][uncapped], rtol=0.01, atol=2e-4)


def test_zero_rain_keeps_initial_state():
    # Limit: no rain, no change (Iverson 2000): FS equals the initial steady value throughout.
    dry = dict(STORM, rain_mm_h=0.0)
    initial = storm_factor_of_safety(1.2, 0.0, **dry, **SOIL)
    for t in (1.0, 10.0, 100.0):
        assert storm_factor_of_safety(1.2, t, **dry, **SOIL) == pytest.approx(initial, rel=1e-12)
    # and the initial state is the steady water table at depth d: m = (Z - d)/Z above it
    m = (1.2 - 1.0) / 1.2
    assert storm_factor_of_safety(
        1.2, 0.0, **dict(dry, water_table_depth_m=1.0), **SOIL
    ) == pytest.approx(factor_of_safety(32.0, 1.2, 3.0, 34.0, 19.0, m), rel=1e-12)


def test_long_storm_reaches_the_saturated_limit():
    # Limit: a long enough storm drives psi to the cap beta Z (water table at the surface),
    # so FS tends to the steady fully saturated value.
    long = dict(STORM, duration_h=2000.0)
    fs = storm_factor_of_safety(1.2, 2000.0, **long, **SOIL)
    assert fs == pytest.approx(factor_of_safety(32.0, 1.2, 3.0, 34.0, 19.0, 1.0), rel=1e-12)
    assert pressure_head_m(1.2, 2000.0, **long) == pytest.approx(
        1.2 * math.cos(math.radians(32.0)) ** 2
    )


def test_response_function_limits():
    # Iverson (2000) notes R(t*) grows as sqrt(t*/pi) at large t* and vanishes at small t*
    # (from memory); both follow from the erfc form.
    big = 1e6
    assert response_function(big) / math.sqrt(big / math.pi) == pytest.approx(1.0, rel=2e-3)
    assert response_function(0.01) < 1e-40
    assert response_function(0.0) == 0.0


def test_infiltration_capped_at_conductivity():
    # Rain beyond K_z runs off: 200 mm/h on K = 1e-5 m/s (36 mm/h) acts as 36 mm/h.
    heavy = pressure_head_m(1.0, 3.0, **dict(STORM, rain_mm_h=200.0))
    at_k = pressure_head_m(1.0, 3.0, **dict(STORM, rain_mm_h=36.0))
    assert heavy == pytest.approx(at_k, rel=1e-12)


def test_storm_summary_finds_first_failure():
    soil = dict(cohesion_kpa=1.0, friction_deg=34.0, unit_weight_kn_m3=19.0)
    storm = dict(STORM, water_table_depth_m=1.2, rain_mm_h=30.0, duration_h=12.0)
    res = storm_summary(
        soil_depth_m=np.array([1.5, 1.5]),
        later_h=24.0,
        time_steps=480,
        slope_deg=np.array([32.0, 15.0]),
        **{k: v for k, v in storm.items() if k != "slope_deg"},
        **soil,
    )
    t_fail = res.time_to_failure_h
    assert np.isnan(t_fail[1])  # gentle slope never fails
    assert 0.0 < t_fail[0] < 12.0
    depths = np.linspace(0.075, 1.5, 20)
    kwargs = {k: v for k, v in storm.items() if k != "slope_deg"}

    def min_fs(t):
        return min(storm_factor_of_safety(d, t, slope_deg=32.0, **kwargs, **soil) for d in depths)

    assert min_fs(t_fail[0] - 0.06) >= 1.0 > min_fs(t_fail[0] + 0.06)
    assert res.end_min_fs[0] == pytest.approx(min_fs(12.0))
    assert res.later_min_fs[0] > res.end_min_fs[0]  # pressure falls back after the storm
