"""Every API error, whatever refused the request, answers the one documented JSON shape
``{"errors": [{"field", "message", "code"}]}`` with a 4xx: unknown paths and kinds, malformed
codes, wrong methods, ``?format=api``, oversized and deeply nested JSON, NUL characters."""

from __future__ import annotations

import json

import pytest
from django.conf import settings
from django.db import connection

from .conftest import client_for


def _shaped(response, status: int) -> list[dict]:
    assert response.status_code == status, (response.status_code, response.content[:300])
    assert response["Content-Type"].startswith("application/json"), response["Content-Type"]
    errors = response.json()["errors"]
    assert errors and all({"field", "message", "code"} <= set(e) and e["message"]
                          for e in errors)
    return errors


@pytest.fixture
def api(maker):
    return client_for(maker)


@pytest.mark.parametrize("path", [
    "/api/v1/substrates/x.y/", "/api/v1/substrates/SUB-99999/", "/api/v1/no-such-kind/",
    "/api/v1/no-such-kind/SUB-00001/", "/api/v1/records/x.y/", "/api/v1/records/NOPE-1/",
    "/api/v1/substrates/SUB-00001/no-such-action/", "/api/v2/substrates/",
    "/api/v1/tokens/not-hex/",
])
def test_unknown_paths_answer_404_in_the_error_shape(api, path):
    _shaped(api.get(path), 404)


def test_anonymous_unknown_path_is_a_json_404_too(client):
    _shaped(client.get("/api/v1/substrates/x.y/"), 404)


@pytest.mark.parametrize("method, path", [("delete", "/api/v1/substrates/"),
                                          ("put", "/api/v1/expiring/"),
                                          ("get", "/api/v1/token/")])
def test_a_wrong_method_answers_405_in_the_error_shape(api, method, path):
    _shaped(getattr(api, method)(path), 405)


@pytest.mark.parametrize("path", ["/api/v1/substrates/?format=api",
                                  "/api/v1/substrates/x.y/?format=api",
                                  "/api/v1/substrates/SUB-99999/?format=api"])
def test_the_browsable_format_answers_in_the_error_shape(api, path):
    _shaped(api.get(path), 404)


def test_a_json_body_over_the_limit_is_a_413(api):
    body = json.dumps({"name": "x" * (settings.DATA_UPLOAD_MAX_MEMORY_SIZE + 10),
                       "kind": "solvent", "received_on": "2026-01-01"})
    errors = _shaped(api.post("/api/v1/reagent-lots/", body, content_type="application/json"),
                     413)
    assert "MB" in errors[0]["message"]


@pytest.mark.parametrize("depth", [5_000, 100_000])
def test_deeply_nested_json_to_the_token_endpoint_is_a_400(client, depth):
    body = "[" * depth + "]" * depth
    errors = _shaped(client.post("/api/v1/token/", body, content_type="application/json"),
                     400)
    assert errors[0]["code"] == "parse_error"


@pytest.mark.parametrize("path, body", [
    ("/api/v1/token/", {"username": "ma\x00ker", "password": "x"}),
    ("/api/v1/reagent-lots/", {"name": "ethanol\x00", "kind": "solvent",
                               "received_on": "2026-01-01"}),
    ("/api/v1/storage-locations/", {"name": "shelf", "kind": "shelf", "room": "B\x00"}),
])
def test_a_nul_character_is_refused_naming_the_field(api, path, body):
    errors = _shaped(api.post(path, body, format="json"), 400)
    assert any(e["field"] in body for e in errors), errors


def test_a_nul_character_in_an_amendment_is_refused_naming_the_field(api, chain):
    lot = chain.lot()
    response = api.post(f"/api/v1/reagent-lots/{lot.code}/amend/",
                        {"changes": {"notes": "bad\x00note"}, "reason": "typo fix",
                         "expected_version": lot.version}, format="json")
    errors = _shaped(response, 400)
    assert any("notes" in (e["field"] or "") for e in errors), errors
    assert connection.vendor in ("sqlite", "postgresql")


def test_a_database_rule_names_the_field_it_guards(chain, administrator, maker):
    """A CHECK constraint that refuses a value (found by Model.full_clean in the service)
    names the field of its condition, not null."""
    limits = client_for(administrator).post(
        "/api/v1/deposition-tolerances/",
        {"metal": "Au", "max_abs_deviation_height_over_diameter": 0}, format="json")
    (error,) = _shaped(limits, 400)
    assert error["field"] == "max_abs_deviation_height_over_diameter", error
    lot = chain.lot()
    amended = client_for(maker).post(
        f"/api/v1/reagent-lots/{lot.code}/amend/",
        {"changes": {"concentration_mM": -5}, "reason": "typo", "expected_version": lot.version},
        format="json")
    errors = _shaped(amended, 400)
    assert all((e["field"] or "").endswith("concentration_mM") for e in errors), errors
