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


def _literal_rule_hits(z: np.ndarray, data: np.ndarray) -> dict[str, set[int]]:
    """Each windowed rule written out point by point, as the handbooks state it (Western
    Electric Statistical Quality Control Handbook, 1956; Nelson, J. Qual. Technol. 1984,
    16, 237): the index of the point that completes the pattern."""
    n, hits = len(z), {}
    steps = np.sign(np.diff(data))

    def one_side(window, limit, needed):
        return (window > limit).sum() >= needed or (window < -limit).sum() >= needed

    hits["two-of-three-past-2-sigma"] = {i for i in range(2, n) if one_side(z[i - 2:i + 1], 2, 2)}
    hits["four-of-five-past-1-sigma"] = {i for i in range(4, n) if one_side(z[i - 4:i + 1], 1, 4)}
    hits["eight-on-one-side"] = {
        i for i in range(7, n) if (z[i - 7:i + 1] > 0).all() or (z[i - 7:i + 1] < 0).all()}
    hits["six-steady-trend"] = {
        i for i in range(5, n)
        if (steps[i - 5:i] > 0).all() or (steps[i - 5:i] < 0).all()}
    hits["fourteen-alternating"] = {
        i for i in range(13, n)
        if all(steps[j] * steps[j - 1] < 0 for j in range(i - 12, i))}
    hits["fifteen-near-centre"] = {i for i in range(14, n) if (abs(z[i - 14:i + 1]) < 1).all()}
    hits["eight-avoiding-centre"] = {i for i in range(7, n) if (abs(z[i - 7:i + 1]) > 1).all()}
    return hits


@pytest.mark.parametrize("seed", [3, 11, 29])
def test_windowed_rules_match_their_literal_definitions(seed):
    # Random walks with drifts and jumps trip every windowed rule somewhere; the chart's
    # vectorised counting must flag exactly the points the literal definitions flag.
    rng = np.random.default_rng(seed)
    data = np.cumsum(rng.normal(0, 1, 400)) * 0.2 + rng.normal(0, 1, 400)
    data[::37] += 4.0
    data[200:216:2] += 0.5  # an alternating stretch
    chart = cc.individuals_chart(data, baseline_count=100, rules=cc.ALL_RULES)
    z = (data - chart.centre) / chart.sigma
    found: dict[str, set[int]] = {}
    for v in chart.violations:
        found.setdefault(v.rule, set()).add(v.index)
    for rule, expected in _literal_rule_hits(z, data).items():
        assert found.get(rule, set()) == expected, rule
    assert sum(map(len, _literal_rule_hits(z, data).values())) > 50  # the data do trip rules


def test_report_from_keeps_only_the_later_signals_with_the_same_limits():
    rng = np.random.default_rng(5)
    data = np.concatenate([rng.normal(0, 1, 60), rng.normal(1.5, 1, 40)])
    data[10] = 9.0  # a signal in the baseline, not to be reported
    full = cc.individuals_chart(data, baseline_count=60)
    later = cc.individuals_chart(data, baseline_count=60, report_from=60)
    assert (later.centre, later.sigma) == (full.centre, full.sigma)
    assert later.violations == tuple(v for v in full.violations if v.index >= 60)
    assert any(v.index == 10 for v in full.violations) and later.violations
    with pytest.raises(AnalysisInputError) as error:
        cc.individuals_chart(data, report_from=101)
    assert error.value.field == "report_from"
