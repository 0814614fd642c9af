"""Sign-in lockouts (django-axes), password rules and upload limits in settings (DESIGN §7).

The lockout follows common practice for online guessing (e.g. NIST SP 800-63B §5.2.2 asks
verifiers to limit consecutive failed attempts on one account)."""

from __future__ import annotations

import os
import subprocess
import sys
from datetime import timedelta
from pathlib import Path

import pytest
from django.conf import settings
from django.contrib.auth import authenticate
from django.contrib.auth.password_validation import validate_password
from django.core.cache import cache, caches
from django.core.exceptions import ValidationError
from django.test import RequestFactory
from django.utils import timezone

from inventory import signature_throttle
from inventory.services import record_release
from inventory.signatures import SignatureIntent
from tests.conftest import PASSWORDS


@pytest.fixture(autouse=True)
def fresh_counters():
    cache.clear()
    yield
    cache.clear()


def _request(address="10.0.0.7"):
    return RequestFactory().post("/accounts/login/", REMOTE_ADDR=address)


def _fail(times, username="maker", address="10.0.0.7"):
    for _ in range(times):
        assert authenticate(_request(address), username=username, password="wrong-guess") is None


def test_sign_in_is_refused_after_repeated_failures_even_with_the_right_password(maker,
                                                                                 viewer):
    _fail(settings.AXES_FAILURE_LIMIT)
    assert authenticate(_request(), username="maker", password=PASSWORDS["maker"]) is None
    # Another address is not locked, and neither is another user from this address.
    assert authenticate(_request("10.0.0.8"), username="maker",
                        password=PASSWORDS["maker"]) == maker
    assert authenticate(_request(), username="viewer", password=PASSWORDS["viewer"]) == viewer


def test_no_one_locks_a_reviewer_out_by_name_alone(reviewer):
    """Failures for a name spread over many addresses lock none of them out, and the person
    still signs in from their own desk."""
    for n in range(3 * settings.AXES_FAILURE_LIMIT):
        _fail(1, "reviewer", f"192.0.2.{n}")
    assert authenticate(_request("10.0.0.7"), username="reviewer",
                        password=PASSWORDS["reviewer"]) == reviewer


def test_a_success_before_the_limit_resets_the_count(client, maker):
    for _ in range(2):
        for _ in range(settings.AXES_FAILURE_LIMIT - 1):
            client.post("/accounts/login/", {"username": "maker", "password": "wrong-guess"})
        signed_in = client.post("/accounts/login/", {"username": "maker",
                                                     "password": PASSWORDS["maker"]})
        assert signed_in.status_code == 302
        client.post("/accounts/logout/")


def test_the_lock_expires_and_lives_in_the_database_not_in_one_process(maker):
    from axes.models import AccessAttempt

    _fail(settings.AXES_FAILURE_LIMIT)
    cache.clear()  # a process's memory and cache forget; the count is shared in the database
    assert authenticate(_request(), username="maker", password=PASSWORDS["maker"]) is None
    AccessAttempt.objects.update(
        attempt_time=timezone.now() - settings.AXES_COOLOFF_TIME - timedelta(seconds=1))
    assert authenticate(_request(), username="maker", password=PASSWORDS["maker"]) == maker


def test_the_sign_in_page_says_the_person_is_locked_out(client, maker):
    for _ in range(settings.AXES_FAILURE_LIMIT):
        client.post("/accounts/login/", {"username": "maker", "password": "wrong-guess"})
    page = client.post("/accounts/login/", {"username": "maker",
                                            "password": PASSWORDS["maker"]})
    assert page.status_code == 429
    text = page.content.decode()
    assert "locked" in text and "15 minutes" in text and "administrator" in text


def test_the_token_endpoint_says_the_person_is_locked_out(client, maker):
    for _ in range(settings.AXES_FAILURE_LIMIT):
        client.post("/api/v1/token/", {"username": "maker", "password": "wrong-guess"},
                    content_type="application/json")
    answer = client.post("/api/v1/token/", {"username": "maker",
                                            "password": PASSWORDS["maker"]},
                         content_type="application/json")
    assert answer.status_code == 429
    (error,) = answer.json()["errors"]
    assert error["code"] == "locked_out" and "15 minutes" in error["message"]


def test_signature_passwords_are_throttled_too(chain, reviewer, settings):
    settings.AXES_FAILURE_LIMIT = 2
    lot = chain.lot(release=False)
    wrong = SignatureIntent(password="guess", meaning="approved")
    for _ in range(2):
        with pytest.raises(ValidationError):
            record_release(actor=reviewer, record=lot, signature=wrong)
    right = SignatureIntent(password=PASSWORDS["reviewer"], meaning="approved")
    with pytest.raises(ValidationError) as locked:
        record_release(actor=reviewer, record=lot, signature=right)
    assert locked.value.error_dict["password"][0].code == "signature_locked"


@pytest.mark.parametrize("password", ["short1", "password123", "1234567890123",
                                      "qwertyuiop"])
def test_weak_passwords_are_refused(password, maker):
    with pytest.raises(ValidationError):
        validate_password(password, user=maker)


def test_a_long_unusual_password_is_accepted(maker):
    validate_password("copper-lattice-9-harbour", user=maker)


def test_the_admin_only_reads(client, django_user_model, chain):
    """The admin bypasses the services, so it may look but never write."""
    boss = django_user_model.objects.create_superuser("boss", password="pw-boss-1234567")
    client.force_login(boss)
    lot = chain.lot()
    assert client.get("/admin/inventory/signature/").status_code == 200
    assert client.get("/admin/inventory/reagentlot/add/").status_code == 403
    page = client.get(f"/admin/inventory/reagentlot/{lot.pk}/change/")
    assert page.status_code == 200 and b'name="_save"' not in page.content


def test_production_signature_lockouts_are_seen_by_every_server_process(tmp_path, settings):
    """Wrong signature passwords counted in this process lock the signer in a separate
    process started with the production settings (what another gunicorn worker is), through
    their file cache."""
    settings.AXES_FAILURE_LIMIT = 3
    settings.CACHES = {"default": {"BACKEND": "django.core.cache.backends.filebased."
                                              "FileBasedCache",
                                   "LOCATION": str(tmp_path / "cache")}}
    # (Django's test signals rebuild the cache handler when CACHES changes.)
    assert type(caches["default"]).__name__ == "FileBasedCache"
    for _ in range(3):
        signature_throttle.record_failure("maker")
    script = ("import django; django.setup(); from django.conf import settings; "
              "settings.AXES_FAILURE_LIMIT = 3; "
              "from inventory.signature_throttle import is_locked; "
              "print(is_locked('maker'), is_locked('viewer'))")
    env = {k: v for k, v in os.environ.items() if k != "DATABASE_URL"}
    env |= {"DJANGO_SETTINGS_MODULE": "sersledger.settings.production", "SECRET_KEY": "x" * 60,
            "ALLOWED_HOSTS": "lab.example", "SERSLEDGER_DATA_DIR": str(tmp_path)}
    other = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                           env=env, cwd=Path(__file__).resolve().parents[2], check=False)
    assert other.returncode == 0, other.stderr
    assert other.stdout.split() == ["True", "False"]


def test_behind_a_proxy_the_address_is_the_one_the_proxy_appended(settings):
    """X-Forwarded-For entries before the proxy's own are whatever the client sent, so only
    the last one counts, and only when the lab says a proxy is in front."""
    from inventory.signin import client_address

    forged = RequestFactory().post("/accounts/login/", REMOTE_ADDR="127.0.0.1",
                                   HTTP_X_FORWARDED_FOR="203.0.113.9, 10.0.0.7")
    settings.SERSLEDGER_BEHIND_PROXY = False
    assert client_address(forged) == "127.0.0.1"
    settings.SERSLEDGER_BEHIND_PROXY = True
    assert client_address(forged) == "10.0.0.7"
    direct = RequestFactory().post("/accounts/login/", REMOTE_ADDR="10.0.0.8")
    assert client_address(direct) == "10.0.0.8"
    # Not an address (a forged header, a request made in code): never stored as one.
    garbled = RequestFactory().post("/accounts/login/", REMOTE_ADDR="10.0.0.9",
                                    HTTP_X_FORWARDED_FOR="10.0.0.7, <script>")
    assert client_address(garbled) == "10.0.0.9"
    assert client_address(RequestFactory().post("/", REMOTE_ADDR="")) is None
