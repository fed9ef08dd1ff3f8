"""Rain in steps (slopescreen.rain_history) against a numerical solution of the same linear
diffusion equation, the constant storm, and the identities of a linear response."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.linalg import solve_banded

from slopescreen.rain_history import history_pressure_head_m, history_summary
from slopescreen.storm import pressure_head_m, storm_summary

SOIL = dict(
    slope_deg=30.0,
    water_table_depth_m=2.0,
    hydraulic_conductivity_m_s=2e-5,
    diffusivity_m2_s=5e-5,
)


def _crank_nicolson(
    depths_m, times_h, ends_h, rain_mm_h, dz=0.004, dt_s=10.0, length_m=10.0
) -> np.ndarray:
    """psi - (Z - d) beta at ``depths_m`` and ``times_h``, from the equation Iverson (2000)
    linearises, written here from it: d(psi)/dt = D_0 cos^2(alpha) d2(psi)/dZ2 for Z > 0,
    with the surface flux -d(psi)/dZ = I_Z(t) / K_z added to the steady gradient and zero
    excess 10 m down (beyond the reach of 24 h; at 4 m the test's error was 3e-3 m);
    Crank-Nicolson in time (Crank & Nicolson 1947), a ghost node for the flux, the flux of
    each time step its mean over the step."""
    cos2 = np.cos(np.radians(SOIL["slope_deg"])) ** 2
    diff = SOIL["diffusivity_m2_s"] * cos2
    k = SOIL["hydraulic_conductivity_m_s"]
    n = round(length_m / dz) + 1
    r = diff * dt_s / dz**2
    u = np.zeros(n)
    # (I - r/2 A) u_new = (I + r/2 A) u_old with A the second difference; the ghost node
    # u_-1 = u_1 + 2 dz q at Z = 0 adds r dz (q_old + q_new) to the first row; u = 0 at the
    # far end
    ab = np.zeros((3, n))
    ab[0, 1:] = -r / 2
    ab[1, :] = 1 + r
    ab[2, :-1] = -r / 2
    ab[0, 1] = -r  # the ghost node doubles the first neighbour
    ab[1, -1], ab[2, -2] = 1.0, 0.0
    ends_s = np.asarray(ends_h) * 3600.0
    flux = np.minimum(np.asarray(rain_mm_h) / 1000.0 / 3600.0, k) / k

    def q_mean(t0: float, t1: float) -> float:
        edges = np.concatenate(([0.0], ends_s))
        total = 0.0
        for i, value in enumerate(flux):
            lo, hi = max(t0, edges[i]), min(t1, edges[i + 1])
            total += value * max(hi - lo, 0.0)
        return total / (t1 - t0)

    out = np.empty((len(times_h), len(depths_m)))
    steps = round(max(times_h) * 3600.0 / dt_s)
    wanted = {round(t * 3600.0 / dt_s): i for i, t in enumerate(times_h)}
    for step in range(1, steps + 1):
        q = q_mean((step - 1) * dt_s, step * dt_s)
        rhs = u * (1 - r)
        rhs[1:] += r / 2 * u[:-1]
        rhs[:-1] += r / 2 * u[1:]
        rhs[0] += r / 2 * u[1]  # ghost node, old time
        rhs[0] += 2 * r * dz * q  # ghost node flux, old and new halves
        rhs[-1] = 0.0
        u = solve_banded((1, 1), ab, rhs)
        if step in wanted:
            out[wanted[step]] = np.interp(depths_m, np.arange(n) * dz, u)
    return out


def test_three_steps_match_a_crank_nicolson_solution():
    # three steps of rain, the middle one above K_z (its infiltration capped at K_z)
    ends, rain = [3.0, 5.0, 9.0], [20.0, 90.0, 5.0]
    depths = np.array([0.3, 0.8, 1.5])
    times = [2.0, 4.0, 6.0, 9.0, 14.0, 24.0]
    numerical = _crank_nicolson(depths, times, ends, rain)
    beta = np.cos(np.radians(30.0)) ** 2
    steady = (depths - 2.0) * beta
    for i, t in enumerate(times):
        psi = history_pressure_head_m(depths, t, ends_h=ends, rain_mm_h=rain, **SOIL)
        assert np.all(psi < beta * depths)  # below the cap: the linear equation holds
        np.testing.assert_allclose(psi - steady, numerical[i], atol=1e-4)


def test_one_step_is_the_constant_storm():
    z = np.linspace(0.05, 2.5, 40)[:, None]
    t = np.linspace(0.0, 48.0, 97)[None, :]
    one = history_pressure_head_m(z, t, ends_h=[6.0], rain_mm_h=[25.0], **SOIL)
    constant = pressure_head_m(z, t, rain_mm_h=25.0, duration_h=6.0, **SOIL)
    np.testing.assert_allclose(one, constant, rtol=0, atol=1e-12)


def test_equal_consecutive_steps_are_one_step():
    z = np.linspace(0.05, 2.5, 40)[:, None]
    t = np.linspace(0.0, 48.0, 97)[None, :]
    split = history_pressure_head_m(z, t, ends_h=[1.0, 2.5, 4.0, 6.0], rain_mm_h=[25.0] * 4, **SOIL)
    whole = history_pressure_head_m(z, t, ends_h=[6.0], rain_mm_h=[25.0], **SOIL)
    np.testing.assert_allclose(split, whole, rtol=0, atol=1e-12)


def test_rise_scales_with_the_rain():
    # below K_z (72 mm/h here) the response is linear: lambda times the rain, lambda times
    # the rise above the initial state (Duhamel superposition; common practice)
    z = np.linspace(0.05, 2.5, 30)[:, None]
    t = np.linspace(0.0, 30.0, 61)[None, :]
    ends, rain = [2.0, 5.0, 6.0], np.array([10.0, 30.0, 4.0])
    initial = history_pressure_head_m(z, 0.0, ends_h=ends, rain_mm_h=rain, **SOIL)
    base = history_pressure_head_m(z, t, ends_h=ends, rain_mm_h=rain, **SOIL) - initial
    for lam in (0.5, 2.0):
        scaled = history_pressure_head_m(z, t, ends_h=ends, rain_mm_h=lam * rain, **SOIL)
        assert np.all(scaled < np.cos(np.radians(30.0)) ** 2 * z + 1e-12)
        np.testing.assert_allclose(scaled - initial, lam * base, rtol=1e-9, atol=1e-12)


COLUMN = dict(
    slope_deg=35.0,
    cohesion_kpa=2.0,
    friction_deg=33.0,
    unit_weight_kn_m3=19.0,
    water_table_depth_m=1.5,
    hydraulic_conductivity_m_s=2e-5,
    diffusivity_m2_s=5e-5,
)


def test_one_step_summary_is_the_storm_summary():
    a = history_summary(soil_depth_m=1.5, later_h=30.0, ends_h=[10.0], rain_mm_h=[30.0], **COLUMN)
    b = storm_summary(soil_depth_m=1.5, later_h=30.0, duration_h=10.0, rain_mm_h=30.0, **COLUMN)
    assert tuple(map(float, a)) == tuple(map(float, b))


def test_equal_steps_summary_agrees_with_the_exact_constant_storm():
    # the candidate search of a history against the constant storm's closed-form peak
    split = history_summary(
        soil_depth_m=1.5, later_h=30.0, ends_h=[2.5, 5.0, 7.5, 10.0], rain_mm_h=[30.0] * 4,
        **COLUMN,
    )  # fmt: skip
    exact = storm_summary(soil_depth_m=1.5, later_h=30.0, duration_h=10.0, rain_mm_h=30.0, **COLUMN)
    # the tabulated peak against the closed form: measured 4e-6
    assert abs(float(split.window_min_fs) - float(exact.window_min_fs)) < 1e-4
    assert abs(float(split.time_to_failure_h) - float(exact.time_to_failure_h)) < 0.05


@pytest.mark.parametrize(("draw", "shared"), [(0, False), (1, False), (2, True), (3, True)])
def test_history_minimum_against_a_dense_reference(draw, shared):
    # 200 random columns and hyetographs of 2-6 steps; reference: 300 planes x 600 times.
    # Rain per cell: the direct search; one gauge and three conductivities (six histories
    # with the caps): the tabulated peaks
    rng = np.random.default_rng(draw)
    cells = 200
    column = dict(
        slope_deg=rng.uniform(20.0, 50.0, cells),
        cohesion_kpa=rng.choice([0.0, 1.0, 4.0], cells),
        friction_deg=rng.uniform(28.0, 40.0, cells),
        unit_weight_kn_m3=19.0,
        water_table_depth_m=rng.uniform(0.3, 2.0, cells),
        hydraulic_conductivity_m_s=(
            rng.choice([3e-6, 1e-5, 3e-5], cells) if shared else 10.0 ** rng.uniform(-6, -4, cells)
        ),
        diffusivity_m2_s=10.0 ** rng.uniform(-5.0, -3.0, cells),
    )
    depth = rng.uniform(0.5, 2.0, cells)
    n = int(rng.integers(2, 7))
    ends = np.cumsum(rng.uniform(0.5, 6.0, n))
    rain = rng.uniform(0.0, 60.0, n if shared else (n, cells))
    later = float(ends[-1] * 2.0)
    got = history_summary(soil_depth_m=depth, later_h=later, ends_h=ends, rain_mm_h=rain, **column)
    from slopescreen.rain_history import HistoryColumns, rain_steps

    cols = HistoryColumns(rain_steps(ends, rain), later, (cells,), **column)
    assert (cols.tables is not None) == shared
    cols.tables = None  # the reference sums every step response, no table
    fractions = np.linspace(0.0, 1.0, 300)[:, None]
    zs = np.minimum(0.05, depth) + fractions * (depth - np.minimum(0.05, depth))
    reference = np.full(cells, np.inf)
    first_fail = np.full(cells, np.inf)
    for t in np.linspace(0.0, later, 600):
        fs = cols.fs(zs, t).min(axis=0)
        reference = np.minimum(reference, fs)
        first_fail = np.where((fs < 1.0) & np.isinf(first_fail), t, first_fail)
    assert np.all(got.window_min_fs <= reference + 0.005)
    failing = reference < 0.995
    assert np.all(got.window_min_fs[failing] < 1.0)
    timed = got.time_to_failure_h >= 0.0
    assert np.all(got.time_to_failure_h[timed] <= first_fail[timed] + later / 599 + 1e-9)
