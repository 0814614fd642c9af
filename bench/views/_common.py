"""Small helpers shared by the inventory pages (parsing query parameters, paginating)."""

from __future__ import annotations

from urllib.parse import urlsplit

from django.core.paginator import Paginator
from django.http import Http404, HttpResponse
from django.urls import Resolver404, resolve

from inventory.codes import RecordNotFound, record_get
from inventory.tables import CONTENT_TYPES, record_table, table_bytes

PAGE_SIZE = 25


def int_param(request, name: str, default: int, *, low: int = 0, high: int = 3650) -> int:
    """A whole-number query parameter clamped to [low, high]; the default when unreadable."""
    try:
        value = int(request.GET.get(name, default))
    except (TypeError, ValueError):
        return default
    return min(max(value, low), high)


def paginate(request, rows, *, param: str = "page"):
    """One page of ``rows`` (queryset or list) by the ``?page=`` number (last page if beyond)."""
    return Paginator(rows, PAGE_SIZE).get_page(request.GET.get(param))


def table_download(request, name: str, rows) -> HttpResponse | None:
    """The list as a file when ``?format=csv`` or ``?format=xlsx`` asks for it, else None.

    ``rows`` is the page's own filtered queryset, so the file holds what the page lists
    (every row, up to ``SERSLEDGER_EXPORT_MAX_ROWS``), with units in the column names.
    """
    file_format = request.GET.get("format")
    if file_format not in CONTENT_TYPES:
        return None
    headers, table = record_table(rows)
    response = HttpResponse(table_bytes(headers, table, file_format=file_format, title=name),
                            content_type=CONTENT_TYPES[file_format])
    response["Content-Disposition"] = f'attachment; filename="{name}.{file_format}"'
    return response


def record_or_404(code: str):
    try:
        return record_get(code)
    except RecordNotFound:
        raise Http404(f"No record has the ID '{code}'.") from None


def code_from_scan(text: str) -> str:
    """The record code in what was typed or scanned.

    A handheld scanner reading a label types the QR payload, which is the record page's
    URL; anything that is not a record URL is taken as typed.
    """
    text = text.strip()
    if "/" not in text:
        return text
    try:
        match = resolve(urlsplit(text).path)
    except Resolver404:
        return text
    return match.kwargs.get("code", text) if match.url_name == "record" else text
