"""A QC record page leads with its verdict in one sentence; raw fields are folded below."""

from __future__ import annotations

import re

from django.urls import reverse


def _page(lab, login, record):
    return login(lab, "viewer").get(reverse("record", args=[record.code])).content.decode()


def test_failed_qc_says_which_limit_by_how_much_and_what_next(lab, login):
    page = _page(lab, login, lab.qc_failed)
    sentence = re.search(r'id="verdict-sentence">([^<]*)<', page).group(1)
    # The limits the lab set in tests/pages/conftest.py: RSD ceiling 20 %.
    rsd = lab.qc_failed.rsd_percent
    assert rsd > 20
    assert f"uniformity RSD {rsd:.1f} % is {rsd - 20:.1f} points over the 20 % ceiling" \
        in sentence
    assert sentence.startswith(f"{lab.failed.code} failed QC")
    assert "do not use this piece" in page
    # Verdict first, raw fields after it and folded.
    assert page.index('id="verdict"') < page.index('id="key-figures"') < \
        page.index('<details id="raw-fields">') < page.index('id="record-fields"')


def test_passed_qc_names_the_margin_and_the_reviewer_step(lab, login):
    page = _page(lab, login, lab.qc_good)
    sentence = re.search(r'id="verdict-sentence">([^<]*)<', page).group(1)
    ef = lab.qc_good.enhancement_factor
    assert sentence.startswith(f"{lab.good.code} passed QC")
    assert f"{ef / 1e6:.2g}× the floor" in sentence  # floor 10⁶ (tests/pages/conftest.py)
    assert "a reviewer releases" in page and "defaults, still to be reviewed" in page
