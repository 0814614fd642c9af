"""The readiness check: each reason alone, several at once, and the extension point.

Expected verdicts follow the rules written in DESIGN §2 (moment 2) and issue text: status,
own expiry, linker layer age, colloid not released / expired / flagged, upstream lot expired
when used, upstream rejection, consumed.
"""

from datetime import timedelta

import pytest
from django.db import connection
from django.test import override_settings
from django.test.utils import CaptureQueriesContext

from inventory.codes import RecordNotFound
from inventory.lineage import record_get_ancestors
from inventory.models import Substrate
from inventory.readiness import Reason, substrate_check_readiness


def codes(result):
    return sorted(reason.code for reason in result.reasons)


def test_a_released_decorated_substrate_in_date_is_ready(chain):
    substrate = chain.decorated_substrate()
    result = substrate_check_readiness(substrate.code)
    assert result.ready and result.verdict == "READY" and result.reasons == ()


def test_quarantined_substrate_is_not_ready(chain):
    _run, (piece,) = chain.run(pieces=1)
    assert codes(substrate_check_readiness(piece.code)) == ["status_quarantine"]


@pytest.mark.parametrize("status", ["rejected", "consumed", "disposed"])
def test_status_reasons(chain, status):
    substrate = chain.decorated_substrate()
    chain.s.record_transition(actor=None, record=substrate, to_status=status, reason="test")
    assert codes(substrate_check_readiness(substrate.code)) == [f"status_{status}"]


def test_own_expiry(chain):
    substrate = chain.decorated_substrate(linker_days_ago=2)  # made 5 days ago
    chain.s.shelf_life_rule_set(actor=None, record_kind="substrate", shelf_life_days=3,
                                counted_from="made")  # → expired 2 days ago
    substrate.refresh_from_db()
    result = substrate_check_readiness(substrate.code)
    assert codes(result) == ["expired"]
    assert substrate.expires_on.isoformat() in result.reasons[0].message


def test_linker_layer_older_than_its_limit(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="linkerlayer", shelf_life_days=7,
                                counted_from="made")
    substrate = chain.decorated_substrate(linker_days_ago=8)
    result = substrate_check_readiness(substrate.code)
    assert codes(result) == ["linker_layer_too_old"]
    assert "8 days old; the limit is 7 days" in result.reasons[0].message
    # one day inside the limit is fine
    assert substrate_check_readiness(substrate.code,
                                     on_date=chain.today - timedelta(days=1)).ready


def test_colloid_not_released(chain):
    batch = chain.batch(release=False)
    substrate = chain.decorated_substrate(batch=batch)
    result = substrate_check_readiness(substrate.code)
    assert codes(result) == ["colloid_not_released"]
    assert result.reasons[0].record_code == batch.code


def test_colloid_expired(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="nanoparticlebatch", shelf_life_days=4,
                                counted_from="made")
    batch = chain.batch(days_ago=3)
    substrate = chain.decorated_substrate(batch=batch, linker_days_ago=2)
    # the batch was made 3 days ago, 4-day life: expired 2 days from now
    assert substrate_check_readiness(substrate.code).ready
    later = chain.today + timedelta(days=2)
    assert codes(substrate_check_readiness(substrate.code, on_date=later)) == ["colloid_expired"]


def test_colloid_flagged_blocks_and_resolving_clears(chain):
    batch = chain.batch()
    substrate = chain.decorated_substrate(batch=batch)
    flag = chain.s.flag_raise(actor=chain.reviewer, target=batch, category="colloid",
                              message="peak shifted 12 nm")
    result = substrate_check_readiness(substrate.code)
    assert codes(result) == ["open_flag"]
    assert result.reasons[0].record_code == flag.code and batch.code in result.reasons[0].message
    chain.s.flag_resolve(actor=chain.reviewer, flag=flag, resolution="re-measured: dilution error")
    assert substrate_check_readiness(substrate.code).ready


def test_upstream_lot_already_expired_when_used(chain):
    linker = chain.lot("linker_thiol", days_ago=40)
    substrate = chain.decorated_substrate(linker_lot=linker, linker_days_ago=2)
    assert substrate_check_readiness(substrate.code).ready
    # the lab learns the linker keeps 30 days from receipt: it had expired 10 days before use
    chain.s.shelf_life_rule_set(actor=None, record_kind="reagentlot", reagent_kind="linker_thiol",
                                shelf_life_days=30, counted_from="received")
    result = substrate_check_readiness(substrate.code)
    assert codes(result) == ["upstream_expired_at_use"]
    assert result.reasons[0].record_code == linker.code


def test_upstream_rejection_is_a_recall(chain):
    spheres = chain.spheres()
    template = chain.template(spheres=spheres)
    _run, (piece,) = chain.run(pieces=1, template=template)
    chain.release(piece)
    chain.signed_reject(spheres, reason="wrong size delivered")
    result = substrate_check_readiness(piece.code)
    assert codes(result) == ["upstream_rejected"]
    assert result.reasons[0].record_code == spheres.code


def test_several_reasons_at_once(chain):
    chain.s.shelf_life_rule_set(actor=None, record_kind="linkerlayer", shelf_life_days=1,
                                counted_from="made")
    batch = chain.batch(release=False)
    substrate = chain.decorated_substrate(batch=batch, linker_days_ago=4)
    chain.s.flag_raise(actor=chain.reviewer, target=substrate, category="handling",
                       message="dropped face down")
    chain.s.record_transition(actor=chain.reviewer, record=substrate, to_status="quarantine",
                              reason="hold while investigated")
    assert codes(substrate_check_readiness(substrate.code)) == [
        "colloid_not_released", "linker_layer_too_old", "open_flag", "status_quarantine"]


def test_unknown_and_non_substrate_ids(chain):
    with pytest.raises(RecordNotFound):
        substrate_check_readiness("SUB-99999")
    with pytest.raises(RecordNotFound):
        substrate_check_readiness("XYZ-1")
    lot = chain.lot()
    with pytest.raises(ValueError, match="not a substrate"):
        substrate_check_readiness(lot.code)


def _always_missing_qc(context):
    return [Reason("qc_missing", f"{context.substrate.code} has no QC.", context.substrate.code)]


def test_other_apps_add_reasons_through_settings(chain):
    substrate = chain.decorated_substrate()
    with override_settings(SERSLEDGER_READINESS_PROVIDERS=[
            "tests.inventory.test_readiness._always_missing_qc"]):
        assert codes(substrate_check_readiness(substrate.code)) == ["qc_missing"]


def test_readiness_query_count_is_bounded(chain, django_assert_max_num_queries):
    substrate = chain.decorated_substrate()
    # substrate, lineage walk, one per kind reached (≤ 8), flags, rules
    with django_assert_max_num_queries(14):
        substrate_check_readiness(substrate.code)
    assert Substrate.objects.filter(code=substrate.code).exists()


def test_reasons_read_only_the_ancestor_fields_the_check_loads(chain):
    """Ancestors are loaded with ANCESTOR_FIELDS only; a reason reading another field would
    cost one query per ancestor.  Here every inventory reason about ancestors fires, and the
    count is exactly: substrate, lineage walk, one query per record kind reached, flags,
    shelf-life rules, and the providers' own (qc: its limits, and the stale UV-vis figures of
    the colloid upstream)."""
    chain.s.shelf_life_rule_set(actor=None, record_kind="linkerlayer", shelf_life_days=1,
                                counted_from="made")
    batch = chain.batch(release=False)
    substrate = chain.decorated_substrate(batch=batch, linker_days_ago=4)
    run = Substrate.objects.get(pk=substrate.pk).deposition_run
    chain.s.record_void(actor=chain.reviewer, record=run.template, reason="wrong spheres logged")
    chain.signed_reject(run.bath_lot, reason="contaminated")
    kinds = {type(record) for record in record_get_ancestors(substrate.code).records.values()}
    with CaptureQueriesContext(connection) as captured:
        result = substrate_check_readiness(substrate.code)
    assert {"colloid_not_released", "linker_layer_too_old", "voided",
            "upstream_rejected"} <= set(codes(result))
    assert len(captured) == 2 + len(kinds) + 2 + 1 + 1
