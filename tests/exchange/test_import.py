"""Spreadsheet import: dry run first, then all rows or none, through the services."""

from __future__ import annotations

from datetime import date

import pytest

from exchange.importer import import_sheet
from exchange.models import SheetKey
from inventory.models import LineageEdge, SphereLot, TemplateAssembly
from inventory.selectors import record_get_history

from .sheets import csv_bytes, xlsx_bytes

pytestmark = pytest.mark.django_db

SPHERE_HEADER = ["Code or your ID", "Material", "Nominal diameter (nm)", "Solids (%)",
                 "Supplier", "Supplier lot number", "Received on"]


def sphere_rows(*rows):
    return [SPHERE_HEADER, *rows]


def test_a_dry_run_reports_rows_to_create_and_saves_nothing(maker, today):
    content = csv_bytes(sphere_rows(["PS-1", "polystyrene", 600, 10, "Acme", "L1", "2026-05-01"],
                                    ["PS-2", "silica", 450, 5, "Acme", "L2", "2026-05-02"]))
    report = import_sheet(kind="sphere_lots", content=content, file_name="spheres.csv",
                          actor=maker, commit=False)
    assert report.ok and not report.committed
    assert [o.row for o in report.created] == [2, 3]
    assert SphereLot.objects.count() == 0 and SheetKey.objects.count() == 0


def test_import_saves_every_row_with_its_source_in_the_history(maker, today):
    content = xlsx_bytes(sphere_rows(["PS-1", "Polystyrene", 600, 10, "Acme", "L1",
                                      date(2026, 5, 1)]))
    report = import_sheet(kind="sphere_lots", content=content, file_name="old lots.xlsx",
                          actor=maker, commit=True)
    assert report.committed, report.errors
    lot = SphereLot.objects.get()
    assert (lot.material, lot.nominal_diameter_nm, lot.received_on) == \
        ("polystyrene", 600, date(2026, 5, 1))
    (created,) = record_get_history(lot)
    assert f"old lots.xlsx (SHA-256 {report.sha256}), row 2" in created.reason
    assert created.who == maker.username
    assert SheetKey.objects.get(key="PS-1").record_code == lot.code


def test_one_bad_row_saves_nothing_and_every_error_names_row_column_and_reason(maker, today):
    content = csv_bytes(sphere_rows(
        ["PS-1", "polystyrene", 600, 10, "Acme", "L1", "2026-05-01"],
        ["PS-2", "polystyrene", "600 furlongs", 10, "Acme", "L2", "2026-05-01"],
        ["PS-3", "polystyrene", 600, 150, "Acme", "L3", "2026-05-01"],
        ["PS-4", "polystyrene", 600, 10, "Acme", "L4", "2027-01-01"],
        ["PS-1", "polystyrene", 600, 10, "Acme", "L5", "2026-05-01"],
    ))
    report = import_sheet(kind="sphere_lots", content=content, file_name="s.csv", actor=maker,
                          commit=True)
    assert not report.committed and SphereLot.objects.count() == 0
    found = {(e.row, e.column, e.code) for e in report.errors}
    assert (3, "Nominal diameter (nm)", "unit_unknown") in found
    assert (5, "Received on", "future_date") in found
    assert (6, "Code or your ID", "duplicate") in found
    # Solids above 100 % w/v: refused by the model's check (sphere_solids_range).
    assert any(e.row == 4 for e in report.errors)
    assert [o.row for o in report.created] == [2]


def test_units_in_header_and_cells_are_converted(maker, today):
    header = ["Material", "Diameter (µm)", "Solids (%)", "Received on"]
    content = csv_bytes([header, ["polystyrene", 0.6, 10, "2026-05-01"],
                         ["polystyrene", "450 nm", 10, "2026-05-01"]])
    report = import_sheet(kind="sphere_lots", content=content, file_name="s.csv", actor=maker,
                          commit=True)
    assert report.committed, report.errors
    # 1 µm = 1000 nm (SI prefixes).
    assert sorted(SphereLot.objects.values_list("nominal_diameter_nm", flat=True)) == \
        pytest.approx([450, 600])


def test_a_row_matching_an_existing_lot_number_is_a_change(maker, chain):
    lot = chain.s.sphere_lot_receive(actor=maker, material="polystyrene", nominal_diameter_nm=600,
                                     solids_percent_w_v=10, received_on=chain.day(5),
                                     supplier="Acme", supplier_lot="L1")
    content = csv_bytes(sphere_rows(["", "polystyrene", 600, 10, "Acme", "L1",
                                     chain.day(5).isoformat()],
                                    ["", "polystyrene", 600, 8, "Acme", "L1-b",
                                     chain.day(5).isoformat()]))
    dry = import_sheet(kind="sphere_lots", content=content, file_name="s.csv", actor=maker,
                       commit=False)
    assert [o.code for o in dry.unchanged] == [lot.code] and len(dry.created) == 1
    changed = csv_bytes(sphere_rows([lot.code, "polystyrene", 610, 10, "Acme", "L1",
                                     chain.day(5).isoformat()]))
    report = import_sheet(kind="sphere_lots", content=changed, file_name="s2.csv", actor=maker,
                          commit=True)
    assert report.committed, report.errors
    assert report.changed[0].changes == ["Nominal diameter (nm): 600.0 → 610.0"]
    lot.refresh_from_db()
    assert lot.nominal_diameter_nm == 610 and lot.version == 2


def test_parent_lot_columns_make_lineage_and_a_missing_parent_is_a_row_error(maker, chain):
    spheres = csv_bytes(sphere_rows(["PS-9", "polystyrene", 600, 10, "", "",
                                     chain.day(20).isoformat()]))
    assert import_sheet(kind="sphere_lots", content=spheres, file_name="a.csv", actor=maker,
                        commit=True).committed
    chain.release(SphereLot.objects.get())
    slides = chain.lot("base_slide")
    templates = csv_bytes([["Sphere lot", "Base slide lot", "Method", "Slide area (cm2)",
                            "Made on"],
                           ["PS-9", slides.code, "interface_transfer", 2.5,
                            chain.day(3).isoformat()],
                           ["PS-404", slides.code, "interface_transfer", 2.5,
                            chain.day(3).isoformat()]])
    report = import_sheet(kind="templates", content=templates, file_name="t.csv", actor=maker,
                          commit=True)
    assert [(e.row, e.column, e.code) for e in report.errors] == \
        [(3, "Sphere lot", "parent_missing")]
    assert TemplateAssembly.objects.count() == 0
    fixed = csv_bytes([["Sphere lot", "Base slide lot", "Method", "Slide area (cm2)",
                        "Made on"],
                       ["PS-9", slides.code, "interface_transfer", 2.5,
                        chain.day(3).isoformat()]])
    assert import_sheet(kind="templates", content=fixed, file_name="t.csv", actor=maker,
                        commit=True).committed
    template = TemplateAssembly.objects.get()
    parents = set(LineageEdge.objects.filter(child_code=template.code)
                  .values_list("parent_code", flat=True))
    assert parents == {SphereLot.objects.get().code, slides.code}


def test_reimporting_an_exported_reagent_sheet_changes_nothing(maker, chain):
    from exchange.exporting import kind_sheet
    from exchange.kinds import KINDS

    chain.s.reagent_lot_receive(actor=maker, name="Gold-coated slides", kind="base_slide",
                                received_on=chain.day(5), quantity=25, quantity_unit="slides",
                                supplier="Invented Optics", supplier_lot="GS-1")
    content = kind_sheet(KINDS["reagent_lots"], file_format="csv")
    report = import_sheet(kind="reagent_lots", content=content, file_name="r.csv", actor=maker,
                          commit=False)
    assert report.ok and len(report.unchanged) == 1 and not report.changed, report.changed


@pytest.mark.parametrize("kind, header, cell, words", [
    ("deposition_runs", "Template", "TPL-99999", "no template assembly 'TPL-99999'"),
    ("particle_attachments", "Colloid batch", "NPB-99999",
     "no nanoparticle batch 'NPB-99999'"),
])
def test_a_missing_parent_is_named_by_its_kind_in_words(chain, kind, header, cell, words):
    """The refusal names the parent's kind whole ("template assemblie" was cut from the
    plural label before)."""
    from exchange.kinds import KINDS

    spec = KINDS[kind]
    headers = [c.header for c in spec.columns]
    row = [c.example for c in spec.columns]
    row[headers.index(next(h for h in headers if h.startswith(header)))] = cell
    report = import_sheet(kind=kind, content=csv_bytes([headers, row]),
                          file_name=f"{kind}.csv", actor=chain.maker, commit=False)
    assert any(words in e.reason and e.code == "parent_missing" for e in report.errors), \
        report.errors
