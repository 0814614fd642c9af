"""The API and the pages give the same answer: readiness (verdict and every reason) and lineage."""

from __future__ import annotations

import re
from datetime import timedelta

import pytest
from django.urls import reverse
from django.utils.html import escape

from inventory.models import Substrate
from inventory.selectors import record_get_ancestors, record_get_descendants

pytestmark = pytest.mark.django_db


@pytest.fixture
def page(client, viewer):
    client.force_login(viewer)
    return client


@pytest.fixture
def substrates(qc_lab):
    """Ready, failed-QC, flagged and old-linker substrates, each with reasons of its own."""
    chain = qc_lab.chain
    ready = chain.decorated_substrate()
    qc_lab.measure(ready, "good_substrate_map.csv")
    failed = chain.decorated_substrate()
    qc_lab.measure(failed, "nonuniform_substrate_map.csv")
    flagged = chain.decorated_substrate()
    chain.s.flag_raise(actor=chain.maker, target=flagged, category="handling",
                       message="Touched the active area <with gloves>.")
    _run, pieces = chain.run(pieces=1)
    return [ready, failed, flagged, pieces[0]]


def _page_text(page, code) -> str:
    response = page.get(reverse("readiness"), {"code": code})
    assert response.status_code == 200
    return response.content.decode()


def test_readiness_matches_the_check_page(substrates, clients, page):
    verdicts = set()
    for substrate in Substrate.objects.filter(pk__in=[s.pk for s in substrates]):
        api = clients["viewer"].get(f"/api/v1/substrates/{substrate.code}/readiness/").json()
        html = _page_text(page, substrate.code)
        verdicts.add(api["verdict"])
        assert f'data-ready="{str(api["ready"]).lower()}"' in html
        verdict = re.search(r'id="verdict"[^>]*>\s*([A-Z ]+?)\s*<', html).group(1)
        assert verdict == api["verdict"]
        assert re.findall(r'data-reason="([a-z_]+)"', html) == [r["code"] for r in api["reasons"]]
        for reason in api["reasons"]:
            assert escape(reason["message"]) in html, reason
            assert reverse("record", args=[reason["record_code"]]) in html
    assert verdicts == {"READY", "NOT READY"}


def test_readiness_on_a_later_day_is_the_service_answer(substrates, clients):
    from inventory.readiness import substrate_check_readiness

    ready = substrates[0]
    later = (ready.made_on + timedelta(days=60)).isoformat()
    api = clients["viewer"].get(f"/api/v1/substrates/{ready.code}/readiness/",
                                {"on": later}).json()
    expected = substrate_check_readiness(ready.code,
                                         on_date=ready.made_on + timedelta(days=60))
    assert api["checked_on"] == later
    assert [(r["code"], r["message"]) for r in api["reasons"]] == \
        [(r.code, r.message) for r in expected.reasons]
    assert "qc_stale" in {r["code"] for r in api["reasons"]}  # valid 14 days (QcLab limits)


@pytest.mark.parametrize("direction", ["ancestors", "descendants"])
def test_lineage_matches_the_selector_and_the_record_page(substrates, clients, page, direction):
    ready = substrates[0]
    run_code = ready.deposition_run.code
    for code in (ready.code, run_code):
        api = clients["viewer"].get(f"/api/v1/records/{code}/lineage/",
                                    {"direction": direction}).json()
        selector = (record_get_ancestors if direction == "ancestors"
                    else record_get_descendants)(code)
        assert [n["code"] for n in api["nodes"]] == selector.codes()
        assert api["root"] == code and api["direction"] == direction
        html = page.get(reverse("record", args=[code])).content.decode()
        for node in api["nodes"]:
            assert f'href="{reverse("record", args=[node["code"]])}"' in html, node
    up = clients["viewer"].get(f"/api/v1/records/{ready.code}/lineage/").json()
    assert run_code in {n["code"] for n in up["nodes"]}
    assert {(e["parent_code"], e["child_code"]) for e in up["edges"]} >= {(run_code, ready.code)}


def test_lineage_as_prov_is_the_same_document_as_the_command(substrates, clients):
    import io
    import json

    from django.core.management import call_command
    from prov.model import ProvDocument

    ready = substrates[0]
    response = clients["viewer"].get(f"/api/v1/records/{ready.code}/lineage/",
                                     {"as": "prov", "direction": "ancestors"})
    assert response.status_code == 200
    document = response.json()
    out = io.StringIO()
    call_command("lineage", ready.code, "--prov", stdout=out)
    assert document == json.loads(out.getvalue())
    # Read back by the prov library (W3C PROV-JSON): every ancestor is an entity.
    parsed = ProvDocument.deserialize(content=json.dumps(document), format="json")
    entities = {str(record.identifier).rsplit(":", 1)[-1] for record in parsed.get_records()
                if record.get_type().localpart == "Entity"}
    assert entities == {ready.code, *record_get_ancestors(ready.code).codes()}
