"""The bulk path of linker layers and particle attachments against the per-row path.

These steps change stored records: each moves its substrates to the next stage (a new
version, a history row naming the step and the sheet's row) and adds lineage edges from the
step to them.  Both paths must give the same report and leave the same layers, attachments,
substrates (stage, version, history), links, lineage, keys and code counters, for good rows,
rows naming stored records, and each kind of bad row; a substrate named by two rows of one
sheet must meet the second row at the stage the first gave it, as one row at a time does.
The reference is the per-row path of the same run, not a stored answer.
"""

from __future__ import annotations

import pytest

from exchange.importer import import_sheet
from inventory.models import (
    LinkerLayer,
    ParticleAttachment,
    Substrate,
)

from .sheets import csv_bytes
from .test_bulk_equivalence import _values, both_paths, links_and_keys

pytestmark = pytest.mark.django_db

LINKERS = ["Code or your ID", "Linker lot", "Solvent lot", "Substrates", "Concentration (mM)",
           "Immersion (h)", "Made on", "Notes"]
ATTACHMENTS = ["Code or your ID", "Substrate", "Colloid batch", "Immersion (min)", "Made on",
               "Notes"]


def snapshot() -> dict:
    """What an import leaves behind: the steps, the substrates they moved, their history,
    the layer-substrate links, lineage, keys and counters."""
    state = {}
    for model in (LinkerLayer, ParticleAttachment, Substrate):
        state[model.__name__] = _values(model.objects.order_by("code"))
        state[f"{model.__name__} history"] = _values(
            model.history.order_by("code", "version", "history_type", "history_change_reason"))
    state["layer substrates"] = sorted(
        (layer.code, substrate.code) for layer in LinkerLayer.objects.all()
        for substrate in layer.substrates.all())
    state.update(links_and_keys())
    return state


def assert_same(kind: str, rows: list[list], actor, *, expect_errors: bool):
    """Dry run and import by both paths on the same database state, each rolled back."""
    content = csv_bytes(rows)
    for commit in (False, True):
        per_row, bulk = both_paths(kind, content, actor, commit=commit, state=snapshot)
        assert bulk[0] == per_row[0]
        assert bulk[1] == per_row[1]
        assert bool(per_row[0]["errors"]) == expect_errors, per_row[0]["errors"]
    return per_row


def _unusable_lots(chain, kind: str) -> dict:
    """A voided, a rejected and (under a short shelf life) an expired lot of ``kind``."""
    voided = chain.lot(kind, days_ago=20)
    chain.s.record_void(actor=chain.reviewer, record=voided, reason="entered twice")
    rejected = chain.lot(kind, days_ago=20, release=False)
    chain.s.record_transition(actor=None, record=rejected, to_status="rejected",
                              reason="cloudy on arrival")
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot", reagent_kind=kind,
                                shelf_life_days=30, counted_from="received")
    expired = chain.lot(kind, days_ago=40)
    return {"voided": voided, "rejected": rejected, "expired": expired}


def linker_rows(chain):
    linker = chain.lot("linker_thiol", days_ago=20)
    solvent = chain.lot("solvent", days_ago=20)
    bath = chain.lot("plating_bath", days_ago=20)
    unusable = _unusable_lots(chain, "linker_thiol")
    _run, pieces = chain.run(pieces=5, days_ago=9)
    a, b, c, d_, e = (piece.code for piece in pieces)
    _run, (late,) = chain.run(pieces=1, days_ago=1)  # made after the bad row's day
    decorated = chain.decorated_substrate()  # already carries particles
    voided_piece = pieces[4]
    chain.s.record_void(actor=chain.reviewer, record=voided_piece, reason="dropped")
    stored = chain.s.linker_layer_apply(actor=chain.maker, linker_lot=linker,
                                        substrates=[pieces[3]], concentration_mM=1,
                                        immersion_h=12, made_on=chain.day(8))
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    good = [["LL-1", linker.code, solvent.code, f"{a}; {b}", 1.0, 18, d(6), "two pieces"],
            ["LL-2", linker.code, "", c, 2, 12, d(6), ""],
            # a piece a row above moved: this row meets it at the linker stage
            ["LL-3", linker.code, "", a, 0.5, 6, d(5), "again"],
            # a stored layer by its code: one change (immersion), then the same again
            [stored.code, linker.code, "", d_, 1, 14, d(8), ""],
            ["", linker.code, "", f"{b}, {c}", 1, 1, d(4), ""]]
    bad = [["X-1", unusable["expired"].code, "", a, 1, 1, d(3), ""],
           ["X-2", unusable["voided"].code, "", a, 1, 1, d(3), ""],
           ["X-3", unusable["rejected"].code, "", a, 1, 1, d(3), ""],
           ["X-4", bath.code, "", a, 1, 1, d(3), ""],  # not a linker
           ["X-5", linker.code, bath.code, a, 1, 1, d(3), ""],  # not a solvent
           ["X-6", linker.code, "", a, 1, 1, "2099-01-01", ""],
           ["X-7", linker.code, "", a, -1, 1, d(3), ""],
           ["X-8", linker.code, "", a, 1, 1e9, d(3), ""],
           ["X-9", linker.code, "", f"{a}; {late.code}", 1, 1, d(3), ""],
           ["X-10", linker.code, "", decorated.code, 1, 1, d(0), ""],
           ["X-11", linker.code, "", f"{b}; {b}", 1, 1, d(3), ""],
           ["X-12", linker.code, "", voided_piece.code, 1, 1, d(3), ""],
           ["X-13", linker.code, "", "SUB-99999", 1, 1, d(3), ""]]
    return good, bad


def test_linker_layers_same_report_records_stages_and_lineage_on_both_paths(chain):
    good, bad = linker_rows(chain)
    per_row = assert_same("linker_layers", [LINKERS, *good], chain.maker, expect_errors=False)
    report, state = per_row
    assert (len(report["created"]), len(report["changed"])) == (4, 1)
    # Piece a: two layers, two new versions, each history row with the sheet's row.
    a = good[0][3].split(";")[0]
    history = [h for h in state["Substrate history"] if h["code"] == a]
    reasons = [h["history_change_reason"] or "" for h in history]
    assert [h["stage"] for h in history][-2:] == ["linker", "linker"]
    assert sum("lab sheet.csv (SHA-256" in r and "row 2: linker layer LNK-" in r
               for r in reasons) == 1
    assert sum("row 4: linker layer LNK-" in r for r in reasons) == 1
    assert len([e for e in state["lineage"] if e[2] == "linker layer"]) == 2 + 6  # stored: 2
    mixed = [LINKERS, good[0], *bad[:6], good[1], good[2], *bad[6:], good[3], good[4]]
    report, _state = assert_same("linker_layers", mixed, chain.maker, expect_errors=True)
    assert {e["code"] for e in report["errors"]} == {
        "input_expired", "input_voided", "input_unusable", "wrong_reagent_kind",
        "future_date", "out_of_range", "date_order", "wrong_stage", "duplicate",
        "parent_missing"}
    assert len(report["errors"]) == len(bad)


def attachment_rows(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="nanoparticlebatch", shelf_life_days=10,
                                counted_from="made")
    colloid = chain.batch(days_ago=3)
    old = chain.batch(days_ago=20)
    young = chain.batch(days_ago=1)
    voided = chain.batch(days_ago=3)
    chain.s.record_void(actor=chain.reviewer, record=voided, reason="mislabelled")
    rejected = chain.batch(days_ago=3, release=False)
    chain.s.record_transition(actor=None, record=rejected, to_status="rejected",
                              reason="aggregated")
    _run, pieces = chain.run(pieces=5, days_ago=9)
    chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                               substrates=pieces[:4], concentration_mM=1, immersion_h=12,
                               made_on=chain.day(6))
    x, y, z, w, bare = (piece.code for piece in pieces)
    _run, (late,) = chain.run(pieces=1, days_ago=1)
    stored = chain.s.particle_attach(actor=chain.maker, substrate=Substrate.objects.get(code=w),
                                     batch=colloid, immersion_min=30, made_on=chain.day(2))
    d = lambda n: chain.day(n).isoformat()  # noqa: E731
    good = [["PA-1", x, colloid.code, 30, d(2), "first"],
            ["PA-2", y, colloid.code, "1.5 h", d(1), ""],
            [stored.code, w, colloid.code, 30, d(2), ""],  # stored, the same: unchanged
            [stored.code.lower(), w, colloid.code, 40, d(2), ""]]  # the same, now changed
    bad = [["X-1", x, colloid.code, 30, d(1), ""],  # x got particles in PA-1's row
           ["X-2", bare, colloid.code, 30, d(1), ""],  # no linker layer yet
           ["X-3", late.code, colloid.code, 30, d(2), ""],  # made after the step
           ["X-4", z, young.code, 30, d(2), ""],  # colloid made after the step
           ["X-5", z, old.code, 30, d(1), ""],
           ["X-6", z, voided.code, 30, d(1), ""],
           ["X-7", z, rejected.code, 30, d(1), ""],
           ["X-8", z, colloid.code, 30, "2099-01-01", ""],
           ["X-9", z, colloid.code, -5, d(1), ""],
           ["X-10", z, "NPB-99999", 30, d(1), ""]]
    return good, bad


def test_particle_attachments_same_report_records_stages_and_lineage_on_both_paths(chain):
    good, bad = attachment_rows(chain)
    per_row = assert_same("particle_attachments", [ATTACHMENTS, *good[:2]], chain.maker,
                          expect_errors=False)
    report, state = per_row
    assert len(report["created"]) == 2
    stages = {s["code"]: s["stage"] for s in state["Substrate"]}
    assert stages[good[0][1]] == stages[good[1][1]] == "particles"
    assert len([e for e in state["lineage"] if e[2] == "particles"]) == 3
    mixed = [ATTACHMENTS, good[0], *bad[:5], good[1], *bad[5:], good[2], good[3]]
    report, state = assert_same("particle_attachments", mixed, chain.maker,
                                expect_errors=True)
    assert {e["code"] for e in report["errors"]} == {
        "wrong_stage", "date_order", "input_expired", "input_voided", "input_unusable",
        "future_date", "out_of_range", "parent_missing"}
    assert len(report["errors"]) == len(bad)
    second = next(e for e in report["errors"] if e["row"] == 3)
    assert "stage: Film with bound particles" in second["reason"]


def test_a_sheet_of_steps_is_written_in_few_queries(chain, django_assert_max_num_queries):
    """Not a fallback in disguise: 60 attachments on 60 pieces cost a few dozen queries."""
    colloid = chain.batch(days_ago=3)
    _run, pieces = chain.run(pieces=60, days_ago=9)
    chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                               substrates=pieces, concentration_mM=1, immersion_h=12,
                               made_on=chain.day(6))
    d = chain.day(2).isoformat()
    rows = [[f"PA-{n}", piece.code, colloid.code, 30, d, ""] for n, piece in enumerate(pieces)]
    with django_assert_max_num_queries(60):
        report = import_sheet(kind="particle_attachments",
                              content=csv_bytes([ATTACHMENTS, *rows]), file_name="many.csv",
                              actor=chain.maker, commit=True)
    assert report.committed and len(report.created) == 60
    assert set(Substrate.objects.filter(pk__in=[p.pk for p in pieces])
               .values_list("stage", flat=True)) == {"particles"}
