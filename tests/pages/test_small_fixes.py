"""Issue 18's small page bugs, each pinned: file sizes, dates, fractions, words, errors, units."""

from __future__ import annotations

import re

from django.test import override_settings
from django.urls import reverse

from bench.make.forms import DepositionRunForm

from .conftest import FIXTURES


def test_record_pages_show_the_stored_file_size_not_zero(lab, login):
    client = login(lab, "viewer")
    for record, fixture in ((lab.qc_good, ("raman", "good_substrate_map.csv")),):
        page = client.get(reverse("record", args=[record.code])).content.decode()
        files = page.split('id="record-files"')[1].split("</table>")[0]
        assert "0 bytes" not in files
        # Django's filesizeformat: 1024-byte kilobytes, one decimal.
        size_kb = FIXTURES.joinpath(*fixture).stat().st_size / 1024
        assert f"{size_kb:.1f}\xa0KB" in files


def test_qc_page_shows_the_fraction_as_a_percent_and_the_result_in_words(lab, login):
    page = login(lab, "viewer").get(reverse("record", args=[lab.qc_good.code])).content.decode()
    assert "Passed" not in re.findall(r"<th scope=\"row\">([^<]*)</th>", page)
    row = re.search(r"Points within ±20 % of the median</th>\s*<td>([\d.]+)", page)
    assert row and 1 < float(row.group(1)) <= 100  # a percent, not a fraction of one
    assert "Snr" not in page


def test_review_queue_shows_the_day_made_not_the_day_entered(lab, login):
    page = login(lab, "reviewer").get(reverse("review") + "?kind=substrate").content.decode()
    row = page.split(f'id="queue-{lab.waiting.code}"')[1].split("</tr>")[0]
    assert lab.waiting.made_on.isoformat() in row


def test_unit_menus_have_one_entry_per_unit():
    form = DepositionRunForm()
    times = [label for value, label in form.fields["time_unit"].choices if value]
    currents = [label for value, label in form.fields["current_unit"].choices if value]
    assert times == ["s", "ms", "min"]
    assert currents == ["A", "mA", "\u00b5A", "nA"]


@override_settings(DEBUG=False)
def test_a_missing_record_shows_our_404_page(lab, login):
    response = login(lab, "viewer").get(reverse("record", args=["SUB-99999"]))
    assert response.status_code == 404
    page = response.content.decode()
    assert "No record has the ID" in page and "SUB-99999" in page and 'id="content"' in page


@override_settings(DEBUG=False)
def test_a_refused_action_says_which_role_it_needs_and_who_holds_it(lab, login):
    response = login(lab, "viewer").get(reverse("make:storage"))
    assert response.status_code == 403
    page = response.content.decode()
    assert "needs the maker role" in page
    holders = re.search(r'id="role-holders">([^<]*)<', page).group(1).split(", ")
    assert {user.username for role, user in lab.users.items() if role != "viewer"} <= \
        set(holders)


def test_stock_list_rows_print_labels_and_the_days_filter_says_what_it_hides(lab, login):
    client = login(lab, "viewer")
    page = client.get(reverse("stock") + "?kind=substrate&days=0").content.decode()
    assert f'name="codes" value="{lab.good.code}"' in page
    assert "expire within (days)" in page
    hidden = re.search(r'id="expiring-hidden">([^<]*)<', page).group(1)
    # tests/pages/conftest.py gives substrates a 30-day rule: none expires today, so every
    # active dated record is "after 0 days".
    later = int(re.search(r"Not listed: (\d+) that expire after 0 days", hidden).group(1))
    assert later >= 3
    sheet = client.get(reverse("label_sheet"),
                       {"codes": [lab.good.code, lab.bath.code]}).content.decode()
    assert f'id="label-{lab.good.code}"' in sheet and f'id="label-{lab.bath.code}"' in sheet
    assert "62 × 29 mm" in sheet


def test_audit_report_lists_every_file_and_downloads_as_pdf(lab, login):
    client = login(lab, "viewer")
    page = client.get(reverse("trace_report", args=[lab.dataset.code])).content.decode()
    files = page.split('id="report-files"')[1].split("</table>")[0]
    # The dataset's own file, registered in tests/pages/conftest.py; its digest by hashlib.
    import hashlib
    assert hashlib.sha256(b"shift,counts\n1000,12\n1001,13\n").hexdigest() in files
    assert "good_substrate_map.csv" in files  # the QC map of the substrate it was measured on
    pdf = client.get(reverse("trace_report_pdf", args=[lab.dataset.code]))
    assert pdf["Content-Type"] == "application/pdf"
    body = b"".join(pdf.streaming_content) if pdf.streaming else pdf.content
    assert body.startswith(b"%PDF-") and len(body) > 2000
