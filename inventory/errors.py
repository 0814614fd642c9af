"""One shape for refused input: a ValidationError keyed by field, with a stable code.

``refusal`` makes one; ``refusal_items`` reads any ``ValidationError`` back as the list of
``{"field", "message", "code"}`` items that the API returns, the commands print and the pages
put beside their fields, so the three say the same thing the same way.
"""

from __future__ import annotations

from typing import TypedDict

from django.core.exceptions import NON_FIELD_ERRORS, ValidationError

__all__ = ["ErrorItem", "refusal", "refusal_items", "refusal_sentences"]


class ErrorItem(TypedDict):
    field: str | None  # None: the refusal concerns the request or record as a whole
    message: str
    code: str


def refusal(field: str, message: str, code: str) -> ValidationError:
    """``ValidationError({field: [message]})`` whose message carries ``code``."""
    return ValidationError({field: ValidationError(message, code=code)})


def refusal_items(error: ValidationError) -> list[ErrorItem]:
    """Every message of ``error`` with the field it names and its code, in order."""
    if hasattr(error, "error_dict"):
        grouped = error.error_dict.items()
    else:
        grouped = [(None, error.error_list)]
    return [
        ErrorItem(field=None if field == NON_FIELD_ERRORS else field, message=message,
                  code=item.code or "invalid")
        for field, items in grouped for item in items for message in item.messages
    ]


def refusal_sentences(error: ValidationError) -> str:
    """A refusal as one line for a terminal: ``field: message; message``."""
    return "; ".join(f"{item['field']}: {item['message']}" if item["field"] else item["message"]
                     for item in refusal_items(error))
