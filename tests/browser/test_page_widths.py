"""The main pages at a desk (1280 px) and on a phone held at the bench (390 px).

At 390 px no list or result page may scroll sideways: the document's scrollWidth must not
exceed the viewport's width (wide tables scroll inside their own box instead).  Every page is
also saved as a screenshot at both widths for review (test-artifacts/screenshots/).
"""

from __future__ import annotations

import pytest

from tests.browser.conftest import SCREENSHOTS
from tests.conftest import PASSWORDS
from tests.pages.conftest import build_lab

pytestmark = pytest.mark.browser

DESK = {"width": 1280, "height": 900}
PHONE = {"width": 390, "height": 844}


def main_pages(lab) -> dict[str, str]:
    from qc.models import UvVisRecord

    good = lab.good.code
    uvvis = UvVisRecord.objects.filter(batch=lab.batch).order_by("measured_on").last()
    return {
        "dashboard": "/", "make": "/make/", "stock": "/stock/", "review": "/review/",
        "check-ready": f"/check/?code={good}", "record-substrate": f"/r/{good}/",
        "record-qc": f"/r/{lab.qc_good.code}/", "record-qc-failed": f"/r/{lab.qc_failed.code}/",
        "record-deposition": f"/r/{lab.run.code}/", "record-colloid": f"/r/{lab.batch.code}/",
        "record-reagent": f"/r/{lab.bath.code}/",
        "trace": f"/trace/?code={lab.dataset.code}",
        "audit-report": f"/trace/{lab.dataset.code}/report/",
        "make-qc-form": "/make/qc/", "make-deposition-form": "/make/deposition/",
        "label": f"/r/{good}/label/",
        # The verdict-first result pages (issue 18), after a step and on their records.
        "record-uvvis": f"/r/{uvvis.code}/", "check-not-ready": f"/check/?code={lab.failed.code}",
        "make-result-deposition": f"/make/done/{lab.run.code}/",
        "make-result-uvvis": f"/make/done/{uvvis.code}/",
    }


@pytest.fixture
def lab(chain, viewer, maker, reviewer, administrator):
    return build_lab(chain, {"viewer": viewer, "maker": maker, "reviewer": reviewer,
                             "administrator": administrator})


def signed_in_tab(browser, live_server, viewport, user, role):
    context = browser.new_context(viewport=viewport, base_url=live_server.url)
    tab = context.new_page()
    tab.set_default_timeout(20_000)
    tab.goto("/accounts/login/")
    tab.get_by_label("Username").fill(user.get_username())
    tab.get_by_label("Password").fill(PASSWORDS[role])
    tab.get_by_role("button", name="Sign in").click()
    tab.wait_for_url(lambda url: "/accounts/login/" not in url)
    return context, tab


def photograph_and_measure(tab, name: str, viewport: dict, too_wide: dict) -> None:
    """Save the open page as ``name-<width>.png``; at phone width note it if it is too wide."""
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    tab.screenshot(path=str(SCREENSHOTS / f"{name}-{viewport['width']}.png"), full_page=True)
    if viewport is PHONE:
        scroll, inner = tab.evaluate(
            "() => [document.documentElement.scrollWidth, window.innerWidth]")
        if scroll > inner:
            too_wide[name] = scroll


def test_main_pages_fit_a_phone_and_are_photographed_at_both_widths(browser, live_server, lab):
    too_wide: dict[str, int] = {}
    for viewport in (DESK, PHONE):
        context, tab = signed_in_tab(browser, live_server, viewport, lab.users["maker"],
                                     "maker")
        for name, url in main_pages(lab).items():
            tab.goto(url)
            tab.locator("main").wait_for()
            photograph_and_measure(tab, name, viewport, too_wide)
        context.close()
    assert not too_wide, f"pages wider than the 390 px phone (scrollWidth): {too_wide}"
