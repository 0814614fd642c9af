"""What the import commands share: finding the acting user and phrasing refusals."""

from collections.abc import Iterator
from contextlib import contextmanager

from django.contrib.auth import get_user_model
from django.core.exceptions import PermissionDenied, ValidationError
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


@contextmanager
def refusals_in_words(prefix: str = "") -> Iterator[None]:
    """A service's refusal (bad input, or a role the --user lacks) as a CommandError: one
    line and exit status 1 instead of a traceback; the service saved nothing."""
    try:
        yield
    except ValidationError as error:
        raise CommandError(f"{prefix}{refusal_sentences(error)}") from None
    except PermissionDenied as error:
        raise CommandError(f"{prefix}{error}") from None
