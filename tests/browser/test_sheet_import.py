"""Bring a sheet in through a real browser: a dry-run error, the sheet fixed, then confirmed."""

from __future__ import annotations

import re

import pytest

from inventory.models import SphereLot
from tests.exchange.sheets import csv_bytes

pytestmark = pytest.mark.browser

HEADER = ["Code or your ID", "Material", "Nominal diameter (nm)", "Solids (%)",
          "Supplier lot number", "Received on"]


def test_upload_a_sheet_fix_the_row_error_and_confirm(page, sign_in, screenshot, chain,
                                                      tmp_path):
    received = chain.day(30).isoformat()
    bad = tmp_path / "sphere lots 2025.csv"
    bad.write_bytes(csv_bytes([HEADER, ["PS-1", "polystyrene", 600, 10, "PS600-118", received],
                               ["PS-2", "silica", "about 450", 5, "SI450-7", received]]))
    sign_in(chain.maker, "maker")
    page.get_by_role("navigation", name="Tasks").get_by_role("link", name="Sheets").click()
    page.get_by_label("Records in the sheet").select_option(label="Sphere lots")
    page.get_by_label("Sheet (.xlsx or .csv)").set_input_files(str(bad))
    page.get_by_role("button", name="Check the sheet").click()
    verdict = page.locator("#import-verdict")
    assert verdict.inner_text().startswith("Not imported: 1 problem")
    error_row = page.locator("#row-errors tbody tr")
    assert error_row.count() == 1
    assert re.sub(r"\s+", " ", error_row.inner_text()) == \
        "3 Nominal diameter (nm) 'about 450' is not a number"
    assert page.get_by_role("button", name=re.compile("^Import")).count() == 0
    screenshot("sheet-dry-run-error")
    assert SphereLot.objects.count() == 0

    good = tmp_path / "sphere lots 2025 fixed.csv"
    good.write_bytes(csv_bytes([HEADER, ["PS-1", "polystyrene", 600, 10, "PS600-118", received],
                                ["PS-2", "silica", 450, 5, "SI450-7", received]]))
    page.get_by_role("link", name="Upload the corrected sheet").click()
    page.get_by_label("Records in the sheet").select_option(label="Sphere lots")
    page.get_by_label("Sheet (.xlsx or .csv)").set_input_files(str(good))
    page.get_by_role("button", name="Check the sheet").click()
    assert page.locator("#import-verdict").inner_text().startswith("Ready to import")
    assert "2 new, 0 changed, 0 unchanged" in page.locator("#import-verdict").inner_text()
    assert SphereLot.objects.count() == 0  # a dry run saves nothing
    screenshot("sheet-dry-run-ready")
    page.get_by_role("button", name="Import all 2 rows").click()
    assert page.locator("#import-verdict").inner_text().startswith("Imported")
    screenshot("sheet-imported")
    assert sorted(SphereLot.objects.values_list("supplier_lot", flat=True)) == \
        ["PS600-118", "SI450-7"]
    page.locator("#created-records a").first.click()
    page.wait_for_url(re.compile("/r/SPH-"))
