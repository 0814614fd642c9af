"""Kinds beyond sphere lots: a colloid's UV-vis reading is sized like a file, QC figures."""

from __future__ import annotations

import math

import pytest

from exchange.importer import import_sheet
from exchange.models import ImportedQcResult, SheetUvVisReading
from inventory.models import NanoparticleBatch

from .sheets import csv_bytes

pytestmark = pytest.mark.django_db

COLLOID = ["Code or your ID", "Metal", "Synthesis", "Volume made (mL)", "Made on",
           "UV-vis measured on", "UV-vis peak (nm)", "Absorbance at peak",
           "Absorbance at 450 nm", "UV-vis dilution factor"]


def test_a_gold_reading_is_sized_by_the_haiss_ratio_as_a_file_is(maker, chain):
    made = chain.day(4).isoformat()
    content = csv_bytes([COLLOID, ["AU-7", "gold", "citrate", 100, made, made, 520, 0.32, 0.20,
                                   5]])
    report = import_sheet(kind="colloid_batches", content=content, file_name="au.csv",
                          actor=maker, commit=True)
    assert report.committed, report.errors
    reading = SheetUvVisReading.objects.get(batch=NanoparticleBatch.objects.get())
    # Beer-Lambert: the undiluted colloid in 1 cm absorbs dilution x path-scaled values.
    assert reading.peak_absorbance_1cm == pytest.approx(0.32 * 5)
    # Haiss, Thanh, Aveyard & Fernig, Anal. Chem. 79, 4215 (2007): d = exp(B1 * A_spr/A_450
    # - B2) with the experimental B1 = 3.00, B2 = 2.20; A_spr/A_450 = 1.6 gives 13.46 nm.
    assert reading.diameter_nm == pytest.approx(math.exp(3.00 * 1.6 - 2.20), rel=1e-6)
    assert "ratio" in reading.diameter_method
    assert reading.number_per_mL > 0


def test_gold_without_a_450_nm_absorbance_is_a_row_error(maker, chain):
    made = chain.day(4).isoformat()
    content = csv_bytes([COLLOID, ["AU-8", "Au", "citrate", 100, made, made, 520, 0.32, "", 5]])
    report = import_sheet(kind="colloid_batches", content=content, file_name="au.csv",
                          actor=maker, commit=True)
    assert [(e.row, e.column, e.code) for e in report.errors] == \
        [(2, "Absorbance at 450 nm", "required")]
    assert not NanoparticleBatch.objects.exists()


def test_historical_qc_results_are_imported_figures_with_range_checks(maker, chain):
    _run, (piece, other) = chain.run(pieces=2)
    header = ["Substrate", "Measured on", "EF", "RSD (%)", "Result", "Analyte"]
    day = chain.day(1).isoformat()
    content = csv_bytes([header, [piece.code, day, "2.1e6", 8.5, "pass", "Benzenethiol"],
                         [other.code, day, 0.5, 8.5, "fail", "Benzenethiol"]])
    report = import_sheet(kind="qc_results", content=content, file_name="qc log.csv",
                          actor=maker, commit=True)
    assert [(e.row, e.column, e.code) for e in report.errors] == [(3, "EF", "out_of_range")]
    content = csv_bytes([header, [piece.code, day, "2.1e6", 8.5, "pass", "Benzenethiol"]])
    assert import_sheet(kind="qc_results", content=content, file_name="qc log.csv",
                        actor=maker, commit=True).committed
    result = ImportedQcResult.objects.get()
    assert (result.substrate, result.verdict, result.enhancement_factor) == \
        (piece, "passed", 2.1e6)
    assert "qc log.csv" in result.source and "row 2" in result.source
