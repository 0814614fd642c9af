"""Default limits for every stage, versioned changes, and the verdicts they leave alone."""

from __future__ import annotations

import math

import pytest
from django.core.checks import run_checks

from inventory.models import Substrate
from qc.checks import stages_without_limits
from qc.limit_defaults import COLLOID_DEFAULTS, QC_DEFAULTS
from qc.models import QcLimitSet
from tests.qc_lab import QcLab

pytestmark = pytest.mark.django_db


def _define_analyte(actor, name="Benzenethiol"):
    from qc.services import reference_analyte_define

    return reference_analyte_define(
        actor=actor, name=name, band_positions_cm1=[999, 1073], band_positions_source="from memory",
        qc_band_cm1=1073.0, surface_density_per_nm2=6.8, surface_density_source="from memory")


def test_a_new_analyte_gets_defaults_to_review_for_every_stage(administrator):
    analyte = _define_analyte(administrator)
    limits = {limit.product_kind: limit for limit in QcLimitSet.objects.filter(analyte=analyte)}
    assert set(limits) == set(Substrate.Stage.values)  # the linker stage included
    linker = limits["linker"]
    assert linker.is_example and linker.rationale.startswith("Default to review")
    assert linker.min_enhancement_factor == QC_DEFAULTS["linker"].min_enhancement_factor
    assert linker.version == 1 and linker.created_by == administrator


def test_defaults_never_replace_a_stage_the_lab_has_set(administrator):
    from qc.services import qc_limit_defaults_fill, qc_limit_set_define

    analyte = _define_analyte(administrator)
    own = qc_limit_set_define(actor=administrator, product_kind="film", analyte=analyte,
                              band_position_tolerance_cm1=2.0, valid_days=10,
                              max_rsd_percent=12.0, rationale="our own film limits")
    assert qc_limit_defaults_fill(actor=administrator, analyte=analyte) == []
    own.refresh_from_db()
    assert (own.max_rsd_percent, own.is_example, own.version) == (12.0, False, 2)


def test_default_values_match_their_sources():
    # SERS precision 15–20 % RSD (common practice; shared/REFERENCES.md rules of thumb).
    assert all(d.max_rsd_percent == 20.0 for d in QC_DEFAULTS.values())
    # ICH Q2(R1) (2005): quantitation limit at a signal-to-noise ratio of 10:1.
    assert all(d.min_snr == 10.0 for d in QC_DEFAULTS.values())
    # Particle-in-gap substrates reach 10⁸–10¹⁰, structured films about 10⁶ (common practice):
    # the particle floor sits at the film level and above the bare film's own floor.
    assert QC_DEFAULTS["particles"].min_enhancement_factor == 1e6
    assert QC_DEFAULTS["film"].min_enhancement_factor < 1e6
    # Haiss et al., Anal. Chem. 2007, 79, 4215: λspr = 512 + 6.53·exp(0.0216·d) nm; gold of
    # 10–100 nm must fall inside the default window.
    gold = COLLOID_DEFAULTS["Au"]
    for diameter_nm in (10.0, 100.0):
        peak_nm = 512 + 6.53 * math.exp(0.0216 * diameter_nm)
        assert gold.peak_min_nm <= peak_nm <= gold.peak_max_nm
    # Every default is a legal value: the service takes it (the ranges and CHECKs decide).
    for default in QC_DEFAULTS.values():
        assert default.why


def test_system_check_lists_stages_without_limits(administrator):
    warnings = stages_without_limits(databases=["default"])
    assert [w.id for w in warnings] == ["qc.W001"]
    for label in Substrate.Stage.labels:
        assert label in warnings[0].msg
    _define_analyte(administrator)
    assert stages_without_limits(databases=["default"]) == []
    assert "qc.W001" not in {w.id for w in run_checks(databases=["default"])}


def test_a_changed_limit_judges_new_measurements_and_old_verdicts_stay(chain, administrator):
    from qc.services import qc_limit_set_define

    lab = QcLab(chain, administrator)
    _run, (first, second) = chain.run(pieces=2)
    before = lab.measure(chain.release(first), "good_substrate_map.csv")
    assert before.passed  # the fixture map's RSD is about 9.5 % (fixtures/raman/generate.py)
    film = QcLimitSet.objects.get(analyte=lab.analyte, product_kind="film")
    changed = qc_limit_set_define(
        actor=administrator, product_kind="film", analyte=lab.analyte,
        min_enhancement_factor=film.min_enhancement_factor, max_rsd_percent=5.0,
        min_snr=film.min_snr, band_position_tolerance_cm1=film.band_position_tolerance_cm1,
        valid_days=film.valid_days, rationale="tighter uniformity for the new line")
    after = lab.measure(chain.release(second), "good_substrate_map.csv")
    assert not after.passed and any("RSD" in reason for reason in after.failure_reasons)
    assert after.limits_used["version"] == changed.version == film.version + 1
    before.refresh_from_db()
    assert before.passed and before.limits_used["version"] == film.version
    assert before.limits_used["max_rsd_percent"] == 20.0
    history = list(changed.history.order_by("history_id"))
    assert history[-1].history_change_reason == "tighter uniformity for the new line"
    assert history[-1].history_user == administrator
