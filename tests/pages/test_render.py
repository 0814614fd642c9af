"""Every page renders for every role on realistic data, and shows only usable controls."""

from __future__ import annotations

from django.urls import reverse

from .conftest import ROLES


def _pages(lab) -> list[str]:
    good, qc, batch, run = lab.good.code, lab.qc_good.code, lab.batch.code, lab.run.code
    return [
        reverse("home"), reverse("stock"), reverse("review"),
        reverse("review") + "?kind=nanoparticlebatch", reverse("trace"),
        reverse("readiness") + f"?code={good}", reverse("readiness") + f"?code={lab.failed.code}",
        reverse("trace") + f"?code={lab.dataset.code}",
        reverse("trace_report", args=[lab.dataset.code]),
        reverse("record", args=[good]), reverse("record", args=[qc]),
        reverse("record", args=[lab.qc_failed.code]), reverse("record", args=[batch]),
        reverse("record", args=[run]), reverse("record", args=[lab.bath.code]),
        reverse("record", args=[lab.dataset.code]), reverse("record", args=[lab.reference.code]),
        reverse("record_label", args=[good]),
        reverse("label_sheet") + f"?codes={good},{lab.bath.code}",
    ]


def test_every_page_renders_for_every_role(lab, login):
    for role in ROLES:
        client = login(lab, role)
        for url in _pages(lab):
            response = client.get(url)
            assert response.status_code == 200, (role, url, response.status_code)
            page = response.content.decode()
            assert "<main id=\"content\">" in page and role in page  # signed in, role shown
        client.logout()


def test_anonymous_visitors_are_sent_to_sign_in(client, lab):
    for url in _pages(lab):
        response = client.get(url)
        assert response.status_code == 302 and "/accounts/login/" in response["Location"], url


def test_viewers_see_no_signing_or_resolving_controls(lab, login):
    viewer = login(lab, "viewer")
    queue = viewer.get(reverse("review")).content.decode()
    assert lab.waiting.code in queue
    assert reverse("review_sign", args=[lab.waiting.code]) not in queue
    assert "Resolve FLG-" not in queue and 'name="resolution"' not in queue
    record = viewer.get(reverse("record", args=[lab.waiting.code])).content.decode()
    assert 'id="review-record"' not in record
    viewer.logout()
    reviewer = login(lab, "reviewer")
    queue = reviewer.get(reverse("review")).content.decode()
    assert reverse("review_sign", args=[lab.waiting.code]) in queue
    assert 'name="resolution"' in queue
    assert 'id="review-record"' in reviewer.get(reverse("record", args=[lab.waiting.code])) \
        .content.decode()


def test_make_link_only_for_makers(lab, login):
    from django.urls import NoReverseMatch

    try:
        make_url = reverse("make:index")
    except NoReverseMatch:  # the logging forms are mounted by their own change
        make_url = None
    viewer_page = login(lab, "viewer").get(reverse("home")).content.decode()
    if make_url:
        assert f'href="{make_url}"' not in viewer_page
        maker_page = login(lab, "maker").get(reverse("home")).content.decode()
        assert f'href="{make_url}"' in maker_page
    else:
        assert ">Make<" not in viewer_page


def test_readiness_verdict_names_every_reason_with_a_link(lab, login):
    client = login(lab, "viewer")
    ready = client.get(reverse("readiness"), {"code": lab.good.code}).content.decode()
    assert 'id="verdict" class="verdict ready"' in ready and 'data-ready="true"' in ready
    blocked = client.get(reverse("readiness"), {"code": lab.failed.code})
    result = blocked.context["result"]
    assert not result.ready and result.reasons
    page = blocked.content.decode()
    assert 'class="verdict not-ready"' in page and "NOT READY" in page
    for reason in result.reasons:  # every reason, each linked to the record at fault
        assert f'data-reason="{reason.code}"' in page
        assert f'href="{reverse("record", args=[reason.record_code])}"' in page
    unknown = client.get(reverse("readiness"), {"code": "SUB-99999"}).content.decode()
    assert 'id="readiness-error"' in unknown and "SUB-99999" in unknown


def test_record_pages_show_units_lineage_flags_files_and_cautions(lab, login):
    client = login(lab, "viewer")
    bath = client.get(reverse("record", args=[lab.bath.code])).content.decode()
    assert "H300" in bath and "Fatal if swallowed" in bath and "GHS06" in bath
    assert f'href="{reverse("record", args=[lab.run.code])}"' in bath  # used in (descendants)
    run = client.get(reverse("record", args=[lab.run.code])).content.decode()
    assert lab.run.chronoamperogram_sha256 in run  # the file's digest
    assert reverse("plot_chronoamperogram", args=[lab.run.code]) in run
    assert '<span class="unit">cm²</span>' in run  # electrode_area_cm2 with its unit
    qc = client.get(reverse("record", args=[lab.qc_failed.code])).content.decode()
    assert 'id="laser-caution"' in qc and reverse("plot_heatmap", args=[lab.qc_failed.code]) in qc
    failed = client.get(reverse("record", args=[lab.failed.code])).content.decode()
    assert 'data-flag-state="open"' in failed and lab.qc_failed.code in failed
    assert 'class="verdict not-ready"' in failed  # a scanned label answers at once
    good = client.get(reverse("record", args=[lab.good.code])).content.decode()
    assert f'href="{reverse("record", args=[lab.batch.code])}"' in good  # made from (ancestors)
    assert f'href="{reverse("record", args=[lab.dataset.code])}"' in good  # used in
    assert 'id="record-history"' in good and "released" in good.lower()


def test_audit_report_carries_the_screening_caution_and_every_input(lab, login):
    from inventory.selectors import record_get_ancestors

    client = login(lab, "viewer")
    response = client.get(reverse("trace_report", args=[lab.dataset.code]))
    page = response.content.decode()
    assert "not a confirmatory test" in page and "accredited methods" in page
    for code in record_get_ancestors(lab.dataset).depth:
        assert f'href="{reverse("record", args=[code])}"' in page
    assert lab.qc_good.code in page  # QC of the substrate the dataset was measured on


def test_unknown_records_are_404(lab, login):
    client = login(lab, "viewer")
    assert client.get(reverse("record", args=["SUB-99999"])).status_code == 404
    assert client.get(reverse("trace_graph", args=["SUB-99999"])).status_code == 404
    assert client.get(reverse("plot_heatmap", args=[lab.good.code])).status_code == 404


def test_prov_download_is_a_w3c_prov_document_of_the_lineage(lab, login):
    from prov.model import ProvDocument

    from inventory.selectors import record_get_ancestors

    client = login(lab, "viewer")
    response = client.get(reverse("trace_prov", args=[lab.dataset.code]),
                          {"direction": "ancestors"})
    assert response.status_code == 200 and response["Content-Type"] == "application/json"
    assert "attachment" in response["Content-Disposition"]
    document = ProvDocument.deserialize(content=response.content.decode(), format="json")
    entities = {str(record.identifier) for record in document.get_records()}
    for code in record_get_ancestors(lab.dataset).depth:
        assert any(identifier.endswith(code) for identifier in entities), code


def test_a_scanned_label_url_is_read_as_its_code(lab, login):
    client = login(lab, "viewer")
    scanned = f"http://testserver{reverse('record', args=[lab.good.code])}"
    check = client.get(reverse("readiness"), {"code": scanned})
    assert check.context["result"].substrate_code == lab.good.code
    trace = client.get(reverse("trace"), {"code": scanned})
    assert trace.context["record"].code == lab.good.code
    other = client.get(reverse("readiness"), {"code": "http://elsewhere.example/x/"})
    assert other.context["result"] is None and other.context["error"]
