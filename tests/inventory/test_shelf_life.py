"""Expiry is derived from the right date and the lab's rules, never typed (DESIGN §3)."""

from datetime import timedelta

import pytest
from django.core.exceptions import ValidationError

from inventory.models import ReagentLot
from inventory.selectors import records_expiring_within


def _rule(chain, **kwargs):
    return chain.s.shelf_life_rule_set(actor=None, **kwargs)


def test_expiry_counted_from_received(chain):
    _rule(chain, record_kind="reagentlot", shelf_life_days=100, counted_from="received")
    lot = chain.lot("solvent", days_ago=30)
    # hand arithmetic: received 30 days before today + 100 days = today + 70 days
    assert lot.expires_on == chain.today + timedelta(days=70)


def test_expiry_counted_from_opened_waits_for_opening(chain):
    _rule(chain, record_kind="reagentlot", reagent_kind="linker_thiol", shelf_life_days=20,
          counted_from="opened")
    lot = chain.lot("linker_thiol", days_ago=30)
    assert lot.expires_on is None  # not opened: the rule has no start date yet
    lot = chain.s.reagent_lot_open(actor=chain.maker, lot=lot, opened_on=chain.day(5))
    assert lot.expires_on == chain.day(5) + timedelta(days=20)


def test_expiry_counted_from_prepared(chain):
    _rule(chain, record_kind="reagentlot", reagent_kind="reductant", shelf_life_days=1,
          counted_from="prepared")
    lot = chain.s.reagent_lot_receive(actor=chain.maker, name="NaBH4 2 mM", kind="reductant",
                                      prepared_on=chain.day(3))
    assert lot.expires_on == chain.day(2)


def test_expiry_counted_from_made(chain):
    _rule(chain, record_kind="substrate", shelf_life_days=30, counted_from="made")
    _run, (piece,) = chain.run(pieces=1, days_ago=9)
    assert piece.expires_on == chain.day(9) + timedelta(days=30)


def test_specific_reagent_rule_wins_over_general_rule(chain):
    _rule(chain, record_kind="reagentlot", shelf_life_days=700, counted_from="received")
    _rule(chain, record_kind="reagentlot", reagent_kind="plating_bath", shelf_life_days=60,
          counted_from="received")
    bath = chain.lot("plating_bath", days_ago=0)
    solvent = chain.lot("solvent", days_ago=0)
    assert (bath.expires_on - chain.today).days == 60
    assert (solvent.expires_on - chain.today).days == 700


def test_changing_a_rule_re_derives_existing_expiry(chain):
    _rule(chain, record_kind="reagentlot", shelf_life_days=100, counted_from="received")
    lot = chain.lot("solvent", days_ago=0)
    _rule(chain, record_kind="reagentlot", shelf_life_days=10, counted_from="received")
    lot.refresh_from_db()
    assert lot.expires_on == chain.today + timedelta(days=10)


def test_rule_counting_from_a_date_the_record_lacks_is_refused(chain):
    with pytest.raises(ValidationError) as error:
        _rule(chain, record_kind="substrate", shelf_life_days=10, counted_from="opened")
    assert "counted_from" in error.value.error_dict


def test_expiring_selector_lists_only_active_records_within_the_horizon(chain):
    _rule(chain, record_kind="reagentlot", shelf_life_days=40, counted_from="received")
    soon = chain.lot("solvent", days_ago=35)      # expires in 5 days
    later = chain.lot("solvent", days_ago=0)      # expires in 40 days
    gone = chain.lot("solvent", days_ago=50)      # expired 10 days ago
    disposed = chain.s.record_transition(actor=chain.reviewer, record=chain.lot("solvent",
                                         days_ago=36), to_status="disposed", reason="spilt")
    items = records_expiring_within(14)
    assert [(i.record.code, i.days_left) for i in items] == [(gone.code, -10), (soon.code, 5)]
    assert later.code not in {i.record.code for i in items}
    assert disposed.code not in {i.record.code for i in items}
    assert [i.record.code for i in records_expiring_within(14, include_expired=False)] \
        == [soon.code]


def test_expiry_cannot_be_typed(chain):
    chain.lot("solvent")
    field = ReagentLot._meta.get_field("expires_on")
    assert field.editable is False
