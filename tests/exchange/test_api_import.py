"""The sheet import API: upload for a dry run, confirm in one transaction, abandon; bad input
gets a 4xx in the one error shape naming the row and column, and nothing is saved."""

from __future__ import annotations

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import override_settings
from rest_framework.test import APIClient

from exchange.models import SheetUpload
from inventory.models import SphereLot

from .sheets import csv_bytes, xlsx_bytes

pytestmark = pytest.mark.django_db

HEADER = ["Material", "Nominal diameter (nm)", "Solids (%)", "Received on"]
GOOD = [HEADER, ["polystyrene", 600, 10, "2026-05-01"], ["silica", 400, 5, "2026-05-02"]]


def _client(user) -> APIClient:
    client = APIClient()
    client.force_authenticate(user)
    return client


def _post(client, content: bytes, name="lots.csv", kind="sphere_lots"):
    return client.post("/api/v1/sheet-imports/", {"kind": kind, "sheet": SimpleUploadedFile(
        name, content)}, format="multipart")


def _only_error(response) -> dict:
    body = response.json()
    assert set(body) >= {"errors"}
    return body["errors"][0]


def test_dry_run_then_confirm_imports_every_row_and_deletes_the_file(
        maker, today, django_capture_on_commit_callbacks):
    client = _client(maker)
    response = _post(client, xlsx_bytes(GOOD), name="lots.xlsx")
    assert response.status_code == 200, response.content
    body = response.json()
    assert [row["row"] for row in body["report"]["create"]] == [2, 3]
    assert body["report"]["change"] == [] and body["report"]["committed"] is False
    assert SphereLot.objects.count() == 0  # a dry run saves no record
    upload = SheetUpload.objects.get(pk=body["upload"])
    storage, name = upload.file.storage, upload.file.name
    assert storage.exists(name)
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(body["confirm_url"])
    assert response.status_code == 201, response.content
    assert response.json()["report"]["committed"] is True
    assert sorted(SphereLot.objects.values_list("nominal_diameter_nm", flat=True)) == [400, 600]
    upload.refresh_from_db()
    assert upload.confirmed_at is not None and not upload.file and not storage.exists(name)
    assert client.post(body["confirm_url"]).status_code == 404  # not twice


def test_text_in_a_number_column_is_a_400_naming_row_and_column(maker, today):
    rows = [HEADER, ["polystyrene", 600, 10, "2026-05-01"], ["silica", "big", 5, "2026-05-02"]]
    response = _post(_client(maker), csv_bytes(rows))
    assert response.status_code == 400
    error = _only_error(response)
    assert error["row"] == 3 and error["column"] == "Nominal diameter (nm)"
    assert error["field"] == "rows.3.Nominal diameter (nm)" and error["code"] == "not_a_number"
    assert SphereLot.objects.count() == 0 and SheetUpload.objects.count() == 0


@pytest.mark.parametrize(("content", "name", "code"), [
    (b"\x89PNG\r\n\x1a\n\x00\x00", "photo.png", "not_a_spreadsheet"),
    (b"", "empty.csv", "empty_sheet"),
    (csv_bytes([HEADER]), "header-only.csv", "empty_sheet"),
])
def test_a_file_refused_as_a_whole_is_a_400_and_nothing_is_kept(maker, today, content, name,
                                                                 code):
    response = _post(_client(maker), content, name=name)
    assert response.status_code == 400
    assert _only_error(response)["code"] == code
    assert SphereLot.objects.count() == 0 and SheetUpload.objects.count() == 0


@override_settings(SERSLEDGER_MAX_SHEET_BYTES=1024)
def test_a_sheet_over_the_limit_is_refused(maker, today):
    rows = [HEADER] + [["polystyrene", 600, 10, "2026-05-01"]] * 100
    response = _post(_client(maker), csv_bytes(rows))
    assert response.status_code == 400
    error = _only_error(response)
    assert error["code"] == "file_too_large" and error["field"] == "sheet"
    assert SheetUpload.objects.count() == 0


def test_an_unknown_kind_names_the_field(maker, today):
    response = _post(_client(maker), csv_bytes(GOOD), kind="unicorns")
    assert response.status_code == 400 and _only_error(response)["field"] == "kind"


def test_a_viewer_cannot_import_and_nothing_is_kept(viewer, today):
    response = _post(_client(viewer), csv_bytes(GOOD))
    assert response.status_code == 403
    assert "errors" in response.json()
    assert SheetUpload.objects.count() == 0


def test_a_viewer_cannot_confirm_and_another_maker_cannot_see_my_upload(maker, viewer, today,
                                                                        django_user_model):
    body = _post(_client(maker), csv_bytes(GOOD)).json()
    assert _client(viewer).post(body["confirm_url"]).status_code == 403
    from tests.conftest import user_with_role

    other = user_with_role(django_user_model, "maker", username="other-maker")
    assert _client(other).post(body["confirm_url"]).status_code == 404
    assert SphereLot.objects.count() == 0


def test_abandon_deletes_the_upload_and_its_file(maker, today, django_capture_on_commit_callbacks):
    client = _client(maker)
    body = _post(client, csv_bytes(GOOD)).json()
    upload = SheetUpload.objects.get(pk=body["upload"])
    storage, name = upload.file.storage, upload.file.name
    with django_capture_on_commit_callbacks(execute=True):
        assert client.delete(f"/api/v1/sheet-imports/{upload.pk}/").status_code == 204
    assert not SheetUpload.objects.filter(pk=upload.pk).exists()
    assert not storage.exists(name)
    assert client.post(body["confirm_url"]).status_code == 404
