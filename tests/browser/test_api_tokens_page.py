"""A person lists their own API tokens and revokes one from the page, in a real browser."""

from __future__ import annotations

import re

import pytest
import requests
from knox.models import AuthToken

pytestmark = pytest.mark.browser


def test_revoke_one_of_my_tokens_from_the_page(page, sign_in, screenshot, live_server, maker,
                                               viewer):
    _old, kept = AuthToken.objects.create(user=maker)
    stored, revoked = AuthToken.objects.create(user=maker)
    AuthToken.objects.create(user=viewer)  # someone else's: never listed
    sign_in(maker, "maker")
    page.get_by_role("link", name="API tokens").click()
    page.wait_for_url(re.compile("/account/api-tokens/"))
    assert page.get_by_text("You have 2 tokens").is_visible()
    rows = page.get_by_role("row").filter(has=page.get_by_role("button", name="Revoke"))
    assert rows.count() == 2
    assert revoked not in page.content() and kept not in page.content()
    screenshot("api-tokens")
    page.get_by_role("button", name=f"Revoke token {stored.token_key}").click()
    page.wait_for_load_state()
    assert page.get_by_role("status").get_by_text(f"Token {stored.token_key}… revoked").is_visible()
    assert page.get_by_text("You have 1 token").is_visible()

    def status_with(token: str) -> int:
        return requests.get(f"{live_server.url}/api/v1/substrates/", timeout=30,
                            headers={"Authorization": f"Token {token}"}).status_code

    assert status_with(revoked) == 401 and status_with(kept) == 200
