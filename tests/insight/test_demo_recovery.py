"""On the planted demo (insight/demo.py) the insight report finds the planted truths again."""

import pytest

from insight.demo import BAD_SPHERE_LOT, PLANTED, load_insight_demo
from insight.services import (
    DRIFT_FLAG_CATEGORY,
    curvature_column,
    drift_flags_raise,
    insight_report,
)
from inventory.demo import apply_rule_correction, load_inventory_demo
from inventory.demo_deposition import load_deposition_demo
from inventory.models import Flag, SphereLot
from qc.demo_colloid import load_colloid_demo
from qc.demo_raman import load_raman_demo


@pytest.fixture
def demo(db, today):
    scenario = load_inventory_demo(today=today)
    apply_rule_correction(scenario)
    load_deposition_demo(scenario)
    load_colloid_demo(scenario)
    load_raman_demo(scenario)
    load_insight_demo(scenario)
    return scenario


def test_report_recovers_the_planted_optimum_ageing_and_bad_lot(demo):
    report = insight_report()
    window = report.window
    print("window", window.as_dict())
    # The strongest lever is h/D and its window holds the planted optimum (0.55).
    assert window.setting == "height_over_diameter"
    assert window.low <= PLANTED["optimum_height_over_diameter"] <= window.high
    assert window.inside.rate >= 0.9 and window.outside.rate < 0.5
    fit = report.fits["log10_ef"]
    effects = {e.setting: e for e in fit.effects}
    print({k: (e.estimate, e.ci_low, e.ci_high, e.n) for k, e in effects.items()})
    ageing = effects["colloid_age_at_use_d"]
    assert ageing.ci_low <= PLANTED["colloid_ageing_log10_per_day"] <= ageing.ci_high
    assert ageing.ci_high < 0
    # The curvature in h/D: the planted value inside its 95 % interval (fixed seed).  Charge
    # density, a curved function of h/D on one sphere size, is left out of the fit: in it,
    # its bend took part of the curvature (-7.2, CI -7.9 to -6.5).
    curvature = effects[curvature_column("height_over_diameter")]
    assert curvature.ci_low <= -PLANTED["curvature_per_unit2"] <= curvature.ci_high
    assert "charge_density_mC_per_cm2" not in effects
    assert fit.omitted["charge_density_mC_per_cm2"].startswith("not enough data: a monotone")
    # Linker immersion time was varied with no effect: its interval holds zero.
    immersion = effects["linker_immersion_h"]
    assert immersion.ci_low <= 0 <= immersion.ci_high
    # Settings that never vary are named, not estimated.
    assert fit.omitted["linker_concentration_mM"].startswith("not enough data")
    # The bad sphere lot, and only it, drifts.
    bad = SphereLot.objects.get(supplier_lot=BAD_SPHERE_LOT).code
    lots = {f.key for f in report.drift if f.key.startswith("SPH-")}
    print("drift", [(f.key, f.metric, f.signals, f.rules) for f in report.drift])
    assert lots == {bad}
    assert bad in report.verdict()


def test_drift_flag_is_raised_once_with_its_evidence(demo):
    bad = SphereLot.objects.get(supplier_lot=BAD_SPHERE_LOT).code
    raised = drift_flags_raise(actor=demo.users["maker"])
    assert [f.target_code for f in raised] == [bad]
    assert "run-rule signals" in raised[0].message and "SUB-" in raised[0].message
    assert drift_flags_raise(actor=demo.users["maker"]) == []
    assert Flag.objects.filter(category=DRIFT_FLAG_CATEGORY).count() == 1


def test_drift_flag_command_records_its_user_and_requires_one(demo):
    import io
    import json

    from django.core.management import call_command
    from django.core.management.base import CommandError

    with pytest.raises(CommandError, match="--user"):
        call_command("insight_drift_flags")
    out = io.StringIO()
    call_command("insight_drift_flags", "--user", demo.users["maker"].username, "--json",
                 stdout=out)
    summary = json.loads(out.getvalue())
    bad = SphereLot.objects.get(supplier_lot=BAD_SPHERE_LOT).code
    assert [flag["target"] for flag in summary["flags"]] == [bad]
    assert Flag.objects.get(category=DRIFT_FLAG_CATEGORY).created_by == demo.users["maker"]
