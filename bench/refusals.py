"""A service's refusal on a page: each message beside the field it names, or above the form.

The messages come from ``inventory.errors.refusal_items``, the same items the API returns and
the commands print.
"""

from __future__ import annotations

from collections.abc import Mapping

from django import forms
from django.core.exceptions import ValidationError

from inventory.errors import refusal_items


def form_add_refusal(form: forms.Form, error: ValidationError, *,
                     field_map: Mapping[str, str] | None = None) -> None:
    """Add ``error`` to ``form``; ``field_map`` renames service fields to the form's fields."""
    for item in refusal_items(error):
        field = item["field"]
        target = (field_map or {}).get(field, field) if field else None
        message = ValidationError(item["message"], code=item["code"])
        if target in form.fields:
            form.add_error(target, message)
        elif field is None:
            form.add_error(None, message)
        else:  # a field this form does not show: name it above the form
            form.add_error(None, ValidationError(f"{field}: {item['message']}",
                                                 code=item["code"]))
