"""Haiss et al. (2007) gold calibrations, recomputed here from the published equations."""

import math

import pytest
from scipy import constants

from qc.analysis import gold_haiss
from qc.analysis.errors import AnalysisInputError


def test_ratio_method_matches_published_equation():
    # Haiss et al., Anal. Chem. 79, 4215 (2007): d = exp(B1·R − B2), B1 = 3.00, B2 = 2.20.
    for ratio in (1.45, 1.6, 1.75, 2.0):
        result = gold_haiss.diameter_from_ratio(ratio)
        assert result.value == pytest.approx(math.exp(3.00 * ratio - 2.20), rel=1e-12)
        assert result.within_range


def test_ratio_method_theoretical_parameters():
    # Haiss et al. (2007): theoretical B1 = 3.55, B2 = 3.11.
    result = gold_haiss.diameter_from_ratio(1.8, parameters="theoretical")
    assert result.value == pytest.approx(math.exp(3.55 * 1.8 - 3.11), rel=1e-12)


def test_ratio_method_refuses_outside_5_to_80_nm():
    # Haiss et al. (2007): fitted over 5–80 nm; ratio giving exp(3·2.3−2.2) ≈ 110 nm is outside.
    high = gold_haiss.diameter_from_ratio(2.3)
    low = gold_haiss.diameter_from_ratio(1.1)  # exp(3.3 − 2.2) ≈ 3.0 nm
    for result in (high, low):
        assert result.value is None and not result.within_range
        assert "outside" in result.note


def test_ratio_method_marks_estimate_below_10_nm():
    # Haiss et al. (2007): below 10 nm the result is an estimate; R = 1.4 gives exp(2.0) ≈ 7.4 nm.
    result = gold_haiss.diameter_from_ratio(1.4)
    assert result.value == pytest.approx(math.exp(2.0))
    assert result.is_estimate and result.within_range


def test_peak_method_inverts_published_equation():
    # Haiss et al. (2007): λ = 512 + 6.53·exp(0.0216·d); forward in the test, inverse in code.
    for diameter in (40.0, 60.0, 90.0):
        peak = 512.0 + 6.53 * math.exp(0.0216 * diameter)
        assert gold_haiss.diameter_from_peak(peak).value == pytest.approx(diameter, rel=1e-9)


def test_peak_method_refuses_below_25_nm_and_warns_below_35_nm():
    # Haiss et al. (2007): the fit holds for d > 25 nm, advised > 35 nm.
    below = gold_haiss.diameter_from_peak(512.0 + 6.53 * math.exp(0.0216 * 20.0))
    assert below.value is None and not below.within_range
    between = gold_haiss.diameter_from_peak(512.0 + 6.53 * math.exp(0.0216 * 30.0))
    assert between.value == pytest.approx(30.0) and "35 nm" in between.note
    assert gold_haiss.diameter_from_peak(505.0).value is None


def test_number_concentration_matches_published_fit():
    # Haiss et al. (2007), number concentration at 1 cm; recomputed here.
    d, a450 = 20.0, 0.5
    expected = a450 * 1e14 / (d**2 * (-0.295 + 1.36 * math.exp(-(((d - 96.8) / 78.2) ** 2))))
    result = gold_haiss.number_concentration_per_mL(a450, d)
    assert result.value == pytest.approx(expected, rel=1e-12)
    # Order of magnitude for 20 nm citrate gold at A450 ≈ 0.5: ~1e11–1e12 /mL (common practice).
    assert 1e11 < result.value < 1e13


def test_number_concentration_refuses_outside_range():
    assert gold_haiss.number_concentration_per_mL(0.5, 120.0).value is None


def test_molar_concentration_uses_avogadro():
    # CODATA Avogadro constant via scipy.constants: c = N·1000/N_A.
    assert gold_haiss.molar_concentration_M(6.02214076e11) == pytest.approx(
        6.02214076e11 * 1000 / constants.Avogadro
    )


@pytest.mark.parametrize(
    "call",
    [
        lambda: gold_haiss.diameter_from_ratio(-1.0),
        lambda: gold_haiss.diameter_from_ratio(1.7, parameters="other"),
        lambda: gold_haiss.diameter_from_peak(float("nan")),
        lambda: gold_haiss.number_concentration_per_mL(0.0, 20.0),
    ],
)
def test_bad_input_raises(call):
    with pytest.raises(AnalysisInputError):
        call()


def test_sizes_carry_the_published_average_deviation():
    # Haiss et al. (2007) report an average deviation of 11 % (experimental B1, B2) and 18 %
    # (theoretical); with an exact ratio that is the whole uncertainty.
    exp = gold_haiss.diameter_from_ratio(1.7)
    theo = gold_haiss.diameter_from_ratio(1.8, parameters="theoretical")
    assert exp.standard_uncertainty == pytest.approx(0.11 * math.exp(3.00 * 1.7 - 2.20))
    assert theo.standard_uncertainty == pytest.approx(0.18 * math.exp(3.55 * 1.8 - 3.11))


def test_ratio_uncertainty_adds_the_propagated_ratio_error():
    # Finite difference of the published equation d = exp(3.00·R − 2.20) at R = 1.7.
    u_ratio = 0.02
    slope = (math.exp(3.00 * 1.701 - 2.20) - math.exp(3.00 * 1.699 - 2.20)) / 0.002
    d = math.exp(3.00 * 1.7 - 2.20)
    result = gold_haiss.diameter_from_ratio(1.7, ratio_u=u_ratio)
    assert result.standard_uncertainty == pytest.approx(math.hypot(0.11 * d, slope * u_ratio),
                                                        rel=1e-4)


@pytest.mark.parametrize("diameter", [40.0, 55.0, 70.0, 90.0])
def test_peak_uncertainty_propagates_the_peak_error(diameter):
    # Forward published equation λ = 512 + 6.53·exp(0.0216·d) (Haiss et al. 2007): the size
    # change for a ±0.5 nm peak change, computed here by bisection on the forward equation.
    def size_for(peak):
        low, high = 1.0, 200.0
        for _ in range(200):
            mid = (low + high) / 2
            low, high = (mid, high) if 512 + 6.53 * math.exp(0.0216 * mid) < peak else (low, mid)
        return (low + high) / 2

    peak = 512.0 + 6.53 * math.exp(0.0216 * diameter)
    per_nm = (size_for(peak + 0.5) - size_for(peak - 0.5)) / 1.0
    result = gold_haiss.diameter_from_peak(peak, peak_u_nm=1.0)
    # 18 %: the deviation of the paper's theoretical parameters (applied to the peak fit).
    assert result.standard_uncertainty == pytest.approx(math.hypot(0.18 * diameter, per_nm),
                                                        rel=1e-3)
