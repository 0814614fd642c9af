"""Permission matrix: every role against every kind of action (DESIGN §7 roles, cumulative).

viewer reads; maker records and uploads; reviewer signs (release, reject), voids and resolves
flags; administrator sets the lab's limits and rules.  Anonymous requests get 401, a
signed-in user below the role 403, in the one error shape.  At or above the role the
permission layer lets the request through (the service may still refuse the content: 400).
"""

from __future__ import annotations

import re

import pytest
from django.contrib.auth import get_user_model
from django.core.files.uploadedfile import SimpleUploadedFile

from inventory.roles import ROLES

from .conftest import client_for

pytestmark = pytest.mark.django_db

LADDER = ("anonymous", "nobody", *ROLES)


@pytest.fixture
def world(chain):
    run, pieces = chain.run(pieces=2)
    flag = chain.s.flag_raise(actor=chain.maker, target=pieces[0], category="handling",
                              message="Scratched.")
    return {"run": run, "piece": pieces[0], "other": pieces[1], "flag": flag,
            "lot": chain.lot("solvent", release=False), "day": chain.day(1).isoformat()}


def _requests(w) -> dict[str, tuple[str, str, dict, str]]:
    """action -> (method, path, body, least role)."""
    piece, lot = w["piece"].code, w["lot"].code
    return {
        "list": ("get", "/api/v1/substrates/", {}, "viewer"),
        "detail": ("get", f"/api/v1/substrates/{piece}/", {}, "viewer"),
        "readiness": ("get", f"/api/v1/substrates/{piece}/readiness/", {}, "viewer"),
        "lineage": ("get", f"/api/v1/records/{piece}/lineage/", {}, "viewer"),
        "history": ("get", f"/api/v1/records/{piece}/history/", {}, "viewer"),
        "expiring": ("get", "/api/v1/expiring/", {}, "viewer"),
        "flags": ("get", "/api/v1/flags/", {}, "viewer"),
        "create": ("post", "/api/v1/storage-locations/",
                   {"name": "Fridge {role}", "kind": "fridge"}, "maker"),
        "raise flag": ("post", "/api/v1/flags/",
                       {"target": piece, "category": "handling", "message": "Dropped."},
                       "maker"),
        "amend": ("post", f"/api/v1/reagent-lots/{lot}/amend/",
                  {"changes": {"notes": "{role} was here"}, "expected_version": 999}, "maker"),
        "open lot": ("post", f"/api/v1/reagent-lots/{lot}/open/", {"opened_on": w["day"]},
                     "maker"),
        "upload": ("post", f"/api/v1/deposition-runs/{w['run'].code}/chronoamperogram/",
                   {"chronoamperogram": "multipart"}, "maker"),
        "release": ("post", f"/api/v1/reagent-lots/{lot}/release/",
                    {"password": "wrong", "meaning": "approved"}, "reviewer"),
        "reject": ("post", f"/api/v1/substrates/{w['other'].code}/reject/",
                   {"password": "wrong", "meaning": "rejected", "reason": "cracked"},
                   "reviewer"),
        "void": ("post", f"/api/v1/flags/{w['flag'].code}/void/", {"reason": "duplicate"},
                 "reviewer"),
        "resolve flag": ("post", f"/api/v1/flags/{w['flag'].code}/resolve/",
                         {"resolution": "inspected"}, "reviewer"),
        "set limits": ("post", "/api/v1/deposition-tolerances/",
                       {"max_abs_deviation_height_over_diameter": 0.05}, "administrator"),
        "set shelf life": ("post", "/api/v1/shelf-life-rules/",
                           {"record_kind": "substrate", "shelf_life_days": 60,
                            "counted_from": "made"}, "administrator"),
    }


@pytest.fixture
def every_client(clients, django_user_model):
    nobody = django_user_model.objects.create_user("nobody", password="pw-nobody-123456")
    return {**clients, "nobody": client_for(nobody)}


def _send(client, method, path, body, role):
    if method == "get":
        return client.get(path)
    if body.get("chronoamperogram") == "multipart":
        upload = SimpleUploadedFile("run.csv", b"time/s,current/mA\n0,-1\n1,-1\n2,-1\n")
        return client.post(path, {"chronoamperogram": upload}, format="multipart")
    body = {k: v.format(role=role) if isinstance(v, str) else v for k, v in body.items()}
    return client.post(path, body, format="json")


ACTIONS = ("list", "detail", "readiness", "lineage", "history", "expiring", "flags",
           "create", "raise flag", "amend", "open lot", "upload", "release", "reject", "void",
           "resolve flag", "set limits", "set shelf life")


def test_the_matrix_covers_every_action(world):
    assert set(_requests(world)) == set(ACTIONS)


@pytest.mark.parametrize("action", ACTIONS)
def test_each_role_against_each_action(action, world, every_client):
    method, path, body, least = _requests(world)[action]
    for who in LADDER:
        response = _send(every_client[who], method, path, body, who)
        allowed = who in ROLES and ROLES.index(who) >= ROLES.index(least)
        if who == "anonymous":
            assert response.status_code == 401, (action, who)
        elif not allowed:
            assert response.status_code == 403, (action, who, response.content)
            [error] = response.json()["errors"]
            assert error["code"] == "permission_denied" and error["field"] is None
        else:
            assert response.status_code not in (401, 403), (action, who, response.content)
            assert response.status_code < 500


def test_the_schema_is_public_and_holds_no_records(db):
    from rest_framework.test import APIClient

    response = APIClient().get("/api/v1/schema/", HTTP_ACCEPT="application/json")
    assert response.status_code == 200 and "paths" in response.json()


def test_forbidden_message_names_the_role(world, every_client):
    response = every_client["maker"].post(f"/api/v1/flags/{world['flag'].code}/resolve/",
                                          {"resolution": "x"}, format="json")
    assert "reviewer" in response.json()["errors"][0]["message"]


def test_token_for_username_and_password(db, maker):
    from rest_framework.test import APIClient

    from tests.conftest import PASSWORDS

    client = APIClient()
    response = client.post("/api/v1/token/", {"username": "maker",
                                              "password": PASSWORDS["maker"]}, format="json")
    assert response.status_code == 200
    token = response.json()["token"]
    client.credentials(HTTP_AUTHORIZATION=f"Token {token}")
    assert client.get("/api/v1/substrates/").status_code == 200
    wrong = APIClient().post("/api/v1/token/", {"username": "maker", "password": "nope"},
                             format="json")
    assert wrong.status_code == 400
    assert wrong.json()["errors"][0]["field"] is None
    assert get_user_model().objects.get(username="maker").auth_token_set.count() == 1


def test_browser_session_works_too(db, viewer):
    from rest_framework.test import APIClient


    client = APIClient()
    client.force_login(viewer)
    assert client.get("/api/v1/substrates/").status_code == 200


def test_docs_page_and_its_assets_are_served_locally(db):
    from rest_framework.test import APIClient

    client = APIClient()
    page = client.get("/api/v1/docs/")
    assert page.status_code == 200
    html = page.content.decode()
    # Every script and stylesheet comes from this server, none from a CDN.
    assets = re.findall(r'(?:src|href)="([^"]+\.(?:js|css|png))"', html)
    assert assets and all(a.startswith("/api/v1/docs/assets/") for a in assets), assets
    for asset in assets:
        response = client.get(asset)
        assert response.status_code == 200, asset
    assert client.get("/api/v1/docs/assets/../../settings.py").status_code == 404
