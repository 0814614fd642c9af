"""One error shape for every API error: ``{"errors": [{"field", "message", "code"}]}``.

Services refuse with Django's ``ValidationError`` keyed by field with a stable code
(``inventory.errors.refusal``); DRF raises its own ``ValidationError`` for bad input and
``APIException`` subclasses for the rest.  ``exception_handler`` turns all of them into the
same list, so a script reads ``errors[i].field`` whatever refused the request.  ``field`` is
null for errors that concern the request as a whole; nested input is addressed by a dotted
path (``files.0``).
"""

from __future__ import annotations

import re

from django.conf import settings
from django.core.exceptions import (
    NON_FIELD_ERRORS,
    PermissionDenied,
    RequestDataTooBig,
    SuspiciousOperation,
)
from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import IntegrityError
from django.http import Http404, JsonResponse
from django.views import defaults
from rest_framework import exceptions, serializers
from rest_framework.views import exception_handler as drf_exception_handler

from inventory.codes import RecordNotFound
from inventory.errors import refusal_items
from inventory.integrity import fields_of_constraint, integrity_refusal

_WHOLE_REQUEST = {None, NON_FIELD_ERRORS, "non_field_errors"}


class RequestTooLarge(exceptions.APIException):
    status_code = 413
    default_code = "too_large"

    def __init__(self):
        limit_mb = settings.DATA_UPLOAD_MAX_MEMORY_SIZE / (1024 * 1024)
        super().__init__(f"The request body is larger than the {limit_mb:g} MB limit; send "
                         "large instrument files as a multipart upload.")


# Django's message when Model.full_clean finds a CheckConstraint broken (no field named).
_BROKEN_RULE = re.compile(r"^Constraint “(?P<name>[^”]+)” is violated\.$")


def _named_by_rule(field: str | None, message: str, code: str) -> tuple[str | None, str, str]:
    """(field, message, code) of one error; a broken database rule names its first field."""
    match = _BROKEN_RULE.match(message) if field in _WHOLE_REQUEST else None
    fields = fields_of_constraint(match["name"]) if match else []
    if not fields:
        return field, message, code
    return (fields[0], f"The value breaks the database rule “{match['name']}” on "
                       f"{', '.join(fields)}.", "constraint")


def _from_django(error: DjangoValidationError) -> exceptions.ValidationError:
    """A service refusal as DRF's ValidationError, keeping each message's field and code; a
    broken database rule is put on the first field it constrains."""
    detail: dict[str, list[serializers.ErrorDetail]] = {}
    for item in refusal_items(error):
        name, message, code = _named_by_rule(item["field"], item["message"], item["code"])
        detail.setdefault(name or NON_FIELD_ERRORS, []).append(
            serializers.ErrorDetail(message, code=code))
    return exceptions.ValidationError(detail)


def _translate(exc: Exception) -> Exception:
    if isinstance(exc, IntegrityError):  # past the services (a race, a bug): name the field
        return _from_django(integrity_refusal(exc))
    if isinstance(exc, DjangoValidationError):
        return _from_django(exc)
    if isinstance(exc, PermissionDenied):
        # Keep the service's sentence (which role the action needs); DRF would drop it.
        return exceptions.PermissionDenied(str(exc) or None)
    if isinstance(exc, RecordNotFound):
        return exceptions.NotFound(str(exc))
    if isinstance(exc, Http404):
        return exceptions.NotFound(str(exc) or None)
    if isinstance(exc, RequestDataTooBig):
        return RequestTooLarge()
    if isinstance(exc, SuspiciousOperation):  # too many fields or files, a malformed body
        return exceptions.ParseError(str(exc) or None)
    return exc


def flatten(detail, field: str | None = None) -> list[dict]:
    """DRF's nested error detail as a flat list of field/message/code items."""
    if isinstance(detail, dict):
        items = []
        for key, value in detail.items():
            key = None if key in _WHOLE_REQUEST else str(key)
            path = key if field is None else (field if key is None else f"{field}.{key}")
            items.extend(flatten(value, path))
        return items
    if isinstance(detail, list):
        items = []
        for index, value in enumerate(detail):
            # A list of messages belongs to ``field``; a list of objects is indexed.
            path = field if not isinstance(value, (dict, list)) else f"{field}.{index}"
            items.extend(flatten(value, path))
        return items
    return [{"field": field, "message": str(detail), "code": getattr(detail, "code", "invalid")}]


def exception_handler(exc, context):
    """DRF's handler (status, headers) with the project's one error body."""
    exc = _translate(exc)
    response = drf_exception_handler(exc, context)
    if response is None:
        return None
    if isinstance(exc, exceptions.APIException):
        response.data = {"errors": flatten(exc.detail)}
    return response


# Errors Django answers before or outside a DRF view (no route matched, a server error):
# under /api/ they use the same JSON shape, elsewhere Django's own pages.
# config/urls.py names these as handler400/403/404/500.

def _is_api(request) -> bool:
    return request.path.startswith("/api/")


def _json_error(status: int, message: str, code: str) -> JsonResponse:
    return JsonResponse({"errors": [{"field": None, "message": message, "code": code}]},
                        status=status)


def bad_request(request, exception):
    if _is_api(request):
        return _json_error(400, "The request could not be read.", "parse_error")
    return defaults.bad_request(request, exception)


def permission_denied(request, exception):
    if _is_api(request):
        return _json_error(403, str(exception) or "You may not do this.", "permission_denied")
    return defaults.permission_denied(request, exception)


def page_not_found(request, exception):
    if _is_api(request):
        return _json_error(404, f"Nothing is at {request.path}; see /api/v1/docs/ for the "
                                "paths.", "not_found")
    return defaults.page_not_found(request, exception)


def server_error(request):
    if _is_api(request):
        request_id = getattr(request, "id", None)
        note = f" (request {request_id})" if request_id else ""
        return _json_error(500, f"Server error{note}; it was logged for the administrator.",
                           "server_error")
    return defaults.server_error(request)
