"""Reads that cross relations: expiry lists, stock, and the lineage and readiness entry points."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

from django.apps import apps
from django.utils import timezone

from .lineage import Lineage, record_get_ancestors, record_get_descendants  # noqa: F401
from .models import LifecycleRecord, Status
from .readiness import Readiness, substrate_check_readiness  # noqa: F401
from .shelf_life import LIFECYCLE_KINDS

ACTIVE_STATUSES = (Status.QUARANTINE, Status.RELEASED)


@dataclass(frozen=True)
class ExpiringItem:
    record: LifecycleRecord
    expires_on: date
    days_left: int  # negative when already expired

    @property
    def kind_label(self) -> str:
        return self.record._meta.verbose_name


def records_expiring_within(days: int, *, on_date: date | None = None,
                            include_expired: bool = True) -> list[ExpiringItem]:
    """Active records (quarantine or released) whose expiry falls within ``days`` days.

    One indexed query per record kind; soonest first.
    """
    if days < 0:
        raise ValueError("days must be zero or positive")
    on_date = on_date or timezone.localdate()
    horizon = on_date + timedelta(days=days)
    items: list[ExpiringItem] = []
    for kind in LIFECYCLE_KINDS:
        model = apps.get_model("inventory", kind)
        rows = model.objects.filter(status__in=ACTIVE_STATUSES, expires_on__isnull=False,
                                    expires_on__lte=horizon)
        if not include_expired:
            rows = rows.filter(expires_on__gte=on_date)
        items.extend(ExpiringItem(record, record.expires_on, (record.expires_on - on_date).days)
                     for record in rows.order_by("expires_on", "code"))
    return sorted(items, key=lambda item: (item.expires_on, item.record.code))
