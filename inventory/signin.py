"""Sign-in lockouts (django-axes): where a sign-in comes from, and what a locked-out person
is told.

Without a proxy that is REMOTE_ADDR.  Behind one reverse proxy on the same host
(``SERSLEDGER_BEHIND_PROXY=true``) every request comes from the proxy, so the client is the
last X-Forwarded-For entry, the one the proxy itself appended (earlier entries are whatever
the client sent and are ignored).  Hand-written because django-ipware, which axes can use,
counts proxies so that one proxy and one forwarded address yield no address at all.
"""

from __future__ import annotations

import ipaddress

from django.conf import settings
from django.http import HttpResponse, JsonResponse
from django.shortcuts import render

from . import signature_throttle


def client_address(request) -> str | None:
    """The address to count a sign-in against, or None when unknown (axes stores it in an
    address column, which PostgreSQL checks: a forwarded value that is not an address is
    ignored rather than failing the sign-in)."""
    meta = getattr(request, "META", None) or {}
    if getattr(settings, "SERSLEDGER_BEHIND_PROXY", False):
        forwarded = meta.get("HTTP_X_FORWARDED_FOR", "").split(",")[-1].strip()
        if _is_address(forwarded):
            return forwarded
    remote = meta.get("REMOTE_ADDR", "")
    return remote if _is_address(remote) else None


def _is_address(text: str) -> bool:
    try:
        ipaddress.ip_address(text)
    except ValueError:
        return False
    return True


def lockout_response(request, original_response=None, credentials=None) -> HttpResponse:
    """What django-axes answers a locked-out sign-in: the API's one error shape under /api/,
    a page in words everywhere else; 429 either way."""
    message = signature_throttle.lockout_message()
    if request.path.startswith("/api/"):
        return JsonResponse({"errors": [{"field": None, "message": message,
                                         "code": "locked_out"}]}, status=429)
    return render(request, "registration/locked_out.html", {"lockout_message": message},
                  status=429)
