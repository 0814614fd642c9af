"""insight.analysis against outside sources: published fits and worked examples."""

from importlib.resources import files

import numpy as np
import pandas as pd
import pytest
from statsmodels.nonparametric.smoothers_lowess import lowess

from insight.analysis import NotEnoughData
from insight.analysis.drift import drift_by
from insight.analysis.groups import compare_groups, mean_interval
from insight.analysis.mixed import mixed_effects
from insight.analysis.proportions import wilson_pass_rate
from insight.analysis.trend import lowess_trend, lowess_weights, rice_variance
from insight.analysis.window import operating_window


@pytest.mark.parametrize(("passed", "n", "low", "high"), [
    # Newcombe, R. G. Two-sided confidence intervals for the single proportion: comparison
    # of seven methods. Stat. Med. 1998, 17, 857–872, Table I, method 3 (Wilson score
    # interval without continuity correction) — from memory.
    (81, 263, 0.2553, 0.3662),
    (15, 148, 0.0624, 0.1605),
    (0, 20, 0.0000, 0.1611),
    (1, 29, 0.0061, 0.1718),
])
def test_wilson_interval_matches_newcombe_worked_examples(passed, n, low, high):
    rate = wilson_pass_rate(passed, n)
    assert rate.low == pytest.approx(low, abs=5e-5)
    assert rate.high == pytest.approx(high, abs=5e-5)
    assert rate.rate == pytest.approx(passed / n)


def test_wilson_refuses_an_empty_count():
    with pytest.raises(NotEnoughData, match="^not enough data"):
        wilson_pass_rate(0, 0)


def _dietox() -> pd.DataFrame:
    # Pig growth data "dietox" (Lauritzen, Danish pig production trial; R package geepack),
    # as shipped inside statsmodels.
    return pd.read_csv(files("statsmodels.regression.tests") / "results" / "dietox.csv")


def test_mixed_model_matches_published_dietox_fit():
    # statsmodels documentation, "Linear Mixed Effects Models", example
    # mixedlm("Weight ~ Time", dietox, groups=Pig), REML: Intercept 15.724, Time 6.943
    # (95 % CI 6.877–7.008), Group Var 40.394, Scale 11.3669, 861 observations, 72 groups.
    fit = mixed_effects(_dietox(), outcome="Weight", settings=["Time"], group="Pig")
    (time,) = fit.effects
    assert time.setting == "Time"
    assert time.estimate == pytest.approx(6.943, abs=5e-4)
    assert time.ci_low == pytest.approx(6.877, abs=5e-4)
    assert time.ci_high == pytest.approx(7.008, abs=5e-4)
    assert fit.group_variance == pytest.approx(40.394, abs=5e-3)
    assert fit.residual_variance == pytest.approx(11.3669, abs=5e-4)
    assert (fit.n, fit.groups, time.n) == (861, 72, 861)


def test_mixed_model_names_a_setting_that_never_varies():
    data = _dietox().assign(Evit_constant=1.0)
    fit = mixed_effects(data, outcome="Weight", settings=["Time", "Evit_constant"], group="Pig")
    assert [e.setting for e in fit.effects] == ["Time"]
    assert fit.omitted["Evit_constant"].startswith("not enough data")


def test_mixed_model_leaves_out_a_setting_computed_from_another_by_a_curve():
    # A cubic of Time (as charge density is of h/D) is Time again: left out and named, so
    # the fit is the published one above (statsmodels documentation, dietox: Time 6.943).
    data = _dietox().assign(Time_cubed=lambda f: f["Time"] ** 3 + f["Time"])
    fit = mixed_effects(data, outcome="Weight", settings=["Time", "Time_cubed"], group="Pig")
    assert [e.setting for e in fit.effects] == ["Time"]
    assert fit.effects[0].estimate == pytest.approx(6.943, abs=5e-4)
    assert fit.omitted["Time_cubed"] == ("not enough data: a monotone function of Time here, "
                                         "cannot be separated")


def test_mixed_model_refuses_too_few_substrates_instead_of_a_number():
    small = _dietox().head(15)  # two pigs' worth: fewer than 10 per coefficient and 3 groups
    with pytest.raises(NotEnoughData, match="^not enough data"):
        mixed_effects(small, outcome="Weight", settings=["Time", "Feed"], group="Pig")


def test_mixed_model_refuses_when_no_setting_varies():
    data = _dietox().assign(flat=2.0)
    with pytest.raises(NotEnoughData, match="never varies|no setting varies"):
        mixed_effects(data, outcome="Weight", settings=["flat"], group="Pig")


def test_t_interval_matches_student_worked_example():
    # Student (1908) sleep data as in R's `t.test(extra ~ 1)` on the paired differences of
    # Cushny & Peebles: mean 1.58, 95 % CI 0.7001–2.4599 (R documentation, from memory).
    differences = [1.2, 2.4, 1.3, 1.3, 0.0, 1.0, 1.8, 0.8, 4.6, 1.4]
    mean, low, high = mean_interval(differences)
    assert mean == pytest.approx(1.58)
    assert low == pytest.approx(0.7001, abs=1e-4)
    assert high == pytest.approx(2.4599, abs=1e-4)


def test_group_comparison_refuses_small_groups_and_keeps_large_ones():
    rng = np.random.default_rng(1)
    labels = ["A"] * 30 + ["B"] * 30 + ["C"] * 4
    outcome = np.concatenate([rng.normal(6, 0.2, 30), rng.normal(5, 0.2, 30), [6, 6, 6, 6]])
    groups = {g.label: g for g in compare_groups(labels, outcome, outcome > 5.5)}
    assert groups["C"].mean is None and groups["C"].refusal.startswith("not enough data")
    assert groups["A"].ci_low > groups["B"].ci_high  # a 1-unit gap with σ = 0.2 separates
    assert groups["A"].pass_rate.n == 30


def test_lowess_band_covers_a_known_curve():
    rng = np.random.default_rng(3)
    x = rng.uniform(0, 1, 400)
    y = np.sin(2 * np.pi * x) + rng.normal(0, 0.2, x.size)
    trend = lowess_trend(x, y, frac=0.3)
    inner = (trend.grid > 0.15) & (trend.grid < 0.85)
    truth = np.sin(2 * np.pi * trend.grid)
    assert np.mean((trend.low <= truth + 0.05) & (truth - 0.05 <= trend.high)) > 0.9
    assert np.max(np.abs(trend.fit[inner] - truth[inner])) < 0.25


def test_band_weights_reproduce_the_statsmodels_lowess_curve():
    # The band's smoother weights must be those of statsmodels' LOWESS (Cleveland 1979).
    rng = np.random.default_rng(11)
    x = rng.uniform(0, 3, 700)
    y = np.exp(-x) + rng.normal(0, 0.1, x.size)
    grid = np.linspace(0.1, 2.9, 25)
    for frac in (0.2, 0.5, 0.9):
        ours = lowess_weights(x, grid, frac) @ y
        assert np.allclose(ours, lowess(y, x, frac=frac, it=0, xvals=grid), atol=1e-10)


def test_rice_variance_recovers_known_noise():
    # Rice (1984): differences of neighbours cancel a smooth trend; σ = 0.3 planted.
    rng = np.random.default_rng(12)
    x = rng.uniform(0, 1, 20000)
    y = np.sin(4 * x) + rng.normal(0, 0.3, x.size)
    assert rice_variance(x, y) == pytest.approx(0.09, rel=0.03)


def test_lowess_refuses_a_constant_setting():
    with pytest.raises(NotEnoughData, match="never varies"):
        lowess_trend(np.ones(50), np.arange(50.0))


def test_operating_window_finds_a_planted_band():
    rng = np.random.default_rng(7)
    x = rng.uniform(0.2, 1.0, 600)
    inside = (x > 0.45) & (x < 0.65)
    passed = np.where(inside, rng.random(x.size) < 0.97, rng.random(x.size) < 0.3)
    window = operating_window(x, passed, setting="h_over_D", target=0.9)
    assert 0.40 < window.low < 0.50 and 0.60 < window.high < 0.70
    assert window.inside.rate >= 0.9 and window.outside.rate < 0.5
    assert window.inside.low < window.inside.rate < window.inside.high


def test_operating_window_refuses_when_target_never_reached():
    x = np.linspace(0, 1, 100)
    with pytest.raises(NotEnoughData, match="^not enough data"):
        operating_window(x, np.arange(100) % 2 == 0, target=0.9)


def test_drift_names_the_lot_that_sits_low():
    rng = np.random.default_rng(5)
    days = pd.date_range("2026-01-01", periods=120, freq="D")
    lots = np.repeat(["L1", "L2", "L3", "L4"], 30)
    values = rng.normal(6.0, 0.1, 120)
    values[lots == "L3"] -= 0.6
    frame = pd.DataFrame({"lot": lots, "ef": values, "made_on": days,
                          "substrate_code": [f"SUB-{i:05d}" for i in range(120)]})
    found = drift_by(frame, key="lot", metric="ef")
    assert [f.key for f in found] == ["L3"]
    assert found[0].signals >= 2 and found[0].evidence[0].startswith("SUB-")


def test_mixed_model_without_any_lot_effect_still_gives_residuals():
    # No lot effect at all: REML puts the lot variance at (or near) zero, a singular
    # covariance from which statsmodels will not predict random effects.
    rng = np.random.default_rng(21)
    frame = pd.DataFrame({"lot": np.repeat(["A", "B", "C", "D"], 50),
                          "x": rng.uniform(0, 1, 200)})
    frame["y"] = 2.0 * frame["x"] + rng.normal(0, 0.1, 200)
    fit = mixed_effects(frame, outcome="y", settings=["x"], group="lot")
    assert fit.effects[0].ci_low < 2.0 < fit.effects[0].ci_high
    assert fit.residuals.notna().all() and abs(fit.residuals.mean()) < 0.05
