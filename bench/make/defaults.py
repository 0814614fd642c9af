"""What the Make forms offer and pre-fill: usable inputs only, and the user's last-used lot.

Both are reads, kept here so every form asks the same question the same way.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date

from django.db.models import Q, QuerySet
from django.utils import timezone

from inventory.models import LineageEdge, Status


def usable(queryset: QuerySet, *, on_date: date | None = None,
           statuses: Sequence[str] = (Status.RELEASED,)) -> QuerySet:
    """Records of ``queryset`` a step may take today: in one of ``statuses`` and not expired.

    Lots default to released only; a voided record (``voided_at`` set) is never offered.
    Expiry follows ``inventory.shelf_life.is_expired``: a record is still usable on its
    expiry day.  The service re-checks the chosen record under a row lock.
    """
    on_date = on_date or timezone.localdate()
    rows = (queryset.filter(status__in=list(statuses))
            .filter(Q(expires_on__isnull=True) | Q(expires_on__gte=on_date)))
    if _has_field(queryset, "voided_at"):
        rows = rows.filter(voided_at__isnull=True)
    return rows.order_by("-made_on" if _has_field(queryset, "made_on") else "-created_at", "-id")


def _has_field(queryset: QuerySet, name: str) -> bool:
    return any(field.name == name for field in queryset.model._meta.concrete_fields)


def last_used_code(user, *, role: str) -> str | None:
    """Code of the input this user last used in the lineage ``role`` (e.g. "plating bath").

    One query on the lineage edges the services write (``created_by`` is the actor), so it
    works the same for every step: bath lots, linker lots, reference-analyte lots.
    """
    if user is None or not user.is_authenticated:
        return None
    return (LineageEdge.objects.filter(created_by=user, role=role)
            .order_by("-created_at", "-id").values_list("parent_code", flat=True).first())
