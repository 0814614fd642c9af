"""Sign-in lockouts (django-axes): where a sign-in comes from, and what a locked-out person
is told.

Without a proxy that is REMOTE_ADDR.  Behind one reverse proxy on the same host
(``SERSLEDGER_BEHIND_PROXY=true``) every request comes from the proxy, so the client is the
last X-Forwarded-For entry, the one the proxy itself appended (earlier entries are whatever
the client sent and are ignored).  Hand-written because django-ipware, which axes can use,
counts proxies so that one proxy and one forwarded address yield no address at all.
"""

from __future__ import annotations

from django.conf import settings
from django.http import HttpResponse, JsonResponse
from django.shortcuts import render

from . import signature_throttle


def client_address(request) -> str:
    meta = getattr(request, "META", None) or {}
    if getattr(settings, "SERSLEDGER_BEHIND_PROXY", False):
        forwarded = [part.strip() for part in meta.get("HTTP_X_FORWARDED_FOR", "").split(",")]
        if forwarded[-1]:
            return forwarded[-1]
    return meta.get("REMOTE_ADDR", "") or "-"


def lockout_response(request, original_response=None, credentials=None) -> HttpResponse:
    """What django-axes answers a locked-out sign-in: the API's one error shape under /api/,
    a page in words everywhere else; 429 either way."""
    message = signature_throttle.lockout_message()
    if request.path.startswith("/api/"):
        return JsonResponse({"errors": [{"field": None, "message": message,
                                         "code": "locked_out"}]}, status=429)
    return render(request, "registration/locked_out.html", {"lockout_message": message},
                  status=429)
