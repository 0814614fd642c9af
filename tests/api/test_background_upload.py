"""A big QC upload answers at once: 202 with a progress address; a worker then judges it."""

from __future__ import annotations

import pytest

from qc.models import QcImport
from tests.qc_lab import run_db_worker

pytestmark = pytest.mark.django_db


def test_a_big_upload_is_accepted_and_its_progress_can_be_followed(
        qc_lab, clients, settings, django_capture_on_commit_callbacks):
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 0
    substrate = qc_lab.chain.decorated_substrate()
    with django_capture_on_commit_callbacks(execute=True):
        response = clients["maker"].post(
            "/api/v1/qc-measurements/", qc_lab.upload_fields(substrate, "good_substrate_map.csv"),
            format="multipart")
    assert response.status_code == 202, response.json()
    body = response.json()
    assert body["state"] == "queued" and body["measurement"] is None
    assert response["Location"] == body["progress_url"]
    waiting = clients["viewer"].get(body["progress_url"])
    assert waiting.status_code == 200 and waiting.json()["progress_percent"] == 0
    run_db_worker()
    done = clients["viewer"].get(body["progress_url"]).json()
    assert done["state"] == "done" and done["progress_percent"] == 100
    judged = clients["viewer"].get(f"/api/v1/qc-measurements/{done['measurement']}/")
    assert judged.status_code == 200 and judged.json()["substrate"] == substrate.code
    assert QcImport.objects.get(pk=body["id"]).measurement.code == done["measurement"]


def test_an_unknown_import_is_a_404_in_the_error_shape(clients):
    response = clients["viewer"].get("/api/v1/qc-imports/00000000-0000-0000-0000-000000000000/")
    assert response.status_code == 404 and "errors" in response.json()


@pytest.mark.parametrize(("change", "field"), [
    ({"surface_area_assumed_one": None}, "surface_area_factor"),  # film height unknown
    ({"surface_area_assumed_one": None, "surface_area_factor": "2.5"}, "surface_area_source"),
    ({"surface_area_factor": "2.5", "surface_area_source": "from memory"},
     "surface_area_factor"),  # entered and assumed 1 at once
])
def test_a_big_upload_whose_ef_inputs_are_refused_gets_the_400_before_it_is_queued(
        qc_lab, clients, settings, django_capture_on_commit_callbacks, change, field):
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 0
    substrate = qc_lab.chain.decorated_substrate()  # no chronoamperogram: no film height
    fields = qc_lab.upload_fields(substrate, "good_substrate_map.csv")
    for name, value in change.items():
        if value is None:
            fields.pop(name)
        else:
            fields[name] = value
    with django_capture_on_commit_callbacks(execute=True) as queued:
        response = clients["maker"].post("/api/v1/qc-measurements/", fields, format="multipart")
    assert response.status_code == 400, response.json()
    assert field in {error["field"] for error in response.json()["errors"]}
    assert not QcImport.objects.exists() and not queued
