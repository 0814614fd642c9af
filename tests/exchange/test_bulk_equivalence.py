"""The bulk path of the sheet import (issue 21) against the per-row path it replaces.

The per-row path runs every row through its kind's service, one savepoint per row; the bulk
path checks every row through the same check functions and then inserts the records, their
history rows and their lineage edges in batches.  For sheets with good rows, changed rows
and every kind of bad row, both must give the same report (rows, columns, reasons, codes,
counts) and, on import, the same records, history (with the sheet's file, SHA-256 and row)
and lineage.  The reference here is the per-row path of the same run, not a stored answer.
"""

from __future__ import annotations

import pytest
from django.db import transaction

from exchange.importer import import_sheet
from exchange.models import SheetKey, SheetUvVisReading
from inventory.models import CodeCounter, LineageEdge, NanoparticleBatch, ReagentLot, SphereLot

from .sheets import csv_bytes

pytestmark = pytest.mark.django_db

SKIPPED = {"id", "created_at", "updated_at", "history_id", "history_date"}


def _values(queryset, codes: dict[int, str] | None = None) -> list[dict]:
    """Every stored column but keys and clocks; a batch key as the batch's code."""
    model = queryset.model
    rows = []
    for obj in queryset:
        row = {f.attname: getattr(obj, f.attname) for f in model._meta.concrete_fields
               if f.attname not in SKIPPED}
        if "batch_id" in row and codes is not None:
            row["batch_id"] = codes[row["batch_id"]]
        rows.append(row)
    return rows


def links_and_keys() -> dict:
    """What every kind's import leaves beside its records: lineage, sheet keys, counters."""
    return {
        "lineage": list(LineageEdge.objects.order_by("child_code", "parent_code", "role")
                        .values_list("parent_code", "child_code", "role", "used_on",
                                     "created_by_id")),
        "keys": sorted(SheetKey.objects.values_list("kind", "key", "record_code")),
        "counters": sorted(CodeCounter.objects.values_list("prefix", "last_value")),
    }


def snapshot() -> dict:
    """What an import leaves behind: records, their history, lineage, links and keys."""
    batch_codes = dict(NanoparticleBatch.objects.values_list("id", "code"))
    state = {}
    for model in (SphereLot, ReagentLot, NanoparticleBatch):
        state[model.__name__] = _values(model.objects.order_by("code"))
        state[f"{model.__name__} history"] = _values(
            model.history.order_by("code", "history_type", "history_change_reason"))
    state["readings"] = _values(SheetUvVisReading.objects.order_by("batch__code", "measured_on"),
                                batch_codes)
    state["reading history"] = _values(SheetUvVisReading.history.order_by(
        "measured_on", "peak_nm", "history_type"), batch_codes)
    state["prepared from"] = sorted(
        (lot.code, parent.code) for lot in ReagentLot.objects.all()
        for parent in lot.prepared_from.all())
    state["source lots"] = sorted(
        (batch.code, lot.code) for batch in NanoparticleBatch.objects.all()
        for lot in batch.source_lots.all())
    state.update(links_and_keys())
    return state


def both_paths(kind: str, content: bytes, actor, *, commit: bool, state=None):
    """The per-row and the bulk path on the same database state, each rolled back after;
    ``state`` says what to compare (default: ``snapshot``)."""
    results = {}
    for bulk in (False, True):
        with transaction.atomic():
            report = import_sheet(kind=kind, content=content, file_name="lab sheet.csv",
                                  actor=actor, commit=commit, bulk=bulk)
            results[bulk] = (report.as_dict(), (state or snapshot)())
            transaction.set_rollback(True)
    return results[False], results[True]


def assert_same(kind, rows, actor, *, expect_errors: bool, state=snapshot):
    content = csv_bytes(rows)
    for commit in (False, True):
        per_row, bulk = both_paths(kind, content, actor, commit=commit, state=state)
        assert bulk[0] == per_row[0]
        assert bulk[1] == per_row[1]
        assert bool(per_row[0]["errors"]) == expect_errors, per_row[0]["errors"]
    return per_row


SPHERES = ["Code or your ID", "Material", "Nominal diameter (nm)", "Size CV (%)", "Solids (%)",
           "Supplier", "Supplier lot number", "Received on", "Volume (mL)"]


def sphere_rows(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="spherelot", shelf_life_days=365,
                                counted_from="received")
    for lot_number, solids in (("L1", 10), ("L2", 10)):
        chain.s.sphere_lot_receive(actor=chain.maker, material="polystyrene",
                                   nominal_diameter_nm=600, solids_percent_w_v=solids,
                                   received_on=chain.day(40), supplier="Acme",
                                   supplier_lot=lot_number)
    d = chain.day
    good = [["PS-1", "polystyrene", 600, 2.5, 10, "Acme", "N1", d(10).isoformat(), 15],
            ["PS-2", "Silica", "0.45 µm", "", 5, "Acme", "N2", d(11).isoformat(), ""],
            ["", "polystyrene", 610, "", 10, "Acme", "L1", d(40).isoformat(), ""],  # change
            ["", "polystyrene", 600, "", 10, "Acme", "L2", d(40).isoformat(), ""],  # same
            ["PS-3", "pmma", 300, 1, 2.5, "", "", d(1).isoformat(), 5]]
    bad = [["PS-4", "polystyrene", "600 furlongs", "", 10, "Acme", "B1", d(5).isoformat(), ""],
           ["PS-5", "polystyrene", 600, "", 150, "Acme", "B2", d(5).isoformat(), ""],
           ["PS-6", "polystyrene", 600, "", 10, "Acme", "B3", "2099-01-01", ""],
           ["PS-1", "polystyrene", 600, "", 10, "Acme", "B4", d(5).isoformat(), ""],
           ["PS-7", "polystyrene", 600, "", 10, "Acme", "N2", d(5).isoformat(), ""],
           ["PS-8", "", 600, "", 10, "Acme", "B5", d(5).isoformat(), ""],
           ["PS-9", "polystyrene", 5, 150, 10, "Acme", "B6", d(5).isoformat(), -1],
           ["PS-10", "glass", 600, "", 10, "Acme", "B7", "not a date", ""],
           ["PS-11", "polystyrene", "nan", "", 10, "Acme", "B8", d(5).isoformat(), ""]]
    return good, bad


def test_sphere_lots_same_report_and_records_on_both_paths(chain):
    good, bad = sphere_rows(chain)
    per_row = assert_same("sphere_lots", [SPHERES, *good], chain.maker, expect_errors=False)
    report = per_row[0]
    assert (len(report["created"]), len(report["changed"]), len(report["unchanged"])) == (3, 1, 1)
    # The source of every created record in its history: file, SHA-256 and row.
    history = per_row[1]["SphereLot history"]
    assert sum(f"lab sheet.csv (SHA-256 {report['sha256']}), row 2" in
               (h["history_change_reason"] or "") for h in history) == 1
    # Bad rows between good ones: the same errors, codes and counts on both paths.
    mixed = [SPHERES, good[0], *bad[:4], good[1], *bad[4:], good[4]]
    per_row = assert_same("sphere_lots", mixed, chain.maker, expect_errors=True)
    assert {e["row"] for e in per_row[0]["errors"]} == set(range(3, 7)) | set(range(8, 13))


REAGENTS = ["Code or your ID", "Name", "Kind", "Supplier", "Supplier lot number", "Received on",
            "Opened on", "Prepared on", "Concentration (mM)", "Prepared from (lots)"]


def reagent_rows(chain):
    stock = chain.lot("metal_salt", days_ago=30)
    rejected = chain.lot("solvent", days_ago=30, release=False)
    chain.s.record_transition(actor=None, record=rejected, to_status="rejected",
                              reason="cloudy on arrival")
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    good = [["AG-1", "Silver nitrate", "metal_salt", "Acme", "AGN-1", d(20), "", "", "", ""],
            # prepared from a lot made by the row above (same file) and from a stored lot
            ["AG-SOL", "Silver nitrate, 1 mM", "other", "", "", "", "", d(3), 1.0,
             f"AG-1; {stock.code}"],
            ["CIT-1", "Trisodium citrate", "reductant", "Acme", "CIT-1", d(15), d(10), "", "",
             ""]]
    bad = [["X-1", "No date", "solvent", "", "", "", "", "", "", ""],
           ["X-2", "Opened early", "solvent", "Acme", "OE", d(10), d(12), "", "", ""],
           ["X-3", "Bad strength", "solvent", "Acme", "BC", d(10), "", "", -5, ""],
           ["X-4", "From a rejected lot", "other", "", "", "", "", d(2), "", rejected.code],
           ["X-5", "From nowhere", "other", "", "", "", "", d(2), "", "NOPE-1"],
           ["X-6", "Banana", "banana", "Acme", "BN", d(10), "", "", "", ""],
           ["X-7", "Before its source", "other", "", "", "", "", d(40), "", stock.code]]
    return good, bad


def test_reagent_lots_same_report_records_and_lineage_on_both_paths(chain):
    good, bad = reagent_rows(chain)
    per_row = assert_same("reagent_lots", [REAGENTS, *good], chain.maker, expect_errors=False)
    lineage = per_row[1]["lineage"]
    assert len([edge for edge in lineage if edge[2] == "prepared from"]) == 2
    mixed = [REAGENTS, good[0], *bad[:3], good[1], *bad[3:], good[2]]
    per_row = assert_same("reagent_lots", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in per_row[0]["errors"]} >= {"no_date", "date_order",
                                                         "input_unusable", "parent_missing"}


COLLOIDS = ["Code or your ID", "Metal", "Synthesis", "Volume made (mL)", "Made on",
            "UV-vis measured on", "UV-vis peak (nm)", "Absorbance at peak",
            "Absorbance at 450 nm", "UV-vis dilution factor", "Reagent lots used"]


def colloid_rows(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="nanoparticlebatch", shelf_life_days=30,
                                counted_from="made")
    salt = chain.lot("metal_salt", days_ago=30)
    old = chain.lot("reductant", days_ago=60)
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot", reagent_kind="reductant",
                                shelf_life_days=20, counted_from="received")
    stored = chain.batch(days_ago=5)
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    good = [["AG-7", "Ag", "citrate", 100, d(4), d(4), 404, 0.9, 0.4, 10, salt.code],
            ["AU-7", "gold", "citrate", 100, d(4), d(4), 520, 0.32, 0.20, 5, ""],
            ["AG-8", "Ag", "borohydride", 50, d(3), "", "", "", "", "", ""],
            # the stored batch, now with a reading: a change
            [stored.code, "Ag", "citrate", 50, d(5), d(2), 400, 0.8, "", 1, ""]]
    bad = [["AU-8", "Au", "citrate", 100, d(4), d(4), 520, 0.32, "", 5, ""],
           ["AG-9", "Ag", "citrate", 100, d(4), "", 404, 0.9, "", 1, ""],
           ["AG-10", "Ag", "citrate", 100, d(4), d(4), 1500, 0.9, "", 1, ""],
           ["AG-11", "Ag", "citrate", 100, d(4), "", "", "", "", "", old.code],
           ["AG-12", "Ag", "citrate", -3, d(4), "", "", "", "", "", ""],
           ["AG-13", "Ag", "citrate", 100, "2099-01-01", "", "", "", "", "", ""],
           ["AG-14", "Ag", "citrate", 100, d(4), d(4), 404, -0.2, "", 1, ""]]
    return good, bad


def test_colloid_batches_same_report_readings_and_lineage_on_both_paths(chain):
    good, bad = colloid_rows(chain)
    per_row = assert_same("colloid_batches", [COLLOIDS, *good], chain.maker,
                          expect_errors=False)
    assert len(per_row[1]["readings"]) == 3 and len(per_row[0]["changed"]) == 1
    mixed = [COLLOIDS, good[0], *bad[:3], good[1], *bad[3:], good[2], good[3]]
    per_row = assert_same("colloid_batches", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in per_row[0]["errors"]} >= {"required", "input_expired",
                                                         "out_of_range", "future_date"}


def test_a_code_counter_behind_the_records_gives_the_per_row_answer(chain):
    """A counter set back (a restored backup) hands out a code a record holds: the bulk path
    falls back to the per-row path, whose unique check names the row."""
    good, _bad = sphere_rows(chain)
    CodeCounter.objects.filter(prefix="SPH").update(last_value=1)
    per_row = assert_same("sphere_lots", [SPHERES, *good], chain.maker, expect_errors=True)
    assert {(e["row"], e["column"], e["code"]) for e in per_row[0]["errors"]} == \
        {(2, "Code or your ID", "unique")}


def test_the_bulk_path_writes_many_rows_in_few_queries(chain, django_assert_max_num_queries):
    """Not a fallback in disguise: 120 new reagent lots, each naming a stored parent, cost a
    few dozen queries (the per-row path spends several per row)."""
    stock = chain.lot("metal_salt", days_ago=30)
    d = chain.day(3).isoformat()
    rows = [[f"SOL-{n}", f"Solution {n}", "other", "", "", "", "", d, 1.0, stock.code]
            for n in range(120)]
    with django_assert_max_num_queries(60):
        report = import_sheet(kind="reagent_lots", content=csv_bytes([REAGENTS, *rows]),
                              file_name="many.csv", actor=chain.maker, commit=True)
    assert report.committed and len(report.created) == 120
    assert LineageEdge.objects.filter(parent_code=stock.code, role="prepared from").count() \
        == 120
