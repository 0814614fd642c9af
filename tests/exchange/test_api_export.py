"""API lists as CSV and xlsx by content negotiation: units in column names, filters kept."""

from __future__ import annotations

import csv
import io

import openpyxl
import pytest
from rest_framework.test import APIClient

pytestmark = pytest.mark.django_db


@pytest.fixture
def lots(chain):
    made = []
    for diameter, material in ((600, "polystyrene"), (450, "silica"), (300, "polystyrene")):
        made.append(chain.s.sphere_lot_receive(
            actor=chain.maker, material=material, nominal_diameter_nm=diameter,
            solids_percent_w_v=10, received_on=chain.day(3), supplier_lot="=HYPERLINK(1)"))
    return made


@pytest.fixture
def api(maker):
    client = APIClient()
    client.force_authenticate(maker)
    return client


def read_csv(response) -> list[dict]:
    assert response["Content-Type"].startswith("text/csv")
    return list(csv.DictReader(io.StringIO(response.content.decode("utf-8-sig"))))


def test_format_csv_respects_filters_and_names_units(api, lots, chain):
    response = api.get("/api/v1/sphere-lots/?format=csv&material=polystyrene")
    assert response.status_code == 200
    rows = read_csv(response)
    assert sorted(float(r["nominal_diameter_nm (nm)"]) for r in rows) == [300, 600]
    assert {r["received_on"] for r in rows} == {chain.day(3).isoformat()}  # ISO 8601
    # A cell that a spreadsheet program would run as a formula is kept as text.
    assert {r["supplier_lot"] for r in rows} == {"'=HYPERLINK(1)"}
    assert 'filename="sphere-lots.csv"' in response["Content-Disposition"]


def test_accept_header_gives_xlsx(api, lots):
    response = api.get("/api/v1/sphere-lots/", HTTP_ACCEPT="application/vnd.openxmlformats-"
                       "officedocument.spreadsheetml.sheet")
    assert response.status_code == 200
    sheet = openpyxl.load_workbook(io.BytesIO(response.content)).active
    header = [cell.value for cell in sheet[1]]
    assert "nominal_diameter_nm (nm)" in header and "solids_percent_w_v (% w/v)" in header
    assert sheet.max_row == 1 + len(lots)


def test_an_export_holds_every_matching_row_up_to_the_cap(api, lots, settings):
    settings.SERSLEDGER_EXPORT_MAX_ROWS = 2
    response = api.get("/api/v1/sphere-lots/?format=csv&page_size=1")
    assert len(read_csv(response)) == 2
    assert "first 2 rows" in response["X-Export-Truncated"]
    settings.SERSLEDGER_EXPORT_MAX_ROWS = 50_000
    response = api.get("/api/v1/sphere-lots/?format=csv&page_size=1")
    assert len(read_csv(response)) == 3 and "X-Export-Truncated" not in response


def test_json_stays_the_default_and_a_refusal_stays_json_in_the_one_error_shape(api, lots):
    assert api.get("/api/v1/sphere-lots/")["Content-Type"] == "application/json"
    response = api.get("/api/v1/sphere-lots/?format=csv&cursor=not-ours")
    assert response.status_code == 400 and response["Content-Type"] == "application/json"
    (error,) = response.json()["errors"]
    assert error["field"] == "cursor" and "Start again" in error["message"]
