"""Daily digest and calendar feed with a fixed clock (tests.conftest.today: 2026-06-15)."""

from __future__ import annotations

from datetime import timedelta

import pytest
from django.core import mail
from django.core.management import call_command
from django.test import Client
from icalendar import Calendar

from exchange import services
from inventory.models import Substrate
from tests.conftest import user_with_role

pytestmark = pytest.mark.django_db


@pytest.fixture
def lab(chain, django_user_model, reviewer):
    """Two makers with records; who should hear about what is known in advance."""
    s = chain.s
    s.shelf_life_rule_set(actor=None, record_kind="spherelot", shelf_life_days=365,
                          counted_from="received")
    maker2 = user_with_role(django_user_model, "maker", "maker2")
    quiet = user_with_role(django_user_model, "maker", "quiet")
    for user, address in ((chain.maker, "maker@lab.example"), (maker2, "m2@lab.example"),
                          (quiet, "quiet@lab.example"), (reviewer, "rev@lab.example")):
        user.email = address
        user.save()

    def spheres(actor, days_ago):
        return s.sphere_lot_receive(actor=actor, material="silica", nominal_diameter_nm=400,
                                    solids_percent_w_v=5, received_on=chain.day(days_ago))

    mine = {"expiring": spheres(chain.maker, 360),  # expires in 5 d (365-d rule)
            "fresh": spheres(chain.maker, 100)}
    theirs = spheres(maker2, 358)
    quiets = spheres(quiet, 359)  # quiet has items but did not opt in
    flagged = s.flag_raise(actor=reviewer, target=mine["fresh"], category="visual",
                           message="Sediment at the bottom")
    _run, (piece,) = chain.run(pieces=1)
    old_batch = chain.batch(days_ago=10)
    new_batch = chain.batch(days_ago=3)
    for user in (chain.maker, maker2, reviewer):
        services.digest_preference_set(actor=user, daily_digest=True)
    return {"mine": mine, "theirs": theirs, "quiets": quiets, "flag": flagged, "piece": piece,
            "old_batch": old_batch, "new_batch": new_batch, "maker2": maker2}


def test_the_right_people_get_the_right_items_and_no_one_else(lab, chain, today):
    call_command("send_digest", "--date", today.isoformat())
    by_address = {message.to[0]: message.body for message in mail.outbox}
    # quiet did not opt in; a viewer with nothing would get nothing.
    assert set(by_address) == {"maker@lab.example", "m2@lab.example", "rev@lab.example"}
    mine = by_address["maker@lab.example"]
    for code in (lab["mine"]["expiring"].code, lab["flag"].code, lab["piece"].code,
                 lab["old_batch"].code):
        assert code in mine
    for code in (lab["mine"]["fresh"].code + " (", lab["theirs"].code, lab["quiets"].code,
                 lab["new_batch"].code):
        assert code not in mine
    assert f"expires on {(today + timedelta(days=5)).isoformat()} (in 5 d)" in mine
    theirs = by_address["m2@lab.example"]
    assert lab["theirs"].code in theirs and lab["mine"]["expiring"].code not in theirs
    # The reviewer reviews every piece, whoever made it.
    assert lab["piece"].code in by_address["rev@lab.example"]
    # Once a day: a second run the same day sends nothing.
    call_command("send_digest", "--date", today.isoformat())
    assert len(mail.outbox) == 3


def test_a_released_piece_and_a_resolved_flag_leave_the_digest(lab, chain, reviewer, today):
    chain.release(Substrate.objects.get(pk=lab["piece"].pk))
    chain.s.flag_resolve(actor=reviewer, flag=lab["flag"], resolution="Re-dispersed; fine.")
    call_command("send_digest", "--date", today.isoformat())
    addresses = {message.to[0] for message in mail.outbox}
    assert "rev@lab.example" not in addresses
    mine = next(m.body for m in mail.outbox if m.to == ["maker@lab.example"])
    assert lab["flag"].code not in mine and lab["piece"].code not in mine


def test_the_calendar_feed_parses_and_a_revoked_secret_gives_404(lab, chain, today):
    secret = services.calendar_secret_issue(actor=chain.maker)
    client = Client()
    response = client.get(f"/calendar/{secret}.ics")
    assert response.status_code == 200 and response["Content-Type"].startswith("text/calendar")
    feed = Calendar.from_ical(response.content)  # RFC 5545 parser of the icalendar library
    events = {str(e["summary"]): e.decoded("dtstart") for e in feed.walk("VEVENT")}
    expiring = lab["mine"]["expiring"]
    assert events[f"{expiring.code} expires"] == expiring.expires_on
    assert events[f"Re-measure {lab['old_batch'].code} (UV-vis)"] == chain.day(3)
    assert events[f"Re-measure {lab['new_batch'].code} (UV-vis)"] == today + timedelta(days=4)
    assert not any(lab["theirs"].code in summary for summary in events)
    assert all(e.get("uid") and e.get("dtstamp") for e in feed.walk("VEVENT"))
    services.calendar_secret_revoke_all(actor=chain.maker)
    assert client.get(f"/calendar/{secret}.ics").status_code == 404
    assert client.get("/calendar/not-a-secret.ics").status_code == 404


def test_only_the_hash_of_a_calendar_secret_is_stored(chain):
    import hashlib

    from exchange.models import CalendarSecret

    secret = services.calendar_secret_issue(actor=chain.maker)
    stored = CalendarSecret.objects.get(user=chain.maker)
    assert stored.secret_sha256 == hashlib.sha256(secret.encode()).hexdigest()
    assert secret not in stored.secret_sha256
