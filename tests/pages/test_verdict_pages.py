"""Deposition, colloid (UV-vis) and readiness pages lead with their verdict in words.

The verdict sentence is the first thing under the page heading; the key figures carry units
and uncertainties; the raw fields are folded below with labels a person reads.
"""

from __future__ import annotations

import re

import pytest
from django.urls import reverse

from tests.qc_lab import QcLab
from tests.verdict_lab import (
    colloid_limits,
    gold_batch,
    run_600nm,
    text_after_heading,
    uvvis,
    verdict_sentence,
)

# Model field names that must never reach a reader as labels or values.
RAW_NAMES = ("Snr", "Passed True", "sha256", "Fwhm", "Ratio spr", " True<", " False<",
             "Height over diameter", "Charge start", "Mie rms", "Peak u<")


def _get(client, user, url: str) -> str:
    client.force_login(user)
    response = client.get(url)
    assert response.status_code == 200
    return response.content.decode()


def _record(client, user, code: str) -> str:
    return _get(client, user, reverse("record", args=[code]))


def _assert_verdict_first(page: str, headline: str) -> None:
    after = text_after_heading(page)
    assert after.startswith(f"{headline} {verdict_sentence(page)}"), after[:300]
    assert page.index('id="verdict"') < page.index('id="key-figures"') < \
        page.index('<details id="raw-fields">') < page.index('id="record-fields"')


def _opened(client, user, code: str, headline: str) -> tuple[str, str]:
    """The record page of ``code`` (verdict first, under ``headline``) and its sentence."""
    page = _record(client, user, code)
    _assert_verdict_first(page, headline)
    return page, verdict_sentence(page)


def _details(page: str) -> str:
    return page[page.index('<details id="raw-fields">'):page.index("</details>")]


def test_deposition_on_target_says_height_with_uncertainty_and_what_next(chain, viewer,
                                                                         client):
    run = run_600nm(chain, "au_600nm_hd050.csv")
    page, sentence = _opened(client, viewer, run.code, "ON TARGET")
    assert sentence.startswith(f"{run.code} deposited")
    # fixtures/chronoamperograms/README.md: made for h/D = 0.50 in 600 nm spheres, so
    # h = 300 nm; the uncertainty is the stated 10 % default for a height from charge.
    height, u_height = map(float, re.search(r"film height (\d+) ± (\d+) nm", sentence).groups())
    assert abs(height - 300) < 6 and u_height == pytest.approx(0.10 * height, abs=0.6)
    ratio, u_ratio = map(float, re.search(r"h/D ([\d.]+) ± ([\d.]+)", sentence).groups())
    assert abs(ratio - 0.50) < 0.01 and u_ratio == pytest.approx(0.05, abs=0.006)
    assert "within the ±0.05 tolerance" in sentence and "no open flags" in sentence
    assert "carry on with the pieces" in page
    # The chronoamperogram comes before the folded raw fields, which read as words.
    assert page.index('id="key-figures"') < page.index("plots/deposition/") < \
        page.index('<details id="raw-fields">')
    details = _details(page)
    assert "Film height h" in details and "Deposition charge" in details
    assert not [name for name in RAW_NAMES if name in details]


def test_deposition_off_target_names_the_deviation_the_flag_and_the_next_step(chain, viewer,
                                                                               client):
    from inventory.flags import flags_open

    run = run_600nm(chain, "au_600nm_hd030.txt")
    page, sentence = _opened(client, viewer, run.code, "OFF TARGET")
    # Made for h/D = 0.30 (README), planned 0.50: about −0.20, far outside ±0.05.
    deviation = float(re.search(r"that is ([+−-][\d.]+) from the planned h/D 0.500",
                                sentence).group(1).replace("−", "-"))
    assert abs(deviation + 0.20) < 0.01 and "outside the ±0.05 tolerance" in sentence
    flag = flags_open(target_codes=[run.code]).get()
    assert f"open flag {flag.code}" in sentence
    assert 'class="verdict not-ready"' in page and "resolve the flag in Review" in page


def test_gold_colloid_within_limits_names_its_calibration_and_concentration(
        chain, viewer, administrator, client):
    colloid_limits(administrator, "Au", peak_min_nm=500, peak_max_nm=560)
    record = uvvis(chain, gold_batch(chain), "au_batch_day00.csv", dilution=2.0)
    page, sentence = _opened(client, viewer, record.code, "WITHIN LIMITS")
    # fixtures/uvvis/README.txt: median 20 nm; Haiss et al. (Anal. Chem. 2007) size it.
    size, u_size = map(float, re.search(r"size ([\d.]+) ± ([\d.]+) nm", sentence).groups())
    assert 15 < size < 25 and u_size > 0
    assert "Haiss" in sentence and "Anal. Chem. 79, 4215 (2007)" in sentence
    assert re.search(r"concentration \d\.\d\d × 10⁻[⁰-⁹]+ mol/L, ", sentence)
    assert "Mie fit" in sentence and "within the lab's Au colloid limits" in sentence
    # The spectrum with its fit, then the folded raw fields in words.
    assert page.index('id="key-figures"') < page.index("plots/uvvis/") < \
        page.index('<details id="raw-fields">')
    details = _details(page)
    assert "Plasmon band width (FWHM)" in details and "Mie fit: RMS residual" in details
    assert not [name for name in RAW_NAMES if name in details]
    # The batch page leads with the same verdict, by its latest spectrum.
    batch_page = _record(client, viewer, record.batch.code)
    assert verdict_sentence(batch_page).startswith(f"{record.batch.code}, by its latest "
                                                   f"spectrum")
    assert text_after_heading(batch_page).startswith("WITHIN LIMITS")


def test_a_colloid_limits_change_judges_later_spectra_and_leaves_earlier_verdicts(
        chain, viewer, administrator, client):
    # Issue 18: a limits change applies to measurements made after it; earlier verdicts keep
    # the limits they were judged by, and their pages say which version that was.
    colloid_limits(administrator, "Au", peak_min_nm=500, peak_max_nm=560)
    batch = gold_batch(chain)
    earlier = uvvis(chain, batch, "au_batch_day00.csv", dilution=2.0, days_ago=2)
    # The new window excludes this gold colloid's peak (fixtures/uvvis/README.txt: 20 nm,
    # unchanged on day 14; its plasmon peak lies near 520 nm, common practice for citrate
    # gold).
    colloid_limits(administrator, "Au", peak_min_nm=540, peak_max_nm=560)
    later = uvvis(chain, batch, "au_batch_day14.csv", dilution=2.0, days_ago=1)
    _page, sentence = _opened(client, viewer, earlier.code, "WITHIN LIMITS")
    assert "within the lab's Au colloid limits (version 1; later changes" in sentence
    _page, sentence = _opened(client, viewer, later.code, "OUT OF LIMITS")
    assert "outside the lab's Au colloid limits (version 2; later changes" in sentence
    assert "is outside 540–560 nm" in sentence


def test_silver_colloid_outside_the_peak_window_is_flagged_and_not_to_be_used(
        chain, viewer, administrator, client):
    colloid_limits(administrator, "Ag", peak_min_nm=420, peak_max_nm=450)
    record = uvvis(chain, chain.batch(days_ago=3), "ag_stable_day00.csv", dilution=10.0)
    page, sentence = _opened(client, viewer, record.code, "OUT OF LIMITS")
    # README: 40 nm silver, whose plasmon peak lies near 400 nm (below the 420 nm window).
    assert "outside the lab's Ag colloid limits (version 1; later changes do not " \
        "re-judge it): peak at" in sentence
    assert "is outside 420–450 nm" in sentence
    assert "the calibration gives no uncertainty" in sentence  # the silver table has none
    assert re.search(r"open flag FLG-\d+", sentence)
    assert f"do not use {record.batch.code}" in page


def test_a_mie_fit_at_its_search_bound_asks_for_review(chain):
    from bench.verdicts import uvvis_verdict
    from qc.models import UvVisRecord

    # Unsaved: the import raises this breach when the fit ends at a bound (qc.services.colloid).
    record = UvVisRecord(code="UV-09999", batch=chain.batch(), diameter_nm=None,
                         concentration_note="no calibration size in range",
                         mie_diameter_bound_nm=150.0, mie_fit_note="reached 150 nm",
                         breaches=[{"limit": "mie_fit_range", "message": "Mie fit reached"}])
    verdict = uvvis_verdict(record)
    assert verdict.headline == "REVIEW" and verdict.passed is False
    assert "the Mie fit stopped at its 150 nm search bound" in verdict.sentence
    assert "no colloid limits are set for Ag" in verdict.sentence


def test_readiness_leads_with_ready_or_not_and_the_figures_behind_it(chain, administrator,
                                                                     viewer, client):
    qc = QcLab(chain, administrator)
    good = chain.decorated_substrate()
    chain.s.record_transition(actor=chain.reviewer, record=good, to_status="quarantine",
                              reason="Re-test before use")
    measurement = qc.measure(good, "good_substrate_map.csv")
    chain.signed_release(type(good).objects.get(pk=good.pk))
    _run, (waiting,) = chain.run(pieces=1)

    ready = _get(client, viewer, reverse("readiness") + f"?code={good.code}")
    after = text_after_heading(ready)
    assert after.startswith(f"READY {good.code} is ready to use today"), after[:200]
    figures = ready[ready.index('id="key-figures"'):]
    assert f'href="{reverse("record", args=[measurement.code])}"' in figures
    assert "passed on" in figures and "enhancement factor" in figures

    blocked = _get(client, viewer, reverse("readiness") + f"?code={waiting.code}")
    after = text_after_heading(blocked)
    assert after.startswith(f"NOT READY {waiting.code} is not ready to use today"), after[:200]
    sentence = verdict_sentence(blocked)
    assert "it is in quarantine" in sentence and "it has no QC" in sentence
    # Reasons as links, before the supporting figures.
    assert blocked.index('id="readiness-reasons"') < blocked.index('id="key-figures"')
    assert f'href="{reverse("record", args=[waiting.code])}"' in blocked
    assert "measure its QC map" in blocked
