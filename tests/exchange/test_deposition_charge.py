"""Deposition runs from a sheet with the charge the potentiostat reported (issue 21).

The expected figures are Faraday's law worked by hand from outside values: Q·M/(z·F) grams of
gold (scipy's CODATA Faraday constant, periodictable's molar mass of gold) over the CRC
Handbook density 19.32 g/cm³, spread on 1 cm² (t = V/A).
"""

from __future__ import annotations

import pytest
from periodictable import Au
from scipy.constants import physical_constants

from exchange.exporting import kind_sheet, kind_template
from exchange.importer import import_sheet
from exchange.kinds import KINDS
from inventory.models import DepositionRun
from inventory.selectors import record_get_history

from .sheets import csv_bytes, xlsx_bytes

pytestmark = pytest.mark.django_db

FARADAY_C_MOL = physical_constants["Faraday constant"][0]  # CODATA, through scipy
GOLD_DENSITY_CRC_G_CM3 = 19.32  # CRC Handbook of Chemistry and Physics, 20 °C
HEADER = ["Code or your ID", "Template", "Plating bath lot", "Metal", "Electrons per atom",
          "Mode", "Electrode area (cm²)", "Made on", "Pieces cut"]


def _flat_thickness_nm(charge_C: float, area_cm2: float = 1.0) -> float:
    return charge_C * Au.mass / (1 * FARADAY_C_MOL) / GOLD_DENSITY_CRC_G_CM3 / area_cm2 * 1e7


def _row(chain, key: str, template, *extra):
    return [key, template.code, chain.lot("plating_bath").code, "Au", 1, "potentiostatic", 1.0,
            chain.day(9).isoformat(), 2, *extra]


@pytest.fixture
def templates(chain):
    return [chain.template(spheres=chain.spheres(diameter_nm=600)) for _ in range(2)]


@pytest.mark.parametrize(("header", "cell", "charge_C"), [
    ("Charge (mC)", 112.0, 0.112),  # the header's unit converted
    ("Deposition charge", "0.098 C", 0.098),  # an alias, the unit in the cell
    ("Q (C)", 0.105, 0.105),
])
def test_a_run_row_with_its_charge_dry_runs_then_imports_with_the_figures(
        chain, maker, templates, header, cell, charge_C):
    content = csv_bytes([[*HEADER, header], _row(chain, "HL-DEP-1", templates[0], cell)])
    dry = import_sheet(kind="deposition_runs", content=content, file_name="runs.csv",
                       actor=maker, commit=False)
    assert dry.ok and not dry.committed and dry.columns[header] == "charge_C"
    assert not DepositionRun.objects.exists()
    report = import_sheet(kind="deposition_runs", content=content, file_name="runs.csv",
                          actor=maker, commit=True)
    assert report.committed, report.errors
    run = DepositionRun.objects.get()
    assert run.charge_C == pytest.approx(charge_C, rel=1e-12)
    assert run.charge_source == "entered" and run.chronoamperogram_sha256 == ""
    assert run.equivalent_thickness_nm == pytest.approx(_flat_thickness_nm(charge_C), rel=1e-9)
    assert run.sphere_diameter_nm == 600 and run.height_over_diameter is not None
    reasons = [row.reason or "" for row in record_get_history(run)]
    assert any("charge entered as reported" in reason for reason in reasons)


@pytest.mark.parametrize(("cell", "code"), [
    (-5, "out_of_range"), (0, "out_of_range"), (2e8, "out_of_range"),
    ("1e400", "not_finite"), ("plenty", "not_a_number"), ("5 mA", "unit_mismatch"),
])
def test_a_bad_charge_is_a_row_error_under_its_column_and_nothing_is_saved(
        chain, maker, templates, cell, code):
    content = csv_bytes([[*HEADER, "Charge (mC)"],
                         _row(chain, "HL-DEP-1", templates[0], 90),
                         _row(chain, "HL-DEP-2", templates[1], cell)])
    report = import_sheet(kind="deposition_runs", content=content, file_name="runs.csv",
                          actor=maker, commit=True)
    assert not report.committed
    assert [(e.row, e.column, e.code) for e in report.errors] == [(3, "Charge (mC)", code)]
    assert not DepositionRun.objects.exists()


def test_the_export_writes_the_charge_and_re_imports_unchanged(chain, maker, templates):
    content = xlsx_bytes([[*HEADER, "Charge (C)"],
                          _row(chain, "HL-DEP-1", templates[0], 0.112)])
    assert import_sheet(kind="deposition_runs", content=content, file_name="runs.xlsx",
                        actor=maker, commit=True).committed
    exported = kind_sheet(KINDS["deposition_runs"], file_format="xlsx")
    again = import_sheet(kind="deposition_runs", content=exported, file_name="export.xlsx",
                         actor=maker, commit=True)
    assert again.committed, again.errors
    assert again.columns["Charge (C)"] == "charge_C"
    assert [o.action for o in again.unchanged] == ["unchanged"] and not again.created
    assert DepositionRun.objects.get().charge_C == 0.112


def test_a_sheet_gives_an_existing_run_its_charge_but_never_overrules_a_files(chain, maker):
    bare, _ = chain.run()
    measured, _ = chain.measured_run()
    header = ["Code or your ID", "Template", "Plating bath lot", "Metal",
              "Electrons per atom", "Mode", "Electrode area (cm²)", "Made on", "Pieces cut",
              "Charge (C)"]

    def row(run, charge):
        return [run.code, run.template.code, run.bath_lot.code, "Au", 1, "potentiostatic", 1.0,
                run.made_on.isoformat(), 2, charge]

    given = import_sheet(kind="deposition_runs", content=csv_bytes([header, row(bare, 0.09)]),
                         file_name="late charges.csv", actor=maker, commit=True)
    assert given.committed, given.errors
    assert given.changed[0].changes == ["Charge (C): — → 0.09"]
    assert DepositionRun.objects.get(pk=bare.pk).charge_source == "entered"
    refused = import_sheet(kind="deposition_runs",
                           content=csv_bytes([header, row(measured, 0.2)]),
                           file_name="late charges.csv", actor=maker, commit=True)
    assert [(e.row, e.column, e.code) for e in refused.errors] == \
        [(2, "Charge (C)", "charge_from_file")]
    assert DepositionRun.objects.get(pk=measured.pk).charge_source == "chronoamperogram"


def test_the_template_has_a_charge_column_with_an_example():
    text = kind_template(KINDS["deposition_runs"], file_format="csv").decode()
    header, example = text.splitlines()[:2]
    assert "Charge (C)" in header.split(",")
    assert example.split(",")[header.split(",").index("Charge (C)")] == "0.112"
