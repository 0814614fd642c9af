"""Tests for qc.analysis.uniformity."""

import numpy as np
import pytest
from scipy import stats

from qc.analysis.errors import AnalysisInputError
from qc.analysis.uniformity import batch_reproducibility, map_uniformity


def test_rsd_and_fraction_by_hand():
    values = [8.0, 10.0, 12.0, 10.0, 20.0]
    result = map_uniformity(values, grid_shape=(1, 5))
    # mean 12, sample SD √((16+4+0+4+64)/4) = √22 = 4.690 (ddof=1), RSD = 39.09 %
    assert result.mean == 12.0
    assert result.standard_deviation == pytest.approx(np.sqrt(22.0))
    assert result.rsd_percent == pytest.approx(100 * np.sqrt(22.0) / 12)
    # median 10, ±20 % → [8, 12]: 8, 10, 12, 10 inside, 20 outside → 0.8
    assert result.fraction_within_tolerance == pytest.approx(0.8)
    np.testing.assert_array_equal(result.heat_map, [[8, 10, 12, 10, 20]])


def test_rsd_of_seeded_normal_data_is_near_the_planted_value():
    rng = np.random.default_rng(1)
    values = rng.normal(1000, 100, 4000)  # planted RSD 10 %
    result = map_uniformity(values)
    assert result.rsd_percent == pytest.approx(10.0, abs=0.5)
    # normal within ±20 % of the median (±2σ here): 95.45 % (normal table)
    assert result.fraction_within_tolerance == pytest.approx(0.9545, abs=0.01)


def test_anova_matches_scipy_f_oneway_and_planted_components():
    rng = np.random.default_rng(5)
    substrate_means = 1000 + rng.normal(0, 50, 8)  # planted between σ 50
    groups = [
        m + rng.normal(0, 100, n)
        for m, n in zip(substrate_means, [100, 90, 100, 80, 100, 100, 95, 100], strict=True)
    ]
    result = batch_reproducibility(groups)
    reference = stats.f_oneway(*groups)  # independent one-way ANOVA from scipy
    assert result.f_statistic == pytest.approx(reference.statistic)
    assert result.p_value == pytest.approx(reference.pvalue)
    assert np.sqrt(result.within_variance) == pytest.approx(100, rel=0.05)
    # variance component identity: MS_b = σ²_w + n0·σ²_b (Searle et al. 1992)
    ms_between = result.f_statistic * result.within_variance
    assert ms_between == pytest.approx(result.within_variance + result.n0 * result.between_variance)


def test_balanced_n0_equals_group_size():
    # For equal n per group, n0 = n (Searle et al. 1992).
    groups = [np.arange(5.0) + 10, np.arange(5.0) + 12, np.arange(5.0) + 11]
    assert batch_reproducibility(groups).n0 == pytest.approx(5.0)


def test_bad_inputs_name_the_field():
    with pytest.raises(AnalysisInputError) as err:
        map_uniformity([1.0, 2.0, 3.0], grid_shape=(2, 2))
    assert err.value.field == "grid_shape"
    with pytest.raises(AnalysisInputError) as err:
        batch_reproducibility([[1.0, 2.0]])
    assert err.value.field == "groups"
    with pytest.raises(AnalysisInputError) as err:
        batch_reproducibility([[1.0, 2.0], [1.0, np.nan]])
    assert err.value.field == "groups[1]"
