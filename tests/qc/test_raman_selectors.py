"""QC selectors: latest QC, control-chart series per product kind, batch reproducibility."""

import numpy as np
import pytest

from qc.models import QcMeasurement
from qc.selectors import (
    qc_batch_reproducibility,
    qc_control_chart,
    qc_measurement_get_latest,
    qc_measurements_get_latest,
)

from .test_raman_services import GOOD_MAP, QcWorld, map_file, map_heights


@pytest.fixture
def world(chain):
    return QcWorld(chain)


def test_latest_qc_is_the_newest_at_the_current_stage(world):
    substrate = world.chain.decorated_substrate()
    assert qc_measurement_get_latest(substrate) is None
    world.measure(substrate, GOOD_MAP, days_ago=2)
    # A second, different map (the same file twice is refused as a re-import).
    newest = world.measure(substrate, map_file(map_heights(3000, 0.05, seed=9)), days_ago=1)
    assert qc_measurement_get_latest(substrate) == newest
    assert qc_measurement_get_latest(substrate, product_kind="film") is None


def test_control_chart_of_log10_ef_and_rsd(world):
    substrates = [world.chain.decorated_substrate() for _ in range(4)]
    for days_ago, (substrate, rsd) in zip(
        (4, 3, 2, 1), zip(substrates, (0.05, 0.1, 0.08, 0.12), strict=True), strict=True
    ):
        world.measure(substrate, map_file(map_heights(3000, rsd, seed=days_ago)),
                      days_ago=days_ago)
    series = qc_control_chart(product_kind="particles", metric="log10_enhancement_factor")
    stored = list(QcMeasurement.objects.order_by("measured_on")
                  .values_list("log10_enhancement_factor", flat=True))
    assert series.codes == tuple(QcMeasurement.objects.order_by("measured_on")
                                 .values_list("code", flat=True))
    # Individuals chart (SPC tables, e.g. Montgomery): centre x̄, limits x̄ ± 2.66·MR̄.
    mr_bar = np.mean(np.abs(np.diff(stored)))
    assert series.chart.centre == pytest.approx(np.mean(stored))
    assert series.chart.upper_limit == pytest.approx(np.mean(stored) + 2.66 * mr_bar, rel=1e-3)
    assert series.chart.mr_upper_limit == pytest.approx(3.267 * mr_bar, rel=1e-3)
    rsd = qc_control_chart(product_kind="particles", metric="rsd_percent")
    assert rsd.chart.values.tolist() == pytest.approx(
        list(QcMeasurement.objects.order_by("measured_on").values_list("rsd_percent", flat=True)))
    assert qc_control_chart(product_kind="film", metric="rsd_percent").chart is None
    with pytest.raises(ValueError):
        qc_control_chart(product_kind="film", metric="height")


def test_batch_reproducibility_of_one_run(world):
    chain = world.chain
    run, pieces = chain.run(pieces=3, days_ago=5)
    groups = []
    for index, piece in enumerate(pieces):
        chain.release(piece)
        world.measure(piece, map_file(map_heights(2000 + 500 * index, 0.1, seed=index)),
                      days_ago=1)
    maps = sorted(QcMeasurement.objects.all(), key=lambda m: m.code)
    groups = [np.array(m.point_values["normalised_height_counts_per_mW_s"]) for m in maps]
    result = qc_batch_reproducibility(deposition_run=run)
    # One-way ANOVA (Montgomery, Design and Analysis of Experiments §3.9), balanced groups.
    k, n = len(groups), len(groups[0])
    grand = np.concatenate(groups).mean()
    ms_between = n * sum((g.mean() - grand) ** 2 for g in groups) / (k - 1)
    ms_within = sum(((g - g.mean()) ** 2).sum() for g in groups) / (k * n - k)
    assert result.n_substrates == 3
    assert result.within_variance == pytest.approx(ms_within)
    assert result.between_variance == pytest.approx(max(0, (ms_between - ms_within) / n))
    means = [g.mean() for g in groups]
    assert result.between_substrate_rsd_percent == pytest.approx(
        100 * np.std(means, ddof=1) / np.mean(means))
    with pytest.raises(ValueError):
        qc_batch_reproducibility(deposition_run=chain.run(pieces=1)[0])


def test_a_voided_measurement_no_longer_counts_as_the_latest(world):
    from inventory.services import record_void

    substrate = world.chain.decorated_substrate()
    older = world.measure(substrate, GOOD_MAP, days_ago=2)
    newest = world.measure(substrate, map_file(map_heights(3000, 0.05, seed=9)), days_ago=1)
    record_void(actor=world.chain.reviewer, record=newest, reason="Wrong substrate scanned.")
    assert qc_measurement_get_latest(substrate) == older


def test_the_batch_form_gives_each_substrate_its_current_qc_in_one_query(
        world, django_assert_num_queries):
    from inventory.services import record_void

    first, second, bare = (world.chain.decorated_substrate() for _ in range(3))
    kept = world.measure(first, GOOD_MAP, days_ago=2)
    voided = world.measure(first, map_file(map_heights(3000, 0.05, seed=9)), days_ago=1)
    record_void(actor=world.chain.reviewer, record=voided, reason="Wrong substrate scanned.")
    only = world.measure(second, map_file(map_heights(2500, 0.05, seed=4)), days_ago=1)
    with django_assert_num_queries(1):
        current = qc_measurements_get_latest([first, second, bare])
    assert current == {first.pk: kept, second.pk: only}
    # The day checked: a result measured after it does not count yet.
    assert qc_measurements_get_latest([second], on_date=only.measured_on.replace(day=1)) == {}


def test_open_flags_leave_out_resolved_and_voided_ones(world):
    from inventory.flags import flags_open, flags_open_by_code
    from inventory.services import flag_raise, flag_resolve, record_void

    chain = world.chain
    substrate = chain.decorated_substrate()
    still_open, resolved, voided = (
        flag_raise(actor=chain.maker, target=substrate, category="qc", message=f"Deviation {n}")
        for n in range(3))
    flag_resolve(actor=chain.reviewer, flag=resolved, resolution="Re-measured, within limits.")
    record_void(actor=chain.reviewer, record=voided, reason="Raised on the wrong record.")
    assert list(flags_open(target_codes=[substrate.code])) == [still_open]
    assert flags_open_by_code([substrate.code]) == {substrate.code: [still_open]}
