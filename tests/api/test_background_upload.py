"""A big QC upload answers at once: 202 with a progress address; a worker then judges it."""

from __future__ import annotations

import pytest
from django.core.management import call_command
from django.db import connection

from qc.models import QcImport

pytestmark = pytest.mark.django_db


def test_a_big_upload_is_accepted_and_its_progress_can_be_followed(
        qc_lab, clients, settings, django_capture_on_commit_callbacks):
    if connection.vendor == "postgresql":
        # Known gap: db_worker closes its database connection after a task, which on
        # PostgreSQL is the test's own transaction; the worker is covered there by
        # tests/qc/test_background_import.py.  Follow-up: run the worker in a thread with
        # its own connection.
        pytest.skip("db_worker in-process closes the test transaction's PostgreSQL connection")
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
    call_command("db_worker", "--batch", "--no-startup-delay", "--interval", "0", verbosity=0)
    done = clients["viewer"].get(body["progress_url"]).json()
    assert done["state"] == "done" and done["progress_percent"] == 100
    judged = clients["viewer"].get(f"/api/v1/qc-measurements/{done['measurement']}/")
    assert judged.status_code == 200 and judged.json()["substrate"] == substrate.code
    assert QcImport.objects.get(pk=body["id"]).measurement.code == done["measurement"]


def test_an_unknown_import_is_a_404_in_the_error_shape(clients):
    response = clients["viewer"].get("/api/v1/qc-imports/00000000-0000-0000-0000-000000000000/")
    assert response.status_code == 404 and "errors" in response.json()
