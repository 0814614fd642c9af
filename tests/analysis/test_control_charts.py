"""Tests for qc.analysis.control_charts."""

import numpy as np
import pytest
from scipy import stats

from qc.analysis import control_charts as cc
from qc.analysis.errors import AnalysisInputError


def test_constants_match_spc_tables_and_theory():
    # Standard SPC tables (Montgomery, Appendix VI; REFERENCES "Control charts"):
    assert cc.D2_SPAN2 == 1.128 and cc.D4_SPAN2 == 3.267 and cc.D3_SPAN2 == 0.0
    # Theory: for n = 2, d2 = E|X1 − X2|/σ = 2/√π = 1.1284 (exact).
    assert pytest.approx(2 / np.sqrt(np.pi), abs=5e-4) == cc.D2_SPAN2
    # D4 = 1 + 3·d3/d2 with d3 = √(2 − 4/π) for n = 2 (SD of |X1 − X2|/σ, exact).
    d3 = np.sqrt(2 - 4 / np.pi)
    assert pytest.approx(1 + 3 * d3 / (2 / np.sqrt(np.pi)), abs=5e-4) == cc.D4_SPAN2


def test_tiny_chart_by_hand():
    values = [10.0, 12.0, 11.0, 13.0, 12.0]
    chart = cc.individuals_chart(values)
    # x̄ = 58/5 = 11.6; MR = [2, 1, 2, 1], MR̄ = 1.5
    assert chart.centre == pytest.approx(11.6)
    np.testing.assert_allclose(chart.moving_ranges, [2, 1, 2, 1])
    assert chart.mr_centre == pytest.approx(1.5)
    # limits 11.6 ± 3·1.5/1.128 = 11.6 ± 3.98936; MR UCL = 3.267·1.5 = 4.9005
    assert chart.upper_limit == pytest.approx(11.6 + 3 * 1.5 / 1.128)
    assert chart.lower_limit == pytest.approx(11.6 - 3 * 1.5 / 1.128)
    assert chart.mr_upper_limit == pytest.approx(4.9005)
    assert chart.violations == ()


def test_in_control_seeded_data_has_no_zone_rule_signals():
    rng = np.random.default_rng(2024)
    chart = cc.individuals_chart(rng.normal(7.0, 0.2, 40))
    assert chart.violations == ()


def test_planted_shift_and_outlier_are_found():
    rng = np.random.default_rng(8)
    base = rng.normal(0, 1, 30)
    data = np.concatenate([base, base[:10] * 0.3 + 2.0])  # sustained shift of +2σ
    data[5] = 8.0  # a planted outlier
    chart = cc.individuals_chart(data, baseline_count=30)
    codes = {(v.index, v.rule) for v in chart.violations}
    assert (5, "beyond-3-sigma") in codes
    assert any(rule == "eight-on-one-side" and i >= 37 for i, rule in codes)
    assert all(v.message == cc.RULE_SENTENCES[v.rule] for v in chart.violations)


def test_trend_rule_from_nelson():
    data = [0, 0.1, -0.1, 0.05, 0.2, 0.3, 0.4, 0.5, 0.6, 0.1, 0.0, -0.05]
    chart = cc.individuals_chart(data, rules=("six-steady-trend",))
    # rising run −0.1 → 0.6 spans indices 2..8 (seven points): six in a row complete at 7 and 8
    assert [v.index for v in chart.violations] == [7, 8]


def test_false_alarm_rate_of_beyond_3_sigma_is_near_theory():
    # Normal table: P(|Z| > 3) = 0.0027 when σ is known; the MR estimate adds scatter, so
    # accept 0.0015–0.0045 on a long seeded run.
    rng = np.random.default_rng(77)
    data = rng.normal(0, 1, 60_000)
    chart = cc.individuals_chart(data, rules=("beyond-3-sigma",))
    rate = len(chart.violations) / data.size
    assert 2 * stats.norm.sf(3) == pytest.approx(0.0027, abs=1e-4)
    assert 0.0015 < rate < 0.0045


def test_bad_inputs_name_the_field():
    with pytest.raises(AnalysisInputError) as err:
        cc.individuals_chart([1.0, 2.0])
    assert err.value.field == "values"
    with pytest.raises(AnalysisInputError) as err:
        cc.individuals_chart([1.0, 2.0, 3.0, 4.0], baseline_count=2)
    assert err.value.field == "baseline_count"
    with pytest.raises(AnalysisInputError) as err:
        cc.individuals_chart([1.0, 2.0, 3.0], rules=("no-such-rule",))
    assert err.value.field == "rules"
