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


# ------------------------------------------- a charge entered on a run that exists (no file)


def _run_without_charge(chain):
    run, _pieces = chain.s.deposition_run_record(
        actor=chain.maker, template=chain.template(spheres=chain.spheres(diameter_nm=600)),
        bath_lot=chain.lot("plating_bath"), metal="Au", electrons_per_atom=1,
        mode="potentiostatic", electrode_area_cm2=1.0, made_on=chain.day(9), pieces=1,
        target_height_over_diameter=0.5)
    return run


def test_a_charge_entered_on_an_existing_run_gives_faradays_figures(chain, clients):
    """Faraday's law, V = Q·M / (n·F·ρ): CODATA F from scipy.constants, gold's molar mass
    from periodictable (196.97 g/mol) and its density 19.32 g/cm³ from the CRC Handbook of
    Chemistry and Physics (from memory; periodictable rounds it to 19.3)."""
    import periodictable
    from scipy.constants import physical_constants

    run = _run_without_charge(chain)
    response = clients["maker"].post(f"/api/v1/deposition-runs/{run.code}/charge/",
                                     {"charge_C": 0.112, "reason": "from the run sheet"},
                                     format="json")
    assert response.status_code == 200, response.json()
    body = response.json()
    faraday = physical_constants["Faraday constant"][0]
    volume_cm3 = 0.112 * periodictable.Au.mass / (1 * faraday * 19.32)
    assert body["charge_source"] == "entered" and body["charge_C"] == 0.112
    assert body["metal_volume_cm3"] == pytest.approx(volume_cm3, rel=1e-3)
    assert body["equivalent_thickness_nm"] == pytest.approx(volume_cm3 / 1.0 * 1e7, rel=1e-3)
    stored = DepositionRun.objects.get(pk=run.pk)
    assert (stored.charge_C, stored.charge_source) == (0.112, "entered")
    assert stored.height_over_diameter == body["height_over_diameter"]
    reason = stored.history.order_by("-history_id").first().history_change_reason
    assert "charge entered as reported: 0.112 C" in reason and "from the run sheet" in reason


@pytest.mark.parametrize("payload, code", [({"charge_C": -1}, "out_of_range"),
                                           ({"charge_C": "lots"}, "invalid"),
                                           ({}, "required")])
def test_a_bad_entered_charge_is_a_400_naming_the_field_and_saves_nothing(chain, clients,
                                                                          payload, code):
    run = _run_without_charge(chain)
    response = clients["maker"].post(f"/api/v1/deposition-runs/{run.code}/charge/", payload,
                                     format="json")
    assert response.status_code == 400
    errors = response.json()["errors"]
    assert [(e["field"], e["code"]) for e in errors] == [("charge_C", code)]
    stored = DepositionRun.objects.get(pk=run.pk)
    assert (stored.charge_C, stored.version) == (None, run.version)


def test_a_viewer_cannot_enter_a_charge(chain, clients):
    run = _run_without_charge(chain)
    response = clients["viewer"].post(f"/api/v1/deposition-runs/{run.code}/charge/",
                                      {"charge_C": 0.1}, format="json")
    assert response.status_code == 403
    assert DepositionRun.objects.get(pk=run.pk).charge_C is None


def test_the_command_gives_the_api_s_answer(chain, clients):
    import io
    import json

    from django.core.management import call_command

    first, second = _run_without_charge(chain), _run_without_charge(chain)
    api = clients["maker"].post(f"/api/v1/deposition-runs/{first.code}/charge/",
                                {"charge_C": 0.09}, format="json").json()
    out = io.StringIO()
    call_command("enter_charge", second.code, "0.09", "--json", "--user", chain.maker.username,
                 stdout=out)
    printed = json.loads(out.getvalue())
    same = ("charge_C", "charge_source", "metal_volume_cm3", "equivalent_thickness_nm",
            "film_height_nm", "height_over_diameter", "target_charge_C", "deviation")
    assert {k: printed[k] for k in same} == {k: api[k] for k in same}
    words = io.StringIO()
    call_command("enter_charge", second.code, "0.09", "--user", chain.maker.username,
                 stdout=words)
    assert "already holds the entered charge" in words.getvalue()
