"""Tests for qc.analysis.wavenumber_check."""

import numpy as np
import pytest

from qc.analysis import wavenumber_check as wc
from qc.analysis.bands import lorentzian
from qc.analysis.errors import AnalysisInputError


def test_reference_constants_match_the_published_values():
    # Parker, Feldman & Ashkin, Phys. Rev. 1967: 520.2 ± 0.5 cm⁻¹; 520.7 is common practice.
    assert wc.SILICON_PARKER_1967_CM1 == 520.2 and wc.SILICON_PARKER_1967_U_CM1 == 0.5
    assert abs(wc.SILICON_CALIBRATION_CM1 - wc.SILICON_PARKER_1967_CM1) <= 0.5
    # ASTM E1840 polystyrene ring-breathing band, second-hand: 1001.4 cm⁻¹
    assert 1001.4 in wc.POLYSTYRENE_ASTM_E1840_CM1
    assert len(wc.POLYSTYRENE_ASTM_E1840_CM1) == 11 and len(wc.CYCLOHEXANE_ASTM_E1840_CM1) == 10


def _silicon_spectrum(position_cm1, seed=0):
    rng = np.random.default_rng(seed)
    x = np.linspace(300, 800, 700)
    y = lorentzian(x, position_cm1, 5000.0, 3.5) + 200 + rng.normal(0, 15, x.size)
    return x, y


def test_silicon_on_a_calibrated_axis_passes():
    # common practice: a calibrated instrument shows silicon at 520.7 ± ~1 cm⁻¹
    x, y = _silicon_spectrum(520.7)
    check = wc.check_wavenumber_axis(x, y, tolerance_cm1=1.0)
    assert check.passed
    assert check.mean_offset_cm1 == pytest.approx(0.0, abs=0.1)


def test_shifted_axis_fails_with_the_planted_offset():
    x, y = _silicon_spectrum(522.5)
    check = wc.check_wavenumber_axis(x, y, tolerance_cm1=1.0)
    assert not check.passed
    assert check.bands[0].offset_cm1 == pytest.approx(1.8, abs=0.1)


def test_polystyrene_offsets_per_band():
    refs = (620.9, 1001.4, 1031.8, 1602.3)  # ASTM E1840 (second-hand)
    x = np.linspace(500, 1700, 2400)
    y = sum(lorentzian(x, r + 0.3, 1000.0, 6.0) for r in refs)
    check = wc.check_wavenumber_axis(
        x, y, reference_cm1=refs, tolerance_cm1=0.5, band_window_cm1=20
    )
    np.testing.assert_allclose([b.offset_cm1 for b in check.bands], 0.3, atol=0.05)
    assert check.passed and check.mean_offset_cm1 == pytest.approx(0.3, abs=0.05)


def test_compare_by_hand():
    check = wc.compare_band_positions([520.9, 1001.0], [520.7, 1001.4], tolerance_cm1=0.3)
    # offsets +0.2 and −0.4 → mean −0.1, second band fails
    assert check.mean_offset_cm1 == pytest.approx(-0.1)
    assert [b.passed for b in check.bands] == [True, False] and not check.passed


def test_reference_outside_range_names_the_field():
    x, y = _silicon_spectrum(520.7)
    with pytest.raises(AnalysisInputError) as err:
        wc.check_wavenumber_axis(x, y, reference_cm1=(1001.4,))
    assert err.value.field == "reference_cm1"


def test_every_cyclohexane_value_carries_its_status():
    # ASTM E1840 cyclohexane bands (second-hand; 426.3, one source 426.4); 2664.4 is recalled
    # from memory and kept out of the list used for checks.
    statuses = wc.CYCLOHEXANE_ASTM_E1840_STATUS
    assert all(value in statuses for value in wc.CYCLOHEXANE_ASTM_E1840_CM1)
    assert 426.3 in wc.CYCLOHEXANE_ASTM_E1840_CM1
    assert "426.4" in statuses[426.3]
    assert statuses[2664.4].startswith("from memory")
    assert 2664.4 not in wc.CYCLOHEXANE_ASTM_E1840_CM1
