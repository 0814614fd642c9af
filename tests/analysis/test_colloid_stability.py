"""Aggregation index and batch comparison on the invented fixture series and on bands."""

from pathlib import Path

import numpy as np
import pytest

from qc.analysis import colloid_stability as cs
from qc.analysis.errors import AnalysisInputError

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "uvvis"
WL = np.arange(300.0, 801.0, 1.0)


def lorentzian(centre_nm, fwhm_nm, height):
    half = fwhm_nm / 2
    return height * half**2 / ((WL - centre_nm) ** 2 + half**2)


def snapshots(batch, metal, days, dilution):
    result = []
    for day in days:
        wl, a = np.loadtxt(
            FIXTURES / f"{batch}_day{day:02d}.csv", delimiter=",", skiprows=2, unpack=True
        )
        result.append(cs.colloid_snapshot(wl, a, metal=metal, day=day, dilution_factor=dilution))
    return result


def test_aggregation_index_definition():
    # Project's definition: mean A in band / A_peak; a flat 0.1 over a peak of 1.0 gives 0.1.
    a = np.full(WL.size, 0.1)
    assert cs.aggregation_index(WL, a, 1.0, band_nm=(600, 750)) == pytest.approx(0.1)


def test_known_shift_loss_and_broadening_between_two_bands():
    # Two Lorentzians with known centre, height and width: the changes are known exactly.
    first = cs.colloid_snapshot(WL, lorentzian(400, 30, 1.0), metal="Ag", day=0)
    later = cs.colloid_snapshot(WL, lorentzian(405, 36, 0.8), metal="Ag", day=7)
    (change,) = cs.compare_with_first([later, first])  # order by day, not by list position
    assert change.day == 7
    assert change.peak_shift_nm == pytest.approx(5.0, abs=0.1)
    assert change.absorbance_loss_fraction == pytest.approx(0.2, abs=0.005)
    assert change.broadening_nm == pytest.approx(6.0, abs=0.5)


def test_stable_fixture_batch_barely_changes():
    # Invented stable Ag batch (fixtures/uvvis/README.txt): ~1 % particle loss in 3 weeks.
    changes = cs.compare_with_first(snapshots("ag_stable", "Ag", [0, 7, 21], 10))
    for change in changes:
        assert abs(change.peak_shift_nm) < 0.5 and abs(change.absorbance_loss_fraction) < 0.03
        assert abs(change.aggregation_index_change) < 0.005


def test_ageing_fixture_batch_shifts_loses_and_grows_a_shoulder():
    # Invented ageing Ag batch: growth, particle loss and a growing broad red band by construction.
    changes = cs.compare_with_first(snapshots("ag_ageing", "Ag", [0, 7, 21, 35], 10))
    shifts = [c.peak_shift_nm for c in changes]
    losses = [c.absorbance_loss_fraction for c in changes]
    shoulders = [c.aggregation_index_change for c in changes]
    assert np.all(np.diff([0.0, *shifts]) > 0) and shifts[-1] > 2
    assert np.all(np.diff([0.0, *losses]) > 0) and losses[-1] > 0.2
    assert np.all(np.diff([0.0, *shoulders]) > 0) and changes[-1].aggregation_index_ratio > 5
    assert changes[-1].broadening_nm > 5


def test_gold_fixture_uses_red_half_width_when_fwhm_undefined():
    changes = cs.compare_with_first(snapshots("au_batch", "Au", [0, 14], 2))
    assert changes[0].broadening_nm is not None and abs(changes[0].peak_shift_nm) < 1


def test_bad_input_raises():
    with pytest.raises(AnalysisInputError):
        cs.compare_with_first(
            [cs.colloid_snapshot(WL, lorentzian(400, 30, 1.0), metal="Ag", day=0)]
        )
    with pytest.raises(AnalysisInputError):
        cs.colloid_snapshot(WL, lorentzian(400, 30, 1.0), metal="Cu", day=0)
    with pytest.raises(AnalysisInputError):
        cs.aggregation_index(WL, np.ones(WL.size), 1.0, band_nm=(900, 1000))
