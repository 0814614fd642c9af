"""UV-vis band measures on synthetic bands whose answers are known analytically."""

from pathlib import Path

import numpy as np
import pytest

from qc.analysis import uvvis
from qc.analysis.errors import AnalysisInputError

WL = np.arange(300.0, 801.0, 1.0)
FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "uvvis"


def lorentzian(centre_nm, fwhm_nm, height):
    # Lorentzian: FWHM is exactly the width parameter (geometric identity).
    half = fwhm_nm / 2
    return height * half**2 / ((WL - centre_nm) ** 2 + half**2)


def test_peak_and_fwhm_of_an_off_grid_lorentzian():
    band = uvvis.measure_plasmon_band(WL, lorentzian(402.4, 40.0, 1.2), search_window_nm=(370, 480))
    assert band.peak_nm == pytest.approx(402.4, abs=0.1)
    assert band.peak_absorbance_1cm == pytest.approx(1.2, rel=0.01)
    # Straight-line interpolation between 1 nm samples of a convex flank: allow 0.5 nm.
    assert band.fwhm_nm == pytest.approx(40.0, abs=0.5)
    # A_450 of the Lorentzian, interpolated on a 1 nm grid.
    expected_450 = 1.2 * 20**2 / ((450 - 402.4) ** 2 + 20**2)
    assert band.absorbance_450_1cm == pytest.approx(expected_450, rel=1e-3)
    assert band.ratio_spr_450 == pytest.approx(band.peak_absorbance_1cm / band.absorbance_450_1cm)


def test_dilution_and_path_scale_to_undiluted_1cm():
    # Beer–Lambert: A ∝ c·L, so ×10 dilution in a 0.5 cm cell scales by 10/0.5 = 20.
    band = uvvis.measure_plasmon_band(
        WL, lorentzian(520, 60, 0.5), dilution_factor=10, path_length_cm=0.5
    )
    assert band.peak_absorbance_1cm == pytest.approx(10.0, rel=0.01)


def test_side_that_does_not_reach_half_maximum_is_reported():
    # Band plus a high UV background: the blue side never falls to half maximum.
    spectrum = lorentzian(520, 60, 0.6) + 0.45 / (1 + np.exp((WL - 480) / 10))
    band = uvvis.measure_plasmon_band(WL, spectrum)
    assert band.fwhm_nm is None and band.half_width_blue_nm is None
    assert "short-wavelength" in band.fwhm_note
    assert band.half_width_red_nm is not None


def test_blank_interpolated_and_offset_subtracted():
    blank_wl = np.arange(290.0, 811.0, 5.0)
    blank = 0.01 + 1e-5 * blank_wl  # linear blank: linear interpolation is exact
    sample = lorentzian(520, 60, 0.5) + 0.01 + 1e-5 * WL
    assert uvvis.subtract_blank(WL, sample, blank_wl, blank) == pytest.approx(
        lorentzian(520, 60, 0.5)
    )
    shifted = uvvis.subtract_offset(WL, np.full(WL.size, 0.03) + 0.0)
    assert shifted == pytest.approx(np.zeros(WL.size))


def test_fixture_file_reads_and_measures():
    # Invented fixture (fixtures/uvvis/README.txt): 40 nm Ag, dilution 10.
    wl, a = np.loadtxt(FIXTURES / "ag_stable_day00.csv", delimiter=",", skiprows=2, unpack=True)
    band = uvvis.measure_plasmon_band(wl, a, dilution_factor=10, search_window_nm=(370, 480))
    assert 390 < band.peak_nm < 410  # common practice: ~40 nm citrate Ag peaks near 400 nm


@pytest.mark.parametrize(
    "wavelength, absorbance, options, field",
    [
        (WL, lorentzian(520, 60, 2.5), {}, "absorbance"),  # above linear range
        (WL, lorentzian(520, 60, 0.5) - 0.05, {}, "absorbance"),  # negative beyond noise
        (WL, lorentzian(700, 60, 0.5), {"search_window_nm": (380, 600)}, "search_window_nm"),
        (WL / 1000, lorentzian(520, 60, 0.5), {}, "wavelength_nm"),  # µm
        (1e7 / WL, lorentzian(520, 60, 0.5), {}, "wavelength_nm"),  # cm⁻¹
        (WL[:5], np.ones(5) * 0.1, {}, "wavelength_nm"),  # too few points
        (WL, lorentzian(520, 60, 0.5)[:-1], {}, "absorbance"),  # length mismatch
    ],
)
def test_bad_input_raises_naming_the_field(wavelength, absorbance, options, field):
    with pytest.raises(AnalysisInputError) as error:
        uvvis.measure_plasmon_band(wavelength, absorbance, **options)
    assert error.value.field == field


def test_linear_limit_and_tolerance_are_parameters():
    band = uvvis.measure_plasmon_band(WL, lorentzian(520, 60, 2.5), linear_limit=3.0)
    assert band.peak_absorbance_1cm == pytest.approx(2.5, rel=0.01)
    with pytest.raises(AnalysisInputError):
        uvvis.to_undiluted_1cm([1.0], dilution_factor=0.5)
    with pytest.raises(AnalysisInputError):
        uvvis.subtract_blank(WL, WL * 0, np.arange(400.0, 700.0), np.zeros(300))


def test_peak_uncertainty_covers_the_true_position_of_an_asymmetric_band():
    # An asymmetric band (two Lorentzians, the weaker to the red) on a 1 nm grid: its true
    # maximum is found here by dense sampling, independently of the parabola fit.
    def band(x):
        return 1.0 / (1 + ((x - 528.0) / 30.0) ** 2) + 0.35 / (1 + ((x - 560.0) / 45.0) ** 2)

    fine = np.arange(480.0, 600.0, 1e-4)
    true_peak = fine[np.argmax(band(fine))]
    result = uvvis.measure_plasmon_band(WL, band(WL))
    assert result.peak_u_nm > 0
    assert abs(result.peak_nm - true_peak) <= 2 * result.peak_u_nm
    assert result.peak_u_nm < 2.0


def test_large_colloid_without_a_maximum_is_a_named_error():
    # Rising to the window edge: no plasmon maximum to read (as for a broad large-particle band).
    with pytest.raises(uvvis.NoPlasmonPeakError):
        uvvis.measure_plasmon_band(WL, 0.2 + 0.001 * (WL - 300), search_window_nm=(380, 650))
