"""From critical intensities to how often they are reached: the frequency step checked
against the closed-form inversion of a power-law IDF, and the table's checks."""

import numpy as np
import pytest

from slopescreen.errors import InputError
from slopescreen.rainfall_frequency import (
    FAILS_WITHOUT_RAIN,
    MORE_FREQUENT,
    NO_INTENSITY_FAILS,
    RARER,
    annual_probability,
    check_table,
    hazard_class,
    idf_formula,
    return_period_yr,
    triggering_return_period_yr,
)

DURATIONS = np.array([1.0, 3.0, 6.0, 12.0, 24.0, 48.0, 72.0])
PERIODS = np.array([2.0, 5.0, 10.0, 25.0, 50.0, 100.0, 200.0])
A, M, B, N = 25.0, 0.22, 0.4, 0.72  # invented coefficients of i = a T^m / (D + b)^n


def _closed_form_period(intensity, duration, uplift=1.0):
    # inversion of i = u a T^m / (D + b)^n: T = (i (D + b)^n / (u a))^(1/m)
    return (intensity * (duration + B) ** N / (uplift * A)) ** (1.0 / M)


def test_return_period_inverts_a_power_law_idf_exactly():
    # the power-law IDF i = a T^m / (D + b)^n is a common form (Koutsoyiannis, Kozonis &
    # Manetas 1998, Journal of Hydrology 206, from memory); log-log interpolation between
    # table rows is exact for it, so the table gives the closed-form inversion
    table = idf_formula(DURATIONS, PERIODS, A, M, B, N)
    rng = np.random.default_rng(2)
    for row, duration in enumerate(DURATIONS):
        true = np.exp(rng.uniform(np.log(2.0), np.log(200.0), 500))
        intensity = A * true**M / (duration + B) ** N
        found = return_period_yr(intensity, PERIODS, table[row])
        np.testing.assert_allclose(found, _closed_form_period(intensity, duration), rtol=1e-9)
        # +20% uplift: every tabulated intensity times 1.2
        lifted = return_period_yr(intensity * 1.1, PERIODS, table[row], uplift=1.2)
        expected = _closed_form_period(intensity * 1.1, duration, uplift=1.2)
        inside = (expected >= 2.0) & (expected <= 200.0)
        np.testing.assert_allclose(lifted[inside], expected[inside], rtol=1e-9)


def test_gridded_design_rainfall_inverts_each_cells_own_power_law():
    # gridded design rainfall: each cell its own coefficient a (here 15 to 45); the
    # per-cell interpolation must give each cell's closed-form inversion (as above)
    rng = np.random.default_rng(3)
    a = rng.uniform(15.0, 45.0, 400)
    true = np.exp(rng.uniform(np.log(2.0), np.log(200.0), 400))
    for duration in (1.0, 24.0):
        rows = a[None, :] * PERIODS[:, None] ** M / (duration + B) ** N  # (periods, cells)
        intensity = a * true**M / (duration + B) ** N
        found = return_period_yr(intensity, PERIODS, rows, uplift=1.2)
        expected = (intensity * (duration + B) ** N / (1.2 * a)) ** (1.0 / M)
        inside = (expected >= 2.0) & (expected <= 200.0)
        assert 100 < inside.sum() < 400
        np.testing.assert_allclose(found[inside], expected[inside], rtol=1e-9)
        codes = return_period_yr([rows[0, 0] * 0.5, rows[-1, 1] * 3.0], PERIODS, rows[:, :2])
        assert codes.tolist() == [MORE_FREQUENT, RARER]


def test_codes_outside_the_table_and_for_the_threshold_codes():
    table = idf_formula([6.0], PERIODS, A, M, B, N)[0]
    out = return_period_yr([table[0] * 0.5, table[-1] * 2.0, -1.0, -2.0], PERIODS, table)
    assert out.tolist() == [MORE_FREQUENT, RARER, FAILS_WITHOUT_RAIN, NO_INTENSITY_FAILS]


def test_the_most_frequent_duration_triggers():
    per_duration = np.array([[40.0, RARER, 7.0], [12.0, RARER, RARER], [90.0, 30.0, RARER]])
    assert triggering_return_period_yr(per_duration).tolist() == [12.0, 30.0, 7.0]


def test_annual_probability_and_classes():
    # p = 1 - exp(-1/T) (Poisson occurrence): 1 in 100 years is p = 0.00995 (common practice)
    p = annual_probability(np.array([2.0, 10.0, 100.0, 1000.0, 5000.0, RARER]), 2.0)
    np.testing.assert_allclose(p[:5], 1.0 - np.exp(-1.0 / np.array([2, 10, 100, 1000, 5000])))
    assert p[5] == 0.0
    assert hazard_class(p).tolist() == [1, 2, 3, 4, 4, 4]


@pytest.mark.parametrize(
    ("change", "fragment"),
    [
        (lambda i: i.__setitem__((2, 3), i[2, 2] * 0.9), "must rise with return period"),
        (lambda i: i.__setitem__(3, i[2] * 1.01), "must fall with duration"),
        (lambda i: i.__setitem__((0, 0), -1.0), "intensity must be a number > 0"),
    ],
)
def test_tables_that_are_not_monotone_are_refused(change, fragment):
    table = idf_formula(DURATIONS, PERIODS, A, M, B, N)
    change(table)
    with pytest.raises(InputError, match=fragment):
        check_table(DURATIONS, PERIODS, table, "idf.csv")


def test_the_compiled_frequency_step_equals_the_core():
    # the map engine's one-pass kernel against the numpy functions above, with codes,
    # values on table rows, beyond both ends and zero
    from slopescreen.maps.kernels import frequency_by_cell

    rng = np.random.default_rng(4)
    table = idf_formula(DURATIONS, PERIODS, A, M, B, N) * 1.2
    n = 20000
    found = rng.lognormal(1.5, 1.2, (DURATIONS.size, n))
    found[rng.random(found.shape) < 0.2] = -2.0
    found[:, :50] = -2.0  # all durations: no intensity fails
    found[rng.random(found.shape) < 0.01] = -1.0
    found[0, 60:70] = table[0, 2]  # exactly on a row
    found[1, 70:80] = 0.0
    period, p, cls = np.empty(n), np.empty(n), np.empty(n, np.uint8)
    codes = np.array([MORE_FREQUENT, RARER, FAILS_WITHOUT_RAIN, NO_INTENSITY_FAILS])
    shortest = float(annual_probability([MORE_FREQUENT], PERIODS[0])[0])
    breaks = np.array([0.1, 0.01, 0.001])
    frequency_by_cell(
        found, np.log(PERIODS), np.log(table), shortest, breaks, codes, period, p, cls
    )
    expected = triggering_return_period_yr(
        [return_period_yr(found[i], PERIODS, table[i]) for i in range(DURATIONS.size)]
    )
    np.testing.assert_allclose(period, expected, rtol=1e-12)
    assert {-1.0, -2.0, -3.0, -4.0} <= set(np.unique(period[period < 0]))
    np.testing.assert_allclose(p, annual_probability(expected, PERIODS[0]), rtol=1e-12)
    assert np.array_equal(cls, hazard_class(annual_probability(expected, PERIODS[0])))
