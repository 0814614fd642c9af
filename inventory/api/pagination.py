"""Keyset pages for API lists: ``?page_size=M`` (default 50, at most 500), then follow ``next``.

A page ends with the ordering values of its last row; ``next`` carries them in an opaque
``cursor`` and the following page asks the database for the rows after them, in index order.
Page 1,000 of 100,000 substrates therefore costs what page 1 costs; numbered pages made the
database walk and count every earlier row (5 requests/s on PostgreSQL, benchmarks/REPORT.md).

The ordering is the request's ``ordering`` (or the view's default) with the primary key added
last, so rows that tie on every ordering field (many substrates share a status or a date)
still come in one fixed order and none is skipped or repeated.  Empty values sort last in
either direction, on SQLite and PostgreSQL alike.  A cursor belongs to its ordering: reusing
it with another ordering is refused with a 400 that names ``cursor``.
"""

from __future__ import annotations

import base64
import binascii
import json
from dataclasses import dataclass
from functools import reduce
from operator import or_

from django.core.exceptions import FieldDoesNotExist
from django.core.exceptions import ValidationError as DjangoValidationError
from django.core.serializers.json import DjangoJSONEncoder
from django.db.models import F, Q
from rest_framework.exceptions import ValidationError
from rest_framework.filters import OrderingFilter
from rest_framework.pagination import BasePagination
from rest_framework.response import Response
from rest_framework.utils.urls import replace_query_param

CURSOR_PARAM = "cursor"
PAGE_SIZE_PARAM = "page_size"
DEFAULT_PAGE_SIZE = 50
MAX_PAGE_SIZE = 500


def _invalid_cursor(reason: str) -> ValidationError:
    message = f"{reason} Start again from the first page (no cursor) and follow 'next'."
    return ValidationError({CURSOR_PARAM: [message]})


@dataclass(frozen=True)
class OrderKey:
    """One term of the ordering: a concrete field of the model and its direction."""

    field: object
    descending: bool

    @classmethod
    def parse(cls, model, term: str) -> OrderKey:
        name = term.lstrip("-")
        field = model._meta.pk if name == "pk" else model._meta.get_field(name)
        return cls(field, term.startswith("-"))

    @property
    def term(self) -> str:
        return f"{'-' if self.descending else ''}{self.field.name}"

    def expression(self):
        # NULLS LAST only where a value can be empty: on a NOT NULL column it would stop
        # PostgreSQL from reading the index in order (a full sort of the table per page).
        nulls_last = True if self.field.null else None
        column = F(self.field.attname)
        return column.desc(nulls_last=nulls_last) if self.descending \
            else column.asc(nulls_last=nulls_last)

    def value_of(self, row):
        return getattr(row, self.field.attname)

    def after(self, value) -> Q | None:
        """Rows that come strictly after ``value`` on this key (empty values sort last)."""
        if value is None:
            return None
        beyond = Q(**{f"{self.field.attname}__{'lt' if self.descending else 'gt'}": value})
        return beyond | Q(**{f"{self.field.attname}__isnull": True}) if self.field.null else beyond

    def equal(self, value) -> Q:
        if value is None:
            return Q(**{f"{self.field.attname}__isnull": True})
        return Q(**{self.field.attname: value})


def rows_after(keys: list[OrderKey], values: list) -> Q:
    """The lexicographic "after" of a keyset: first key beyond, or equal and the next beyond…"""
    clauses, equal_so_far = [], Q()
    for key, value in zip(keys, values, strict=True):
        beyond = key.after(value)
        if beyond is not None:
            clauses.append(equal_so_far & beyond)
        equal_so_far &= key.equal(value)
    # The primary key ends every ordering and is never empty, so clauses is never empty.
    return reduce(or_, clauses)


def pack_cursor(payload: dict) -> str:
    """An opaque cursor: the payload as compact JSON in URL-safe base64."""
    text = json.dumps(payload, cls=DjangoJSONEncoder, separators=(",", ":"))
    return base64.urlsafe_b64encode(text.encode()).decode().rstrip("=")


def unpack_cursor(cursor: str, *names: str) -> list:
    """The named values of a cursor from ``pack_cursor``; a 400 naming ``cursor`` otherwise."""
    try:
        padded = cursor + "=" * (-len(cursor) % 4)
        payload = json.loads(base64.urlsafe_b64decode(padded.encode()))
        return [payload[name] for name in names]
    except (ValueError, TypeError, KeyError, binascii.Error):
        raise _invalid_cursor("This cursor is not one this API gave out.") from None


def encode_cursor(keys: list[OrderKey], values: list) -> str:
    return pack_cursor({"o": [key.term for key in keys], "v": values})


def decode_cursor(cursor: str, keys: list[OrderKey]) -> list:
    """The ordering values a cursor carries, typed by their fields; 400 when it is not ours."""
    terms, raw_values = unpack_cursor(cursor, "o", "v")
    if terms != [key.term for key in keys]:
        raise _invalid_cursor(f"This cursor belongs to the ordering {','.join(map(str, terms))}, "
                              f"not {','.join(key.term for key in keys)}.")
    try:
        return [None if raw is None else key.field.to_python(raw)
                for key, raw in zip(keys, raw_values, strict=True)]
    except (DjangoValidationError, ValueError, TypeError):
        raise _invalid_cursor("This cursor holds a value that does not fit its field.") from None


def ordering_keys(model, terms) -> list[OrderKey]:
    """The requested ordering with the primary key appended as the last tie-breaker."""
    try:
        keys = [OrderKey.parse(model, term) for term in terms]
    except FieldDoesNotExist as error:
        raise ValidationError({"ordering": [str(error)]}) from None
    if not any(key.field.primary_key for key in keys):
        keys.append(OrderKey(model._meta.pk, keys[0].descending if keys else True))
    return keys


class Keyset(BasePagination):
    """Keyset pagination: ``{"next": url | null, "results": [...]}``, no page numbers."""

    page_size = DEFAULT_PAGE_SIZE
    max_page_size = MAX_PAGE_SIZE

    def paginate_queryset(self, queryset, request, view=None):
        self.request = request
        page_size = self._page_size(request)
        self.keys = ordering_keys(queryset.model, self._ordering_terms(request, queryset, view))
        queryset = queryset.order_by(*(key.expression() for key in self.keys))
        cursor = request.query_params.get(CURSOR_PARAM)
        if cursor:
            queryset = queryset.filter(rows_after(self.keys, decode_cursor(cursor, self.keys)))
        rows = list(queryset[: page_size + 1])
        self.last_values = None
        if len(rows) > page_size:
            rows = rows[:page_size]
            self.last_values = [key.value_of(rows[-1]) for key in self.keys]
        return rows

    def get_paginated_response(self, data):
        return Response({"next": self.next_link(), "results": data})

    def next_link(self) -> str | None:
        if self.last_values is None:
            return None
        url = self.request.build_absolute_uri()
        return replace_query_param(url, CURSOR_PARAM, encode_cursor(self.keys, self.last_values))

    def _page_size(self, request) -> int:
        # A table export (exchange.renderers) takes every matching row up to its cap.
        export_cap = getattr(getattr(request, "accepted_renderer", None), "export_row_cap", None)
        if export_cap:
            return export_cap
        raw = request.query_params.get(PAGE_SIZE_PARAM)
        if raw is None:
            return self.page_size
        try:
            size = int(raw)
        except ValueError:
            size = 0
        if size < 1:
            raise ValidationError({PAGE_SIZE_PARAM: ["A whole number of 1 or more."]})
        return min(size, self.max_page_size)

    @staticmethod
    def _ordering_terms(request, queryset, view) -> list[str]:
        """What DRF's ordering filter chose (checked against the view's ordering_fields)."""
        for backend in getattr(view, "filter_backends", ()):
            if issubclass(backend, OrderingFilter):
                return list(backend().get_ordering(request, queryset, view) or ())
        return list(getattr(view, "ordering", None) or ("-pk",))

    def get_paginated_response_schema(self, schema):
        return {
            "type": "object",
            "required": ["next", "results"],
            "properties": {
                "next": {"type": "string", "format": "uri", "nullable": True,
                         "description": "The following page (same filters and ordering), "
                                        "or null on the last page."},
                "results": schema,
            },
        }

    def get_schema_operation_parameters(self, view):
        return [
            {"name": CURSOR_PARAM, "required": False, "in": "query",
             "description": "Where a page starts: copy it from the 'next' link of the page "
                            "before; leave it out for the first page.",
             "schema": {"type": "string"}},
            {"name": PAGE_SIZE_PARAM, "required": False, "in": "query",
             "description": f"Rows per page, 1 to {MAX_PAGE_SIZE} (default "
                            f"{DEFAULT_PAGE_SIZE}). Unit: count.",
             "schema": {"type": "integer", "minimum": 1, "maximum": MAX_PAGE_SIZE}},
        ]
