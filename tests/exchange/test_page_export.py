"""List pages as CSV and xlsx: the page's own filters, units in the column names, ISO dates."""

from __future__ import annotations

import csv
import io

import openpyxl
import pytest

pytestmark = pytest.mark.django_db



def test_stock_exports_the_listed_kind_and_location(client_as, chain):
    fridge = chain.s.storage_location_create(actor=chain.maker, name="Fridge A", kind="fridge")
    kept = [chain.s.sphere_lot_receive(actor=chain.maker, material="silica",
                                       nominal_diameter_nm=d, solids_percent_w_v=5,
                                       received_on=chain.day(2), storage=fridge)
            for d in (300, 450)]
    elsewhere = chain.spheres()
    for lot in kept:
        chain.release(lot)
    page = client_as.get(f"/stock/?kind=spherelot&location={fridge.code}")
    assert "format=csv" in page.content.decode()
    response = client_as.get(f"/stock/?kind=spherelot&location={fridge.code}&format=csv")
    assert response["Content-Type"].startswith("text/csv")
    rows = list(csv.DictReader(io.StringIO(response.content.decode("utf-8-sig"))))
    assert sorted(r["code"] for r in rows) == sorted(lot.code for lot in kept)
    assert elsewhere.code not in response.content.decode()
    assert {float(r["nominal_diameter_nm (nm)"]) for r in rows} == {300.0, 450.0}
    assert {r["received_on"] for r in rows} == {chain.day(2).isoformat()}
    assert {r["storage"] for r in rows} == {fridge.code}


def test_review_queue_exports_as_xlsx(client_as, chain):
    _run, pieces = chain.run(pieces=2)
    response = client_as.get("/review/?kind=substrate&format=xlsx")
    sheet = openpyxl.load_workbook(io.BytesIO(response.content)).active
    header = [c.value for c in sheet[1]]
    codes = {row[header.index("code")] for row in sheet.iter_rows(min_row=2, values_only=True)}
    assert codes == {piece.code for piece in pieces}
    assert "area_cm2 (cm²)" in header
