"""The bulk path of the sheet import against the per-row path, for templates, purchased
substrates and historical QC results (issue 21).

As in test_bulk_equivalence: for sheets with good rows, changed rows and every kind of bad
row (parent missing, not usable, expired, voided, of the wrong kind, a future date, a number
out of range, a duplicate), both paths must give the same report and, on import, the same
records, history rows (with the sheet's file, SHA-256 and row), lineage, keys and codes.
The reference is the per-row path of the same run, not a stored answer.
"""

from __future__ import annotations

import pytest
from django.db.models import ForeignKey

from exchange.importer import import_sheet
from exchange.models import ImportedQcResult
from inventory.models import Substrate, TemplateAssembly

from .sheets import csv_bytes
from .test_bulk_equivalence import assert_same as assert_same_as_per_row
from .test_bulk_equivalence import links_and_keys

pytestmark = pytest.mark.django_db

SKIPPED = {"id", "created_at", "updated_at", "history_id", "history_date"}


def _values(queryset) -> list[dict]:
    """Every stored column but keys and clocks; a key to a coded record as its code (keys
    differ between two rolled-back runs on PostgreSQL, codes do not)."""
    rows = []
    for obj in queryset:
        row = {}
        for f in type(obj)._meta.concrete_fields:
            if f.attname in SKIPPED:
                continue
            value = getattr(obj, f.attname)
            related = f.related_model if isinstance(f, ForeignKey) else None
            if value is not None and related is not None and hasattr(related, "code"):
                value = related.objects.filter(pk=value).values_list("code", flat=True).get()
            row[f.attname] = value
        rows.append(row)
    return rows


def snapshot() -> dict:
    """What an import leaves behind: records, their history, lineage and keys, and codes."""
    state = {}
    for model in (TemplateAssembly, Substrate):
        state[model.__name__] = _values(model.objects.order_by("code"))
        state[f"{model.__name__} history"] = _values(model.history.order_by(
            "code", "history_type", "version", "history_change_reason"))
    order = ("substrate__code", "measured_on", "analyte", "enhancement_factor")
    state["qc results"] = _values(ImportedQcResult.objects.order_by(*order))
    state["qc result history"] = _values(ImportedQcResult.history.order_by(
        "measured_on", "analyte", "enhancement_factor", "history_type"))
    state.update(links_and_keys())
    return state


def assert_same(kind, rows, actor, *, expect_errors: bool):
    return assert_same_as_per_row(kind, rows, actor, expect_errors=expect_errors,
                                  state=snapshot)


def rejected(chain, record):
    return chain.s.record_transition(actor=None, record=record, to_status="rejected",
                                     reason="failed incoming inspection")


def voided(chain, record):
    return chain.s.record_void(actor=chain.reviewer, record=record, reason="entered twice")


TEMPLATES = ["Code or your ID", "Sphere lot", "Base slide lot", "Method", "Slide area (cm²)",
             "Coverage (%)", "Made on", "Notes"]


def template_rows(chain):
    spheres, other_spheres = chain.spheres(days_ago=60), chain.spheres(days_ago=30,
                                                                       diameter_nm=400)
    slides = chain.lot("base_slide", days_ago=40)
    stored = chain.template(spheres=spheres, slides=slides, days_ago=20)
    unchanged = chain.template(spheres=spheres, slides=slides, days_ago=19)
    bad_spheres = rejected(chain, chain.spheres(days_ago=30, release=False))
    void_slides = voided(chain, chain.lot("base_slide", days_ago=30))
    bath = chain.lot("plating_bath", days_ago=30)
    chain.s.shelf_life_rule_set(actor=None, record_kind="spherelot", shelf_life_days=45,
                                counted_from="received")
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    s, o, b = spheres.code, other_spheres.code, slides.code
    good = [["T-1", o, b, "interface_transfer", 2.5, 92, d(5), "first"],
            ["T-2", o, b, "spin_coating", 1.0, "", d(4), ""],
            # stored templates by code: one with a new coverage (a change), one the same
            [stored.code, s, b, "interface_transfer", 2.0, 80, d(20), ""],
            [unchanged.code, s, b, "interface_transfer", 2.0, "", d(19), ""],
            ["T-3", o, b, "drop_casting", "25 mm²", 50, d(3), ""]]
    bad = [["T-4", "SPH-99999", b, "interface_transfer", 2.5, "", d(5), ""],  # missing
           ["T-5", bad_spheres.code, b, "interface_transfer", 2.5, "", d(5), ""],  # rejected
           ["T-6", s, b, "interface_transfer", 2.5, "", d(2), ""],  # spheres expired
           ["T-7", o, void_slides.code, "interface_transfer", 2.5, "", d(5), ""],  # voided
           ["T-8", o, bath.code, "interface_transfer", 2.5, "", d(5), ""],  # wrong kind
           ["T-9", o, b, "interface_transfer", 2.5, "", "2099-01-01", ""],  # future
           ["T-10", o, b, "interface_transfer", -2, "", d(5), ""],  # out of range
           ["T-11", o, b, "interface_transfer", 2.5, 150, d(5), ""],  # out of range
           ["T-1", o, b, "interface_transfer", 2.5, "", d(5), ""],  # duplicate ID
           ["T-12", o, b, "levitation", 2.5, "", d(5), ""]]  # not a method
    return good, bad


def test_templates_same_report_records_and_lineage_on_both_paths(chain):
    good, bad = template_rows(chain)
    per_row = assert_same("templates", [TEMPLATES, *good], chain.maker, expect_errors=False)
    report, state = per_row
    assert (len(report["created"]), len(report["changed"]), len(report["unchanged"])) == \
        (3, 1, 1)
    made = {row["code"] for row in report["created"]}
    assert {(edge[1], edge[2]) for edge in state["lineage"] if edge[1] in made} == \
        {(code, role) for code in made for role in ("spheres", "base slide")}
    assert sum(f"lab sheet.csv (SHA-256 {report['sha256']}), row 2" in
               (h["history_change_reason"] or "") for h in state["TemplateAssembly history"]) \
        == 1
    mixed = [TEMPLATES, good[0], *bad[:5], good[1], *bad[5:], good[2], good[4]]
    per_row = assert_same("templates", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in per_row[0]["errors"]} >= {
        "parent_missing", "input_unusable", "input_expired", "input_voided",
        "wrong_reagent_kind", "future_date", "out_of_range", "duplicate"}
    assert len(per_row[0]["errors"]) == len(bad)


SUBSTRATES = ["Code or your ID", "Deposition run", "Piece", "Purchased substrate lot",
              "Made or received on", "Area (cm²)", "Notes"]


def substrate_rows(chain):
    purchased = chain.lot("purchased_substrate", days_ago=40)
    expiring = chain.lot("purchased_substrate", days_ago=40)
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot",
                                reagent_kind="purchased_substrate", shelf_life_days=90,
                                counted_from="received")
    chain.s.record_amend(actor=chain.maker, record=expiring, reason="short-dated lot",
                         changes={"received_on": chain.day(100)},
                         expected_version=expiring.version)
    bad_lot = rejected(chain, chain.lot("purchased_substrate", days_ago=30, release=False))
    void_lot = voided(chain, chain.lot("purchased_substrate", days_ago=30))
    bath = chain.lot("plating_bath", days_ago=30)
    run, _pieces = chain.run(pieces=2, days_ago=9)
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    p = purchased.code
    good = [["P-1", "", f"{p}/1", p, d(20), 1.0, "diced"],
            ["P-2", "", "7", p, d(20), "", ""],
            ["P-3", "", "", p, d(19), "50 mm²", "no number"],
            # the run's pieces: found, one with a new area (a change), one the same
            ["", run.code, f"{run.code}/1", "", d(9), 0.25, ""],
            ["", run.code, "2", "", d(9), "", ""]]
    bad = [["P-4", "", "1", "RGT-99999", d(20), "", ""],  # missing
           ["P-5", "", "1", bad_lot.code, d(20), "", ""],  # rejected
           ["P-6", "", "1", expiring.code, d(2), "", ""],  # lot expired
           ["P-7", "", "1", void_lot.code, d(20), "", ""],  # voided
           ["P-8", "", "1", bath.code, d(20), "", ""],  # wrong kind
           ["P-9", "", "1", p, d(-5), "", ""],  # future (the lot not yet expired then)
           ["P-10", "", "1", p, d(20), -1, ""],  # out of range
           ["P-1", "", "2", p, d(20), "", ""],  # duplicate ID
           ["P-11", "", "1", "", d(20), "", ""],  # neither run nor lot
           ["", run.code, "9", "", d(9), "", ""]]  # the run has no piece 9
    return good, bad


def test_purchased_substrates_same_report_records_and_lineage_on_both_paths(chain):
    good, bad = substrate_rows(chain)
    per_row = assert_same("substrates", [SUBSTRATES, *good], chain.maker, expect_errors=False)
    report, state = per_row
    assert (len(report["created"]), len(report["changed"]), len(report["unchanged"])) == \
        (3, 1, 1)
    made = {row["code"] for row in report["created"]}
    pieces = {row["code"]: row for row in state["Substrate"] if row["code"] in made}
    lot = good[0][3]
    assert sorted(row["piece_label"] for row in pieces.values()) == \
        [f"{lot}/1", f"{lot}/1", f"{lot}/7"]
    assert {row["notes"]: row["area_cm2"] for row in pieces.values()} == \
        {"diced": 1.0, "": None, "no number": pytest.approx(0.5)}
    assert {(edge[0], edge[1], edge[2]) for edge in state["lineage"] if edge[1] in made} == \
        {(lot, code, "supplied as") for code in made}
    # One history row for each new piece: the piece is built whole, not made then amended.
    assert sorted(h["code"] for h in state["Substrate history"] if h["code"] in made) == \
        sorted(made)
    mixed = [SUBSTRATES, good[0], *bad[:5], good[1], *bad[5:], good[2], good[3], good[4]]
    per_row = assert_same("substrates", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in per_row[0]["errors"]} >= {
        "parent_missing", "input_unusable", "input_expired", "input_voided",
        "wrong_reagent_kind", "future_date", "out_of_range", "duplicate", "required"}
    assert len(per_row[0]["errors"]) == len(bad)


QC = ["Substrate", "Measured on", "Enhancement factor", "RSD (%)", "Verdict", "Analyte",
      "Laser wavelength (nm)", "Notes"]


def qc_rows(chain):
    _run, (first, second) = chain.run(pieces=2, days_ago=9)
    void_piece = voided(chain, chain.run(pieces=1, days_ago=8)[1][0])
    from exchange.services import imported_qc_result_record

    imported_qc_result_record(actor=chain.maker, substrate=first, measured_on=chain.day(6),
                              verdict="passed", enhancement_factor=1e6, analyte="BT",
                              source="typed")
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    a, b = first.code, second.code
    good = [[a, d(5), 2.1e6, 8.5, "passed", "Benzenethiol", 785, ""],
            [b, d(5), "", 12, "fail", "Benzenethiol", "", "hot spot"],
            [b, d(4), 3e5, "", "passed", "", "633", ""],
            [a, d(6), 1e6, "", "passed", "BT", "", ""],  # the stored result, the same
            [a, d(5), 2.1e6, 8.5, "passed", "Benzenethiol", 785, ""]]  # a row above, same
    bad = [["SUB-99999", d(5), 1e6, "", "passed", "", "", ""],  # missing
           [void_piece.code, d(5), 1e6, "", "passed", "", "", ""],  # voided
           [a, "2099-01-01", 1e6, "", "passed", "", "", ""],  # future
           [a, d(20), 1e6, "", "passed", "", "", ""],  # before the piece was made
           [a, d(3), 0.5, "", "passed", "", "", ""],  # out of range
           [a, d(3), "", 2000, "passed", "", "", ""],  # out of range
           [a, d(3), 1e6, "", "passed", "", 5000, ""],  # out of range
           [a, d(3), "", "", "passed", "", "", ""],  # neither EF nor RSD
           [a, d(3), 1e6, "", "maybe", "", "", ""],  # not a verdict
           [a, d(6), 5e6, "", "passed", "BT", "", ""],  # the stored result, other figures
           [b, d(5), "", 14, "failed", "Benzenethiol", "", ""]]  # a row above, other RSD
    return good, bad


def test_qc_results_same_report_and_records_on_both_paths(chain):
    good, bad = qc_rows(chain)
    per_row = assert_same("qc_results", [QC, *good], chain.maker, expect_errors=False)
    report, state = per_row
    assert (len(report["created"]), len(report["changed"]), len(report["unchanged"])) == \
        (3, 0, 2)
    assert len(state["qc results"]) == 4
    assert sum(f"lab sheet.csv (SHA-256 {report['sha256']}), row 3" in
               (h["history_change_reason"] or "") for h in state["qc result history"]) == 1
    mixed = [QC, good[0], *bad[:4], good[1], *bad[4:], good[2], good[3]]
    per_row = assert_same("qc_results", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in per_row[0]["errors"]} >= {
        "parent_missing", "voided", "future_date", "date_order", "out_of_range", "required",
        "not_amendable"}
    assert len(per_row[0]["errors"]) == len(bad)


def test_qc_results_find_stored_results_in_one_read(chain, django_assert_max_num_queries):
    """The rows' existing results are read once per import, not once per row."""
    _run, pieces = chain.run(pieces=40, days_ago=9)
    d = chain.day(5).isoformat()
    rows = [[piece.code, d, 1e6 + n, "", "passed", "BT", "", ""]
            for n, piece in enumerate(pieces)]
    with django_assert_max_num_queries(40):
        report = import_sheet(kind="qc_results", content=csv_bytes([QC, *rows]),
                              file_name="qc.csv", actor=chain.maker, commit=True)
    assert report.committed and len(report.created) == 40


@pytest.mark.parametrize("bulk", [False, True])
def test_a_stored_qc_result_given_other_figures_is_refused_not_a_crash(chain, bulk):
    """Regression: an imported result declares no amendable fields, and a row changing one
    raised AttributeError (a 500) instead of the refusal that names the column."""
    good, _bad = qc_rows(chain)
    stored = good[3]
    report = import_sheet(kind="qc_results", file_name="qc.csv", actor=chain.maker,
                          content=csv_bytes([QC, [*stored[:2], 5e6, *stored[3:]]]),
                          commit=True, bulk=bulk)
    assert [(e.row, e.column, e.code) for e in report.errors] == \
        [(2, "Enhancement factor", "not_amendable")]
    assert ImportedQcResult.objects.get().enhancement_factor == 1e6


def test_templates_and_pieces_bulk_path_costs_few_queries(chain, django_assert_max_num_queries):
    """120 new templates (and 120 purchased pieces), each naming stored parents, in a few
    dozen queries: the parents read once under a lock, not looked up again per row (Django's
    field check asks the table once per foreign key and record)."""
    spheres, slides = chain.spheres(days_ago=30), chain.lot("base_slide", days_ago=30)
    purchased = chain.lot("purchased_substrate", days_ago=30)
    d = chain.day(3).isoformat()
    sheets = {
        "templates": [TEMPLATES, *([f"T-{n}", spheres.code, slides.code, "spin_coating", 1.0,
                                    "", d, ""] for n in range(120))],
        "substrates": [SUBSTRATES, *([f"P-{n}", "", str(n + 1), purchased.code, d, 0.5, ""]
                                     for n in range(120))]}
    for kind, rows in sheets.items():
        with django_assert_max_num_queries(60):
            report = import_sheet(kind=kind, content=csv_bytes(rows), file_name="many.csv",
                                  actor=chain.maker, commit=True)
        assert report.committed and len(report.created) == 120
