"""Which flags are open: the one rule every page, API read, readiness and release check uses.

A flag speaks against its record while it is open; resolving it (with a reason) or voiding
it ends that.  Callers order and slice the queryset they get.
"""

from __future__ import annotations

from collections.abc import Iterable

from django.db.models import QuerySet

from .models import Flag

__all__ = ["flags_open", "flags_open_by_code"]


def flags_open(*, target_codes: Iterable[str] | None = None, category: str | None = None,
               mentioning: str = "") -> QuerySet[Flag]:
    """Open, not voided flags (on ``target_codes``, of ``category``, naming ``mentioning``)."""
    rows = Flag.objects.filter(state=Flag.State.OPEN, voided_at__isnull=True)
    if target_codes is not None:
        rows = rows.filter(target_code__in=list(target_codes))
    if category:
        rows = rows.filter(category=category)
    if mentioning:
        rows = rows.filter(message__contains=mentioning)
    return rows


def flags_open_by_code(codes: Iterable[str], *, category: str | None = None
                       ) -> dict[str, list[Flag]]:
    """Open flags grouped by the code they are on, oldest first (one query for a page)."""
    found: dict[str, list[Flag]] = {}
    for flag in flags_open(target_codes=codes, category=category).order_by("code"):
        found.setdefault(flag.target_code, []).append(flag)
    return found
