"""Round trip: export every kind, import the files into an empty database, same records.

The first lab is built through the services and exported; its transaction is then rolled
back (an empty database again) and the files are imported kind by kind, as a lab moving to
a new site would, releasing templates before plating through them.  Codes may differ, so
both sides are compared after mapping old codes to new ones (the importer's sheet keys).
"""

from __future__ import annotations

import re

import pytest
from django.db import transaction

from exchange import services as exchange_services
from exchange.exporting import kind_sheet
from exchange.importer import import_sheet
from exchange.kinds import KINDS, export_rows
from exchange.models import SheetKey
from inventory.models import LineageEdge, Substrate, TemplateAssembly

pytestmark = pytest.mark.django_db

ORDER = ["reagent_lots", "sphere_lots", "templates", "deposition_runs", "substrates",
         "colloid_batches", "linker_layers", "particle_attachments", "qc_results"]
CODE = re.compile(r"\b[A-Z]{2,4}-\d{5}\b")


def build_lab(chain):
    s = chain.s
    silver = chain.lot("metal_salt", supplier="Invented Fine Chemicals", supplier_lot="AGN-1")
    citrate = chain.lot("stabiliser", supplier_lot="CIT-1")
    chain.s.reagent_lot_receive(actor=chain.maker, name="Citrate 1 % solution",
                                kind="stabiliser", prepared_on=chain.day(20),
                                prepared_from=[citrate], concentration_mM=34.0)
    purchased = chain.lot("purchased_substrate", supplier_lot="PUR-7")
    s.substrate_receive(actor=chain.maker, purchased_lot=purchased, pieces=2,
                        received_on=chain.day(15))
    run, pieces = chain.run(pieces=3, days_ago=9)
    s.deposition_run_record(actor=chain.maker, base_slide_lot=chain.lot("base_slide"),
                            bath_lot=chain.lot("plating_bath"), metal="Ag",
                            electrons_per_atom=1, mode="galvanostatic", setpoint_current_mA=0.5,
                            electrode_area_cm2=1.0, made_on=chain.day(8), pieces=1,
                            piece_area_cm2=0.5)
    batch = chain.batch(days_ago=6, sources=[silver, citrate])
    exchange_services.sheet_uvvis_reading_record(
        actor=chain.maker, batch=batch, measured_on=chain.day(6), peak_nm=404.0,
        peak_absorbance=0.95, absorbance_450=0.41, dilution_factor=10, path_length_cm=1.0,
        source="typed")
    s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                         solvent_lot=chain.lot("solvent"), substrates=pieces[:2],
                         concentration_mM=1.0, immersion_h=18, made_on=chain.day(5))
    s.particle_attach(actor=chain.maker, substrate=Substrate.objects.get(pk=pieces[0].pk),
                      batch=batch, immersion_min=60, made_on=chain.day(4))
    exchange_services.imported_qc_result_record(
        actor=chain.maker, substrate=pieces[0], measured_on=chain.day(3), verdict="passed",
        enhancement_factor=2.1e6, rsd_percent=8.5, analyte="Benzenethiol", laser_nm=785,
        source="typed")


def edges():
    return {(e.parent_code, e.child_code, e.role, e.used_on)
            for e in LineageEdge.objects.all()}


def snapshot():
    return {name: sorted(map(repr, export_rows(kind))) for name, kind in KINDS.items()}


def test_export_every_kind_then_import_into_an_empty_database(chain, maker):
    with transaction.atomic():
        build_lab(chain)
        files = {name: kind_sheet(KINDS[name], file_format="xlsx") for name in ORDER}
        before, before_edges = snapshot(), edges()
        transaction.set_rollback(True)
    assert not LineageEdge.objects.exists() and not Substrate.objects.exists()

    for name in ORDER:
        if name == "deposition_runs":
            for template in TemplateAssembly.objects.all():
                chain.signed_release(template)
        report = import_sheet(kind=name, content=files[name], file_name=f"{name}.xlsx",
                              actor=maker, commit=True)
        assert report.committed, (name, report.errors)
    new_code = dict(SheetKey.objects.values_list("key", "record_code"))

    def mapped(text):
        return CODE.sub(lambda m: new_code.get(m.group(0), m.group(0)), text)

    after = snapshot()
    for name in KINDS:
        assert sorted(mapped(row) for row in before[name]) == after[name], name
    assert {(mapped(p), mapped(c), role, day) for p, c, role, day in before_edges} \
        == edges() - {e for e in edges() if e[2] == "signed"}
    assert len(after["substrates"]) == 6 and len(after["qc_results"]) == 1


def test_an_export_reads_a_fixed_number_of_queries_whatever_the_lab_s_size(chain):
    """Each kind's sheet is read in a fixed number of queries (its parents joined or
    prefetched), not a few per record: a lab of ten thousand runs exports in seconds."""
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    def queries_per_kind() -> dict[str, int]:
        counts = {}
        for name, kind in KINDS.items():
            with CaptureQueriesContext(connection) as captured:
                export_rows(kind)
            counts[name] = len(captured)
        return counts

    build_lab(chain)
    once = queries_per_kind()
    build_lab(chain)
    build_lab(chain)
    assert queries_per_kind() == once
    assert max(once.values()) <= 8
