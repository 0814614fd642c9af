"""The limits page and the control charts in a real browser, as a lab uses them."""

from __future__ import annotations

import re

import pytest

from qc.models import QcLimitSet
from tests.qc_lab import QcLab

pytestmark = pytest.mark.django_db(transaction=True)

PHONE = {"width": 390, "height": 844}
DESKTOP = {"width": 1280, "height": 900}


@pytest.fixture
def lab(chain, administrator):
    return QcLab(chain, administrator)


def _film(chain):
    _run, (piece,) = chain.run(pieces=1)
    return chain.release(piece)


def test_a_changed_limit_judges_the_next_measurement_and_the_old_verdict_stays(
        page, sign_in, administrator, chain, lab, screenshot):
    old = lab.measure(_film(chain), "good_substrate_map.csv")  # RSD ≈ 9.5 % (generate.py)
    old_version = old.limits_used["version"]
    sign_in(administrator, "administrator")
    page.get_by_role("link", name="Limits").click()
    film_row = page.locator(f"#qc-{lab.analyte.pk}-film")
    film_row.get_by_role("link", name="Change").click()
    page.get_by_label("Uniformity RSD ceiling (%)").fill("5")
    page.get_by_label("Reason for this change").fill("New map settings: tighter uniformity.")
    page.get_by_role("button", name="Save a new version").click()
    page.wait_for_url(re.compile(r"/limits/#qc-"))
    assert "saved as version" in page.locator(".notice").first.inner_text()
    assert "5.0 %" in film_row.inner_text() and f"v{old_version + 1}" in film_row.inner_text()
    screenshot("limits-after-change")

    new = lab.measure(_film(chain), "good_substrate_map.csv")
    page.goto(f"/r/{new.code}/")
    assert page.locator("#verdict").inner_text().startswith("FAIL")
    assert "5 % ceiling" in page.locator("#verdict-sentence").inner_text()
    assert f"version {old_version + 1}" in page.locator("#key-figures").inner_text()
    page.goto(f"/r/{old.code}/")
    assert page.locator("#verdict").inner_text().startswith("PASS")
    assert "20 % ceiling" in page.locator("#verdict-sentence").inner_text()
    assert f"version {old_version}" in page.locator("#key-figures").inner_text()


def test_a_non_administrator_reads_the_limits_and_cannot_post(page, sign_in, reviewer, lab):
    version = QcLimitSet.objects.get(analyte=lab.analyte, product_kind="linker").version
    sign_in(reviewer, "reviewer")
    page.goto("/limits/")
    assert "You can read these settings" in page.locator("main").inner_text()
    assert page.get_by_role("link", name="Change").count() == 0
    assert page.locator(f"#qc-{lab.analyte.pk}-purchased [data-to-review]").is_visible()
    # A crafted POST (the page offers no form) is refused by role, with the 403 page.
    page.goto("/limits/")
    token = page.locator("form input[name=csrfmiddlewaretoken]").first.input_value()
    response = page.request.post(f"/limits/qc/{lab.analyte.pk}/linker/",
                                 form={"csrfmiddlewaretoken": token, "valid_days": "3",
                                       "rationale": "not mine to change"},
                                 headers={"Referer": page.url})
    assert response.status == 403
    assert "administrator" in response.text() and "Not allowed" in response.text()
    page.goto(f"/limits/qc/{lab.analyte.pk}/linker/")
    assert "administrator" in page.locator("#forbidden-message").inner_text()
    assert QcLimitSet.objects.get(analyte=lab.analyte, product_kind="linker").version == version


def test_an_invalid_value_is_named_beside_its_field_and_nothing_is_saved(
        page, sign_in, administrator, lab):
    before = QcLimitSet.objects.get(analyte=lab.analyte, product_kind="purchased")
    sign_in(administrator, "administrator")
    page.goto(f"/limits/qc/{lab.analyte.pk}/purchased/")
    assert page.locator("#defaults-note").is_visible()  # the stage got defaults to review
    page.get_by_label("Band position tolerance (± cm⁻¹)").fill("900")  # beyond 500 cm⁻¹
    page.get_by_label("Reason for this change").fill("typo")
    page.get_by_role("button", name="Save a new version").click()
    error = page.locator("#field-band_position_tolerance_cm1 .error")
    assert "500" in error.inner_text()
    assert "Nothing was saved" in page.locator("#error-summary").inner_text()
    after = QcLimitSet.objects.get(pk=before.pk)
    assert (after.version, after.band_position_tolerance_cm1) == \
        (before.version, before.band_position_tolerance_cm1)


def _chart_frame(page, path="/plots/control/film/log10_enhancement_factor.svg"):
    """The document of an embedded chart (an ``<object>`` frame, found by its address)."""
    page.wait_for_function("(path) => [...document.querySelectorAll('object')].some("
                           "o => o.data.endsWith(path) && o.contentDocument"
                           " && o.contentDocument.querySelector('text'))", arg=path)
    frame = next(frame for frame in page.frames if frame.url.endswith(path))
    frame.wait_for_selector("a", state="attached")
    return frame


def _smallest_text_px(frame) -> float:
    """The smallest font size as drawn: SVG font size × displayed width / viewBox width."""
    return frame.evaluate("""() => {
        const svg = document.documentElement;
        const scale = svg.getBoundingClientRect().width / svg.viewBox.baseVal.width;
        const sizes = [...document.querySelectorAll('text')]
            .map(t => parseFloat(getComputedStyle(t).fontSize));
        return Math.min(...sizes) * scale;
    }""")


def test_chart_text_is_readable_and_a_point_opens_its_record(page, sign_in, viewer, chain, lab):
    measured = [lab.measure(_film(chain), name) for name in (
        "good_substrate_map.csv", "nonuniform_substrate_map.csv", "weak_enhancement_map.csv")]
    sign_in(viewer, "viewer")
    for viewport in (DESKTOP, PHONE):
        page.set_viewport_size(viewport)
        page.goto("/")
        frame = _chart_frame(page)
        assert _smallest_text_px(frame) >= 11.0, viewport
        assert page.evaluate("document.documentElement.scrollWidth") <= viewport["width"]
    frame.locator("a").first.click()
    page.wait_for_url(re.compile(rf"/r/{measured[0].code}/$"))
    assert page.locator("#record-code").inner_text().startswith(measured[0].code)
