"""The Raman part of the demo gives the outcomes it promises (qc/demo_raman.py docstring)."""

import pytest
from django.test import override_settings

from inventory.demo import load_inventory_demo
from inventory.demo_deposition import load_deposition_demo
from inventory.models import Flag, Status
from inventory.readiness import substrate_check_readiness
from qc.demo_raman import load_raman_demo
from qc.models import QcLimitSet, QcMeasurement


@pytest.fixture
def demo(db, today):
    scenario = load_inventory_demo(today=today)
    load_deposition_demo(scenario)  # the film heights the EF's surface-area factor needs
    load_raman_demo(scenario)
    return scenario


def test_demo_film_ef_uses_its_derived_surface_area(demo):
    # The demo's fresh run: 600 nm spheres, film height from its chronoamperogram.
    m = QcMeasurement.objects.get(substrate=demo.substrates["ready_a"])
    run = demo.substrates["ready_a"].deposition_run
    run.refresh_from_db()
    # Hand geometry: 1 + n·π·h² with n = 2/(√3·D²) close-packed spheres per area.
    ratio = run.film_height_nm / run.sphere_diameter_nm
    assert m.surface_area_factor == pytest.approx(1 + 2 * 3.141592653589793 / 3**0.5 * ratio**2)
    assert m.surface_area_origin.startswith("derived") and m.surface_area_factor_u > 0
    flat = QcMeasurement.objects.get(substrate=demo.substrates["flat_gold"])
    assert flat.surface_area_factor == 1.0 and "flat film" in flat.surface_area_origin


def _codes(code):
    return sorted(r.code for r in substrate_check_readiness(code).reasons)


@override_settings(SERSLEDGER_READINESS_PROVIDERS=["qc.readiness.qc_reasons"])
def test_demo_outcomes_with_the_qc_provider_on(demo):
    s = demo.substrates
    assert substrate_check_readiness(s["ready_a"].code).ready
    assert substrate_check_readiness(s["ready_b"].code).ready
    for name in ("flat_gold", "bare_film"):
        assert _codes(s[name].code) == ["open_flag", "qc_failed", "status_quarantine"]
        assert s[name].status == Status.QUARANTINE
        assert Flag.objects.filter(target_code=s[name].code, category="qc",
                                   state="open").count() == 1
    assert "qc_missing" in _codes(s["awaiting_qc"].code)
    assert not QcMeasurement.objects.filter(substrate=s["awaiting_qc"]).exists()


def test_demo_failures_fail_for_the_intended_reason(demo):
    s = demo.substrates
    nonuniform = QcMeasurement.objects.get(substrate=s["flat_gold"])
    weak = QcMeasurement.objects.get(substrate=s["bare_film"])
    # Fixture design (fixtures/raman/generate.py): RSD ≈ 35 % vs ≈ 8–12 % for the good map.
    assert [r.split()[0] for r in nonuniform.failure_reasons] == ["Uniformity"]
    assert [r.split()[0] for r in weak.failure_reasons] == ["Enhancement"]
    good = QcMeasurement.objects.get(substrate=s["ready_a"])
    assert 8 <= good.rsd_percent <= 12 and 30 <= nonuniform.rsd_percent <= 40
    # The generator plants a band ≈ 25× weaker; the example film limit is 10⁶ (common
    # practice: structured films reach about 10⁶).
    assert weak.enhancement_factor < 1e6 <= good.enhancement_factor
    assert good.enhancement_factor / weak.enhancement_factor > 5
    assert QcLimitSet.objects.filter(is_example=False).count() == 0


def test_a_dataset_on_a_failed_substrate_gets_a_review_notice(demo):
    from inventory.models import Substrate
    from qc.demo_raman import FIXTURES, MAP_SETTINGS
    from qc.selectors import dataset_get_review_notices, datasets_needing_review
    from qc.services import qc_measurement_import

    # The demo's dataset was made on ready_b; no QC flag is upstream of it yet.
    ready_b = Substrate.objects.get(pk=demo.substrates["ready_b"].pk)
    dataset = ready_b.datasets.get()
    assert datasets_needing_review(category="qc") == []
    failed = qc_measurement_import(
        actor=None, substrate=ready_b, analyte_lot=demo.lots["analyte"], filename="again.csv",
        content=(FIXTURES / "nonuniform_substrate_map.csv").read_bytes(),
        measured_on=demo.today, shared_measurement=True, **MAP_SETTINGS)
    notices = datasets_needing_review(category="qc")
    assert [(n.dataset_code, n.flagged_record_code) for n in notices] == [
        (dataset.code, ready_b.code)]
    assert failed.code in notices[0].message
    assert [n.flag_code for n in dataset_get_review_notices(dataset)] == [notices[0].flag_code]
