"""Instrument uploads: the computed result comes back in the response; a bad file saves nothing.

Expected figures come from outside the code under test: the fixture generators' stated
design values (fixtures/raman/generate.py: the good map's RSD ≈ 8–12 %, the patchy map's
≈ 35 %; fixtures/chronoamperograms/README.md: files made for h/D = 0.50 and 0.30), and the
import commands' own JSON for the same file (the API must give the same object).
"""

from __future__ import annotations

import hashlib
import io
import json

import pytest
from django.apps import apps
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command

from inventory.models import Flag, Substrate
from qc.models import QcMeasurement, UvVisRecord

from .conftest import CHRONO, RAMAN, UVVIS, upload

pytestmark = pytest.mark.django_db


def _row_counts() -> dict[str, int]:
    """Rows of every model of both apps, to prove a refused upload saved nothing."""
    return {model.__name__: model.objects.count()
            for app in ("inventory", "qc") for model in apps.get_app_config(app).get_models()}


# ---------------------------------------------------------------------------- Raman QC


def test_qc_map_upload_returns_the_judged_result(qc_lab, clients):
    substrate = qc_lab.chain.decorated_substrate()
    response = clients["maker"].post("/api/v1/qc-measurements/",
                                     qc_lab.upload_fields(substrate, "good_substrate_map.csv"),
                                     format="multipart")
    assert response.status_code == 201, response.json()
    body = response.json()
    stored = QcMeasurement.objects.get(code=body["measurement"])
    assert body["passed"] is True and body["failure_reasons"] == [] and body["flags"] == []
    assert body["is_map"] is True and body["n_points"] == 100  # a 10 × 10 grid
    # The generator planted an even band: RSD of its height ≈ 8–12 %.
    assert 8.0 <= body["rsd_percent"] <= 12.0
    assert body["rsd_percent"] == stored.rsd_percent
    assert body["enhancement_factor"] == stored.enhancement_factor > 1e5
    content = (RAMAN / "good_substrate_map.csv").read_bytes()
    assert body["sha256"] == hashlib.sha256(content).hexdigest()  # FIPS 180-4 via hashlib


def test_qc_upload_gives_the_same_object_as_the_command(qc_lab, clients):
    chain = qc_lab.chain
    api_body = clients["maker"].post(
        "/api/v1/qc-measurements/",
        qc_lab.upload_fields(chain.decorated_substrate(), "nonuniform_substrate_map.csv"),
        format="multipart").json()
    out = io.StringIO()
    call_command("import_qc", chain.decorated_substrate().code,
                 str(RAMAN / "nonuniform_substrate_map.csv"), "--analyte-lot", qc_lab.lot.code,
                 "--reference", qc_lab.reference.code, "--laser-nm", "785", "--power-mw", "2",
                 "--integration-s", "1", "--measured-on", chain.day(1).isoformat(), "--json",
                 "--assume-surface-area-one", "--shared-measurement", "--user",
                 chain.maker.username, stdout=out)
    cli_body = json.loads(out.getvalue())
    different = {"measurement", "substrate", "flags"}
    assert set(api_body) == set(cli_body)
    assert {k: v for k, v in api_body.items() if k not in different} == \
        {k: v for k, v in cli_body.items() if k not in different}
    # The patchy film (RSD ≈ 35 % by design) fails uniformity, is flagged and held.
    assert api_body["passed"] is False and api_body["rsd_percent"] > 20
    assert [f["target"] for f in api_body["flags"]] == [api_body["substrate"]]
    assert api_body["substrate_status"] == "quarantine"


def test_bad_qc_file_is_refused_whole_naming_the_line(qc_lab, clients):
    substrate = qc_lab.chain.decorated_substrate()
    lines = (RAMAN / "good_substrate_map.csv").read_text().splitlines()
    lines[5] = lines[5].rsplit(",", 3)[0] + ",oops,1,2"
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    fields["raw_file"] = SimpleUploadedFile("broken_map.csv", "\n".join(lines).encode())
    before = _row_counts()
    response = clients["maker"].post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400
    [error] = response.json()["errors"]
    assert error["field"] == "raw_file" and "line 6" in error["message"]
    assert _row_counts() == before
    assert Substrate.objects.get(pk=substrate.pk).status == "released"


def test_qc_upload_parameter_errors_name_the_parameter(qc_lab, clients):
    fields = qc_lab.upload_fields(qc_lab.chain.decorated_substrate(), "good_substrate_map.csv")
    fields["power_mW"] = "0"
    response = clients["maker"].post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400
    assert [e["field"] for e in response.json()["errors"]] == ["power_mW"]
    missing = clients["maker"].post("/api/v1/qc-measurements/", {"substrate": "SUB-00001"},
                                    format="multipart")
    assert {e["field"] for e in missing.json()["errors"]} >= {"raw_file", "analyte_lot",
                                                             "laser_nm"}
    assert not QcMeasurement.objects.exists()


@pytest.mark.parametrize("accumulations", ["0", "10001", "100000"])
def test_accumulations_outside_the_range_table_are_refused_by_name(qc_lab, clients,
                                                                   accumulations):
    """The table (QC_MEASUREMENT_RANGES) allows 1 to 10 000; the serializer once let 100 000
    through to the database's CHECK constraint."""
    fields = qc_lab.upload_fields(qc_lab.chain.decorated_substrate(), "good_substrate_map.csv")
    fields["accumulations"] = accumulations
    response = clients["maker"].post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400, response.content[:300]
    assert [e["field"] for e in response.json()["errors"]] == ["accumulations"]
    assert not QcMeasurement.objects.exists()


def test_qc_detail_has_the_map_and_the_list_leaves_it_out(qc_lab, clients):
    measurement = qc_lab.measure(qc_lab.chain.decorated_substrate(), "good_substrate_map.csv")
    detail = clients["viewer"].get(f"/api/v1/qc-measurements/{measurement.code}/").json()
    assert len(detail["point_values"]["normalised_height_counts_per_mW_s"]) == 100
    assert detail["substrate"] == measurement.substrate.code
    listed = clients["viewer"].get("/api/v1/qc-measurements/", {"passed": "true"}).json()
    assert [r["code"] for r in listed["results"]] == [measurement.code]
    assert "point_values" not in listed["results"][0]


# ---------------------------------------------------------------------------- UV-vis


def test_uvvis_upload_returns_size_and_stability(chain, clients):
    batch = chain.batch(days_ago=40)
    fields = {"batch": batch.code, "measured_on": chain.day(40).isoformat(),
              "dilution_factor": 10, "path_length_cm": 1}
    first = clients["maker"].post("/api/v1/uvvis-records/", {
        **fields, "raw_file": upload(UVVIS / "ag_stable_day00.csv")}, format="multipart")
    assert first.status_code == 201, first.json()
    body = first.json()
    stored = UvVisRecord.objects.get(code=body["record"])
    assert body["peak_nm"] == stored.peak_nm and body["duplicate"] is False
    # fixtures/uvvis/README.txt: citrate Ag, median 40 nm, sigma_g 1.10 (invented by design).
    assert body["mie_median_diameter_nm"] == pytest.approx(40, rel=0.1)
    again = clients["maker"].post("/api/v1/uvvis-records/", {
        **fields, "raw_file": upload(UVVIS / "ag_stable_day00.csv")}, format="multipart")
    assert again.status_code == 200 and again.json()["duplicate"] is True
    assert again.json()["record"] == body["record"]
    later = clients["maker"].post("/api/v1/uvvis-records/", {
        **fields, "measured_on": chain.day(33).isoformat(),
        "raw_file": upload(UVVIS / "ag_stable_day07.csv")}, format="multipart")
    assert later.status_code == 201
    assert later.json()["age_days"] == 7 and later.json()["peak_shift_nm"] is not None


def test_bad_uvvis_file_saves_nothing(chain, clients):
    batch = chain.batch(days_ago=10)
    before = _row_counts()
    response = clients["maker"].post("/api/v1/uvvis-records/", {
        "batch": batch.code, "measured_on": chain.day(1).isoformat(),
        "raw_file": SimpleUploadedFile("empty.csv", b"wavelength_nm,absorbance\n")},
        format="multipart")
    assert response.status_code == 400
    assert [e["field"] for e in response.json()["errors"]] == ["raw_file"]
    assert _row_counts() == before


# -------------------------------------------------------------------- chronoamperogram


@pytest.fixture
def run_600nm(chain):
    spheres = chain.release(chain.s.sphere_lot_receive(
        actor=chain.maker, material="polystyrene", nominal_diameter_nm=600,
        solids_percent_w_v=10, received_on=chain.day(30)))
    run, _ = chain.s.deposition_run_record(
        actor=chain.maker, template=chain.template(spheres=spheres),
        bath_lot=chain.lot("plating_bath"), metal="Au", electrons_per_atom=1,
        mode="potentiostatic", electrode_area_cm2=1.0, made_on=chain.day(9), pieces=2,
        target_height_over_diameter=0.5)
    return run


def test_chronoamperogram_upload_returns_film_height(run_600nm, clients):
    url = f"/api/v1/deposition-runs/{run_600nm.code}/chronoamperogram/"
    response = clients["maker"].post(url, {
        "chronoamperogram": upload(CHRONO / "au_600nm_hd050.csv")}, format="multipart")
    assert response.status_code == 201, response.json()
    body = response.json()
    # The file was generated for h/D = 0.50 (fixtures/chronoamperograms/README.md).
    assert body["height_over_diameter"] == pytest.approx(0.50, abs=0.01)
    assert body["film_height_nm"] == pytest.approx(300, abs=6)
    assert body["flags"] == [] and body["unchanged"] is False
    same = clients["maker"].post(url, {
        "chronoamperogram": upload(CHRONO / "au_600nm_hd050.csv")}, format="multipart")
    assert same.status_code == 200 and same.json()["unchanged"] is True


def test_off_target_chronoamperogram_flags_the_run(run_600nm, clients):
    response = clients["maker"].post(
        f"/api/v1/deposition-runs/{run_600nm.code}/chronoamperogram/",
        {"chronoamperogram": upload(CHRONO / "au_600nm_hd030.txt")}, format="multipart")
    assert response.status_code == 201
    body = response.json()
    assert body["height_over_diameter"] == pytest.approx(0.30, abs=0.01)
    flagged = {f["target"] for f in body["flags"]}
    assert run_600nm.code in flagged
    assert Flag.objects.filter(target_code=run_600nm.code, state="open").exists()


def test_bad_chronoamperogram_is_refused_whole(run_600nm, clients):
    before = _row_counts()
    response = clients["maker"].post(
        f"/api/v1/deposition-runs/{run_600nm.code}/chronoamperogram/",
        {"chronoamperogram": SimpleUploadedFile("run.csv", b"time/s,current/mA\n0,-1\nx,y\n")},
        format="multipart")
    assert response.status_code == 400
    [error] = response.json()["errors"]
    assert error["field"] == "chronoamperogram" and "line 3" in error["message"]
    assert _row_counts() == before
    run_600nm.refresh_from_db()
    assert run_600nm.charge_C is None and not run_600nm.chronoamperogram
