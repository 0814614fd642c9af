"""Insight counts a substrate's QC and flags by the project's one rules: qc's current result
(``qc.selectors.current``) and inventory's open flags (``inventory.flags``)."""

import pytest

from insight.selectors import insight_table
from insight.services import insight_report
from inventory.services import flag_raise, flag_resolve, record_void
from qc.selectors import qc_measurements_get_latest
from tests.qc.test_raman_services import GOOD_MAP, QcWorld, map_file, map_heights

# A map whose point-to-point spread (60 %) is far above the limits' 20 % RSD: it fails QC.
UNEVEN_MAP = map_file(map_heights(3000, 0.6, seed=5))


@pytest.fixture
def world(chain):
    return QcWorld(chain)


def _row(table, substrate):
    return table.set_index("substrate_code").loc[substrate.code]


def test_a_voided_qc_result_does_not_count_in_insight(world):
    reviewer = world.chain.reviewer
    kept_then_voided, only_voided = (world.chain.decorated_substrate() for _ in range(2))
    kept = world.measure(kept_then_voided, GOOD_MAP, days_ago=3)
    failed = world.measure(kept_then_voided, UNEVEN_MAP, days_ago=2)
    assert kept.passed and not failed.passed
    record_void(actor=reviewer, record=failed, reason="Measured on the wrong piece.")
    lone = world.measure(only_voided, UNEVEN_MAP, filename="other.csv", days_ago=2)
    record_void(actor=reviewer, record=lone, reason="Measured on the wrong piece.")

    table = insight_table().table
    row = _row(table, kept_then_voided)
    assert row["qc_code"] == kept.code and bool(row["passed"]) and row["qc_count"] == 1
    assert bool(row["passed_first_time"])
    assert "Uniformity" not in row["failure_reasons"]
    gone = _row(table, only_voided)
    assert gone["qc_count"] == 0 and gone["qc_code"] != gone["qc_code"]  # NaN: no result
    # The same answer as qc's one selector, substrate by substrate.
    current = qc_measurements_get_latest([kept_then_voided, only_voided])
    assert {s: m.code for s, m in current.items()} == {kept_then_voided.pk: kept.code}
    # The yield counts one tested substrate, passed first time; no failure reason is left.
    report = insight_report()
    particles = next(s for s in report.steps if s.step == "particles")
    assert (particles.tested, particles.passed_first_time) == (1, 1)
    assert report.failure_pareto == []


def test_only_open_flags_count_as_open_in_insight(world):
    chain = world.chain
    substrate = chain.decorated_substrate()
    still_open, resolved, voided = (
        flag_raise(actor=chain.maker, target=substrate, category="handling",
                   message=f"Deviation {n}") for n in range(3))
    flag_resolve(actor=chain.reviewer, flag=resolved, resolution="Re-measured, within limits.")
    record_void(actor=chain.reviewer, record=voided, reason="Raised on the wrong record.")
    row = _row(insight_table().table, substrate)
    assert row["open_flags"] == 1 and row["flag_categories"] == "handling"
    assert still_open.state == still_open.State.OPEN


def test_the_report_is_cached_by_its_data_and_recomputed_when_a_record_changes(
        world, monkeypatch):
    import insight.services

    computed = []
    compute = insight.services._report
    monkeypatch.setattr(insight.services, "_report",
                        lambda *args: computed.append(args) or compute(*args))
    substrate = world.chain.decorated_substrate()
    result = world.measure(substrate, GOOD_MAP, days_ago=2)
    first = insight_report()
    again = insight_report()
    assert len(computed) == 1 and again.digest == first.digest
    assert first.overall.tested == again.overall.tested == 1
    # Voiding the result changes the data behind the page: a new report, not the kept one.
    record_void(actor=world.chain.reviewer, record=result, reason="Measured on the wrong piece.")
    changed = insight_report()
    assert len(computed) == 2 and changed.digest != first.digest
    assert changed.overall.tested == 0
    # A different target is a different report of the same data.
    insight_report(target=0.8)
    assert len(computed) == 3
