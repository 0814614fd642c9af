"""The sheet pages through Django's test client: upload, report, map once, confirm."""

from __future__ import annotations

import io

import openpyxl
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client

from exchange.models import ColumnMapping
from inventory.models import SphereLot

from .sheets import csv_bytes

pytestmark = pytest.mark.django_db



def upload(client, rows, name="lots.csv", kind="sphere_lots"):
    return client.post("/sheets/upload/", {"kind": kind, "sheet": SimpleUploadedFile(
        name, csv_bytes(rows) if isinstance(rows, list) else rows)})


def test_upload_with_unknown_columns_map_them_once_then_confirm(client_as, today):
    rows = [["Material", "Diameter (nm)", "Solids (%)", "Arrived", "Colour"],
            ["polystyrene", 600, 10, "2026-05-01", "white"]]
    page = upload(client_as, rows)
    text = page.content.decode()
    assert "Not imported" in text and "Received on" in text and "“Arrived”" in text
    upload_id = page.context["upload"].pk
    page = client_as.post(f"/sheets/{upload_id}/map/", {"map:Arrived": "received_on",
                                                        "map:Colour": ""})
    text = page.content.decode()
    assert "Ready to import" in text and "Columns not recognised" not in text
    assert dict(ColumnMapping.objects.values_list("header", "field")) == \
        {"arrived": "received_on", "colour": ""}
    page = client_as.post(f"/sheets/{upload_id}/confirm/")
    assert page.status_code == 200 and "Imported" in page.content.decode()
    assert SphereLot.objects.get().received_on.isoformat() == "2026-05-01"
    # A confirmed upload cannot be confirmed twice; the next sheet needs no mapping.
    assert client_as.post(f"/sheets/{upload_id}/confirm/").status_code == 404
    rows[1][1] = 450
    assert "Ready to import" in upload(client_as, rows).content.decode()


def test_a_report_with_row_errors_offers_no_confirmation(client_as, today):
    page = upload(client_as, [["Material", "Diameter (nm)", "Solids (%)", "Received on"],
                              ["polystyrene", "big", 10, "2026-05-01"]])
    text = page.content.decode()
    assert "Not imported: 1 problem" in text and "&#x27;big&#x27; is not a number" in text
    assert "/confirm/" not in text


def test_a_refused_file_is_a_clear_message_not_a_500(client_as, today):
    page = upload(client_as, b"\x89PNG\r\n\x1a\n", name="photo.png")
    assert page.status_code == 400 and "not a spreadsheet" in page.content.decode()


def test_someone_else_cannot_confirm_my_upload(client_as, today, django_user_model):
    from tests.conftest import user_with_role

    page = upload(client_as, [["Material", "Diameter (nm)", "Solids (%)", "Received on"],
                              ["polystyrene", 600, 10, "2026-05-01"]])
    other = Client()
    other.force_login(user_with_role(django_user_model, "maker", "other"))
    assert other.post(f"/sheets/{page.context['upload'].pk}/confirm/").status_code == 404


@pytest.mark.parametrize("kind", ["sphere_lots", "colloid_batches", "qc_results"])
def test_template_downloads_carry_units_and_an_example_row(client_as, kind):
    response = client_as.get(f"/sheets/template/{kind}.xlsx")
    sheet = openpyxl.load_workbook(io.BytesIO(response.content)).active
    header = [c.value for c in sheet[1]]
    assert sheet.max_row == 2 and any("(" in h for h in header)
    csv_text = client_as.get(f"/sheets/template/{kind}.csv").content.decode("utf-8-sig")
    assert csv_text.splitlines()[0].split(",")[:2] == header[:2]


def test_a_template_imports_cleanly_once_its_parents_exist(client_as, today):
    content = client_as.get("/sheets/template/sphere_lots.xlsx").content
    page = upload(client_as, content, name="template.xlsx")
    assert "Ready to import" in page.content.decode(), page.content.decode()[:3000]
