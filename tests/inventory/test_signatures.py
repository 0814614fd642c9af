"""Release and reject as electronic signatures (DESIGN §7; 21 CFR Part 11 §11.50 and §11.200
ask for the signer's printed name, date and time, meaning, and re-entry of a password)."""

from __future__ import annotations

import hashlib
import json

import pytest
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import DatabaseError, connection, transaction

from inventory.models import Signature, Status
from inventory.selectors import record_get_signatures
from inventory.services import record_amend, record_reject, record_release
from inventory.signatures import SignatureIntent, record_content
from tests.conftest import PASSWORDS


def _code(error: ValidationError, field: str) -> str:
    return error.error_dict[field][0].code


def _signed(role: str, meaning: str = "approved") -> SignatureIntent:
    return SignatureIntent(password=PASSWORDS[role], meaning=meaning)


def test_release_stores_name_time_meaning_and_digest_of_the_content(chain, reviewer):
    lot = chain.lot("plating_bath", release=False)
    released = record_release(actor=reviewer, record=lot, signature=_signed("reviewer"))
    assert released.status == Status.RELEASED
    (signature,) = record_get_signatures(lot)
    assert (signature.signer_username, signature.meaning, signature.action) == (
        "reviewer", "approved", "release")
    assert signature.record_code == lot.code and signature.to_status == "released"
    # The digest is recomputed here from the canonical JSON rule (sorted keys, no spaces,
    # UTF-8), independently of the service, and must match both stored text and the record.
    expected = json.dumps(record_content(released), sort_keys=True, separators=(",", ":"),
                          ensure_ascii=False, default=str)
    assert signature.content_json == expected
    assert signature.content_sha256 == hashlib.sha256(expected.encode()).hexdigest()
    assert signature.content_matches
    assert json.loads(signature.content_json)["code"] == lot.code


def test_wrong_password_signs_nothing(chain, reviewer):
    lot = chain.lot(release=False)
    with pytest.raises(ValidationError) as refused:
        record_release(actor=reviewer, record=lot,
                       signature=SignatureIntent(password="not-my-password", meaning="approved"))
    assert _code(refused.value, "password") == "signature_invalid"
    lot.refresh_from_db()
    assert lot.status == Status.QUARANTINE and not Signature.objects.exists()


def test_meaning_must_fit_the_action(chain, reviewer):
    lot = chain.lot(release=False)
    with pytest.raises(ValidationError) as refused:
        record_release(actor=reviewer, record=lot, signature=_signed("reviewer", "rejected"))
    assert _code(refused.value, "meaning") == "signature_meaning"


def test_maker_cannot_release_and_reviewer_cannot_release_own_record(chain, maker, reviewer):
    lot = chain.lot(release=False)
    with pytest.raises(PermissionDenied):
        record_release(actor=maker, record=lot, signature=_signed("maker"))
    own = chain.s.reagent_lot_receive(actor=reviewer, name="own lot", kind="solvent",
                                      received_on=chain.day(3))
    with pytest.raises(ValidationError) as refused:
        record_release(actor=reviewer, record=own, signature=_signed("reviewer"))
    assert _code(refused.value, "record") == "self_release"


def test_self_release_allowed_when_the_lab_turns_the_rule_off(chain, reviewer, settings):
    settings.SERSLEDGER_ALLOW_SELF_RELEASE = True
    own = chain.s.reagent_lot_receive(actor=reviewer, name="own lot", kind="solvent",
                                      received_on=chain.day(3))
    assert record_release(actor=reviewer, record=own,
                          signature=_signed("reviewer")).status == Status.RELEASED


def test_reject_needs_a_reason_and_records_the_meaning(chain, reviewer):
    lot = chain.lot(release=False)
    with pytest.raises(ValidationError) as refused:
        record_reject(actor=reviewer, record=lot, signature=_signed("reviewer", "rejected"),
                      reason=" ")
    assert _code(refused.value, "reason") == "reason_required"
    record_reject(actor=reviewer, record=lot, signature=_signed("reviewer", "rejected"),
                  reason="Bath turned cloudy.")
    (signature,) = record_get_signatures(lot.code)
    assert (signature.meaning, signature.reason) == ("rejected", "Bath turned cloudy.")


def test_amending_after_signing_shows_the_content_no_longer_matches(chain, reviewer, maker):
    lot = chain.lot(release=False)
    lot = record_release(actor=reviewer, record=lot, signature=_signed("reviewer"))
    record_amend(actor=maker, record=lot, changes={"supplier_lot": "B-77"},
                 reason="Typo in the supplier's lot number.", expected_version=lot.version)
    (signature,) = record_get_signatures(lot)
    assert not signature.content_matches


def test_signatures_cannot_be_changed_or_deleted(chain, reviewer):
    lot = chain.lot(release=False)
    record_release(actor=reviewer, record=lot, signature=_signed("reviewer"))
    with pytest.raises(TypeError):
        Signature.objects.filter(record_code=lot.code).update(meaning="rejected")
    with pytest.raises(TypeError):
        Signature.objects.filter(record_code=lot.code).delete()
    signature = Signature.objects.get(record_code=lot.code)
    signature.meaning = "reviewed"
    # The database trigger refuses the row update itself (migration 0003).
    with pytest.raises(DatabaseError), transaction.atomic():
        signature.save()


@pytest.mark.postgres_only
def test_the_signature_table_cannot_be_truncated_on_postgresql(transactional_db, maker,
                                                               reviewer, today):
    """TRUNCATE skips row triggers, so a statement trigger refuses it (migration 0006).  The
    test settings let the test runner's own flush through with a session setting; a session
    without it, like every production one, is refused."""
    if connection.vendor != "postgresql":
        pytest.skip("SQLite has no TRUNCATE")
    from tests.conftest import ChainBuilder

    lot = ChainBuilder(maker, reviewer, today).lot(release=False)
    record_release(actor=reviewer, record=lot, signature=_signed("reviewer"))
    for statement in ("TRUNCATE inventory_signature",
                      "TRUNCATE inventory_signature RESTART IDENTITY CASCADE"):
        with pytest.raises(DatabaseError, match="immutable"), transaction.atomic(), \
                connection.cursor() as cursor:
            cursor.execute("SET LOCAL sersledger.allow_signature_truncate = ''")
            cursor.execute(statement)
    assert Signature.objects.filter(record_code=lot.code).count() == 1
