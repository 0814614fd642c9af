"""Lifecycle transitions of material records."""

from __future__ import annotations

from django.db import transaction

from ..lifecycle import check_transition
from ..models import LifecycleRecord, StatusChange
from ._common import User, _save_changed


@transaction.atomic
def record_transition(*, actor: User | None, record: LifecycleRecord, to_status: str,
                      reason: str = "") -> LifecycleRecord:
    """Move a record through its lifecycle, refusing illegal moves; keeps a StatusChange."""
    locked = type(record).objects.select_for_update().get(pk=record.pk)
    check_transition(locked, to_status, reason)
    StatusChange.objects.create(record_code=locked.code, from_status=locked.status,
                                to_status=to_status, reason=reason, changed_by=actor)
    locked.status = to_status
    _save_changed(locked, actor=actor)
    return locked
