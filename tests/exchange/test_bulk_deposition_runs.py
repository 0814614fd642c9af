"""Deposition runs on the bulk path of the sheet import (issue 21) against the per-row path.

A run row makes more than one record: the run, the pieces cut from it, the template it
consumes (a new version and a status change), with a charge the figures that follow from it
(a second save of the run, so two history rows) and, off target, flags on the run and each
piece.  The bulk path checks each row through ``deposition_run_check`` and writes all rows
at the end; for good rows, changed rows and every kind of bad row it must give the report
and leave the records, history (with the sheet's file, SHA-256 and row), lineage, status
changes, codes and piece labels the per-row path leaves.  The reference is the per-row path
of the same run, not a stored answer.
"""

from __future__ import annotations

import pytest
from django.db import transaction

from exchange.importer import import_sheet
from inventory.models import (
    DepositionRun,
    Flag,
    StatusChange,
    Substrate,
    TemplateAssembly,
)

from .sheets import csv_bytes
from .test_bulk_equivalence import _values, links_and_keys

pytestmark = pytest.mark.django_db

HEADER = ["Code or your ID", "Template", "Base slide lot (flat film)", "Plating bath lot",
          "Metal", "Electrons per atom", "Mode", "Electrode area (cm²)", "Target h/D",
          "Charge (C)", "Made on", "Pieces cut", "Piece area (cm²)"]


def _run_codes(model, rows: list[dict]) -> list[dict]:
    """A piece's run as the run's code (keys may differ between the two paths' inserts)."""
    codes = dict(DepositionRun.objects.values_list("id", "code"))
    for row in rows:
        if row.get("deposition_run_id") is not None:
            row["deposition_run_id"] = codes.get(row["deposition_run_id"], "a run not kept")
    return rows


def snapshot() -> dict:
    """What a run sheet leaves: runs, pieces, templates, flags with their history; lineage,
    status changes, the lab's keys and the code counters."""
    state = {}
    for model in (DepositionRun, Substrate, TemplateAssembly, Flag):
        state[model.__name__] = _run_codes(model, _values(model.objects.order_by("code")))
        state[f"{model.__name__} history"] = _run_codes(model, _values(model.history.order_by(
            "code", "history_type", "version", "history_change_reason")))
    state["status changes"] = list(StatusChange.objects.order_by(
        "record_code", "to_status").values_list("record_code", "from_status", "to_status",
                                                "reason", "changed_by_id"))
    state.update(links_and_keys())
    return state


def both_paths(content: bytes, actor, *, commit: bool):
    results = {}
    for bulk in (False, True):
        with transaction.atomic():
            report = import_sheet(kind="deposition_runs", content=content,
                                  file_name="runs.csv", actor=actor, commit=commit, bulk=bulk)
            results[bulk] = (report.as_dict(), snapshot())
            transaction.set_rollback(True)
    return results[False], results[True]


def assert_same(rows, actor, *, expect_errors: bool):
    content = csv_bytes([HEADER, *rows])
    for commit in (False, True):
        per_row, bulk = both_paths(content, actor, commit=commit)
        assert bulk[0] == per_row[0]
        assert bulk[1] == per_row[1]
        assert bool(per_row[0]["errors"]) == expect_errors, per_row[0]["errors"]
    return per_row


class Lab:
    """Stored records the rows name: templates, baths, slides, an existing run."""

    def __init__(self, chain):
        self.chain = chain
        chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot",
                                    reagent_kind="plating_bath", shelf_life_days=20,
                                    counted_from="received")
        self.bath = chain.lot("plating_bath", days_ago=8)
        self.slides = chain.lot("base_slide", days_ago=30)
        self.spheres = chain.spheres(diameter_nm=600)
        self.templates = [chain.template(spheres=self.spheres, days_ago=10) for _ in range(4)]
        self.stored_runs = [chain.run(days_ago=6, bath=self.bath)[0] for _ in range(2)]

    def day(self, days_ago: int) -> str:
        return self.chain.day(days_ago).isoformat()

    def row(self, key, template, *, charge="", target="", made=5, pieces=3, bath=None,
            slides="", metal="Au", area=1.0, piece_area=0.25):
        return [key, getattr(template, "code", template), getattr(slides, "code", slides),
                (bath or self.bath).code, metal, 1, "potentiostatic", area, target, charge,
                self.day(made), pieces, piece_area]

    def existing(self, number: int, charge=""):
        run = self.stored_runs[number]
        return [run.code, run.template.code, "", run.bath_lot.code, "Au", 1, "potentiostatic",
                1.0, "", charge, run.made_on.isoformat(), 2, ""]


def good_rows(lab: Lab) -> list[list]:
    t = lab.templates
    return [lab.row("HL-RUN-1", t[0], charge=0.112, target=0.05),  # off target: flags
            lab.row("HL-RUN-2", t[1]),  # no charge
            lab.row("HL-RUN-3", "", slides=lab.slides, charge="95 mC", pieces=1),  # flat
            lab.row("HL-RUN-4", t[2], charge=0.04, target=0.5, pieces=2,
                    piece_area="")]


def test_good_runs_leave_the_same_records_and_history_on_both_paths(chain):
    lab = Lab(chain)
    per_row = assert_same(good_rows(lab), chain.maker, expect_errors=False)
    report, state = per_row
    assert len(report["created"]) == 4
    runs = {run["code"]: run for run in state["DepositionRun"]}
    charged = [run for run in runs.values() if run["charge_C"] is not None]
    assert len(charged) == 3 and all(run["version"] == 2 for run in charged)
    # A run with a charge has two history rows, the second saying where the charge came from
    # and from which file, digest and row.
    history = [h for h in state["DepositionRun history"] if h["code"] == charged[0]["code"]]
    assert [h["history_type"] for h in history] == ["+", "~"]
    assert history[1]["history_change_reason"].startswith(
        f"imported from runs.csv (SHA-256 {report['sha256']}), row ")
    assert "charge entered as reported" in history[1]["history_change_reason"]
    assert len(state["Substrate"]) == 3 + 3 + 1 + 2 + 2 * 2  # the stored runs' two each
    assert {s["piece_label"].split("/")[0] for s in state["Substrate"]} == set(runs)
    consumed = [c for c in state["status changes"] if c[2] == "consumed"]
    assert len(consumed) == 2 + 3 and all(c[3].startswith("plated in DEP-") for c in consumed)
    # Both runs with a target are off it: a flag on each and on each of their pieces.
    assert sorted(flag["target_code"][:3] for flag in state["Flag"]) == ["DEP"] * 2 + ["SUB"] * 5


def test_rows_naming_stored_runs_between_new_ones_are_the_same_on_both_paths(chain):
    lab = Lab(chain)
    good = good_rows(lab)
    rows = [good[0], lab.existing(0, charge=0.09),  # a stored run gets its charge
            good[1], lab.existing(1), *good[2:]]  # a stored run as it is
    per_row = assert_same(rows, chain.maker, expect_errors=False)
    assert len(per_row[0]["changed"]) == 1 and len(per_row[0]["unchanged"]) == 1
    assert per_row[0]["changed"][0]["changes"] == ["Charge (C): — → 0.09"]


def bad_rows(lab: Lab) -> list[list]:
    chain, t = lab.chain, lab.templates
    unreleased = chain.template(spheres=lab.spheres, days_ago=10, release=False)
    old_bath = chain.lot("plating_bath", days_ago=60)  # expired 40 days ago
    voided_bath = chain.lot("plating_bath", days_ago=8)
    chain.s.record_void(actor=chain.reviewer, record=voided_bath, reason="Mislabelled bottle.")
    salt = chain.lot("metal_salt", days_ago=8)

    def fresh():  # a released template of its own, so each row meets only its own fault
        return chain.template(spheres=lab.spheres, days_ago=10)

    return [lab.row("X-1", t[3]),  # good: consumes t[3] ...
            lab.row("X-2", t[3]),  # ... so this row finds it consumed
            lab.row("X-3", unreleased),
            lab.row("X-4", fresh(), made=12),  # before its template
            lab.row("X-5", fresh(), bath=salt),
            lab.row("X-6", fresh(), bath=old_bath),
            lab.row("X-7", fresh(), bath=voided_bath),
            lab.row("X-8", fresh(), pieces=0),
            lab.row("X-9", fresh(), pieces=201),
            lab.row("X-10", fresh(), metal="Xx"),
            lab.row("X-11", fresh(), made=-3),  # the future
            lab.row("X-12", fresh(), area=-1),
            lab.row("X-13", fresh(), target=-0.5),
            lab.row("X-14", fresh(), charge=-0.1),
            lab.row("X-15", fresh(), charge=2e5),
            lab.row("X-16", fresh(), piece_area=0),
            lab.row("X-17", fresh(), slides=lab.slides),  # template and flat slide both
            lab.row("X-18", "NO-SUCH-TPL")]


def test_every_bad_row_gives_the_same_error_on_both_paths(chain):
    lab = Lab(chain)
    good = good_rows(lab)
    bad = bad_rows(lab)
    rows = [good[0], *bad[:8], good[1], *bad[8:], good[2], good[3]]
    per_row = assert_same(rows, chain.maker, expect_errors=True)
    errors = per_row[0]["errors"]
    first_bad_row = 3
    assert {e["row"] for e in errors} == (set(range(first_bad_row + 1, first_bad_row + 8))
                                          | set(range(12, 12 + len(bad) - 8)))
    codes = {e["code"] for e in errors}
    assert codes >= {"input_unusable", "template_not_released", "date_order",
                     "wrong_reagent_kind", "input_expired", "input_voided", "pieces_range",
                     "unknown_metal", "future_date", "out_of_range", "template_or_flat",
                     "parent_missing"}, errors
    consumed_again = next(e for e in errors if e["row"] == first_bad_row + 1)
    assert consumed_again["code"] == "input_unusable" and "consumed" in consumed_again["reason"]


def test_the_bulk_path_checks_many_runs_in_few_queries(chain, django_assert_max_num_queries):
    """Not a fallback in disguise: 40 runs with a charge, each through its own template, cost
    a few queries per run (an UPDATE each for the template and the run's second save; the
    per-row path spends dozens per run)."""
    lab = Lab(chain)
    templates = [chain.template(spheres=lab.spheres, days_ago=10) for _ in range(40)]
    rows = [lab.row(f"R-{n}", template, charge=0.05 + n / 1000, target=0.5)
            for n, template in enumerate(templates)]
    with django_assert_max_num_queries(200):
        report = import_sheet(kind="deposition_runs", content=csv_bytes([HEADER, *rows]),
                              file_name="many runs.csv", actor=chain.maker, commit=True)
    assert report.committed and len(report.created) == 40
    assert StatusChange.objects.filter(to_status="consumed", reason__startswith="plated in") \
        .count() == 40 + 2  # and the two stored runs'
