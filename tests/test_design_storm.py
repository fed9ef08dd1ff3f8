"""Alternating-block design storms (slopescreen.design_storm) against the IDF curve they
come from, and the effect of the storm's pattern on the pressure head."""

from __future__ import annotations

import numpy as np
import pytest

from slopescreen.design_storm import alternating_block
from slopescreen.rain_history import history_summary

DURATIONS = np.array([0.5, 1.0, 2.0, 3.0, 6.0, 12.0, 24.0])
PERIODS = np.array([2.0, 10.0, 100.0])


def _sherman(duration_h, period_yr):
    # i = a T^m / (D + b)^n, the Sherman form of an IDF curve (common practice); the
    # numbers are invented for the test
    return 25.0 * period_yr**0.2 / (duration_h + 0.3) ** 0.75


TABLE = _sherman(DURATIONS[:, None], PERIODS[None, :])


def test_blocks_hold_the_curve_depth_for_every_tabulated_window():
    ends, rain = alternating_block(DURATIONS, PERIODS, TABLE, 10.0, 6.0, 0.5, "centre")
    assert np.allclose(ends, 0.5 * np.arange(1, 13))
    depth = rain * 0.5
    # the storm's total is the curve's 6-hour depth
    assert depth.sum() == pytest.approx(_sherman(6.0, 10.0) * 6.0, rel=1e-12)
    # Chow, Maidment & Mays (1988), 14.4: the deepest window of k blocks holds the design
    # depth of duration k dt, for every tabulated duration
    for span in (0.5, 1.0, 2.0, 3.0):
        k = round(span / 0.5)
        windows = np.convolve(depth, np.ones(k), mode="valid")
        assert windows.max() == pytest.approx(_sherman(span, 10.0) * span, rel=1e-12)


def test_patterns_place_the_same_blocks():
    front = alternating_block(DURATIONS, PERIODS, TABLE, 100.0, 3.0, 0.5, "front")[1]
    centre = alternating_block(DURATIONS, PERIODS, TABLE, 100.0, 3.0, 0.5, "centre")[1]
    end = alternating_block(DURATIONS, PERIODS, TABLE, 100.0, 3.0, 0.5, "end")[1]
    assert sorted(front) == sorted(centre) == sorted(end)
    assert front[0] == end[-1] == centre.max() == front.max()
    assert np.all(np.diff(front) <= 0) and np.all(np.diff(end) >= 0)
    assert np.argmax(centre) == 2  # the middle of six blocks, rounded down


def test_end_loaded_storms_raise_the_head_most():
    # D'Odorico, Fagherazzi & Rigon (2005): for the same depth and duration, an end-loaded
    # hyetograph gives the highest pressure head and the lowest FS, a front-loaded one the
    # least (the late burst falls on a soil already wetted by the earlier rain)
    column = dict(
        slope_deg=35.0,
        cohesion_kpa=3.0,
        friction_deg=33.0,
        unit_weight_kn_m3=19.0,
        water_table_depth_m=1.0,
        hydraulic_conductivity_m_s=2e-5,
        diffusivity_m2_s=1e-4,
    )
    fs = {}
    for pattern in ("front", "centre", "end"):
        ends, rain = alternating_block(DURATIONS, PERIODS, TABLE, 100.0, 12.0, 1.0, pattern)
        summary = history_summary(
            soil_depth_m=1.5, later_h=48.0, ends_h=ends, rain_mm_h=rain, **column
        )
        fs[pattern] = float(summary.window_min_fs)
    assert fs["end"] < fs["centre"] < fs["front"]


@pytest.mark.parametrize(
    ("period", "total", "block", "message"),
    [
        (50.0, 6.0, 0.5, "one of the table's"),
        (10.0, 5.0, 2.0, "whole number of blocks"),
        (10.0, 48.0, 1.0, "no extrapolation"),
        (10.0, 1.0, 0.25, "no extrapolation"),
    ],
)
def test_design_storms_outside_the_table_are_refused(period, total, block, message):
    with pytest.raises(ValueError, match=message):
        alternating_block(DURATIONS, PERIODS, TABLE, period, total, block)
