"""Importing a colloid UV-vis spectrum: stored numbers, Haiss recomputed, refusals, duplicates.

Fixture spectra are the invented series in fixtures/uvvis (README.txt gives dilution/path).
"""

from __future__ import annotations

import math
from datetime import timedelta
from pathlib import Path

import numpy as np
import pytest
from django.apps import apps
from django.core.exceptions import ValidationError
from scipy import constants

from inventory.models import LineageEdge
from qc.analysis import silver_calibration
from qc.analysis.colloid_stability import colloid_snapshot
from qc.analysis.mie_model import fit_lognormal_mie
from qc.analysis.uvvis import to_undiluted_1cm
from qc.models import UvVisRecord
from qc.selectors import (
    nanoparticle_batch_get_latest_size,
    nanoparticle_batch_get_uvvis_series,
    uvvis_record_get_curves,
)
from qc.services import silver_calibration_record, uvvis_record_import

UVVIS = Path(__file__).resolve().parents[2] / "fixtures" / "uvvis"


def _bytes(name: str) -> bytes:
    return (UVVIS / name).read_bytes()


def _columns(name: str) -> tuple[np.ndarray, np.ndarray]:
    # Independent of the product's reader: numpy's own text loader.
    data = np.loadtxt(UVVIS / name, delimiter=",", comments="#", skiprows=2)
    return data[:, 0], data[:, 1]


def _text(wavelength, absorbance) -> bytes:
    rows = "\n".join(f"{w:.6f},{a:.5f}" for w, a in zip(wavelength, absorbance, strict=True))
    return f"wavelength_nm,absorbance\n{rows}\n".encode()


@pytest.fixture
def gold_batch(chain):
    return chain.s.nanoparticle_batch_make(actor=chain.maker, metal="Au",
                                           synthesis_method="citrate", volume_mL=50,
                                           made_on=chain.day(20))


@pytest.fixture
def silver_batch(chain):
    return chain.batch(days_ago=40)


def _import(chain, batch, name, *, day=0, dilution=10.0, **extra):
    return uvvis_record_import(actor=chain.maker, batch=batch, filename=name,
                               content=extra.pop("content", None) or _bytes(name),
                               measured_on=batch.made_on + timedelta(days=day),
                               dilution_factor=dilution, **extra)


def _counts() -> dict[str, int]:
    return {model._meta.label: model.objects.count() for model in apps.get_models()}


# ---------------------------------------------------------------------------------------
# Stored numbers
# ---------------------------------------------------------------------------------------


def test_gold_record_stores_the_pure_functions_output(chain, gold_batch):
    record = _import(chain, gold_batch, "au_batch_day00.csv", dilution=2.0).record
    wavelength, absorbance = _columns("au_batch_day00.csv")
    snapshot = colloid_snapshot(wavelength, absorbance, metal="Au", day=0, dilution_factor=2.0)
    fit = fit_lognormal_mie(wavelength, to_undiluted_1cm(absorbance, dilution_factor=2.0), "Au",
                            initial_diameter_nm=record.diameter_nm)
    record.refresh_from_db()
    assert record.code.startswith("UV-")
    assert record.peak_nm == pytest.approx(snapshot.band.peak_nm, rel=1e-12)
    assert record.peak_absorbance_1cm == pytest.approx(snapshot.band.peak_absorbance_1cm, rel=1e-12)
    assert record.absorbance_450_1cm == pytest.approx(snapshot.band.absorbance_450_1cm, rel=1e-12)
    assert record.fwhm_nm is None and record.fwhm_note == snapshot.band.fwhm_note
    assert record.aggregation_index == pytest.approx(snapshot.aggregation_index, rel=1e-12)
    assert record.mie_median_diameter_nm == pytest.approx(fit.median_diameter_nm, rel=1e-9)
    assert record.mie_geometric_sigma == pytest.approx(fit.geometric_sigma, rel=1e-9)
    assert record.mie_number_per_mL == pytest.approx(fit.number_per_mL, rel=1e-9)
    assert record.mie_relative_residual == pytest.approx(fit.relative_rms_residual, rel=1e-9)
    # The file is kept as uploaded, with its digest, and the batch is its lineage parent.
    assert record.raw_file.read() == _bytes("au_batch_day00.csv")
    assert LineageEdge.objects.filter(parent_code=gold_batch.code, child_code=record.code).exists()


def test_gold_sizes_follow_haiss_2007(chain, gold_batch):
    record = _import(chain, gold_batch, "au_batch_day00.csv", dilution=2.0).record
    wavelength, absorbance = _columns("au_batch_day00.csv")
    # A_450 of the undiluted colloid: the file's value at 450.0 nm times the dilution, 2
    # (Beer–Lambert; 1 nm grid, so no interpolation).
    a450 = 2.0 * absorbance[wavelength == 450.0][0]
    assert record.absorbance_450_1cm == pytest.approx(a450, rel=1e-9)
    # The fitted peak height lies within noise of the highest sample (fixture noise 0.002 ×2).
    assert record.peak_absorbance_1cm == pytest.approx(2.0 * absorbance.max(), abs=0.01)
    # Haiss et al., Anal. Chem. 79, 4215 (2007): d = exp(3.00·A_spr/A_450 − 2.20).
    ratio_d = math.exp(3.00 * record.peak_absorbance_1cm / a450 - 2.20)
    assert record.haiss_ratio_diameter_nm == pytest.approx(ratio_d, rel=1e-6)
    assert record.haiss_ratio_in_range is True
    # Same paper: λ_spr = 512 + 6.53·exp(0.0216·d), so d = ln((λ − 512)/6.53)/0.0216, valid
    # above 25 nm; a peak below 512 + 6.53·e^(0.54) nm has no number.
    if record.peak_nm > 512 + 6.53 * math.exp(0.0216 * 25):
        assert record.haiss_peak_diameter_nm == pytest.approx(
            math.log((record.peak_nm - 512) / 6.53) / 0.0216, rel=1e-9)
    else:
        assert record.haiss_peak_diameter_nm is None and record.haiss_peak_in_range is False
    # Below 35 nm the paper advises the ratio method, so it gives the size used.
    assert record.diameter_nm == pytest.approx(ratio_d, rel=1e-6)
    # Same paper: N = A_450·1e14 / (d²·(−0.295 + 1.36·exp(−((d − 96.8)/78.2)²))) per mL.
    d = ratio_d
    number = a450 * 1e14 / (d**2 * (-0.295 + 1.36 * math.exp(-(((d - 96.8) / 78.2) ** 2))))
    assert record.number_per_mL == pytest.approx(number, rel=1e-6)
    # c = N·1000/N_A mol/L (N per mL; N_A from scipy.constants, CODATA).
    assert record.molar_concentration_M == pytest.approx(number * 1000 / constants.Avogadro,
                                                         rel=1e-6)
    # The invented file was made with median 20 nm (fixtures/uvvis/README.txt); the ratio
    # method's stated average deviation is 11 %, so allow 15 %.
    assert record.diameter_nm == pytest.approx(20.0, rel=0.15)
    assert record.sizes_agree is True and "agree" in record.size_agreement_message


def test_silver_uses_built_in_table_then_the_labs_own(chain, silver_batch):
    built_in = _import(chain, silver_batch, "ag_stable_day00.csv").record
    table = silver_calibration.silver_table_from_mie()
    expected = silver_calibration.diameter_from_peak(table, built_in.peak_nm).value
    assert built_in.silver_table_diameter_nm == pytest.approx(expected, rel=1e-12)
    assert built_in.silver_calibration is None and "built-in" in built_in.calibration_source
    # Invented lab table (three rows) with its provenance.
    rows = [(390.0, 30.0, 1.0e10), (400.0, 40.0, 2.0e10), (410.0, 50.0, 3.0e10)]
    lab = silver_calibration_record(actor=None, name="TEM series (invented)",
                                    provenance="invented TEM sizing for the test", rows=rows)
    record = _import(chain, silver_batch, "ag_stable_day07.csv", day=7).record
    assert record.silver_calibration == lab and "TEM series" in record.calibration_source
    lab_table = silver_calibration.CalibrationTable((390.0, 400.0, 410.0), (30.0, 40.0, 50.0),
                                                    (1.0e10, 2.0e10, 3.0e10), provenance="x")
    assert record.silver_table_diameter_nm == pytest.approx(
        silver_calibration.diameter_from_peak(lab_table, record.peak_nm).value, rel=1e-12)
    # Beer–Lambert c = A/ε (1 cm), then N = c·N_A/1000 per mL (N_A, CODATA).
    epsilon = silver_calibration.extinction_at_peak(lab_table, record.peak_nm).value
    assert record.molar_concentration_M == pytest.approx(record.peak_absorbance_1cm / epsilon)
    assert record.number_per_mL == pytest.approx(
        record.molar_concentration_M * constants.Avogadro / 1000)


def test_series_selector_and_stability_against_the_first(chain, silver_batch):
    first = _import(chain, silver_batch, "ag_ageing_day00.csv").record
    later = _import(chain, silver_batch, "ag_ageing_day21.csv", day=21).record
    assert first.peak_shift_nm is None and later.first_record == first
    # Definitions in qc.analysis.colloid_stability: shift = λ_later − λ_first,
    # loss = 1 − A_later/A_first, ΔAI = AI_later − AI_first.
    assert later.peak_shift_nm == pytest.approx(later.peak_nm - first.peak_nm)
    assert later.absorbance_loss_fraction == pytest.approx(
        1 - later.peak_absorbance_1cm / first.peak_absorbance_1cm)
    assert later.broadening_nm == pytest.approx(later.fwhm_nm - first.fwhm_nm)
    assert later.aggregation_index_change == pytest.approx(
        later.aggregation_index - first.aggregation_index)
    # The invented day-21 file has 25 % fewer particles and a red-shifted band (README.txt).
    assert later.peak_shift_nm > 0 and later.absorbance_loss_fraction > 0.1
    series = nanoparticle_batch_get_uvvis_series(silver_batch)
    assert [p.code for p in series] == [first.code, later.code]
    assert [p.age_days for p in series] == [0, 21]
    latest = nanoparticle_batch_get_latest_size(silver_batch)
    assert latest.record_code == later.code and latest.diameter_nm == later.diameter_nm


def test_curves_redraw_the_stored_fit(chain, silver_batch):
    record = _import(chain, silver_batch, "ag_stable_day00.csv").record
    curves = uvvis_record_get_curves(record)
    inside = (curves.wavelength_nm >= record.mie_fit_min_nm) & (
        curves.wavelength_nm <= record.mie_fit_max_nm)
    residual = curves.absorbance_1cm[inside] - curves.model_absorbance_1cm
    # The redrawn model reproduces the fit's own RMS residual (same data, same parameters).
    assert float(np.sqrt(np.mean(residual**2))) == pytest.approx(record.mie_rms_residual, rel=1e-3)


def test_blank_is_subtracted(chain, silver_batch):
    wavelength, absorbance = _columns("ag_stable_day00.csv")
    offset = 0.05  # a flat invented blank
    content = _text(wavelength, absorbance + offset)
    blank = ("blank.csv", _text(wavelength, np.full(wavelength.size, offset)))
    with_blank = _import(chain, silver_batch, "sample.csv", content=content, blank=blank).record
    reference = colloid_snapshot(wavelength, absorbance, metal="Ag", day=0, dilution_factor=10)
    assert with_blank.peak_nm == pytest.approx(reference.band.peak_nm, abs=1e-6)
    assert with_blank.blank_sha256 and with_blank.blank_file


# ---------------------------------------------------------------------------------------
# Duplicates and refusals
# ---------------------------------------------------------------------------------------


def test_same_file_twice_is_recognised(chain, silver_batch):
    first = _import(chain, silver_batch, "ag_stable_day00.csv")
    counts = _counts()
    again = _import(chain, silver_batch, "ag_stable_day00.csv")
    assert again.duplicate and again.record == first.record and _counts() == counts
    with pytest.raises(ValidationError) as error:
        _import(chain, silver_batch, "ag_stable_day00.csv", day=3)
    assert set(error.value.error_dict) == {"raw_file"} and first.record.code in str(error.value)


def _bad_files():
    wavelength, absorbance = _columns("ag_stable_day00.csv")
    lines = _text(wavelength, absorbance).decode().splitlines()
    lines[40] = "340.000000,not-a-number"
    return {
        # measured A > 2 (×3 of a 0.89 peak): outside the photometer's linear range.
        "above_linear_range": (_text(wavelength, 3 * absorbance), None, "linear range"),
        "micrometres": (_text(wavelength / 1000, absorbance), None, "µm"),
        "wavenumbers": (_text(1e7 / wavelength[::-1], absorbance[::-1]), None, "cm⁻¹"),
        "too_few_points": (_text(wavelength[95:101], absorbance[95:101]), None, "points"),
        "bad_cell": (("\n".join(lines) + "\n").encode(), None, "line 41"),
        "negative_after_blank": (_text(wavelength, absorbance),
                                 ("blank.csv", _text(wavelength, absorbance + 0.2)), "negative"),
    }


@pytest.mark.parametrize("case", sorted(_bad_files()))
def test_bad_files_are_refused_and_save_nothing(chain, silver_batch, case):
    content, blank, words = _bad_files()[case]
    counts = _counts()
    with pytest.raises(ValidationError) as error:
        _import(chain, silver_batch, "bad.csv", content=content, blank=blank)
    assert set(error.value.error_dict) == {"raw_file"}
    assert words in str(error.value) and "bad.csv" in str(error.value)
    assert _counts() == counts and UvVisRecord.objects.count() == 0


def test_bad_parameters_and_dates_are_refused(chain, silver_batch):
    counts = _counts()
    for extra, field in [({"dilution": 0.5}, "dilution_factor"),
                         ({"path_length_cm": 0}, "path_length_cm"),
                         ({"day": -1}, "measured_on")]:
        with pytest.raises(ValidationError) as error:
            _import(chain, silver_batch, "ag_stable_day00.csv", **extra)
        assert set(error.value.error_dict) == {field}
    with pytest.raises(ValidationError) as error:
        _import(chain, silver_batch, "ag_stable_day00.csv", day=41)  # tomorrow
    assert set(error.value.error_dict) == {"measured_on"}
    assert _counts() == counts


def test_a_bad_lab_table_is_refused(chain):
    with pytest.raises(ValidationError) as error:
        silver_calibration_record(actor=None, name="x", provenance="lab",
                                  rows=[(400.0, 40.0, 1e10), (395.0, 45.0, 2e10), (410, 50, 3e10)])
    assert set(error.value.error_dict) == {"rows"} and "row 2" in str(error.value)
    with pytest.raises(ValidationError) as error:
        silver_calibration_record(actor=None, name="x", provenance=" ",
                                  rows=[(390.0, 30.0, 1e10), (400.0, 40.0, 2e10), (410, 50, 3e10)])
    assert set(error.value.error_dict) == {"provenance"}
