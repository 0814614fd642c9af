"""Four bench flows in a real browser: colloid + UV-vis, a three-piece deposition run,
readiness verdicts, and a failing QC map whose flag reaches the substrate's page.

State is built through services (the ``chain`` builder and qc.services); every step the
flow is about is done through the pages, with the keyboard and mouse as at the bench.
"""

from __future__ import annotations

import re

import pytest

from tests.make.builders import FIXTURES, QcLab, template_600nm

pytestmark = pytest.mark.browser


def save(page):
    """Submit the Make form from the keyboard (focus the Save button, press Enter)."""
    page.get_by_role("button", name=re.compile("^Save")).press("Enter")


def test_log_a_colloid_batch_with_its_uvvis_and_see_its_size(page, sign_in, screenshot, chain):
    sign_in(chain.maker, "maker")
    page.goto("/make/")
    screenshot("make-index")
    page.get_by_role("link", name=re.compile("Nanoparticle batch")).click()
    page.get_by_label("Metal").select_option("Au")
    page.get_by_label("Synthesis").select_option("citrate")
    page.get_by_label("Volume made (mL)").fill("100")
    page.get_by_label("UV-vis spectrum (optional; wavelength in nm)").set_input_files(
        FIXTURES / "uvvis" / "au_batch_day00.csv")
    page.get_by_label("Dilution factor (total volume ÷ colloid volume)").fill("2")
    assert page.get_by_role("note", name="Caution").get_by_text("borohydride").is_visible()
    screenshot("make-colloid-form")
    save(page)
    # The Mie fit runs during the request; allow for a busy two-core CI machine.
    page.wait_for_url(re.compile("/make/done/UV-"), timeout=120_000)
    size = page.get_by_role("row", name=re.compile("^Particle diameter"))
    # fixtures/uvvis/README.txt: modelled as citrate gold of median diameter 20 nm.
    # Shown as "value ± uncertainty nm": the value is the first number after the label.
    diameter_nm = float(re.search(r"([\d.]+) ±", size.inner_text()).group(1))
    assert 16 <= diameter_nm <= 24
    assert "particles/mL" in page.locator("#figures").inner_text()
    screenshot("make-colloid-result")


def test_log_a_three_piece_deposition_run_and_see_the_film_height(page, sign_in, screenshot,
                                                                  chain):
    template, bath = template_600nm(chain), chain.lot("plating_bath")
    sign_in(chain.maker, "maker")
    page.goto("/make/deposition/")
    page.get_by_label("Template (blank for a flat film)").select_option(template.code)
    page.get_by_label("Plating bath lot").select_option(bath.code)
    page.get_by_label("Metal deposited").select_option("Au")
    page.get_by_label("Electrode area (cm²)").fill("1.00")
    page.get_by_label("Target film height h/D (fraction of sphere diameter)").fill("0.5")
    page.get_by_label("Pieces cut from the film (number of substrates)").fill("3")
    page.get_by_label("Chronoamperogram (potentiostat text export)").set_input_files(
        FIXTURES / "chronoamperograms" / "au_600nm_hd050.csv")
    assert "Never acidify" in page.get_by_role("note", name="Caution").inner_text()
    screenshot("make-deposition-form")
    save(page)
    page.wait_for_url(re.compile("/make/done/DEP-"))
    pieces = page.locator("#links li")
    assert pieces.count() == 3
    assert all(text.startswith("SUB-") for text in pieces.all_inner_texts())
    height = page.get_by_role("row", name=re.compile("^Film height h")).inner_text()
    ratio = page.get_by_role("row", name=re.compile(r"^Normalised height h\/D")).inner_text()
    # generate.py scaled this trace to h/D = 0.50 for 600 nm spheres: h = 300 nm.
    assert abs(float(re.search(r"([\d.]+) nm", height).group(1)) - 300) < 6
    assert abs(float(ratio.split()[-1]) - 0.50) < 0.01
    assert page.locator("#verdict").inner_text().startswith("ON TARGET")
    screenshot("make-deposition-result")


def test_check_a_ready_and_a_not_ready_substrate(page, sign_in, screenshot, chain):
    ready = chain.decorated_substrate()
    _run, (waiting,) = chain.run(pieces=1)
    sign_in(chain.maker, "maker")
    page.goto("/check/")
    verdicts = {}
    for substrate, name in ((ready, "check-ready"), (waiting, "check-not-ready")):
        box = page.locator("input[name=code]")
        box.fill(substrate.code)
        box.press("Enter")  # as a barcode scanner ends its input
        page.wait_for_url(re.compile(rf"code={substrate.code}"))
        verdicts[substrate.code] = page.get_by_role("status").first.inner_text()
        screenshot(name)
        body = page.locator("main").inner_text()
    assert verdicts[ready.code].startswith("READY") and ready.code in verdicts[ready.code]
    assert verdicts[waiting.code].startswith("NOT READY")
    # The reason inventory.readiness gives for a piece not yet released after QC.
    assert f"{waiting.code} is in quarantine" in body


def test_failing_qc_map_flags_the_substrate_page(page, sign_in, screenshot, chain,
                                                 administrator):
    lab = QcLab(chain, administrator)
    substrate = chain.decorated_substrate()
    sign_in(chain.maker, "maker")
    page.goto("/make/qc/")
    page.get_by_label("Substrate measured").select_option(substrate.code)
    # The analyte lot and the newest reference are already chosen (last used by this maker).
    assert page.get_by_label("Reference-analyte lot").input_value() == lab.lot.code
    assert page.get_by_label(re.compile("^Reference measurement")).input_value() == \
        lab.reference.code
    page.get_by_label(re.compile("^Raman file")).set_input_files(
        FIXTURES / "raman" / "nonuniform_substrate_map.csv")
    page.get_by_label("Laser wavelength (nm)").fill("785")
    page.get_by_label("Laser power at the sample (mW)").fill("2.0")
    page.get_by_label("Integration time per accumulation (s)").fill("1.0")
    # The test chain's run has no chronoamperogram: the factor is entered with its source.
    page.get_by_label(re.compile("^Metal surface area ÷ projected area")).fill("1.5")
    page.get_by_label(re.compile("^Where that factor comes from")).fill(
        "electrochemical surface area (invented for the test)")
    assert "Laser safety" in page.get_by_role("note", name="Caution").inner_text()
    screenshot("make-qc-form")
    save(page)
    page.wait_for_url(re.compile("/make/done/QCM-"))
    assert page.locator("#verdict").inner_text() == "FAIL"
    assert "Uniformity RSD" in page.locator("#reasons").inner_text()
    screenshot("make-qc-result")
    assert "entered: electrochemical surface area" in page.locator("#figures").inner_text()
    page.get_by_role("link", name=substrate.code).first.click()
    page.wait_for_url(re.compile(rf"/r/{substrate.code}/"))
    body = page.locator("main").inner_text()
    assert "failed" in body and "Uniformity RSD" in body
    screenshot("record-flagged-substrate")
    page.goto("/")
    assert substrate.code in page.locator("main").inner_text()
    screenshot("dashboard")


def test_a_film_qc_shows_the_surface_area_derived_from_its_deposition(page, sign_in, screenshot,
                                                                       chain, administrator):
    lab = QcLab(chain, administrator)
    run, (film,) = chain.s.deposition_run_record(
        actor=chain.maker, template=template_600nm(chain), bath_lot=chain.lot("plating_bath"),
        metal="Au", electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
        made_on=chain.day(9), pieces=1, target_height_over_diameter=0.5,
        chronoamperogram=("au_600nm_hd050.csv",
                          (FIXTURES / "chronoamperograms" / "au_600nm_hd050.csv").read_bytes()))
    chain.release(film)
    sign_in(chain.maker, "maker")
    page.goto("/make/qc/")
    page.get_by_label("Substrate measured").select_option(film.code)
    page.get_by_label(re.compile("^Reference measurement")).select_option(lab.reference.code)
    page.get_by_label(re.compile("^Raman file")).set_input_files(
        FIXTURES / "raman" / "good_substrate_map.csv")
    page.get_by_label("Laser wavelength (nm)").fill("785")
    page.get_by_label("Laser power at the sample (mW)").fill("2.0")
    page.get_by_label("Integration time per accumulation (s)").fill("1.0")
    # The surface-area factor is left empty: derived from the film's own geometry.
    save(page)
    page.wait_for_url(re.compile("/make/done/QCM-"))
    figures = page.locator("#figures").inner_text()
    assert "derived: segment-void film" in figures and run.code in figures
    # Hand geometry for h/D = 0.5 (the trace was made for it): 1 + π/(2√3) ≈ 1.91.
    factor = page.get_by_role("row", name=re.compile("^Surface-area factor \\(")).inner_text()
    assert re.search(r"1\.9\d* ± 0\.\d+", factor)
    assert "±" in page.get_by_role("row", name=re.compile("^Enhancement factor")).inner_text()
    screenshot("make-qc-derived-surface-area")
