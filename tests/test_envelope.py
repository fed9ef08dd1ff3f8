"""Envelope fits against independent general-purpose regressions and round trips."""

import math

import numpy as np
import pytest
from scipy import stats

from slopescreen import InputError, fit_direct_shear, fit_envelope, principal_stress_at_failure_kpa

SIGMA3 = np.array([50.0, 100.0, 200.0, 400.0])
PORE = np.array([10.0, 35.0, 80.0, 150.0])
NOISE = np.array([4.0, -6.0, 3.0, -2.0])  # fixed perturbation, kPa


def test_round_trip_exact_data():
    # Analytic: sigma1' from the Rankine form of Mohr-Coulomb with known c', phi' is fitted
    # back exactly.
    s1 = principal_stress_at_failure_kpa(SIGMA3 - PORE, 7.5, 29.0) + PORE
    fit = fit_envelope(SIGMA3, s1, PORE)
    assert fit.cohesion_kpa == pytest.approx(7.5, rel=1e-9)
    assert fit.friction_deg == pytest.approx(29.0, rel=1e-9)
    assert fit.r2 == pytest.approx(1.0)
    assert fit.n == 4 and fit.warnings == ()


def test_matches_scipy_linregress_on_s_t_points():
    # Independent reference: scipy.stats.linregress on the same s'-t points gives the slope
    # tan(alpha), intercept a and their standard errors; numpy.polyfit gives the same line.
    s1 = principal_stress_at_failure_kpa(SIGMA3 - PORE, 7.5, 29.0) + PORE + NOISE
    fit = fit_envelope(SIGMA3, s1, PORE)
    s_eff = (s1 + SIGMA3) / 2.0 - PORE
    t = (s1 - SIGMA3) / 2.0
    ref = stats.linregress(s_eff, t)
    slope, intercept = np.polyfit(s_eff, t, 1)
    assert slope == pytest.approx(ref.slope, rel=1e-12)
    phi = math.asin(ref.slope)
    assert fit.friction_deg == pytest.approx(math.degrees(phi), rel=1e-10)
    assert fit.cohesion_kpa == pytest.approx(intercept / math.cos(phi), rel=1e-10)
    assert fit.r2 == pytest.approx(ref.rvalue**2, rel=1e-10)
    # delta method: se(phi) = se(b) / sqrt(1 - b^2), in degrees
    assert fit.friction_se_deg == pytest.approx(math.degrees(ref.stderr / math.cos(phi)), rel=1e-10)
    # se(c) with the intercept-slope covariance, from scipy's errors and x mean
    var_a, var_b = ref.intercept_stderr**2, ref.stderr**2
    cov_ab = -np.mean(s_eff) * var_b
    da, db = 1.0 / math.cos(phi), ref.intercept * ref.slope / math.cos(phi) ** 3
    se_c = math.sqrt(da * da * var_a + db * db * var_b + 2.0 * da * db * cov_ab)
    assert fit.cohesion_se_kpa == pytest.approx(se_c, rel=1e-8)


def test_monte_carlo_spread_matches_standard_errors():
    # Independent check of the propagated errors: refit many noisy copies (numpy random)
    # and compare the spread of c', phi' with the reported standard errors.
    rng = np.random.default_rng(7)
    s3 = np.array([30.0, 60.0, 100.0, 150.0, 220.0, 300.0])
    true = principal_stress_at_failure_kpa(s3, 10.0, 30.0)
    noise_sd = 6.0
    fits = [fit_envelope(s3, true + rng.normal(0.0, noise_sd, s3.size)) for _ in range(3000)]
    c = np.array([f.cohesion_kpa for f in fits])
    phi = np.array([f.friction_deg for f in fits])
    mean_se_c = np.mean([f.cohesion_se_kpa for f in fits])
    mean_se_phi = np.mean([f.friction_se_deg for f in fits])
    assert np.std(c) == pytest.approx(mean_se_c, rel=0.1)
    assert np.std(phi) == pytest.approx(mean_se_phi, rel=0.1)


def test_direct_shear_matches_linregress():
    # Independent reference: scipy.stats.linregress of tau on sigma.
    normal = np.array([25.0, 50.0, 100.0, 200.0])
    shear = np.array([22.0, 37.0, 68.0, 125.0])
    fit = fit_direct_shear(normal, shear)
    ref = stats.linregress(normal, shear)
    assert fit.friction_deg == pytest.approx(math.degrees(math.atan(ref.slope)), rel=1e-12)
    assert fit.cohesion_kpa == pytest.approx(ref.intercept, rel=1e-12)
    assert fit.cohesion_se_kpa == pytest.approx(ref.intercept_stderr, rel=1e-10)
    assert fit.friction_se_deg == pytest.approx(
        math.degrees(ref.stderr / (1.0 + ref.slope**2)), rel=1e-10
    )


def test_two_tests_warn_and_one_test_fails():
    fit = fit_envelope([100.0, 200.0], [320.0, 610.0])
    assert any("poorly determined" in w for w in fit.warnings)
    assert math.isnan(fit.cohesion_se_kpa)
    with pytest.raises(InputError, match="at least 2 tests"):
        fit_envelope([100.0], [300.0])


def test_bad_fits_are_input_errors():
    with pytest.raises(InputError, match="two or more different confining stresses"):
        fit_envelope([100.0, 100.0, 100.0], [300.0, 310.0, 305.0])
    with pytest.raises(InputError, match="outside"):
        fit_envelope([100.0, 50.0], [300.0, 900.0])  # tan(alpha) > 1
    with pytest.raises(InputError, match="same length"):
        fit_envelope([50.0, 100.0], [150.0, 300.0, 450.0])


def test_negative_intercept_is_flagged():
    s3 = np.array([50.0, 100.0, 200.0])
    fit = fit_envelope(s3, principal_stress_at_failure_kpa(s3, 0.0, 32.0) - 15.0)
    assert fit.cohesion_kpa < 0.0
    assert any("negative" in w for w in fit.warnings)
