"""Choices offer only usable inputs; the last-used lot of this user is pre-selected."""

from django.urls import reverse

from bench.make.defaults import last_used_code, usable
from inventory.models import ReagentLot
from inventory.services import record_transition, shelf_life_rule_set


def test_usable_offers_released_unexpired_lots_only(chain, administrator):
    good = chain.lot("plating_bath")
    waiting = chain.lot("plating_bath", release=False)
    rejected = chain.lot("plating_bath", release=False)
    record_transition(actor=None, record=rejected, to_status="rejected",
                      reason="cloudy")
    old = chain.lot("plating_bath", days_ago=200)
    shelf_life_rule_set(actor=administrator, record_kind="reagentlot",
                        reagent_kind="plating_bath", shelf_life_days=90, counted_from="received")
    codes = set(usable(ReagentLot.objects.all(), on_date=chain.today)
                .values_list("code", flat=True))
    assert codes == {good.code}
    assert not {waiting.code, rejected.code, old.code} & codes


def test_a_lot_is_usable_on_its_expiry_day(chain, administrator):
    lot = chain.lot("plating_bath", days_ago=90)
    shelf_life_rule_set(actor=administrator, record_kind="reagentlot",
                        reagent_kind="plating_bath", shelf_life_days=90, counted_from="received")
    assert usable(ReagentLot.objects.all(), on_date=chain.today).filter(pk=lot.pk).exists()
    assert not usable(ReagentLot.objects.all(),
                      on_date=chain.day(-1)).filter(pk=lot.pk).exists()


def test_last_used_bath_is_preselected_for_the_same_user_only(chain, maker_client,
                                                               django_user_model):
    first, second = chain.lot("plating_bath"), chain.lot("plating_bath")
    chain.run(bath=first)
    assert last_used_code(chain.maker, role="plating bath") == first.code
    form = maker_client.get(reverse("make:deposition")).context["form"]
    assert form["bath_lot"].value() == first.code
    assert second.code in dict(form.fields["bath_lot"].choices)
    assert last_used_code(chain.reviewer, role="plating bath") is None


def test_today_is_the_default_date(maker_client, today):
    form = maker_client.get(reverse("make:reagent")).context["form"]
    assert form["received_on"].value() == today
