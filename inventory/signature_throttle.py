"""Refuse password guessing: after N wrong passwords for one username from one address, that
pair is locked for M minutes (settings SERSLEDGER_LOGIN_MAX_FAILURES and
SERSLEDGER_LOGIN_LOCKOUT_MINUTES).

The counter lives in Django's cache.  Sign-in (pages, admin, the API token view) goes through
``ThrottledModelBackend``; the electronic-signature password check uses the same counter
under its own scope.  The production settings use a file cache, which every server process
on the host shares; serving from several hosts needs a network cache (memcached, Redis).
"""

from __future__ import annotations

import hashlib

from django.conf import settings
from django.contrib.auth.backends import ModelBackend
from django.core.cache import cache
from django.core.exceptions import PermissionDenied


def _limits() -> tuple[int, int]:
    return (getattr(settings, "SERSLEDGER_LOGIN_MAX_FAILURES", 5),
            getattr(settings, "SERSLEDGER_LOGIN_LOCKOUT_MINUTES", 15))


def client_address(request) -> str:
    """REMOTE_ADDR as the server saw it (a proxy must set it; headers can be forged)."""
    return (getattr(request, "META", None) or {}).get("REMOTE_ADDR", "") or "-"


def _key(scope: str, username: str, address: str) -> str:
    raw = f"{scope}|{(username or '').strip().lower()}|{address}".encode()
    return "sersledger:failures:" + hashlib.sha256(raw).hexdigest()


def is_locked(scope: str, username: str, address: str) -> bool:
    max_failures, _ = _limits()
    return (cache.get(_key(scope, username, address)) or 0) >= max_failures


def record_failure(scope: str, username: str, address: str) -> None:
    """Count one wrong password; the window starts at the first failure."""
    _, minutes = _limits()
    key = _key(scope, username, address)
    cache.add(key, 0, timeout=minutes * 60)
    try:
        cache.incr(key)
    except ValueError:  # expired between add and incr
        cache.set(key, 1, timeout=minutes * 60)


def reset(scope: str, username: str, address: str) -> None:
    cache.delete(_key(scope, username, address))


def lockout_message() -> str:
    max_failures, minutes = _limits()
    return (f"{max_failures} wrong passwords in a row: try again in {minutes} minutes or ask "
            "an administrator.")


class ThrottledModelBackend(ModelBackend):
    """Django's username/password check, refusing a locked username+address pair.

    Raising PermissionDenied makes ``django.contrib.auth.authenticate`` stop and fail,
    so even the right password is refused until the lock expires.
    """

    scope = "login"

    def authenticate(self, request, username=None, password=None, **kwargs):
        if username is None:
            username = kwargs.get(self._username_field())
        address = client_address(request)
        if is_locked(self.scope, username, address):
            raise PermissionDenied(lockout_message())
        user = super().authenticate(request, username=username, password=password, **kwargs)
        if user is None:
            record_failure(self.scope, username, address)
        else:
            reset(self.scope, username, address)
        return user

    def _username_field(self) -> str:
        from django.contrib.auth import get_user_model

        return get_user_model().USERNAME_FIELD
