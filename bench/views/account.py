"""The signed-in person's own API tokens: list them and revoke one (never shown again)."""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.shortcuts import redirect, render
from django.views.decorators.http import require_http_methods

from inventory.api.authentication import token_revoke, tokens_of


@login_required
@require_http_methods(["GET", "POST"])
def api_tokens(request):
    if request.method == "POST":
        token_id = request.POST.get("revoke", "")
        if token_revoke(user=request.user, token_id=token_id):
            messages.success(request, f"Token {token_id}… revoked: scripts using it are "
                                      "refused from now on.")
        else:
            messages.error(request, "You have no such token; nothing was revoked.")
        return redirect("api_tokens")
    return render(request, "account/api_tokens.html", {"tokens": tokens_of(request.user)})
