"""A deposition run's charge entered as the potentiostat reported it (no chronoamperogram).

The figures of an entered charge must be those of a file that integrates to the same charge;
the file's integral is checked here by numpy's trapezoid rule on the invented fixture
(fixtures/chronoamperograms/README.md: made for h/D = 0.50 with Au(I), 600 nm spheres,
1.00 cm², cathodic negative), not by the project's reader.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from django.apps import apps
from django.core.exceptions import ValidationError

from inventory.models import DepositionRun, Flag, TemplateAssembly
from inventory.selectors import record_get_history

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "chronoamperograms"
ON_TARGET = FIXTURES / "au_600nm_hd050.csv"
FIGURES = ("charge_C", "metal_volume_cm3", "equivalent_thickness_nm", "film_height_nm",
           "height_over_diameter", "sphere_diameter_nm")


def _file_charge_C() -> float:
    """Cathodic charge of the fixture by the trapezoid rule (numpy), current in mA."""
    table = np.loadtxt(ON_TARGET, delimiter=",", skiprows=1)
    return -float(np.trapezoid(table[:, 1] * 1e-3, table[:, 0]))


def _counts() -> dict[str, int]:
    return {model.__name__: model.objects.count()
            for model in apps.get_app_config("inventory").get_models()}


def _spheres(chain, diameter_nm=600):
    return chain.spheres(diameter_nm=diameter_nm)


def _record(chain, *, spheres=None, **extra):
    kwargs = {"actor": chain.maker, "template": chain.template(spheres=spheres or _spheres(chain)),
              "bath_lot": chain.lot("plating_bath"), "metal": "Au", "electrons_per_atom": 1,
              "mode": "potentiostatic", "electrode_area_cm2": 1.0, "made_on": chain.day(9),
              "pieces": 2, "target_height_over_diameter": 0.5}
    kwargs.update(extra)
    run, pieces = chain.s.deposition_run_record(**kwargs)
    return DepositionRun.objects.get(pk=run.pk), pieces


def _reason(run) -> str:
    return record_get_history(run)[0].reason or ""


def test_an_entered_charge_gives_the_figures_of_a_file_that_integrates_to_it(chain):
    from_file, _ = _record(chain, chronoamperogram=(ON_TARGET.name, ON_TARGET.read_bytes()))
    assert from_file.charge_C == pytest.approx(_file_charge_C(), rel=1e-9)
    entered, _ = _record(chain, charge_C=_file_charge_C())
    for name in FIGURES:
        assert getattr(entered, name) == pytest.approx(getattr(from_file, name), rel=1e-9), name
    # The fixture was made for h/D = 0.50 by its own generator (README).
    assert entered.height_over_diameter == pytest.approx(0.50, abs=1e-3)
    assert (from_file.charge_source, entered.charge_source) == ("chronoamperogram", "entered")
    assert entered.get_charge_source_display().startswith("Entered as the potentiostat")
    assert (entered.chronoamperogram_sha256, entered.chronoamperogram_name) == ("", "")
    assert (entered.charge_start_s, entered.charge_end_s, entered.cathodic_sign) == \
        (None, None, "")
    assert "charge entered as reported" in _reason(entered)
    assert not Flag.objects.exists()  # on target


@pytest.mark.parametrize("charge", [0.0, -0.05, math.nan, math.inf, -math.inf, 2e5, "lots",
                                    True])
def test_a_bad_charge_is_refused_under_its_field_and_nothing_is_saved(chain, charge):
    template, bath = chain.template(spheres=_spheres(chain)), chain.lot("plating_bath")
    before = _counts()
    with pytest.raises(ValidationError) as refused:
        chain.s.deposition_run_record(
            actor=chain.maker, template=template, bath_lot=bath, metal="Au",
            electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
            made_on=chain.day(9), pieces=2, charge_C=charge)
    assert list(refused.value.error_dict) == ["charge_C"]
    assert _counts() == before
    assert TemplateAssembly.objects.get(pk=template.pk).status == "released"  # not consumed


def test_the_database_refuses_a_charge_without_its_source_or_out_of_range(chain):
    from django.db import IntegrityError, transaction

    run, _ = _record(chain, charge_C=0.1)
    with pytest.raises(IntegrityError), transaction.atomic():
        DepositionRun.objects.filter(pk=run.pk).update(charge_source="")
    with pytest.raises(IntegrityError), transaction.atomic():
        DepositionRun.objects.filter(pk=run.pk).update(chronoamperogram_sha256="ab" * 32)
    with pytest.raises(IntegrityError), transaction.atomic():
        DepositionRun.objects.filter(pk=run.pk).update(charge_C=-1.0)


def test_a_run_takes_the_file_or_the_charge_not_both(chain):
    with pytest.raises(ValidationError) as refused:
        _record(chain, charge_C=0.1,
                chronoamperogram=(ON_TARGET.name, ON_TARGET.read_bytes()))
    assert refused.value.error_dict["charge_C"][0].code == "charge_or_file"
    assert not DepositionRun.objects.exists()


def test_a_file_replaces_an_entered_charge_and_says_so(chain):
    run, _ = _record(chain, charge_C=0.05)
    result = chain.s.deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=run, filename=ON_TARGET.name, content=ON_TARGET.read_bytes())
    run = DepositionRun.objects.get(pk=run.pk)
    assert run.charge_source == "chronoamperogram"
    assert run.charge_C == pytest.approx(_file_charge_C(), rel=1e-9)
    said = "replaces the entered charge 0.05 C with its integral"
    assert said in result.notes[0]
    assert said in _reason(run)


def test_a_typed_charge_cannot_overrule_a_files(chain):
    run, _ = _record(chain, chronoamperogram=(ON_TARGET.name, ON_TARGET.read_bytes()))
    with pytest.raises(ValidationError) as refused:
        chain.s.deposition_run_enter_charge(actor=chain.maker, run=run, charge_C=0.2)
    assert refused.value.error_dict["charge_C"][0].code == "charge_from_file"
    assert DepositionRun.objects.get(pk=run.pk).charge_C == pytest.approx(_file_charge_C())


def test_an_entered_charge_entered_again_is_kept_in_the_history(chain):
    run, _ = _record(chain, charge_C=0.1)
    same = chain.s.deposition_run_enter_charge(actor=chain.maker, run=run, charge_C=0.1)
    assert same.unchanged and DepositionRun.objects.get(pk=run.pk).version == run.version
    chain.s.deposition_run_enter_charge(actor=chain.maker, run=run, charge_C=0.12,
                                        reason="read off the instrument again")
    run = DepositionRun.objects.get(pk=run.pk)
    assert run.charge_C == 0.12
    assert _reason(run) == ("charge entered again: 0.1 C → 0.12 C; read off the instrument "
                            "again")


@pytest.mark.parametrize(("field", "value", "volume_ratio", "thickness_ratio"), [
    # Faraday's law and t = V/A (hand arithmetic): η halves the metal, z = 3 makes a third of
    # it, a doubled area halves the thickness but leaves the volume.
    ("current_efficiency", 0.5, 0.5, 0.5),
    ("electrons_per_atom", 3, 1 / 3, 1 / 3),
    ("electrode_area_cm2", 2.0, 1.0, 0.5),
])
def test_amending_an_input_recomputes_an_entered_charges_figures(chain, field, value,
                                                                  volume_ratio, thickness_ratio):
    run, pieces = _record(chain, charge_C=_file_charge_C())
    before = {name: getattr(run, name) for name in FIGURES}
    chain.s.record_amend(actor=chain.maker, record=run, changes={field: value},
                         reason="typed wrong", expected_version=run.version)
    run = DepositionRun.objects.get(pk=run.pk)
    assert run.charge_C == before["charge_C"] and run.charge_source == "entered"
    assert run.metal_volume_cm3 == pytest.approx(before["metal_volume_cm3"] * volume_ratio)
    assert run.equivalent_thickness_nm == pytest.approx(
        before["equivalent_thickness_nm"] * thickness_ratio)
    assert run.height_over_diameter < 0.45 and not run.stale_reason
    assert _reason(run).startswith(f"figures recomputed: {run.code} amended: {field}")
    # Off the 0.50 target now (beyond the built-in ±0.05): the run and its pieces are flagged.
    flagged = set(Flag.objects.filter(category="deposition").values_list("target_code",
                                                                         flat=True))
    assert flagged == {run.code, *(piece.code for piece in pieces)}


def test_amending_the_sphere_diameter_recomputes_an_entered_charges_height(chain):
    spheres = _spheres(chain)
    run, _ = _record(chain, spheres=spheres, charge_C=_file_charge_C())
    thickness = run.equivalent_thickness_nm
    chain.s.record_amend(actor=chain.maker, record=spheres,
                         changes={"nominal_diameter_nm": 500}, reason="certificate says 500",
                         expected_version=spheres.version)
    run = DepositionRun.objects.get(pk=run.pk)
    assert run.sphere_diameter_nm == 500 and run.equivalent_thickness_nm == thickness
    assert run.height_over_diameter == pytest.approx(run.film_height_nm / 500, rel=1e-12)
    # The same metal fills smaller voids higher: h/D rises from 0.50.
    assert run.height_over_diameter > 0.55
    assert "figures recomputed" in _reason(run) and spheres.code in _reason(run)


def test_a_voided_run_takes_neither_a_charge_nor_a_file(chain):
    # A voided record is kept for lineage and history only; new figures on it would be read
    # as current (the same rule as record_amend's).
    run, _ = _record(chain)
    chain.s.record_void(actor=chain.reviewer, record=run, reason="recorded twice")
    run = DepositionRun.objects.get(pk=run.pk)
    with pytest.raises(ValidationError) as refused:
        chain.s.deposition_run_enter_charge(actor=chain.maker, run=run, charge_C=0.11)
    assert refused.value.error_dict["record"][0].code == "voided"
    with pytest.raises(ValidationError) as refused:
        chain.s.deposition_run_attach_chronoamperogram(
            actor=chain.maker, run=run, filename=ON_TARGET.name, content=ON_TARGET.read_bytes())
    assert refused.value.error_dict["record"][0].code == "voided"
    run = DepositionRun.objects.get(pk=run.pk)
    assert run.charge_C is None and not run.chronoamperogram_sha256
