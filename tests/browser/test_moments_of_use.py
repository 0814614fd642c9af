"""The three moments of use, end to end in one browser session, as a maker at the bench:
log a deposition from its chronoamperogram (pieces made), a linker layer on one piece,
particles on it, run QC on it, check its readiness, print its label, register a dataset on
it and open the dataset's audit report.  Screenshots of each page land in
test-artifacts/screenshots/ (moment-*.png).
"""

from __future__ import annotations

import hashlib
import re

import pytest

from tests.browser.test_every_make_form import SLOW_MS, fill, save
from tests.make.builders import FIXTURES, QcLab, template_600nm

pytestmark = pytest.mark.browser


def _submit_and_wait(page, done: str):
    with page.expect_navigation(timeout=SLOW_MS):
        save(page)
    summary = page.locator("#error-summary")
    assert done in page.url, summary.inner_text() if summary.count() else page.url


def test_a_piece_from_deposition_to_audit_report(page, sign_in, screenshot, chain,
                                                 administrator):
    lab = QcLab(chain, administrator)
    template, bath = template_600nm(chain), chain.lot("plating_bath")
    linker_lot, batch = chain.lot("linker_thiol"), chain.batch(days_ago=3)
    sign_in(chain.maker, "maker")

    # Log a deposition run from its file: two pieces, film height computed.
    page.goto("/make/deposition/")
    fill(page, {"template": template.code, "bath_lot": bath.code, "metal": "Au",
                "electrode_area_cm2": "1.00", "target_height_over_diameter": "0.5",
                "pieces": "2",
                "chronoamperogram": FIXTURES / "chronoamperograms" / "au_600nm_hd050.csv"})
    _submit_and_wait(page, "/make/done/DEP-")
    piece = page.locator("#links li a").first.inner_text()
    assert piece.startswith("SUB-")
    assert "nm" in page.get_by_role("row", name=re.compile("^Film height h")).inner_text()
    screenshot("moment-1-deposition")

    # A linker layer on that one piece (the other is left: not every box is required).
    page.goto("/make/linker/")
    fill(page, {"linker_lot": linker_lot.code, "concentration_mM": "1.0", "immersion_h": "12",
                f"substrates:{piece}": True})
    _submit_and_wait(page, "/r/LNK-")

    # Particles from a released colloid onto it.
    page.goto("/make/particles/")
    fill(page, {"substrate": piece, "batch": batch.code, "immersion_min": "30"})
    _submit_and_wait(page, "/r/PAT-")

    # QC: the reference-analyte map on the piece; the verdict comes first.
    page.goto("/make/qc/")
    fill(page, {"substrate": piece, "analyte_lot": lab.lot.code,
                "reference": lab.reference.code, "laser_nm": "785", "power_mW": "2.0",
                "integration_s": "1.0", "surface_area_factor": "1.5",
                "surface_area_source": "ratio measured by the lab on a cross-section",
                "raw_file": FIXTURES / "raman" / "good_substrate_map.csv"})
    _submit_and_wait(page, "/make/done/QCM-")
    assert page.locator("#verdict").inner_text() == "PASS"
    assert "stays in quarantine until a reviewer releases it" in page.locator("main").inner_text()
    screenshot("moment-2-qc")

    # Check readiness: passed QC but not yet released, so NOT READY with that reason.
    page.goto("/check/")
    page.locator("input[name=code]").fill(piece)
    page.locator("input[name=code]").press("Enter")
    page.wait_for_url(re.compile(rf"code={piece}"))
    assert page.get_by_role("status").first.inner_text().startswith("NOT READY")
    assert f"{piece} is in quarantine" in page.locator("main").inner_text()
    screenshot("moment-3-readiness")

    # Print its label from the record page.
    page.goto(f"/r/{piece}/")
    page.get_by_role("link", name="Print label").click()
    page.wait_for_url(re.compile(rf"/r/{piece}/label/"))
    assert page.locator(f"#label-{piece} svg").count() == 1  # the QR code
    screenshot("moment-4-label")

    # A dataset measured on it, then its audit report with the file's SHA-256.
    data_file = FIXTURES / "spectra" / "invented_polystyrene_785.csv"
    page.goto("/make/dataset/")
    fill(page, {"title": "Thiram series on one piece", f"substrates:{piece}": True,
                "files": data_file})
    _submit_and_wait(page, "/make/done/DS-")
    dataset = re.search(r"DS-\d+", page.url).group(0)
    page.goto(f"/trace/{dataset}/report/")
    report = page.locator("main").inner_text()
    assert hashlib.sha256(data_file.read_bytes()).hexdigest() in report
    assert piece in report and template.code in report and batch.code in report
    screenshot("moment-5-audit-report")
