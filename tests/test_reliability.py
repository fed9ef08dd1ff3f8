"""Probability of failure against closed forms, a published table and scipy."""

import math

import numpy as np
import pytest
from scipy import stats

from slopescreen import factor_of_safety
from slopescreen._normal import erfc, normal_cdf, normal_ppf
from slopescreen.reliability import (
    Spread,
    reliability_fosm,
    reliability_monte_carlo,
    spread,
)

SLOPE, DEPTH, GAMMA, M = 35.0, 2.0, 19.0, 0.5


def _fs(cohesion_kpa, tan_friction):
    return factor_of_safety(
        SLOPE, DEPTH, cohesion_kpa, np.degrees(np.arctan(tan_friction)), GAMMA, M
    )


def _closed_form(mc, sc, mt, st, rho):
    """FS is linear in c and tan(phi): normal with these moments (analytic)."""
    b = math.radians(SLOPE)
    load = GAMMA * DEPTH
    sigma_eff = load * math.cos(b) ** 2 - 9.81 * M * DEPTH * math.cos(b) ** 2
    tau = load * math.sin(b) * math.cos(b)
    mean = (mc + sigma_eff * mt) / tau
    sd = math.sqrt(sc**2 + (sigma_eff * st) ** 2 + 2 * rho * sigma_eff * sc * st) / tau
    return mean, sd, stats.norm.cdf((1.0 - mean) / sd)  # scipy as the outside reference


@pytest.mark.parametrize("rho", [0.0, -0.5])
def test_fosm_matches_closed_form_for_linear_normal_fs(rho):
    mc, sc, mt, st = 7.0, 1.5, math.tan(math.radians(31.0)), 0.06
    mean, sd, pf = _closed_form(mc, sc, mt, st, rho)
    values = {"cohesion_kpa": Spread.normal(mc, sc), "tan_friction": Spread.normal(mt, st)}
    res = reliability_fosm(_fs, values, {("cohesion_kpa", "tan_friction"): rho})
    assert res.fs_mean == pytest.approx(mean, rel=1e-12)
    assert res.fs_sd == pytest.approx(sd, rel=1e-10)
    assert res.reliability_index == pytest.approx((mean - 1.0) / sd, rel=1e-10)
    assert res.probability_of_failure == pytest.approx(pf, rel=1e-6)


@pytest.mark.parametrize("rho", [0.0, -0.5])
def test_monte_carlo_matches_closed_form_within_sampling_error(rho):
    mc, sc, mt, st = 7.0, 1.5, math.tan(math.radians(31.0)), 0.06
    _, _, pf = _closed_form(mc, sc, mt, st, rho)
    values = {"cohesion_kpa": Spread.normal(mc, sc), "tan_friction": Spread.normal(mt, st)}
    n = 40_000
    res = reliability_monte_carlo(
        _fs, values, {("cohesion_kpa", "tan_friction"): rho}, samples=n, random_state=42
    )
    standard_error = math.sqrt(pf * (1 - pf) / n)  # binomial sampling error
    assert abs(res.probability_of_failure - pf) < 4.0 * standard_error
    again = reliability_monte_carlo(
        _fs,
        values,
        {("cohesion_kpa", "tan_friction"): rho},
        samples=n,
        random_state=42,
        max_block=1000,
    )
    assert again.probability_of_failure == res.probability_of_failure  # chunking: same draws


def test_monte_carlo_over_cells_is_bounded_and_per_cell():
    # Per-cell means broadcast; each cell must match its own closed form.
    mc = np.array([4.0, 7.0, 10.0])
    values = {
        "cohesion_kpa": Spread.normal(mc, 1.5),
        "tan_friction": Spread.normal(math.tan(math.radians(31.0)), 0.06),
    }
    res = reliability_monte_carlo(_fs, values, samples=20_000, random_state=1, max_block=5000)
    for i, c in enumerate(mc):
        _, _, pf = _closed_form(c, 1.5, math.tan(math.radians(31.0)), 0.06, 0.0)
        assert (
            abs(res.probability_of_failure[i] - pf)
            < 4.0 * math.sqrt(max(pf * (1 - pf), 1e-9) / 20_000) + 1e-4
        )


def test_reliability_index_table():
    # Published relation of reliability index and probability of failure for a normal FS,
    # as tabulated by the US Army Corps of Engineers (ETL 1110-2-547, 1995), from memory:
    # beta 1.0 -> 0.16, 1.5 -> 0.07, 2.0 -> 0.023, 2.5 -> 0.006, 3.0 -> 0.001,
    # 4.0 -> 0.00003, 5.0 -> 0.0000003.
    table = {
        1.0: (0.16, 2),
        1.5: (0.07, 2),
        2.0: (0.023, 3),
        2.5: (0.006, 3),
        3.0: (0.001, 3),
        4.0: (0.00003, 5),
        5.0: (0.0000003, 7),
    }  # value, decimals printed
    for beta, (pf, decimals) in table.items():
        assert round(float(normal_cdf(-beta)), decimals) == pytest.approx(pf, rel=1e-9), beta


def test_normal_functions_against_scipy():
    # Outside reference: scipy.special.
    from scipy import special

    x = np.linspace(-7, 7, 2001)
    assert np.allclose(erfc(x), special.erfc(x), rtol=2e-7, atol=1e-300)
    p = np.linspace(1e-10, 1 - 1e-10, 20001)
    assert np.allclose(normal_ppf(p), special.ndtri(p), rtol=2e-9, atol=2e-9)


def test_lognormal_fs_form():
    # Duncan (2000) lognormal reliability index: beta_LN = ln(F / sqrt(1+V^2)) / sqrt(ln(1+V^2)).
    values = {
        "cohesion_kpa": Spread.normal(7.0, 1.5),
        "tan_friction": Spread.normal(math.tan(math.radians(31.0)), 0.06),
    }
    res = reliability_fosm(_fs, values, fs_distribution="lognormal")
    v = res.fs_sd / res.fs_mean
    expected = math.log(res.fs_mean / math.sqrt(1 + v * v)) / math.sqrt(math.log(1 + v * v))
    assert res.reliability_index == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "kind, kwargs, ref",
    [
        ("normal", dict(mean=10.0, sd=2.0), stats.norm(10.0, 2.0)),
        (
            "lognormal",
            dict(mean=10.0, cov=0.3),
            stats.lognorm(s=math.sqrt(math.log(1.09)), scale=10.0 / math.sqrt(1.09)),
        ),
        ("uniform", dict(low=2.0, high=8.0), stats.uniform(2.0, 6.0)),
        ("triangular", dict(low=2.0, mode=3.0, high=8.0), stats.triang(1 / 6, loc=2.0, scale=6.0)),
    ],
)
def test_spread_moments_and_quantiles_match_scipy(kind, kwargs, ref):
    # Outside reference: scipy.stats distributions with the same parameters.
    s = spread(kind, **kwargs)
    assert s.mean == pytest.approx(ref.mean(), rel=1e-9)
    assert s.sd == pytest.approx(ref.std(), rel=1e-9)
    q = np.array([0.01, 0.2, 0.5, 0.9, 0.999])
    assert np.allclose(s.from_standard_normal(stats.norm.ppf(q)), ref.ppf(q), rtol=1e-6)


def test_envelope_fit_feeds_a_distribution():
    from slopescreen import fit_envelope, principal_stress_at_failure_kpa

    s3 = np.array([50.0, 100.0, 200.0, 300.0])
    scatter = np.array([3.0, -4.0, 2.0, -1.0])
    fit = fit_envelope(s3, principal_stress_at_failure_kpa(s3, 8.0, 30.0) + scatter)
    c, phi, rho = fit.strength_spreads()
    assert c.mean == fit.cohesion_kpa and c.sd == fit.cohesion_se_kpa
    assert phi.mean == fit.friction_deg and phi.sd == fit.friction_se_deg
    assert rho == pytest.approx(fit.covariance[0, 1] / (fit.cohesion_se_kpa * fit.friction_se_deg))
    assert -1.0 <= rho < 0.0  # intercept and slope of a fit are negatively correlated

    def fs(cohesion_kpa, friction_deg):
        return factor_of_safety(38.0, 1.5, cohesion_kpa, friction_deg, 19.0, 0.3)

    res = reliability_fosm(
        fs, {"cohesion_kpa": c, "friction_deg": phi}, {("cohesion_kpa", "friction_deg"): rho}
    )
    assert 0.0 < res.probability_of_failure < 1.0
