"""Helpers every inventory service uses: codes, validation, saving and lineage edges."""

from __future__ import annotations

from datetime import date
from typing import Iterable, Sequence

from django.contrib.auth.models import AbstractBaseUser
from django.utils import timezone

from ..codes import code_next
from ..errors import refusal
from ..lifecycle import check_usable
from ..models import (
    CodedRecord,
    LifecycleRecord,
    LineageEdge,
    ReagentKind,
    ReagentLot,
    StampedRecord,
    Substrate,
)
from ..shelf_life import refresh_expiry

User = AbstractBaseUser


def _today() -> date:
    return timezone.localdate()


def _stamp_history(record: StampedRecord, *, actor: User | None, reason: str) -> None:
    """Who and why for the history row this save writes (django-simple-history).

    Set on the instance so pages, API, commands and the demo all record the actor, not
    only requests that pass through the history middleware.
    """
    record._history_user = actor
    record._change_reason = reason or None


def _save_new(record: CodedRecord, *, actor: User | None, reason: str = "") -> CodedRecord:
    """Give ``record`` its code, check every field and constraint, and insert it."""
    record.code = code_next(record.CODE_PREFIX)
    record.created_by = actor
    record.updated_by = actor
    if isinstance(record, LifecycleRecord):
        refresh_expiry(record)
    record.full_clean()
    _stamp_history(record, actor=actor, reason=reason)
    record.save()
    return record


def _save_changed(record: StampedRecord, *, actor: User | None, reason: str = "") -> None:
    """Save a change with a new version; the history row keeps who, when and ``reason``."""
    record.updated_by = actor
    record.version += 1
    if isinstance(record, LifecycleRecord):
        refresh_expiry(record)
    record.full_clean()
    _stamp_history(record, actor=actor, reason=reason)
    record.save()


def _link(parents: Iterable[tuple[CodedRecord, str]], child: CodedRecord, *, used_on: date,
          actor: User | None) -> None:
    LineageEdge.objects.bulk_create([
        LineageEdge(parent_code=parent.code, child_code=child.code, role=role,
                    used_on=used_on, created_by=actor)
        for parent, role in parents
    ])


def _require_kind(lot: ReagentLot, kinds: Sequence[str], *, field: str) -> None:
    if lot.kind not in kinds:
        wanted = " or ".join(ReagentKind(k).label.lower() for k in kinds)
        raise refusal(field, f"{lot.code} is a {lot.get_kind_display().lower()} lot, "
                                      f"not {wanted}.", "wrong_reagent_kind")


def _require_not_future(day: date, *, field: str) -> None:
    if day > _today():
        raise refusal(field, f"{day.isoformat()} is in the future.", "future_date")


def _check_substrates_usable(substrates: Sequence[Substrate], *, role: str, on_date: date,
                             field: str = "substrates") -> None:
    if not substrates:
        raise refusal(field, "Choose at least one substrate.", "required")
    for substrate in substrates:
        check_usable(substrate, role=role, on_date=on_date, field=field)
        if on_date < substrate.made_on:
            raise refusal("made_on", f"{substrate.code} was made on "
                                              f"{substrate.made_on.isoformat()}, after this step.", "date_order")
