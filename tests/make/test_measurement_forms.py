"""Make forms for instrument files: Raman reference and QC uploads, and datasets."""

from __future__ import annotations

import hashlib

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from inventory.models import Dataset, Flag, Status, Substrate
from inventory.uncertainty_format import format_with_uncertainty
from qc.models import QcMeasurement, ReferenceMeasurement

from .builders import FIXTURES, MAP_SETTINGS, fixture_upload


def _qc_data(lab, substrate, filename, **extra):
    data = {"substrate": substrate.code, "analyte_lot": lab.lot.code,
            "reference": lab.reference.code, "raw_file": fixture_upload(f"raman/{filename}"),
            "surface_area_factor": "1.5", "surface_area_source": "invented for the test",
            "surface_density_rel_u": "0.2", **MAP_SETTINGS}
    data.update(extra)
    return data


def test_failing_map_shows_fail_with_reasons_and_flags_the_substrate(maker_client, chain,
                                                                     qc_lab):
    substrate = chain.decorated_substrate()
    response = maker_client.post(reverse("make:qc"), _qc_data(
        qc_lab, substrate, "nonuniform_substrate_map.csv",
        measured_on=chain.day(1).isoformat()))
    measurement = QcMeasurement.objects.get()
    assert response["Location"] == reverse("make:result", args=[measurement.code])
    assert not measurement.passed
    page = maker_client.get(response["Location"]).content.decode()
    assert "FAIL" in page and "Uniformity RSD" in page
    for reason in measurement.failure_reasons:
        assert reason in page
    # fixtures/raman/generate.py designed this map for an RSD of about 35 %.
    assert measurement.rsd_percent == pytest.approx(35, abs=8)
    assert f"{measurement.rsd_percent:.1f} %" in page
    flag = Flag.objects.get(target_code=substrate.code, state=Flag.State.OPEN, category="qc")
    assert flag.code in page
    assert Substrate.objects.get(pk=substrate.pk).status == Status.QUARANTINE


def test_good_map_passes_with_enhancement_factor(maker_client, chain, qc_lab):
    substrate = chain.decorated_substrate()
    response = maker_client.post(reverse("make:qc"), _qc_data(
        qc_lab, substrate, "good_substrate_map.csv", measured_on=chain.day(1).isoformat()))
    measurement = QcMeasurement.objects.get()
    assert measurement.passed
    page = maker_client.get(response["Location"]).content.decode()
    assert "PASS" in page
    assert format_with_uncertainty(measurement.enhancement_factor,
                                   measurement.enhancement_factor_u) in page
    assert "entered: invented for the test" in page and measurement.surface_area_factor == 1.5
    # generate.py: log10 SSEF ≈ 6.3 for this map with the neat reference and these inputs.
    assert measurement.log10_enhancement_factor == pytest.approx(6.3, abs=0.3)


def test_an_unknown_surface_area_is_refused_until_entered_or_assumed(maker_client, chain,
                                                                    qc_lab):
    # The test chain's run has no chronoamperogram, so the factor cannot be derived.
    substrate = chain.decorated_substrate()
    data = _qc_data(qc_lab, substrate, "good_substrate_map.csv",
                    measured_on=chain.day(1).isoformat(), surface_area_factor="",
                    surface_area_source="")
    response = maker_client.post(reverse("make:qc"), data)
    assert "no film height" in str(response.context["form"].errors)
    assert not QcMeasurement.objects.exists()
    data.update(raw_file=fixture_upload("raman/good_substrate_map.csv"),
                surface_area_assumed_one="on")
    response = maker_client.post(reverse("make:qc"), data)
    measurement = QcMeasurement.objects.get()
    page = maker_client.get(response["Location"]).content.decode()
    assert measurement.surface_area_origin.startswith("assumed 1")
    assert "assumed to be 1" in page


def test_qc_map_with_an_unusable_substrate_is_refused(maker_client, chain, qc_lab):
    substrate = chain.decorated_substrate()
    chain.s.record_transition(actor=chain.reviewer, record=substrate, to_status="consumed",
                              reason="used up")
    response = maker_client.post(reverse("make:qc"), _qc_data(
        qc_lab, substrate, "good_substrate_map.csv", measured_on=chain.day(1).isoformat()))
    assert response.context["form"].errors["substrate"]
    assert not QcMeasurement.objects.exists()


def test_qc_with_a_broken_file_names_the_file_field(maker_client, chain, qc_lab):
    substrate = chain.decorated_substrate()
    bad = SimpleUploadedFile("map.csv", b"x_um,y_um,1000,1001\n0,0,abc,1\n")
    response = maker_client.post(reverse("make:qc"), _qc_data(
        qc_lab, substrate, "good_substrate_map.csv", raw_file=bad,
        measured_on=chain.day(1).isoformat()))
    assert response.context["form"].errors["raw_file"]
    assert not QcMeasurement.objects.exists() and not Flag.objects.exists()


def _reference_data(lab, chain, upload):
    return {"analyte_lot": lab.lot.code, "raw_file": upload,
            "measured_on": chain.day(1).isoformat(), "laser_nm": "785", "power_mW": "20",
            "integration_s": "10", "accumulations": "1", "concentration_mol_L": "9.74",
            "concentration_rel_u": "0", "effective_height_um": "12",
            "effective_height_rel_u": "0.15", "effective_area_um2": "1.5"}


def test_the_same_reference_file_twice_is_refused_beside_the_file(maker_client, chain, qc_lab):
    response = maker_client.post(reverse("make:reference"), _reference_data(
        qc_lab, chain, fixture_upload("raman/reference_neat_benzenethiol.csv")))
    assert "already imported" in " ".join(response.context["form"].errors["raw_file"])
    assert ReferenceMeasurement.objects.count() == 1


def test_reference_measurement_upload(maker_client, chain, qc_lab):
    content = (FIXTURES / "raman" / "reference_neat_benzenethiol.csv").read_bytes()
    second_aliquot = SimpleUploadedFile("neat2.csv", b"# second aliquot\n" + content)
    response = maker_client.post(reverse("make:reference"),
                                 _reference_data(qc_lab, chain, second_aliquot))
    assert response.status_code == 302, response.context["form"].errors
    reference = ReferenceMeasurement.objects.latest("id")
    assert reference != qc_lab.reference
    assert response["Location"] == reverse("make:result", args=[reference.code])
    # Both Raman forms pre-select the analyte lot this user used last.
    form = maker_client.get(reverse("make:qc")).context["form"]
    assert form["analyte_lot"].value() == qc_lab.lot.code


def test_dataset_files_are_kept_with_their_sha256(maker_client, chain):
    _run, pieces = chain.run(pieces=2)
    first, second = b"shift,counts\n1000,5\n", b"shift,counts\n1000,6\n"
    response = maker_client.post(reverse("make:dataset"), {
        "title": "Thiram dilution series", "substrates": [p.code for p in pieces],
        "acquired_on": chain.today.isoformat(),
        "files": [SimpleUploadedFile("a.csv", first), SimpleUploadedFile("b.csv", second)]})
    dataset = Dataset.objects.get()
    assert response["Location"] == reverse("make:result", args=[dataset.code])
    page = maker_client.get(response["Location"]).content.decode()
    for content in (first, second):
        assert hashlib.sha256(content).hexdigest() in page  # hashlib: FIPS 180-4 SHA-256


def test_dataset_with_the_same_file_twice_saves_nothing(maker_client, chain):
    _run, pieces = chain.run(pieces=1)
    same = b"shift,counts\n1000,5\n"
    response = maker_client.post(reverse("make:dataset"), {
        "title": "Twice", "substrates": [pieces[0].code], "acquired_on": chain.today.isoformat(),
        "files": [SimpleUploadedFile("a.csv", same), SimpleUploadedFile("b.csv", same)]})
    assert response.context["form"].errors["files"]
    assert not Dataset.objects.exists()
