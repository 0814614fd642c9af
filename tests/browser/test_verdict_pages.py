"""A lab user reads the deposition, colloid (UV-vis) and readiness pages verdict first.

In Debian's Chromium at a desk (1280 px) and on a phone (390 px): the verdict is the first
thing under the heading, the raw fields open from their folded details section and read as
words, and the page never scrolls sideways.  Screenshots of each page at both widths go
where the browser walk writes them (test-artifacts/screenshots/).
"""

from __future__ import annotations

from urllib.request import urlopen

import pytest

from tests.browser.test_page_widths import DESK, PHONE, photograph_and_measure, signed_in_tab
from tests.verdict_lab import colloid_limits, gold_batch, run_600nm, uvvis

pytestmark = pytest.mark.browser

FIRST_UNDER_HEADING = """() => {
  const heading = document.querySelector('main h1');
  let next = heading.nextElementSibling;
  while (next && !next.innerText.trim()) next = next.nextElementSibling;
  return next ? next.innerText : '';
}"""


def test_verdict_pages_read_first_fold_their_details_and_fit_a_phone(
        browser, live_server, chain, viewer, administrator):
    run = run_600nm(chain, "au_600nm_hd030.txt")  # made for h/D 0.30, planned 0.50
    colloid_limits(administrator, "Au", peak_min_nm=500, peak_max_nm=560)
    record = uvvis(chain, gold_batch(chain), "au_batch_day00.csv", dilution=2.0)
    _run, (waiting,) = chain.run(pieces=1)  # in quarantine, no QC
    pages = {  # name: (url, headline, a raw field's label inside the details)
        "verdict-deposition": (f"/r/{run.code}/", "OFF TARGET", "Film height h"),
        "verdict-uvvis": (f"/r/{record.code}/", "WITHIN LIMITS", "Plasmon band width (FWHM)"),
        "verdict-colloid": (f"/r/{record.batch.code}/", "WITHIN LIMITS", "Metal"),
        "verdict-readiness": (f"/check/?code={waiting.code}", "NOT READY", None),
    }
    # The server's first page can take longer than a navigation may on a loaded machine.
    urlopen(live_server.url + "/accounts/login/", timeout=300).read()
    too_wide: dict[str, int] = {}
    for viewport in (DESK, PHONE):
        context, tab = signed_in_tab(browser, live_server, viewport, viewer, "viewer")
        for name, (url, headline, raw_label) in pages.items():
            tab.goto(url)
            first = tab.evaluate(FIRST_UNDER_HEADING)
            sentence = tab.locator("#verdict-sentence").inner_text()
            assert first.startswith(headline) and sentence in first, (name, first[:200])
            assert tab.locator("#verdict-next").inner_text().startswith("Next:")
            if raw_label:
                details = tab.locator("#raw-fields")
                raw_row = details.get_by_role("row", name=raw_label).first
                assert not raw_row.is_visible()  # folded until opened
                details.locator("summary").click()
                assert details.get_attribute("open") is not None
                assert raw_row.is_visible()
                assert "True" not in details.inner_text().split()
            else:  # readiness: every reason is a link to the record at fault
                reasons = tab.locator("#readiness-reasons li")
                assert reasons.count() >= 1
                assert tab.locator("#readiness-reasons li a").count() == reasons.count()
                assert f"{waiting.code} is in quarantine" in reasons.first.inner_text()
            photograph_and_measure(tab, name, viewport, too_wide)
        context.close()
    assert not too_wide, f"pages wider than the 390 px phone (scrollWidth): {too_wide}"
