"""A deposition run created through the API with its reported charge, and read back with
where the charge came from (issue 21); the record page says the same."""

from __future__ import annotations

import pytest
from django.test import Client

from inventory.models import DepositionRun

pytestmark = pytest.mark.django_db


def _payload(chain, **extra):
    template = chain.template(spheres=chain.spheres(diameter_nm=600))
    return {"template": template.code, "bath_lot": chain.lot("plating_bath").code,
            "metal": "Au", "electrons_per_atom": 1, "mode": "potentiostatic",
            "electrode_area_cm2": 1.0, "made_on": chain.day(9).isoformat(), "pieces": 1,
            "target_height_over_diameter": 0.5, **extra}


def test_a_run_created_with_its_charge_reads_back_with_its_source(chain, clients):
    created = clients["maker"].post("/api/v1/deposition-runs/", _payload(chain, charge_C=0.112),
                                    format="json")
    assert created.status_code == 201, created.json()
    body = clients["viewer"].get(f"/api/v1/deposition-runs/{created.json()['code']}/").json()
    assert (body["charge_C"], body["charge_source"]) == (0.112, "entered")
    assert body["charge_source_label"] == "Entered as the potentiostat reported it (no file)"
    assert body["chronoamperogram_sha256"] == "" and body["film_height_nm"] > 0
    schemas = clients["viewer"].get("/api/v1/schema/", HTTP_ACCEPT="application/json"
                                    ).json()["components"]["schemas"]
    request = schemas["DepositionRunRecordRequest"]["properties"]["charge_C"]
    assert "Unit: C (coulomb)" in request["description"]
    assert (request["minimum"], request["maximum"]) == (0, 1e5)  # the range table's span
    assert "charge_source_label" in schemas["DepositionRun"]["properties"]


@pytest.mark.parametrize("charge", [-0.1, 0, 1e9])
def test_a_bad_charge_is_a_400_naming_the_field(chain, clients, charge):
    response = clients["maker"].post("/api/v1/deposition-runs/", _payload(chain, charge_C=charge),
                                     format="json")
    assert response.status_code == 400
    assert {e["field"] for e in response.json()["errors"]} == {"charge_C"}
    assert not DepositionRun.objects.exists()


def test_the_record_page_says_where_the_charge_came_from(chain, maker):
    run, _ = chain.s.deposition_run_record(
        actor=maker, template=chain.template(spheres=chain.spheres(diameter_nm=600)),
        bath_lot=chain.lot("plating_bath"), metal="Au", electrons_per_atom=1,
        mode="potentiostatic", electrode_area_cm2=1.0, made_on=chain.day(9), pieces=1,
        charge_C=0.112)
    client = Client()
    client.force_login(maker)
    page = client.get(f"/r/{run.code}/").content.decode()
    assert "Entered as the potentiostat reported it (no file)" in page
    assert "Deposition charge from" in page and "NO FILE YET" not in page
