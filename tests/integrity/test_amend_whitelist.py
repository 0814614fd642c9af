"""Issue 16 item 1: the generic amend path changes only what each kind declares amendable.

A flag's state, resolution, resolver, resolution time and target change only through
``flag_resolve`` (reviewer role, written resolution); the amend path refuses them for every
role, through the service and the API, and nothing is saved.
"""

from __future__ import annotations

import pytest
from django.core.exceptions import ValidationError
from django.db import models

from inventory.codes import coded_models
from inventory.models import Flag, LifecycleRecord
from inventory.services import amendable_fields, flag_raise, record_amend
from tests.api.conftest import client_for

FLAG_DECISION_FIELDS = ("state", "resolution", "resolved_at", "resolved_by", "target_code",
                        "category", "message")


@pytest.fixture
def open_flag(chain, maker):
    substrate = chain.run(pieces=1)[1][0]
    return flag_raise(actor=maker, target=substrate, category="qc", message="RSD too high")


@pytest.mark.parametrize("field", FLAG_DECISION_FIELDS)
def test_a_flags_decision_cannot_be_amended_by_the_service(open_flag, maker, reviewer, field):
    values = {"state": "resolved", "resolution": "fine", "resolved_at": "2026-06-01T10:00:00Z",
              "resolved_by": reviewer, "target_code": "SUB-99999", "category": "handling",
              "message": "nothing"}
    for actor in (maker, reviewer):
        with pytest.raises(ValidationError) as refused:
            record_amend(actor=actor, record=open_flag, changes={field: values[field]},
                         reason="cleared", expected_version=open_flag.version)
        assert refused.value.error_dict[field][0].code == "not_amendable"
    stored = Flag.objects.get(pk=open_flag.pk)
    assert (stored.state, stored.resolution, stored.target_code, stored.version) == (
        "open", "", open_flag.target_code, open_flag.version)


def test_a_maker_cannot_clear_a_flag_through_the_amend_api(open_flag, maker):
    response = client_for(maker).post(
        f"/api/v1/flags/{open_flag.code}/amend/",
        {"changes": {"state": "resolved", "resolution": "ok",
                     "resolved_at": "2026-06-01T10:00:00Z"},
         "expected_version": open_flag.version}, format="json")
    assert response.status_code == 400, response.content
    assert response.json()["errors"][0]["code"] == "not_amendable"
    assert Flag.objects.get(pk=open_flag.pk).state == "open"


def test_the_flag_still_changes_through_its_own_action(open_flag, maker, reviewer):
    maker_try = client_for(maker).post(f"/api/v1/flags/{open_flag.code}/resolve/",
                                       {"resolution": "re-measured"}, format="json")
    assert maker_try.status_code == 403
    done = client_for(reviewer).post(f"/api/v1/flags/{open_flag.code}/resolve/",
                                     {"resolution": "re-measured"}, format="json")
    assert done.status_code == 200 and done.json()["state"] == "resolved"


def test_a_flags_notes_remain_amendable(open_flag, maker):
    amended = record_amend(actor=maker, record=open_flag, changes={"notes": "see bench book"},
                           reason="", expected_version=open_flag.version)
    assert amended.notes == "see bench book" and amended.state == "open"


# Fields that are states, derived by a step or a rule, or links that make the lineage.
NEVER_AMENDABLE = {"status", "state", "stage", "expires_on", "code", "version",
                   "product_kind", "target_code"}


@pytest.mark.parametrize("model", sorted(coded_models().values(), key=lambda m: m.__name__),
                         ids=lambda m: m.__name__)
def test_every_kind_declares_only_typed_fields_amendable(model):
    declared = amendable_fields(model)
    assert "notes" in declared
    for name in declared:
        field = model._meta.get_field(name)
        assert field.editable, f"{model.__name__}.{name} is computed"
        assert name not in NEVER_AMENDABLE, f"{model.__name__}.{name} is a state or link"
        assert not isinstance(field, models.FileField)
        assert not field.is_relation or (name == "storage" and issubclass(model, LifecycleRecord))
        assert not name.endswith(("_sha256", "_by", "_at")), f"{model.__name__}.{name}"


def test_a_substrates_stage_is_set_by_its_steps_not_amended(chain, maker):
    piece = chain.run(pieces=1)[1][0]
    with pytest.raises(ValidationError) as refused:
        record_amend(actor=maker, record=piece, changes={"stage": "particles"}, reason="",
                     expected_version=piece.version)
    assert refused.value.error_dict["stage"][0].code == "not_amendable"


def test_a_reagent_lots_kind_cannot_change_after_it_decided_what_it_was_used_for(chain, maker):
    bath = chain.lot("plating_bath", release=False)
    with pytest.raises(ValidationError) as refused:
        record_amend(actor=maker, record=bath, changes={"kind": "solvent"}, reason="",
                     expected_version=bath.version)
    assert refused.value.error_dict["kind"][0].code == "not_amendable"
