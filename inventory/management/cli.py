"""What the import commands share: finding the acting user and phrasing refusals."""

from django.contrib.auth import get_user_model
from django.core.exceptions import ValidationError
from django.core.management.base import CommandError


def user_for_command(username: str | None):
    """The user named by ``--user``, or None for an unattributed scripted import."""
    if username is None:
        return None
    user = get_user_model().objects.filter(username=username).first()
    if user is None:
        raise CommandError(f"No user is called '{username}'.")
    return user


def refusal_sentences(error: ValidationError) -> str:
    """A service's ValidationError as one line: ``field: message; field: message``."""
    if hasattr(error, "error_dict"):
        return "; ".join(f"{field}: {' '.join(messages)}"
                         for field, messages in error.message_dict.items())
    return " ".join(error.messages)
