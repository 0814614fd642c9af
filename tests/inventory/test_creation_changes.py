"""A new record that changes stored ones: written one at a time and in bulk, the same rows.

``NewRecord.changed`` carries checked copies of stored records (a template consumed by a
run, a substrate's stage moved by a step); ``new_records_insert`` writes them with
``bulk_update_with_history`` after the new records, and ``NewRecord.rows`` (status changes,
edges to stored records) last.  Both writers must leave what the per-record save leaves.
"""

from __future__ import annotations

import copy

import pytest

from inventory.models import LineageEdge, Status, StatusChange, TemplateAssembly
from inventory.services import NewRecord, new_record_save, new_records_insert
from inventory.services.lifecycle import transition_prepare, transition_reason


def _consuming(chain, template) -> NewRecord:
    """A new sphere lot (any coded record) whose step consumes ``template``."""
    new = chain.s.sphere_lot_check(actor=chain.maker, material="silica",
                                   nominal_diameter_nm=400, solids_percent_w_v=5,
                                   received_on=chain.day(1))
    moved = copy.copy(template)
    change = transition_prepare(moved, Status.CONSUMED, reason=f"used by {new.record.code}",
                                actor=chain.maker)
    new.changed.append((moved, transition_reason(Status.CONSUMED, change.reason)))
    new.rows.append(change)
    new.rows.append(LineageEdge(parent_code=new.record.code, child_code=template.code,
                                role="test edge", used_on=chain.day(1), created_by=chain.maker))
    return new


def _written(template) -> dict:
    template = TemplateAssembly.objects.get(pk=template.pk)
    history = list(template.history.order_by("history_id").values_list(
        "status", "version", "history_type", "history_change_reason", "history_user_id"))
    changes = list(StatusChange.objects.filter(record_code=template.code).values_list(
        "from_status", "to_status", "changed_by_id"))
    edges = LineageEdge.objects.filter(child_code=template.code, role="test edge").count()
    return {"status": template.status, "version": template.version, "history": history,
            "changes": changes, "edges": edges}


@pytest.mark.django_db
@pytest.mark.parametrize("writer", ["one", "bulk"])
def test_a_changed_record_is_written_as_a_save_would(chain, writer):
    template = chain.template()
    before = TemplateAssembly.objects.get(pk=template.pk)
    new = _consuming(chain, before)
    # The check part changed a copy: the record in hand is as it was.
    assert before.status == Status.RELEASED and before.version == template.version
    if writer == "one":
        new_record_save(new, actor=chain.maker)
    else:
        new_records_insert([new], actor=chain.maker)
    written = _written(template)
    assert written["status"] == Status.CONSUMED
    assert written["version"] == template.version + 1
    assert written["history"][-1][:3] == (Status.CONSUMED, template.version + 1, "~")
    assert written["history"][-1][3].startswith("used by SPH-")
    assert written["history"][-1][4] == chain.maker.pk
    assert written["changes"][-1] == (Status.RELEASED, Status.CONSUMED, chain.maker.pk)
    assert written["edges"] == 1


@pytest.mark.django_db
def test_an_illegal_change_is_refused_before_anything_is_written(chain):
    from django.core.exceptions import ValidationError

    template = chain.template(release=False)
    chain.s.record_transition(actor=None, record=template, to_status=Status.REJECTED,
                              reason="cracked")
    rejected = TemplateAssembly.objects.get(pk=template.pk)
    with pytest.raises(ValidationError) as caught:
        transition_prepare(copy.copy(rejected), Status.CONSUMED, reason="", actor=chain.maker)
    assert caught.value.error_dict["to_status"][0].code == "illegal_transition"
    assert StatusChange.objects.filter(record_code=template.code,
                                       to_status=Status.CONSUMED).count() == 0


@pytest.mark.django_db
def test_a_sibling_is_checked_again_in_what_differs_from_the_first(chain):
    # The pieces cut from one run: the first checked in full, the others copies differing
    # in code and label, checked in those (cleaning, constraints reading them) and no more.
    from django.core.exceptions import ValidationError

    from inventory.models import Substrate
    from inventory.services._common import _prepare_new, _prepare_sibling

    run, _pieces = chain.run(pieces=1)
    first = _prepare_new(Substrate(deposition_run=run, piece_label="A/1", area_cm2=0.25,
                                   made_on=run.made_on), actor=chain.maker)
    second = _prepare_sibling(first, piece_label="A/2")
    assert (second.piece_label, second.area_cm2, second.deposition_run) == ("A/2", 0.25, run)
    assert second.code != first.code and second.expires_on == first.expires_on
    assert first.piece_label == "A/1"  # the first is not touched
    with pytest.raises(ValidationError) as too_long:  # CharField(max_length=40)
        _prepare_sibling(first, piece_label="x" * 41)
    assert "piece_label" in too_long.value.error_dict
    with pytest.raises(ValidationError) as orphan:  # substrate_from_run_or_purchase
        _prepare_sibling(first, deposition_run=None)
    assert orphan.value.error_dict
    with pytest.raises(ValidationError) as out_of_range:  # the range table, changed field
        _prepare_sibling(first, area_cm2=float("nan"))
    assert "area_cm2" in out_of_range.value.error_dict
