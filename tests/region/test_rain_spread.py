"""Rainfall frequency and soil spreads together: the annual probability of failure against
brute-force Monte Carlo over the year's storm and the soil parameters jointly, and the
sum over bands of storm level against a dense sum."""

from types import SimpleNamespace

import numpy as np
import pytest

from slopescreen import rainfall_frequency as rf
from slopescreen.maps.region.config import RainfallFrequency, RainfallSpec, ReliabilitySpec
from slopescreen.maps.region.rain_spread import annual_probability_with_spread, critical_intensities
from slopescreen.rain_thresholds import critical_intensity_mm_h
from slopescreen.reliability import Spread, reliability_fosm
from slopescreen.stability import factor_of_safety

DURATIONS = (1.0, 6.0, 24.0)
PERIODS = (2.0, 10.0, 50.0, 200.0, 1000.0)
DESIGN = rf.idf_formula(DURATIONS, PERIODS, 18.0, 0.2, 0.3, 0.75)  # invented coefficients
SLOPES = np.array([27.0, 30.0, 32.0, 34.0, 36.0])
SCA = np.array([40.0, 25.0, 60.0, 15.0, 30.0])
MEANS = {
    "depth_m": 1.5,
    "cohesion_kpa": 3.0,
    "root_cohesion_kpa": 0.0,
    "friction_deg": 34.0,
    "unit_weight_kn_m3": 18.0,
    "saturated_unit_weight_kn_m3": 19.0,
    "hydraulic_conductivity_m_s": 1e-5,
    "diffusivity_m2_s": 5e-5,
    "transmissivity_m2_day": np.nan,
}
SD = {"cohesion_kpa": 1.0, "friction_deg": 2.0}
WATER_TABLE = 1.0


def _job(method, fs_distribution="lognormal"):
    return SimpleNamespace(
        scenario=SimpleNamespace(
            rainfall=RainfallSpec(initial_water_table_depth_m=WATER_TABLE, uplift=1.1),
            seismic_coefficient=0.0,
        ),
        rainfall=RainfallFrequency(
            idf_table=None, durations_h=DURATIONS, return_periods_yr=PERIODS, intensity_mm_h=()
        ),
        reliability=ReliabilitySpec(
            method=method, samples=3000, random_state=5, fs_distribution=fs_distribution
        ),
    )


def _engine(method, fs_distribution="lognormal"):
    job = _job(method, fs_distribution)
    cells = {"tan": np.tan(np.radians(SLOPES)), "sca": SCA}
    values = dict(MEANS) | {k: Spread.normal(MEANS[k], sd) for k, sd in SD.items()}
    mean = np.array([critical_intensities(job, cells, d, **MEANS) for d in DURATIONS])
    depth = MEANS["depth_m"]
    m0 = (depth - WATER_TABLE) / depth
    before = reliability_fosm(
        lambda **p: factor_of_safety(
            SLOPES,
            p["depth_m"],
            p["cohesion_kpa"],
            p["friction_deg"],
            p["unit_weight_kn_m3"],
            m0,
            saturated_unit_weight_kn_m3=p["saturated_unit_weight_kn_m3"],
        ),
        values,
        fs_distribution="lognormal",
    ).probability_of_failure
    return annual_probability_with_spread(job, cells, values, {}, DESIGN, mean, before)


@pytest.fixture(scope="module")
def brute_force():
    """Joint Monte Carlo: each trial draws the soil (normal c', phi') and the year's storm
    level T (annual exceedance p = 1 - exp(-1/T) uniform), and fails when the storms of
    level T reach the critical intensity of some duration (the numpy core, not the
    compiled kernel), with the table's conventions at its ends."""
    rng = np.random.default_rng(20261203)
    n = 5000
    c = np.clip(rng.normal(MEANS["cohesion_kpa"], SD["cohesion_kpa"], (n, 1)), 0.0, None)
    phi = rng.normal(MEANS["friction_deg"], SD["friction_deg"], (n, 1))
    level = -1.0 / np.log1p(-rng.uniform(size=(n, 1)))
    found = []
    for row, d in enumerate(DURATIONS):
        ic = critical_intensity_mm_h(
            d,
            slope_deg=SLOPES,
            depth_m=1.5,
            cohesion_kpa=c,
            friction_deg=phi,
            unit_weight_kn_m3=18.0,
            saturated_unit_weight_kn_m3=19.0,
            water_table_depth_m=WATER_TABLE,
            hydraulic_conductivity_m_s=1e-5,
            diffusivity_m2_s=5e-5,
            specific_catchment_area_m=SCA,
        )
        found.append(rf.return_period_yr(ic.astype(np.float32), PERIODS, DESIGN[row], 1.1))
    trigger = rf.triggering_return_period_yr(found)
    fails = (trigger == rf.FAILS_WITHOUT_RAIN) | (
        (trigger == rf.MORE_FREQUENT) & (level >= PERIODS[0])
    )
    fails |= (trigger > 0) & (level >= trigger)
    share = fails.mean(axis=0)
    return share, n


def test_monte_carlo_combined_probability_matches_brute_force(brute_force):
    share, n = brute_force
    found = _engine("monte_carlo")
    assert ((share > 0.005) & (share < 0.995)).sum() >= 3  # cells that test something
    # 4 binomial standard errors of the difference of two independent estimates (the
    # engine's 3000 samples and the brute force's 5000), common practice
    se = np.sqrt(share * (1 - share) * (1 / n + 1 / 3000))
    assert np.all(np.abs(found - share) <= 4 * se + 1e-9), (found, share, se)


@pytest.mark.parametrize("distribution", ["lognormal", "normal"])
def test_taylor_combined_probability_is_close_to_brute_force(brute_force, distribution):
    # first-order (Taylor-series) moments of the rain factor of safety: an approximation,
    # not a sampling estimate; here within half the brute-force value plus 0.005 (the
    # lognormal form runs low at small probabilities, by up to half)
    share, _ = brute_force
    found = _engine("taylor", distribution)
    assert np.all(np.abs(found - share) <= 0.5 * share + 0.005), (found, share)


def test_band_sum_is_conservative_within_its_stated_bound():
    # P(failure | level T) a smooth logistic in log T; the dense sum is the integral
    edges = rf.band_edges(2.0, 1000.0)
    dense = rf.band_edges(2.0, 1000.0, 200_000)

    def curve(centre):
        return lambda t: np.array([1.0 / (1.0 + np.exp(-(np.log(t) - np.log(centre)) / 0.3))])

    for centre in (3.0, 30.0, 400.0):
        coarse = rf.annual_probability_over_bands(curve(centre), [0.0], edges)[0]
        exact = rf.annual_probability_over_bands(curve(centre), [0.0], dense)[0]
        assert exact <= coarse <= exact * (1 + np.log(500.0) / 256)
    # a step at 10 years: p(10) exactly, from above
    step = rf.annual_probability_over_bands(lambda t: np.array([float(t >= 10.0)]), [0.0], edges)
    assert (
        rf.annual_probability([10.0], 2.0)[0]
        <= step[0]
        <= (1 + np.log(500) / 256) * (rf.annual_probability([10.0], 2.0)[0])
    )
