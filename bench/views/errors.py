"""The pages' 403: what the action needs and who in the lab holds that role.

The 400, 404 and 500 pages are plain templates (bench/templates/404.html, 500.html) that
``inventory.api.errors`` renders outside /api/; a 403 needs a read of who holds the role, so
it has this view.  Under /api/ the API's JSON error shape answers, as before.
"""

from __future__ import annotations

from django.shortcuts import render

from inventory.api import errors as api_errors
from inventory.roles import ROLE_DUTIES, role_holders


def forbidden(request, exception=None):
    if request.path.startswith("/api/"):
        return api_errors.permission_denied(request, exception)
    role = getattr(exception, "role", None)
    return render(request, "403.html", {
        "message": str(exception or "") or "You may not do this.", "role": role,
        "duty": ROLE_DUTIES.get(role, ""), "holders": role_holders(role) if role else []},
        status=403)
