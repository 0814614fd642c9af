"""Refuse guessing at the signature step: after N wrong passwords a signer cannot sign for
M minutes (the sign-in limits, settings AXES_FAILURE_LIMIT and AXES_COOLOFF_TIME).

Sign-in itself is counted by django-axes (settings), per user name and address.  The
signature step is different: the signer is already signed in, the service that checks the
password has no request, and only that person can fail it, so the count is per signer.
axes counts requests, so this small counter stays hand-written.  It lives in Django's cache;
the production settings use a file cache that every server process on the host shares
(several hosts need a network cache: memcached, Redis).
"""

from __future__ import annotations

import hashlib

from django.conf import settings
from django.core.cache import cache


def _limits() -> tuple[int, int]:
    return settings.AXES_FAILURE_LIMIT, int(settings.AXES_COOLOFF_TIME.total_seconds())


def _key(username: str) -> str:
    raw = f"signature|{(username or '').strip().lower()}".encode()
    return "sersledger:signature-failures:" + hashlib.sha256(raw).hexdigest()


def is_locked(username: str) -> bool:
    max_failures, _ = _limits()
    return (cache.get(_key(username)) or 0) >= max_failures


def record_failure(username: str) -> None:
    """Count one wrong password; the window starts at the first failure."""
    _, seconds = _limits()
    key = _key(username)
    cache.add(key, 0, timeout=seconds)
    try:
        cache.incr(key)
    except ValueError:  # expired between add and incr
        cache.set(key, 1, timeout=seconds)


def reset(username: str) -> None:
    cache.delete(_key(username))


def lockout_message() -> str:
    """What a locked-out person reads (sign-in page, token endpoint, signature step)."""
    max_failures, seconds = _limits()
    return (f"You are locked out: {max_failures} wrong passwords in a row. Try again in "
            f"{seconds // 60} minutes or ask an administrator to unlock you.")
