"""Map scores against landslide inventories: checked against scikit-learn's ROC area, exact
cases and the Hanley & McNeil (1982) standard error."""

import numpy as np
import pytest
from sklearn.metrics import roc_auc_score

from slopescreen.errors import InputError
from slopescreen.validation import (
    auc_standard_error,
    failing_confusion,
    frequency_ratio,
    grouped_curves,
    held_out_blocks,
    masses_around,
    rank_curves,
)


def _cells(n=5000, random_state=11):
    rng = np.random.default_rng(random_state)
    fs = np.round(rng.lognormal(0.3, 0.4, n), 2)  # rounded: many ties
    risk = 1.0 / (1.0 + np.exp(6.0 * (fs - 1.1)))
    slide = rng.random(n) < 0.3 * risk
    area = rng.uniform(80.0, 120.0, n)
    return fs, slide, area


def test_roc_area_matches_scikit_learn_with_ties_and_areas():
    # outside reference: sklearn.metrics.roc_auc_score (lower FS = more likely a landslide)
    fs, slide, area = _cells()
    assert rank_curves(fs, slide).roc_auc == pytest.approx(roc_auc_score(slide, -fs), abs=1e-12)
    weighted = rank_curves(fs, slide, area).roc_auc
    assert weighted == pytest.approx(roc_auc_score(slide, -fs, sample_weight=area), abs=1e-12)


def test_success_rate_area_relates_to_roc_area():
    # analytic: with landslide share p of the area, success AUC = p/2 + (1 - p) ROC AUC
    fs, slide, area = _cells(random_state=5)
    curves = rank_curves(fs, slide, area)
    p = area[slide].sum() / area.sum()
    assert curves.success_auc == pytest.approx(p / 2 + (1 - p) * curves.roc_auc, abs=1e-12)
    assert curves.area_share[-1] == curves.landslide_share[-1] == 1.0


def test_landslides_on_the_least_stable_cells_give_an_area_of_one():
    fs = np.linspace(0.5, 3.0, 1000)
    slide = np.zeros(1000, bool)
    slide[:40] = True  # the 40 lowest FS
    curves = rank_curves(fs, slide)
    assert curves.roc_auc == 1.0
    # success rate: all landslides within the first 4% of the area
    assert curves.success_auc == pytest.approx(1.0 - 0.04 / 2)


def test_random_landslides_give_one_half_within_the_standard_error():
    # Hanley & McNeil (1982): a score unrelated to the landslides has AUC 0.5 +- SE; at
    # A = 0.5, n1 = n2 = 100 the formula gives sqrt((0.25 + 2 * 99 / 12) / 1e4) = 0.0409 by hand
    rng = np.random.default_rng(2)
    fs = rng.lognormal(0.3, 0.4, 20000)
    slide = rng.random(20000) < 0.05
    auc = rank_curves(fs, slide).roc_auc
    se = auc_standard_error(0.5, int(slide.sum()), int((~slide).sum()))
    assert abs(auc - 0.5) < 3.0 * se
    assert 0.005 < se < 0.01
    assert auc_standard_error(0.5, 100, 100) == pytest.approx(np.sqrt((0.25 + 2 * 99 / 12) / 1e4))


def test_standard_error_shrinks_as_auc_nears_one():
    # Hanley & McNeil (1982), table 1 pattern (from memory): SE falls as A rises at fixed n
    errors = [auc_standard_error(a, 50, 50) for a in (0.6, 0.75, 0.9, 0.99)]
    assert np.all(np.diff(errors) < 0.0)


def test_frequency_ratio_and_confusion_by_construction():
    classes = np.repeat([1, 2, 3, 4], 250)
    slide = np.zeros(1000, bool)
    slide[:50] = True  # 50 in class 1
    slide[250:260] = True  # 10 in class 2
    ratio = frequency_ratio(classes, slide, 4)
    # share of landslides / share of area: (50/60)/(1/4), (10/60)/(1/4), 0, 0
    assert ratio.tolist() == pytest.approx([10 / 3, 2 / 3, 0.0, 0.0])
    fs = np.repeat([0.9, 1.2, 1.4, 2.0], 250)
    conf = failing_confusion(fs, slide)
    assert conf["captured_share"] == pytest.approx(50 / 60)
    assert conf["false_alarm_share"] == pytest.approx(200 / 940)
    assert conf["flagged_share"] == pytest.approx(0.25)


def test_bad_inputs_are_one_line_errors():
    with pytest.raises(InputError, match="one value per cell"):
        rank_curves([1.0, 2.0], [True])
    with pytest.raises(InputError, match="at least one cell with and one without"):
        rank_curves([1.0, 2.0], [False, False])


def test_tile_by_tile_masses_give_scikit_learns_area():
    # the reduction a large map goes through: masses around the landslide scores, summed
    # over tiles of any size, give sklearn.metrics.roc_auc_score's area (ties one half)
    fs, slide, area = _cells()
    thresholds = np.unique(fs[slide])
    between = np.zeros(thresholds.size + 1)
    tied = np.zeros(thresholds.size)
    for part in np.array_split(np.arange(fs.size), 7):
        b, t = masses_around(fs[part], area[part], thresholds)
        between += b
        tied += t
    hit = np.bincount(np.searchsorted(thresholds, fs[slide]), area[slide], thresholds.size)
    curves = grouped_curves(between, tied, hit)
    expected = roc_auc_score(slide, -fs, sample_weight=area)
    assert curves.roc_auc == pytest.approx(expected, abs=1e-12)
    assert curves.success_auc == pytest.approx(rank_curves(fs, slide, area).success_auc, abs=1e-12)


def test_masses_against_a_count_by_hand():
    b, t = masses_around([0.5, 1.0, 1.0, 1.5, 2.0, np.nan], 1.0, [1.0, 2.0])
    assert b.tolist() == [1.0, 1.0, 0.0] and t.tolist() == [2.0, 1.0]


def test_held_out_blocks_draw_their_share_and_repeat():
    rows, cols = np.meshgrid(np.arange(200), np.arange(200), indexing="ij")
    held = held_out_blocks(rows, cols, 0.3, 7)
    # 40,000 independent draws: the share is within 4 binomial standard errors of 0.3
    assert abs(held.mean() - 0.3) < 4.0 * np.sqrt(0.3 * 0.7 / held.size)
    assert np.array_equal(held, held_out_blocks(rows, cols, 0.3, 7))  # same number, same split
    assert not np.array_equal(held, held_out_blocks(rows, cols, 0.3, 8))
    # any window labelled on its own agrees with the whole
    assert np.array_equal(
        held[50:90, 120:170], held_out_blocks(rows[50:90, 120:170], cols[50:90, 120:170], 0.3, 7)
    )
