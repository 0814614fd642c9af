"""Raman-shift axis conversions, checked against hand calculations from the definition.

Definition used throughout (McCreery, Raman Spectroscopy for Chemical Analysis, Wiley 2000,
ch. 1): shift [cm⁻¹] = 1e7/λ_laser[nm] − 1e7/λ_scattered[nm], Stokes positive.
"""

import numpy as np
import pytest

from qc.analysis.axes import (
    raman_shift_cm1,
    scattered_wavelength_nm,
    spectrum_to_raman_shift,
)
from qc.analysis.errors import AnalysisInputError
from qc.analysis.spectrum import Spectrum


def test_polystyrene_band_with_785_nm_laser_matches_hand_calculation():
    # ASTM E1840 polystyrene band 1001.4 cm⁻¹ (REFERENCES.md, second-hand), 785 nm laser.
    # By hand: 1e7/785 = 12738.8535 cm⁻¹; minus 1001.4 = 11737.4535 cm⁻¹;
    # 1e7/11737.4535 = 851.97 nm.
    laser_wavenumber = 1e7 / 785.0
    expected_nm = 1e7 / (laser_wavenumber - 1001.4)
    assert expected_nm == pytest.approx(851.97, abs=0.01)  # the hand value above
    assert scattered_wavelength_nm(1001.4, 785.0) == pytest.approx(
        expected_nm, rel=1e-12
    )
    assert raman_shift_cm1(expected_nm, 785.0) == pytest.approx(1001.4, abs=1e-9)


def test_silicon_phonon_with_532_nm_laser():
    # Silicon 520.7 cm⁻¹ (common practice for calibration). By hand with a 532 nm laser:
    # 1e7/532 = 18796.99 cm⁻¹; 18796.99 − 520.7 = 18276.29 cm⁻¹ → 547.16 nm.
    assert scattered_wavelength_nm(520.7, 532.0) == pytest.approx(547.16, abs=0.01)


def test_anti_stokes_is_negative_and_laser_line_is_zero():
    # Definition: scattered at the laser wavelength → zero shift; shorter λ → negative.
    shifts = raman_shift_cm1(np.array([785.0, 750.0]), 785.0)
    assert shifts[0] == 0.0
    assert shifts[1] == pytest.approx(1e7 / 785.0 - 1e7 / 750.0)
    assert shifts[1] < 0


def test_vectorised_round_trip_over_a_2d_array():
    # Inverse identity: λ(shift(λ)) = λ, for any shape.
    rng = np.random.default_rng(7)
    wavelengths_nm = rng.uniform(790.0, 1000.0, size=(40, 25))
    shift = raman_shift_cm1(wavelengths_nm, 785.0)
    assert shift.shape == wavelengths_nm.shape
    np.testing.assert_allclose(
        scattered_wavelength_nm(shift, 785.0), wavelengths_nm, rtol=1e-12
    )


@pytest.mark.parametrize("bad", [0.0, -532.0, np.nan, np.inf])
def test_non_positive_laser_is_refused(bad):
    with pytest.raises(AnalysisInputError) as caught:
        raman_shift_cm1([800.0], bad)
    assert caught.value.field == "laser_nm"


def test_non_positive_scattered_wavelength_is_refused_with_its_index():
    with pytest.raises(AnalysisInputError, match="index 2") as caught:
        raman_shift_cm1([800.0, 810.0, 0.0], 785.0)
    assert caught.value.field == "scattered_nm"


def test_shift_beyond_laser_wavenumber_is_refused():
    # 1e7/785 ≈ 12738.9 cm⁻¹: a larger shift would need a negative wavenumber.
    with pytest.raises(AnalysisInputError) as caught:
        scattered_wavelength_nm([1000.0, 13000.0], 785.0)
    assert caught.value.field == "shift_cm1"


def test_spectrum_in_nm_becomes_ascending_raman_shift():
    wavelengths_nm = np.linspace(800.0, 900.0, 11)
    counts = np.arange(11.0)
    converted = spectrum_to_raman_shift(
        Spectrum(wavelengths_nm, counts, "nm", "counts", {"laser_nm": 785.0})
    )
    # Each x recomputed from the definition, not from the function.
    np.testing.assert_allclose(
        converted.x, 1e7 / 785.0 - 1e7 / wavelengths_nm, rtol=1e-12
    )
    assert np.all(np.diff(converted.x) > 0)
    np.testing.assert_array_equal(converted.y, counts)
    assert converted.x_unit == "1/cm"
    assert converted.metadata["laser_nm"] == 785.0


def test_spectrum_conversion_needs_nm_and_a_laser():
    already_shift = Spectrum([100.0, 200.0], [1.0, 2.0], "1/cm", "counts")
    with pytest.raises(AnalysisInputError) as caught:
        spectrum_to_raman_shift(already_shift, 785.0)
    assert caught.value.field == "x_unit"
    no_laser = Spectrum([800.0, 810.0], [1.0, 2.0], "nm", "counts")
    with pytest.raises(AnalysisInputError) as caught:
        spectrum_to_raman_shift(no_laser)
    assert caught.value.field == "laser_nm"
