"""Issue 16 item 6: amending an input recomputes the figures derived from it, or marks them stale.

Expected values come from outside the code: the chronoamperogram fixture was made for
h/D = 0.50 with 600 nm spheres (fixtures/chronoamperograms/README.md); a close-packed
monolayer holds 2/(√3·D²) spheres per unit area (hexagonal packing, textbook geometry);
Faraday's law makes the deposited thickness inversely proportional to the electrode area
for the same charge.
"""

from __future__ import annotations

import math

import pytest

from inventory.models import DepositionRun, SphereLot, TemplateAssembly
from inventory.readiness import substrate_check_readiness
from inventory.selectors import record_get_history
from inventory.services import record_amend
from qc.models import UvVisRecord
from qc.services import uvvis_record_import
from tests.api.conftest import UVVIS, client_for

pytestmark = pytest.mark.django_db


@pytest.fixture
def run_500nm(chain):
    """A run whose sphere lot was recorded as 500 nm, with the file made for 600 nm."""
    run, _pieces = chain.measured_run(diameter_nm=500)
    return DepositionRun.objects.get(pk=run.pk)


def _amend(actor, record, **changes):
    return record_amend(actor=actor, record=record, changes=changes, reason="typing error",
                        expected_version=type(record).objects.get(pk=record.pk).version)


def test_a_sphere_diameter_correction_recomputes_template_and_film(run_500nm, maker):
    assert run_500nm.height_over_diameter != pytest.approx(0.50, abs=0.01)
    spheres = SphereLot.objects.get(templates__deposition_runs=run_500nm)
    _amend(maker, spheres, nominal_diameter_nm=600)

    template = TemplateAssembly.objects.get(deposition_runs=run_500nm)
    diameter_cm = 600e-7
    assert template.spheres_per_cm2 == pytest.approx(2 / (math.sqrt(3) * diameter_cm**2),
                                                     rel=1e-9)
    run = DepositionRun.objects.get(pk=run_500nm.pk)
    assert run.sphere_diameter_nm == 600 and run.stale_reason == ""
    assert run.height_over_diameter == pytest.approx(0.50, abs=0.01)  # the file's design
    # The history shows both changes: the amendment and the recomputation it caused.
    [amended] = [h for h in record_get_history(spheres.code) if h.reason == "typing error"]
    assert [(c.field, c.new) for c in amended.changes] == [("nominal_diameter_nm", 600.0)]
    recomputed = record_get_history(run.code)[0]
    assert recomputed.reason.startswith(f"figures recomputed: {spheres.code} amended: "
                                        "nominal_diameter_nm 500.0 → 600.0")
    assert recomputed.version == run_500nm.version + 1


def test_an_electrode_area_correction_recomputes_the_thickness(run_500nm, maker):
    before = run_500nm.equivalent_thickness_nm
    _amend(maker, run_500nm, electrode_area_cm2=2.0)
    run = DepositionRun.objects.get(pk=run_500nm.pk)
    assert run.equivalent_thickness_nm == pytest.approx(before / 2, rel=1e-9)  # Faraday


def test_a_slide_area_correction_recomputes_the_suspension_needed(chain, maker):
    template = chain.template()
    need = template.suspension_volume_computed_uL
    _amend(maker, template, slide_area_cm2=template.slide_area_cm2 * 3)
    assert TemplateAssembly.objects.get(pk=template.pk).suspension_volume_computed_uL == \
        pytest.approx(need * 3, rel=1e-9)  # one monolayer: volume ∝ area


def test_a_run_whose_file_is_gone_is_marked_stale_and_not_ready(run_500nm, maker, chain):
    run_500nm.chronoamperogram.storage.delete(run_500nm.chronoamperogram.name)
    piece = run_500nm.substrates.get()
    chain.release(piece)
    _amend(maker, run_500nm, electrode_area_cm2=2.0)
    run = DepositionRun.objects.get(pk=run_500nm.pk)
    assert run.stale_reason.startswith(f"{run.code} amended: electrode_area_cm2 1.0 → 2.0")
    readiness = substrate_check_readiness(piece.code)
    assert readiness.verdict == "NOT READY"
    assert "figures_stale" in {reason.code for reason in readiness.reasons}
    body = client_for(maker).get(f"/api/v1/deposition-runs/{run.code}/").json()
    assert body["stale_reason"] == run.stale_reason


def test_a_colloid_metal_correction_marks_its_uvvis_stale_and_blocks_readiness(chain, maker):
    batch = chain.batch(days_ago=10)
    imported = uvvis_record_import(actor=maker, batch=batch, filename="ag_stable_day00.csv",
                                   content=(UVVIS / "ag_stable_day00.csv").read_bytes(),
                                   measured_on=chain.day(9), dilution_factor=10)
    substrate = chain.decorated_substrate(batch=batch)
    _amend(maker, batch, metal="Au")
    record = UvVisRecord.objects.get(pk=imported.record.pk)
    assert record.stale_reason.startswith(f"{batch.code} amended: metal Ag → Au")
    assert record_get_history(record.code)[0].reason.startswith("figures stale:")
    reasons = substrate_check_readiness(substrate.code).reasons
    assert [r.record_code for r in reasons if r.code == "figures_stale"] == [record.code]


def test_the_record_page_says_stale_instead_of_showing_the_figure_as_current(run_500nm, maker,
                                                                            client):
    run_500nm.chronoamperogram.storage.delete(run_500nm.chronoamperogram.name)
    _amend(maker, run_500nm, electrode_area_cm2=2.0)
    client.force_login(maker)
    page = client.get(f"/r/{run_500nm.code}/")
    assert page.status_code == 200
    text = page.content.decode()
    assert "stale: " + run_500nm.code in text
    height = format(run_500nm.height_over_diameter, ".6g")
    assert f"stale (last worked out as {height})" in text


def test_a_non_finite_number_renders_as_invalid_value_not_an_error(chain):
    """Values only a fault could hold (never saved: set on the loaded record)."""
    from bench.page_queries import field_rows

    template = chain.template()
    template.slide_area_cm2, template.spheres_per_cm2 = float("inf"), float("nan")
    shown = {row.label: row.value for row in field_rows(template)}
    assert list(shown.values()).count("invalid value") == 2, shown


# --- QC enhancement factors whose surface-area factor was derived from the film geometry ---
# The segment-void area factor depends on D and h (the film's geometry), so once either is
# worked out again (or cannot be) the EF computed from the old pair is no longer current.


def _qc_on(qc_lab, substrate, **surface_area):
    from qc.services import qc_measurement_import
    from tests.qc_lab import MAP_SETTINGS, RAMAN

    name = "good_substrate_map.csv"
    return qc_measurement_import(
        actor=qc_lab.chain.maker, substrate=substrate, analyte_lot=qc_lab.lot, filename=name,
        content=(RAMAN / name).read_bytes(), measured_on=qc_lab.chain.day(1),
        reference=qc_lab.reference, shared_measurement=True, **surface_area, **MAP_SETTINGS)


def _qc_reasons(substrate):
    return {(reason.code, reason.record_code)
            for reason in substrate_check_readiness(substrate.code).reasons}


def test_a_sphere_diameter_correction_marks_a_derived_enhancement_factor_stale(
        run_500nm, qc_lab, maker, client):
    from qc.models import QcMeasurement

    piece = run_500nm.substrates.get()
    measured = _qc_on(qc_lab, piece)
    assert measured.surface_area_origin.startswith("derived")
    assert measured.stale_reason == ""
    assert ("figures_stale", measured.code) not in _qc_reasons(piece)
    spheres = SphereLot.objects.get(templates__deposition_runs=run_500nm)

    _amend(maker, spheres, nominal_diameter_nm=600)

    record = QcMeasurement.objects.get(pk=measured.pk)
    assert record.stale_reason.startswith(f"{spheres.code} amended: nominal_diameter_nm")
    assert record.enhancement_factor == measured.enhancement_factor  # kept, not current
    history = record_get_history(record.code)[0]
    assert history.reason.startswith("figures stale:")
    assert history.version == measured.version + 1
    assert ("figures_stale", record.code) in _qc_reasons(piece)
    body = client_for(maker).get(f"/api/v1/qc-measurements/{record.code}/").json()
    assert body["stale_reason"] == record.stale_reason
    client.force_login(maker)
    page = client.get(f"/r/{record.code}/")
    assert page.status_code == 200
    text = page.content.decode()
    assert "stale: " + record.stale_reason[:40] in text
    assert "stale (last worked out as" in text  # the EF is not shown as a current figure
    assert "PASS" not in text.split('id="verdict"')[1].split("</p>")[0]


def test_a_run_whose_figures_go_stale_takes_its_derived_qc_with_it(run_500nm, qc_lab, maker):
    from qc.models import QcMeasurement

    piece = run_500nm.substrates.get()
    measured = _qc_on(qc_lab, piece)
    run_500nm.chronoamperogram.storage.delete(run_500nm.chronoamperogram.name)
    _amend(maker, run_500nm, electrode_area_cm2=2.0)
    record = QcMeasurement.objects.get(pk=measured.pk)
    assert record.stale_reason.startswith(f"{run_500nm.code} amended: electrode_area_cm2")
    assert ("figures_stale", record.code) in _qc_reasons(piece)


def test_an_entered_surface_area_factor_does_not_depend_on_the_film(run_500nm, qc_lab, maker):
    from qc.models import QcMeasurement

    piece = run_500nm.substrates.get()
    measured = _qc_on(qc_lab, piece, surface_area_factor=2.0,
                      surface_area_source="electrochemical surface area, lab notebook")
    _amend(maker, SphereLot.objects.get(templates__deposition_runs=run_500nm),
           nominal_diameter_nm=600)
    record = QcMeasurement.objects.get(pk=measured.pk)
    assert record.stale_reason == "" and record.version == measured.version


def test_a_subnormal_solids_content_is_refused_not_a_division_by_zero(chain, maker):
    """Found by the property test: 5e-324 % w/v is > 0 (in range) but 5e-324/100 is 0.0."""
    from django.core.exceptions import ValidationError

    template = chain.template()
    with pytest.raises(ValidationError):
        _amend(maker, template.sphere_lot, solids_percent_w_v=5e-324)
    assert SphereLot.objects.get(pk=template.sphere_lot.pk).solids_percent_w_v != 5e-324
