"""QC readiness reasons: qc_missing, qc_failed, qc_stale, and when none applies.

Rules (qc/readiness.py): QC is required for a substrate stage that has a limit set; the
latest QC at the current stage made on or before the day checked decides; it is stale when
older than the limit set's valid days (a result exactly valid_days old still counts).
"""

from datetime import timedelta

import pytest
from django.test import override_settings

from inventory.lineage import record_get_ancestors
from inventory.readiness import ReadinessContext, substrate_check_readiness
from qc.readiness import qc_reasons
from qc.services import qc_limit_set_define

from .test_raman_services import GOOD_MAP, QcWorld, map_file, map_heights

pytestmark = pytest.mark.usefixtures("qc_provider")


@pytest.fixture
def qc_provider():
    with override_settings(SERSLEDGER_READINESS_PROVIDERS=["qc.readiness.qc_reasons"]):
        yield


@pytest.fixture
def world(chain):
    return QcWorld(chain, valid_days=10)


def _qc_codes(substrate, on_date=None):
    return [r.code for r in substrate_check_readiness(substrate.code, on_date=on_date).reasons
            if r.code.startswith("qc_")]


def test_missing(world):
    substrate = world.chain.decorated_substrate()
    result = substrate_check_readiness(substrate.code)
    assert [r.code for r in result.reasons] == ["qc_missing"]
    assert result.reasons[0].record_code == substrate.code


def test_passing_qc_makes_ready(world):
    substrate = world.chain.decorated_substrate()
    world.measure(substrate, GOOD_MAP)
    assert substrate_check_readiness(substrate.code).ready


def test_a_voided_passing_qc_no_longer_counts(world):
    substrate = world.chain.decorated_substrate()
    passing = world.measure(substrate, GOOD_MAP)
    world.chain.s.record_void(actor=world.chain.reviewer, record=passing,
                              reason="Measured on the wrong piece.")
    assert _qc_codes(substrate) == ["qc_missing"]


def test_failed_names_the_measurement(world):
    substrate = world.chain.decorated_substrate()
    failed = world.measure(substrate, map_file(map_heights(3000, 0.45, seed=5)))
    reason = next(r for r in substrate_check_readiness(substrate.code).reasons
                  if r.code == "qc_failed")
    assert reason.record_code == failed.code and "RSD" in reason.message


def test_stale_after_valid_days_and_not_on_the_last_valid_day(world):
    substrate = world.chain.decorated_substrate()
    m = world.measure(substrate, GOOD_MAP, days_ago=1)
    last_valid = m.measured_on + timedelta(days=10)
    assert _qc_codes(substrate, on_date=last_valid) == []
    reasons = substrate_check_readiness(substrate.code,
                                        on_date=last_valid + timedelta(days=1)).reasons
    stale = [r for r in reasons if r.code.startswith("qc_")]
    assert [r.code for r in stale] == ["qc_stale"]
    assert "11 days old" in stale[0].message and "10 days" in stale[0].message


def test_latest_measurement_decides(world):
    substrate = world.chain.decorated_substrate()
    world.measure(substrate, map_file(map_heights(3000, 0.45, seed=5)), days_ago=2)
    world.measure(substrate, GOOD_MAP, days_ago=1)
    assert _qc_codes(substrate) == []
    # On the day of the failure only the failure existed.
    assert _qc_codes(substrate, on_date=world.chain.day(2)) == ["qc_failed"]


def test_changing_the_validity_applies_to_past_results(world):
    substrate = world.chain.decorated_substrate()
    world.measure(substrate, GOOD_MAP, days_ago=5)
    qc_limit_set_define(actor=None, product_kind="particles", analyte=world.analyte,
                        min_enhancement_factor=1e4, max_rsd_percent=20, min_snr=10,
                        band_position_tolerance_cm1=5, valid_days=3)
    assert _qc_codes(substrate) == ["qc_stale"]


def test_qc_at_an_earlier_stage_does_not_count(world):
    chain = world.chain
    _, (piece,) = chain.run(pieces=1, days_ago=6)
    chain.release(piece)
    world.measure(piece, GOOD_MAP, days_ago=4)  # as a bare film
    chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                               substrates=[piece], concentration_mM=1, immersion_h=12,
                               made_on=chain.day(3))
    assert _qc_codes(piece) == ["qc_missing"]  # now a linker-stage piece, never QC'd as such


def test_no_limit_set_for_the_stage_means_no_qc_reasons(world):
    from qc.models import QcLimitSet

    QcLimitSet.objects.filter(product_kind="particles").delete()
    substrate = world.chain.decorated_substrate()
    assert substrate_check_readiness(substrate.code).ready


def test_the_provider_uses_at_most_four_queries(world, django_assert_max_num_queries):
    # limits, a pending import, the current QC, stale UV-vis figures of the colloid upstream
    substrate = world.chain.decorated_substrate()
    world.measure(substrate, GOOD_MAP)
    context = ReadinessContext(substrate=substrate, on_date=world.chain.today,
                               ancestry=record_get_ancestors(substrate))
    with django_assert_max_num_queries(4):
        assert qc_reasons(context) == []
