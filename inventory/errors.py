"""One shape for refused input: a ValidationError keyed by field, with a stable code."""

from django.core.exceptions import ValidationError


def refusal(field: str, message: str, code: str) -> ValidationError:
    """``ValidationError({field: [message]})`` whose message carries ``code``."""
    return ValidationError({field: ValidationError(message, code=code)})
