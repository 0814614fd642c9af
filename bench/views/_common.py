"""Small helpers shared by the inventory pages (parsing query parameters, paginating)."""

from __future__ import annotations

from urllib.parse import urlsplit

from django.core.paginator import Paginator
from django.http import Http404
from django.urls import Resolver404, resolve

from inventory.codes import RecordNotFound, record_get

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
