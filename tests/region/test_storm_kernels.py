"""The compiled storm search (maps/region/storm_kernels.py) against the numpy core it
compiles: the same minima, depths, times and codes on 10^4 random cells for a constant
storm (closed form) and a 3-step history (tabulated; 3,000 cells for a 24-step one); rain
that varies cell by cell (searched directly) and two gauges' records (tabulated); and real
terrain's cells (flat, steep, thin soil)."""

from __future__ import annotations

import numpy as np
import pytest

from slopescreen.maps.region import storm_kernels as sk
from slopescreen.rain_history import TABLE_HISTORIES, history_summary, rain_steps


def _cells(n: int, draw: int) -> tuple[np.ndarray, dict]:
    """Random columns over the ranges a map meets: flat to 60 degrees, cohesionless to
    8 kPa, water table at the surface to below the soil, three conductivities."""
    rng = np.random.default_rng(draw)
    column = dict(
        slope_deg=rng.uniform(0.0, 60.0, n),
        cohesion_kpa=rng.uniform(0.0, 8.0, n),
        friction_deg=rng.uniform(25.0, 40.0, n),
        unit_weight_kn_m3=18.0,
        saturated_unit_weight_kn_m3=rng.uniform(18.0, 21.0, n),
        water_table_depth_m=rng.uniform(0.0, 2.5, n),
        hydraulic_conductivity_m_s=rng.choice([1e-6, 1e-5, 5e-5], n),
        diffusivity_m2_s=rng.choice([1e-5, 5e-5], n),
    )
    return rng.uniform(0.3, 2.5, n), column


def _assert_same(core, compiled) -> None:
    """Every factor of safety of the two summaries equal to rounding (1e-9 relative, the
    infinite values exactly), depths and times to 1e-5 m or h (the time of a flat peak of
    the head is known to about the square root of the machine's precision: summed in
    another order, it moves by 1e-6 h where its FS agrees to 1e-15), the codes exactly,
    and no NaN."""
    for name in core._fields:
        a, b = getattr(core, name), getattr(compiled, name)
        assert not np.isnan(b).any(), name
        np.testing.assert_array_equal(np.isinf(a), np.isinf(b), err_msg=name)
        np.testing.assert_array_equal(a < 0.0, b < 0.0, err_msg=name)  # the codes
        np.testing.assert_array_equal(np.where(a < 0, a, 0), np.where(b < 0, b, 0), name)
        finite = np.isfinite(a)
        tolerance = dict(rtol=1e-9, atol=1e-9) if name.endswith("fs") else dict(atol=1e-5)
        np.testing.assert_allclose(b[finite], a[finite], err_msg=name, **tolerance)


@pytest.mark.parametrize(
    ("ends_h", "rain_mm_h", "mode"),
    [
        ([12.0], [20.0], sk.CLOSED),  # a constant storm
        ([4.0, 8.0, 12.0], [10.0, 60.0, 10.0], sk.TABLE),  # a burst in the middle
        (list(np.arange(1.0, 25.0)), list(np.linspace(2.0, 38.0, 24)), sk.TABLE),  # end-loaded
    ],
)
def test_compiled_search_equals_the_numpy_core(ends_h, rain_mm_h, mode):
    # 10^4 cells; the 24-step history 3,000 (the numpy core takes 3 s for 10^4 there)
    soil, column = _cells(10_000 if len(ends_h) < 24 else 3_000, 3)
    args = dict(soil_depth_m=soil, later_h=36.0, ends_h=ends_h, rain_mm_h=rain_mm_h, **column)
    core = history_summary(**args)
    compiled = sk.compiled_summary(**args)
    _assert_same(core, compiled)
    jumps, _ = sk.histories(rain_steps(ends_h, rain_mm_h), column["hydraulic_conductivity_m_s"])
    assert sk.way_to_peak(len(ends_h), jumps.shape[0]) == mode
    ending = compiled.time_to_failure_h  # every way of ending is exercised, on many cells
    assert (ending > 0.0).sum() >= 100
    assert (ending == sk.NOT_BY_LATER).sum() >= 100
    assert (ending == sk.FAILS_BEFORE_STORM).sum() >= 100


def test_rain_that_varies_cell_by_cell_is_searched_directly():
    soil, column = _cells(600, 5)
    rng = np.random.default_rng(6)
    rain = rng.uniform(0.0, 50.0, (3, 600))  # every cell its own history: beyond the tables
    args = dict(soil_depth_m=soil, later_h=30.0, ends_h=[3.0, 6.0, 9.0], rain_mm_h=rain, **column)
    jumps, _ = sk.histories(rain_steps([3.0, 6.0, 9.0], rain), column["hydraulic_conductivity_m_s"])
    assert sk.way_to_peak(3, jumps.shape[0]) == sk.DIRECT
    _assert_same(history_summary(**args), sk.compiled_summary(**args))


def test_a_few_gauges_are_tabulated_like_one():
    """Cells sharing one of two gauges' records: two histories per conductivity, in the
    tables, and the same result as the core."""
    soil, column = _cells(3000, 8)
    gauges = np.array([[5.0, 40.0, 5.0], [20.0, 10.0, 0.0]])
    rain = gauges[np.arange(3000) % 2].T
    args = dict(soil_depth_m=soil, later_h=30.0, ends_h=[3.0, 6.0, 9.0], rain_mm_h=rain, **column)
    jumps, _ = sk.histories(rain_steps([3.0, 6.0, 9.0], rain), column["hydraulic_conductivity_m_s"])
    assert jumps.shape[0] == 6 <= TABLE_HISTORIES  # two gauges x three conductivities
    assert sk.way_to_peak(3, jumps.shape[0]) == sk.TABLE
    _assert_same(history_summary(**args), sk.compiled_summary(**args))


def test_real_terrain_cells_give_values_and_codes_never_nan():
    """Flat ground (nothing drives: FS +inf, never failing), a cliff-like 85 degrees, a
    soil thinner than the minimum slip depth, the water table at the surface."""
    slope = np.array([0.0, 0.0, 85.0, 35.0, 35.0])
    soil = np.array([1.0, 0.01, 1.0, 0.02, 1.5])
    column = dict(
        slope_deg=slope,
        cohesion_kpa=np.array([0.0, 5.0, 0.0, 0.0, 2.0]),
        friction_deg=33.0,
        unit_weight_kn_m3=19.0,
        water_table_depth_m=np.array([1.0, 0.0, 1.0, 0.0, 0.0]),
        hydraulic_conductivity_m_s=1e-5,
        diffusivity_m2_s=5e-5,
    )
    args = dict(soil_depth_m=soil, later_h=24.0, ends_h=[6.0, 12.0], rain_mm_h=[10.0, 30.0])
    compiled = sk.compiled_summary(**args, **column)
    _assert_same(history_summary(**args, **column), compiled)
    assert np.isinf(compiled.window_min_fs[:2]).all()
    assert (compiled.time_to_failure_h[:2] == sk.NOT_BY_LATER).all()
    assert compiled.time_to_failure_h[2] == sk.FAILS_BEFORE_STORM  # 85 degrees, c' = 0
    # the thin soil's planes lie between its surface and its base, whatever the minimum
    assert 0.0 < compiled.window_critical_depth_m[3] <= 0.02


def test_progress_counts_every_cell_once():
    soil, column = _cells(40_000, 9)
    seen: list[int] = []
    sk.compiled_summary(
        soil_depth_m=soil, later_h=24.0, ends_h=[12.0], rain_mm_h=[20.0], progress=seen.append,
        **column,
    )  # fmt: skip
    assert sum(seen) == 40_000
    assert len(seen) == -(-40_000 // sk.PART_CELLS)
