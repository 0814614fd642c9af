"""Lifecycle transitions and refusals (rules from DESIGN §3: quarantine → released/rejected →
consumed/disposed), enforced by inventory.services."""

import pytest
from django.core.exceptions import ValidationError

from inventory.models import Status, StatusChange, Substrate, TemplateAssembly


def test_new_records_start_in_quarantine(chain):
    lot = chain.lot(release=False)
    assert lot.status == Status.QUARANTINE


def test_release_then_consume_is_recorded_with_who_and_why(chain):
    lot = chain.lot(release=False)
    released = chain.signed_release(lot)
    consumed = chain.s.record_transition(actor=chain.maker, record=released, to_status="consumed",
                                         reason="bath used up")
    assert consumed.status == Status.CONSUMED
    changes = list(StatusChange.objects.filter(record_code=lot.code)
                   .values_list("from_status", "to_status", "changed_by__username"))
    assert changes == [("quarantine", "released", "reviewer"), ("released", "consumed", "maker")]
    assert consumed.version == 3  # created, released, consumed


@pytest.mark.parametrize("path", [
    ["rejected", "released"],       # a rejected lot cannot come back
    ["released", "consumed", "released"],  # consumed is final
    ["disposed", "quarantine"],     # disposed is final
    ["consumed"],                   # cannot consume what was never released
])
def test_illegal_transitions_are_refused_and_nothing_changes(chain, path):
    lot = chain.lot(release=False)
    *legal, illegal = path
    for status in legal:
        lot = chain.s.record_transition(actor=None, record=lot, to_status=status, reason="test")
    with pytest.raises(ValidationError) as error:
        chain.s.record_transition(actor=None, record=lot, to_status=illegal, reason="test")
    assert error.value.error_dict["to_status"][0].code == "illegal_transition"
    assert lot.code in str(error.value)
    lot.refresh_from_db()
    assert lot.status == (legal[-1] if legal else "quarantine")


def test_rejecting_needs_a_reason(chain):
    lot = chain.lot(release=False)
    with pytest.raises(ValidationError) as error:
        chain.s.record_transition(actor=None, record=lot, to_status="rejected")
    assert "reason" in error.value.error_dict


@pytest.mark.parametrize("status", ["rejected", "disposed"])
def test_rejected_or_disposed_bath_cannot_be_used(chain, status):
    bath = chain.lot("plating_bath", release=False)
    bath = chain.s.record_transition(actor=None, record=bath, to_status=status,
                                     reason="contaminated")
    template = chain.template()
    with pytest.raises(ValidationError) as error:
        chain.run(template=template, bath=bath)
    assert f"{bath.code} cannot be used as the plating bath: it is {status}" in str(error.value)
    # nothing partial: no run, template not consumed, no substrates
    template.refresh_from_db()
    assert template.status == Status.RELEASED
    assert Substrate.objects.count() == 0


def test_expired_input_is_refused_on_the_day_of_use(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot", reagent_kind="plating_bath",
                                shelf_life_days=10, counted_from="received")
    old_bath = chain.lot("plating_bath", days_ago=30)  # expired 20 days ago
    with pytest.raises(ValidationError) as error:
        chain.run(bath=old_bath)
    assert error.value.error_dict["bath_lot"][0].code == "input_expired"


def test_template_is_consumed_by_its_run_and_cannot_be_plated_twice(chain):
    template = chain.template()
    run, pieces = chain.run(template=template, pieces=3)
    template.refresh_from_db()
    assert template.status == Status.CONSUMED
    assert [p.piece_label for p in pieces] == [f"{run.code}/1", f"{run.code}/2", f"{run.code}/3"]
    with pytest.raises(ValidationError):
        chain.run(template=TemplateAssembly.objects.get(pk=template.pk))


def test_particles_need_a_linker_layer_first(chain):
    _run, (piece,) = chain.run(pieces=1)
    with pytest.raises(ValidationError) as error:
        chain.s.particle_attach(actor=chain.maker, substrate=piece, batch=chain.batch(),
                                immersion_min=30, made_on=chain.day(1))
    assert error.value.error_dict["substrate"][0].code == "wrong_stage"


@pytest.mark.parametrize("to_status", ["released", "rejected"])
def test_a_person_cannot_release_or_reject_without_signing(chain, to_status):
    # DESIGN §7: release and reject are electronic signatures; only the system sets them unsigned.
    lot = chain.lot(release=False)
    with pytest.raises(ValidationError) as error:
        chain.s.record_transition(actor=chain.reviewer, record=lot, to_status=to_status,
                                  reason="looks fine")
    assert error.value.error_dict["to_status"][0].code == "signature_required"
    lot.refresh_from_db()
    assert lot.status == Status.QUARANTINE
    assert not StatusChange.objects.filter(record_code=lot.code).exists()
