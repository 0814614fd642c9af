"""History with reasons, void instead of delete, and amendments that cannot overwrite each
other (DESIGN §7: every change kept with who, when and why; nothing hard-deleted)."""

from __future__ import annotations

import threading

import pytest
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import connection, connections

from inventory.lineage import record_get_ancestors, record_get_descendants
from inventory.models import LineageEdge, LinkerLayer, ReagentLot, Status, Substrate
from inventory.readiness import substrate_check_readiness
from inventory.selectors import record_get_history
from inventory.services import record_amend, record_transition, record_void


def _code(error: ValidationError, field: str) -> str:
    return error.error_dict[field][0].code


def test_history_keeps_create_change_and_status_with_who_and_why(chain, maker, reviewer):
    lot = chain.lot("solvent", release=False)
    lot = record_amend(actor=maker, record=lot, changes={"supplier_lot": "S-2"}, reason="",
                       expected_version=lot.version)
    chain.signed_release(lot)
    lot.refresh_from_db()
    record_transition(actor=reviewer, record=lot, to_status=Status.QUARANTINE,
                      reason="Odd smell; held for a check.")
    history = record_get_history(lot)  # newest first
    assert [entry.kind for entry in history] == ["changed", "changed", "changed", "created"]
    hold, release, amend, created = history
    assert (hold.who, hold.reason) == ("reviewer", "Odd smell; held for a check.")
    assert [(c.field, c.old, c.new) for c in hold.changes] == [
        ("status", "released", "quarantine")]
    assert (release.who, [(c.field, c.new) for c in release.changes]) == (
        "reviewer", [("status", "released")])
    assert amend.who == "maker" and [(c.field, c.old, c.new) for c in amend.changes] == [
        ("supplier_lot", "", "S-2")]
    assert created.who == "maker" and created.version == 1 and created.changes == ()
    assert history[0].when >= history[-1].when


def test_history_of_a_system_change_names_the_system(chain):
    lot = chain.s.reagent_lot_receive(actor=None, name="x", kind="solvent",
                                      received_on=chain.day(1))
    (created,) = record_get_history(lot.code)
    assert created.who == "system"


def test_amending_a_released_record_needs_a_reason(chain, maker):
    lot = chain.lot("solvent")  # released
    with pytest.raises(ValidationError) as refused:
        record_amend(actor=maker, record=lot, changes={"supplier": "Acme"}, reason=" ",
                     expected_version=lot.version)
    assert _code(refused.value, "reason") == "reason_required"
    amended = record_amend(actor=maker, record=lot, changes={"supplier": "Acme"},
                           reason="Supplier name missing at receipt.",
                           expected_version=lot.version)
    assert amended.version == lot.version + 1
    assert record_get_history(lot)[0].reason == "Supplier name missing at receipt."


def test_a_stale_version_is_refused_and_nothing_changes(chain, maker):
    lot = chain.lot("solvent", release=False)
    record_amend(actor=maker, record=lot, changes={"supplier": "A"}, reason="",
                 expected_version=lot.version)
    with pytest.raises(ValidationError) as refused:
        record_amend(actor=maker, record=lot, changes={"supplier": "B"}, reason="",
                     expected_version=lot.version)  # the version this copy was read at
    assert _code(refused.value, "version") == "version_conflict"
    assert ReagentLot.objects.get(pk=lot.pk).supplier == "A"


def test_only_typed_fields_can_be_amended(chain, maker):
    lot = chain.lot("solvent", release=False)
    for field in ("status", "code", "expires_on", "created_by"):
        with pytest.raises(ValidationError) as refused:
            record_amend(actor=maker, record=lot, changes={field: "x"}, reason="r",
                         expected_version=lot.version)
        assert _code(refused.value, field) == "not_amendable"
    with pytest.raises(ValidationError) as refused:  # bad value: the model's own checks
        record_amend(actor=maker, record=lot, changes={"concentration_mM": -1}, reason="r",
                     expected_version=lot.version)
    assert refused.value.error_dict["concentration_mM"][0].code == "out_of_range"
    assert ReagentLot.objects.get(pk=lot.pk).concentration_mM is None


def test_void_keeps_lineage_and_history_but_blocks_use_and_readiness(chain, reviewer, maker):
    substrate = chain.decorated_substrate()
    colloid = next(r for r in record_get_ancestors(substrate).records.values()
                   if r.code.startswith("NPB"))
    assert substrate_check_readiness(substrate.code).ready
    with pytest.raises(PermissionDenied):
        record_void(actor=maker, record=colloid, reason="Wrong batch logged.")
    with pytest.raises(ValidationError) as refused:
        record_void(actor=reviewer, record=colloid, reason="")
    assert _code(refused.value, "reason") == "reason_required"
    record_void(actor=reviewer, record=colloid, reason="Wrong batch logged.")
    # Still in the lineage both ways, and in the history with the reason.
    assert colloid.code in record_get_ancestors(substrate).records
    assert substrate.code in record_get_descendants(colloid).records
    assert record_get_history(colloid)[0].reason == "voided: Wrong batch logged."
    readiness = substrate_check_readiness(substrate.code)
    assert "voided" in [reason.code for reason in readiness.reasons]
    # Not usable as an input any more, and not voidable twice.
    piece = chain.run(pieces=1)[1][0]
    chain.s.linker_layer_apply(actor=maker, linker_lot=chain.lot("linker_thiol"),
                               substrates=[piece], concentration_mM=1, immersion_h=1,
                               made_on=chain.day(1))
    piece.refresh_from_db()
    with pytest.raises(ValidationError) as unusable:
        chain.s.particle_attach(actor=maker, substrate=piece, batch=colloid, immersion_min=5,
                                made_on=chain.day(0))
    assert _code(unusable.value, "batch") == "input_voided"
    lot = chain.lot("linker_thiol")
    record_void(actor=reviewer, record=lot, reason="Entered twice.")
    with pytest.raises(ValidationError) as voided_input:
        chain.s.linker_layer_apply(actor=maker, linker_lot=lot, substrates=[piece],
                                   concentration_mM=1, immersion_h=1, made_on=chain.day(0))
    assert _code(voided_input.value, "linker_lot") == "input_voided"
    with pytest.raises(ValidationError) as twice:
        record_void(actor=reviewer, record=lot, reason="again")
    assert _code(twice.value, "record") == "already_voided"


@pytest.mark.postgres_only
@pytest.mark.django_db(transaction=True)
def test_two_concurrent_amendments_of_one_version_exactly_one_wins(django_user_model):
    if connection.vendor != "postgresql":
        pytest.skip("needs PostgreSQL row locks; SQLite serialises all writers anyway")
    from datetime import date

    from inventory import services
    from tests.conftest import user_with_role

    maker = user_with_role(django_user_model, "maker")
    lot = services.reagent_lot_receive(actor=maker, name="shared lot", kind="solvent",
                                       received_on=date(2026, 1, 5))
    barrier = threading.Barrier(2)
    outcomes: list[str] = []

    def amend(supplier: str) -> None:
        try:
            barrier.wait()
            record_amend(actor=maker, record=lot, changes={"supplier": supplier}, reason="",
                         expected_version=lot.version)
            outcomes.append("won")
        except ValidationError as error:
            outcomes.append(_code(error, "version"))
        finally:
            connections.close_all()

    threads = [threading.Thread(target=amend, args=(name,)) for name in ("A", "B")]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert sorted(outcomes) == ["version_conflict", "won"]
    stored = ReagentLot.objects.get(pk=lot.pk)
    assert stored.version == lot.version + 1 and stored.supplier in {"A", "B"}


def test_a_long_reason_is_kept_whole(chain, reviewer):
    """Reasons are sentences; history stores them as text (PostgreSQL would refuse a
    varchar(100) overflow, SQLite would keep it silently)."""
    lot = chain.lot("solvent")
    reason = "Supplier recall notice R-7 lists this lot; " * 8
    record_transition(actor=reviewer, record=lot, to_status=Status.QUARANTINE, reason=reason)
    assert record_get_history(lot)[0].reason == reason


def _edges(**where):
    return {(e.parent_code, e.child_code, e.role): e.used_on
            for e in LineageEdge.objects.filter(**where)}


def test_amending_a_step_date_moves_the_edges_that_step_made(chain, maker):
    """A linker layer logged on the wrong day: its inputs' edges and its edge to the
    substrate move to the corrected day; the run's edge to the piece keeps the run's day.
    Readiness then judges the linker lot on the day it was really used (common practice:
    an input must be in date on the day of use)."""
    linker = chain.s.reagent_lot_receive(actor=maker, name="Benzenethiol", kind="linker_thiol",
                                         received_on=chain.day(40))
    chain.release(linker)
    substrate = chain.decorated_substrate(linker_lot=linker, linker_days_ago=3)
    layer = LinkerLayer.objects.get(substrates=substrate)
    run_code = Substrate.objects.get(pk=substrate.pk).deposition_run.code
    cut_before = _edges(parent_code=run_code)
    record_amend(actor=maker, record=layer, changes={"made_on": chain.day(20)},
                 reason="Logged a week late.", expected_version=layer.version)
    assert set(_edges(child_code=layer.code).values()) == {chain.day(20)}
    assert _edges(parent_code=layer.code) == {
        (layer.code, substrate.code, "linker layer"): chain.day(20)}
    assert _edges(parent_code=run_code) == cut_before
    # The linker keeps 30 days from receipt (day 40 → day 10): in date on day 20, and so the
    # substrate stays ready; moved to day 5 instead, it was used after its expiry.
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot",
                                reagent_kind="linker_thiol", shelf_life_days=30,
                                counted_from="received")
    assert substrate_check_readiness(substrate.code).ready
    layer.refresh_from_db()
    record_amend(actor=maker, record=layer, changes={"made_on": chain.day(5)},
                 reason="The notebook says day 5.", expected_version=layer.version)
    reasons = [r.code for r in substrate_check_readiness(substrate.code).reasons]
    assert "upstream_expired_at_use" in reasons


def test_a_step_date_in_the_future_is_refused_by_name(chain, maker):
    substrate = chain.decorated_substrate()
    layer = LinkerLayer.objects.get(substrates=substrate)
    edges_before = list(LineageEdge.objects.values_list("id", "used_on").order_by("id"))
    with pytest.raises(ValidationError) as refused:
        record_amend(actor=maker, record=layer, changes={"made_on": chain.day(-3)},
                     reason="r", expected_version=layer.version)
    assert _code(refused.value, "made_on") == "future_date"
    assert list(LineageEdge.objects.values_list("id", "used_on").order_by("id")) == edges_before
