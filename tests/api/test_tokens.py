"""API tokens: only a digest is stored, a token is shown once, and a person controls theirs.

A token is shown once, in the answer that creates it; the database keeps a SHA-512 digest
(django-rest-knox), so neither the admin nor a copy of the database gives a usable token.
Changing the password or deactivating the account revokes every token of that person.
"""

from __future__ import annotations

import pytest
from django.contrib import admin
from django.contrib.auth import get_user_model
from django.db import connection
from rest_framework.test import APIClient

from tests.conftest import PASSWORDS


def _obtain(username: str) -> str:
    response = APIClient().post("/api/v1/token/", {"username": username,
                                                   "password": PASSWORDS[username]},
                                format="json")
    assert response.status_code == 200, response.content
    return response.json()["token"]


def _client(token: str) -> APIClient:
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {token}")
    return client


def _every_stored_text() -> str:
    """Every value of every table, as text (what a copy of the database gives away)."""
    values = []
    with connection.cursor() as cursor:
        for table in connection.introspection.table_names():
            cursor.execute(f'SELECT * FROM "{table}"')
            values.extend(str(value) for row in cursor.fetchall() for value in row)
    return "\n".join(values)


def test_the_database_keeps_no_usable_token(db, maker):
    token = _obtain("maker")
    assert _client(token).get("/api/v1/substrates/").status_code == 200
    assert token not in _every_stored_text()


def test_no_admin_page_shows_a_token(db, client, maker, viewer, chain):
    tokens = [_obtain("maker"), _obtain("maker"), _obtain("viewer")]
    chain.lot()
    boss = get_user_model().objects.create_superuser("boss", password="pw-boss-1234567")
    client.force_login(boss)
    pages = ["/admin/"]
    for model in admin.site._registry:
        base = f"/admin/{model._meta.app_label}/{model._meta.model_name}/"
        pages += [base, base + "add/"]
        pages += [f"{base}{obj.pk}/change/" for obj in model.objects.all()[:3]]
    rendered = 0
    for page in pages:
        response = client.get(page)
        assert response.status_code in (200, 403), (page, response.status_code)
        body = response.content.decode()
        rendered += response.status_code == 200
        assert not any(token in body for token in tokens), page
    assert rendered > 20


def test_a_password_change_revokes_every_token(db, maker):
    tokens = [_obtain("maker"), _obtain("maker")]
    user = get_user_model().objects.get(username="maker")
    user.set_password("another-long-pass-1")
    user.save()
    for token in tokens:
        assert _client(token).get("/api/v1/substrates/").status_code == 401


def test_deactivating_an_account_revokes_its_tokens(db, maker):
    token = _obtain("maker")
    user = get_user_model().objects.get(username="maker")
    user.is_active = False
    user.save()
    user.is_active = True  # reactivated later: the old token stays revoked
    user.save()
    assert _client(token).get("/api/v1/substrates/").status_code == 401


def test_a_person_lists_and_revokes_their_own_tokens(db, maker, viewer):
    first, second = _obtain("maker"), _obtain("maker")
    others = _obtain("viewer")
    listed = _client(first).get("/api/v1/tokens/")
    assert listed.status_code == 200
    rows = listed.json()["results"]
    assert len(rows) == 2 and all(first not in str(row) and second not in str(row)
                                  for row in rows)
    assert {"id", "created", "expires"} <= set(rows[0])
    # Revoke the second token by its id (its first characters), seen from the first.
    (row,) = [r for r in rows if second.startswith(r["id"])]
    assert _client(first).delete(f"/api/v1/tokens/{row['id']}/").status_code == 204
    assert _client(second).get("/api/v1/substrates/").status_code == 401
    assert _client(first).get("/api/v1/substrates/").status_code == 200
    # Another person's token is not theirs to see or revoke.
    viewer_id = _client(others).get("/api/v1/tokens/").json()["results"][0]["id"]
    refused = _client(first).delete(f"/api/v1/tokens/{viewer_id}/")
    assert refused.status_code == 404 and refused.json()["errors"][0]["message"]
    assert _client(others).get("/api/v1/substrates/").status_code == 200


def test_signing_out_revokes_the_token_in_use(db, maker):
    token = _obtain("maker")
    assert _client(token).delete("/api/v1/tokens/current/").status_code == 204
    assert _client(token).get("/api/v1/substrates/").status_code == 401


@pytest.mark.parametrize("header", ["Token ", "Token a b", "Token " + "0" * 64, "Token é"])
def test_a_bad_token_is_a_401_in_the_error_shape(db, header):
    response = APIClient().get("/api/v1/substrates/", HTTP_AUTHORIZATION=header)
    assert response.status_code == 401
    assert response.json()["errors"][0]["code"]
