"""Checking API tokens (django-rest-knox keeps only their SHA-512 digests) and revoking them
when a person's credentials change.  Kept apart from the token views (auth.py) because DRF
imports this class while it loads its settings, before any view can be imported."""

from __future__ import annotations

from django.utils import timezone
from knox.auth import TokenAuthentication
from knox.models import AuthToken
from rest_framework import exceptions


class HashedTokenAuthentication(TokenAuthentication):
    """knox's token check, refusing undecodable headers with a 401 (not a server error) and
    looking only at the token presented (knox also sweeps the person's other tokens on every
    request, one query more; expired ones are pruned when a token is issued instead)."""

    def authenticate_credentials(self, token: bytes):
        try:
            token.decode("ascii")
        except UnicodeDecodeError:
            raise exceptions.AuthenticationFailed("Invalid token.") from None
        return super().authenticate_credentials(token)

    def _cleanup_token(self, auth_token) -> bool:
        if auth_token.expiry is not None and auth_token.expiry < timezone.now():
            auth_token.delete()
            return True
        return False


def revoke_tokens_on_credential_change(sender, instance, update_fields=None, **kwargs) -> None:
    """Before a user is saved: a new password or a deactivation revokes all their tokens.

    A receiver because passwords and accounts change in Django's own admin and commands
    (changepassword), which call no service of ours; sessions end the same way (Django
    keys them to the password)."""
    if instance.pk is None or (update_fields is not None
                               and not {"password", "is_active"} & set(update_fields)):
        return
    stored = type(instance)._default_manager.filter(pk=instance.pk).values(
        "password", "is_active").first()
    if stored and (stored["password"] != instance.password
                   or (stored["is_active"] and not instance.is_active)):
        AuthToken.objects.filter(user_id=instance.pk).delete()


def tokens_of(user):
    """A person's own tokens, newest first (digests and first characters only)."""
    return AuthToken.objects.filter(user=user).order_by("-created", "digest")


def token_revoke(*, user, token_id: str) -> bool:
    """Revoke ``user``'s token whose first characters are ``token_id``; False if none."""
    deleted, _ = tokens_of(user).filter(token_key=token_id).delete()
    return deleted > 0
