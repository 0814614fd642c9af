"""Issue 16 item 5 (and item 8's "no field named"): a constraint the database or Django checks
comes back in the one error shape, naming the field it guards."""

from __future__ import annotations

import pytest
from django.db import transaction

from inventory.api import serializers as api_serializers
from inventory.models import LinkerLayer, ReagentLot
from tests.api.conftest import client_for

pytestmark = pytest.mark.django_db


def test_a_cross_field_constraint_names_its_field(chain, maker):
    lot = chain.lot("solvent", days_ago=10, release=False)
    response = client_for(maker).post(
        f"/api/v1/reagent-lots/{lot.code}/amend/",
        {"changes": {"opened_on": chain.day(20).isoformat()}, "expected_version": lot.version},
        format="json")
    assert response.status_code == 400, response.content
    [error] = response.json()["errors"]
    assert (error["field"], error["code"]) == ("opened_on", "constraint")
    assert "reagent_opened_after_received" in error["message"]
    assert ReagentLot.objects.get(pk=lot.pk).opened_on is None


@pytest.mark.parametrize(("value", "field"), [(float("inf"), "immersion_h"),
                                               (None, "immersion_h")])
def test_an_integrity_error_past_the_services_is_a_400_naming_the_field(chain, maker,
                                                                        monkeypatch, value,
                                                                        field):
    """A write that reaches the database unchecked (here a stand-in for a buggy service)."""
    piece = chain.run(pieces=1)[1][0]
    layer = chain.s.linker_layer_apply(actor=maker, linker_lot=chain.lot("linker_thiol"),
                                       substrates=[piece], concentration_mM=1, immersion_h=12,
                                       made_on=chain.day(2))

    def buggy_amend(*, actor, record, **_):
        with transaction.atomic():
            LinkerLayer.objects.filter(pk=record.pk).update(immersion_h=value)
        return record

    monkeypatch.setattr(api_serializers.services, "record_amend", buggy_amend)
    response = client_for(maker).post(f"/api/v1/linker-layers/{layer.code}/amend/",
                                      {"changes": {"notes": "x"},
                                       "expected_version": layer.version}, format="json")
    assert response.status_code == 400, response.content
    [error] = response.json()["errors"]
    assert (error["field"], error["code"]) == (field, "constraint")
    assert LinkerLayer.objects.get(pk=layer.pk).immersion_h == 12
