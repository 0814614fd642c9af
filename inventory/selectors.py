"""Reads that cross relations: expiry lists, stock, and the lineage and readiness entry points."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Any

from django.apps import apps
from django.db.models import Q
from django.db.models.functions import Length
from django.utils import timezone

from .codes import CODE_ORDER, code_sort_key, record_get
from .lineage import Lineage, record_get_ancestors, record_get_descendants  # noqa: F401
from .models import CodedRecord, LifecycleRecord, Signature, Status
from .readiness import Readiness, substrate_check_readiness  # noqa: F401
from .shelf_life import LIFECYCLE_KINDS
from .signatures import record_content_digest

ACTIVE_STATUSES = (Status.QUARANTINE, Status.RELEASED)


@dataclass(frozen=True)
class ExpiringItem:
    record: LifecycleRecord
    expires_on: date
    days_left: int  # negative when already expired

    @property
    def kind_label(self) -> str:
        return self.record._meta.verbose_name


def expiring_rows(model, *, horizon: date, on_date: date, include_expired: bool):
    """Active records of one kind expiring by ``horizon`` (the one home of that rule)."""
    rows = model.objects.filter(status__in=ACTIVE_STATUSES, expires_on__isnull=False,
                                expires_on__lte=horizon)
    return rows if include_expired else rows.filter(expires_on__gte=on_date)


def _check_expiring_arguments(days: int, limit: int | None) -> None:
    if days < 0:
        raise ValueError("days must be zero or positive")
    if limit is not None and limit < 1:
        raise ValueError("limit must be at least 1")


def records_expiring_within(days: int, *, on_date: date | None = None,
                            include_expired: bool = True,
                            limit: int | None = None) -> list[ExpiringItem]:
    """Active records (quarantine or released) whose expiry falls within ``days`` days.

    One query per record kind on the (status, expires_on) index; soonest first, then by
    code in numeric order.  ``limit`` caps the list (and each query) for large stores;
    ``records_expiring_page`` walks the whole list a page at a time.
    """
    _check_expiring_arguments(days, limit)
    page = records_expiring_page(days, on_date=on_date, include_expired=include_expired,
                                 limit=limit)
    return page.items


@dataclass(frozen=True)
class ExpiringPage:
    items: list[ExpiringItem]
    next_after: tuple[date, str] | None  # (expires_on, code) of the last item, if more follow


def _after_in_kind(model, after: tuple[date, str]) -> Q:
    """Rows of one kind that sort after (expires_on, code) in (date, prefix, number) order."""
    day, code = after
    prefix = code.split("-", 1)[0]
    if prefix > model.CODE_PREFIX:
        return Q(expires_on__gt=day)
    if prefix < model.CODE_PREFIX:
        return Q(expires_on__gte=day)
    return (Q(expires_on__gt=day)
            | Q(expires_on=day, code_length__gt=len(code))
            | Q(expires_on=day, code_length=len(code), code__gt=code))


def records_expiring_page(days: int, *, after: tuple[date, str] | None = None,
                          limit: int | None = 50, on_date: date | None = None,
                          include_expired: bool = True) -> ExpiringPage:
    """One page of the expiring list, starting after ``after`` (keyset: flat with lab size).

    Soonest first, then by code in numeric order; per record kind one query reading at
    most ``limit + 1`` rows in index order, so page 1,000 costs what page 1 costs.
    """
    _check_expiring_arguments(days, limit)
    on_date = on_date or timezone.localdate()
    horizon = on_date + timedelta(days=days)
    items: list[ExpiringItem] = []
    for kind in LIFECYCLE_KINDS:
        model = apps.get_model("inventory", kind)
        rows = expiring_rows(model, horizon=horizon, on_date=on_date,
                              include_expired=include_expired)
        if after is not None:
            rows = rows.annotate(code_length=Length("code")).filter(_after_in_kind(model, after))
        rows = rows.select_related("storage").order_by("expires_on", *CODE_ORDER)
        if limit is not None:
            rows = rows[:limit + 1]
        items.extend(ExpiringItem(record, record.expires_on, (record.expires_on - on_date).days)
                     for record in rows)
    items.sort(key=lambda item: (item.expires_on, code_sort_key(item.record.code)))
    if limit is None or len(items) <= limit:
        return ExpiringPage(items, None)
    last = items[limit - 1]
    return ExpiringPage(items[:limit], (last.expires_on, last.record.code))


# ---------------------------------------------------------------------------------------
# Audit reads: history and signatures
# ---------------------------------------------------------------------------------------

# Bookkeeping every save touches; the history shows what a person changed.
_HISTORY_NOISE = ("updated_at", "updated_by", "version")
_HISTORY_KINDS = {"+": "created", "~": "changed", "-": "deleted"}


@dataclass(frozen=True)
class FieldChange:
    field: str
    label: str
    old: Any
    new: Any


@dataclass(frozen=True)
class HistoryEntry:
    """One create or change of a record: when, who, what changed (old and new) and why."""

    when: datetime
    who: str  # username, or "system" for the demo loader and data migrations
    kind: str  # "created" or "changed"
    version: int
    changes: tuple[FieldChange, ...]
    reason: str


def _as_record(record_or_code) -> CodedRecord:
    return record_get(record_or_code) if isinstance(record_or_code, str) else record_or_code


def _shown(field, value) -> Any:
    """Related rows by code (people by username), so the history reads like the pages."""
    if value is None or not field.is_relation:
        return value
    related = field.related_model._default_manager.filter(pk=value).first()
    if related is None:
        return value
    return getattr(related, "code", None) or getattr(related, "get_username", lambda: value)()


def record_get_history(record) -> list[HistoryEntry]:
    """Every create and change of ``record`` (or its code), newest first, with reasons.

    One query for the history rows, plus one per changed link to another record.
    """
    record = _as_record(record)
    rows = list(record.history.select_related("history_user").order_by("history_date",
                                                                          "history_id"))
    entries: list[HistoryEntry] = []
    previous = None
    for row in rows:
        changes: tuple[FieldChange, ...] = ()
        if previous is not None:
            delta = row.diff_against(previous, excluded_fields=_HISTORY_NOISE)
            changes = tuple(
                FieldChange(change.field, str(type(record)._meta.get_field(change.field)
                                              .verbose_name),
                            _shown(type(record)._meta.get_field(change.field), change.old),
                            _shown(type(record)._meta.get_field(change.field), change.new))
                for change in delta.changes)
        who = row.history_user.get_username() if row.history_user else "system"
        entries.append(HistoryEntry(when=row.history_date, who=who,
                                    kind=_HISTORY_KINDS.get(row.history_type, "changed"),
                                    version=row.version, changes=changes,
                                    reason=row.history_change_reason or ""))
        previous = row
    return entries[::-1]


def record_get_signatures(record) -> list[Signature]:
    """The electronic signatures on ``record`` (or its code), oldest first.

    Each row carries ``content_matches``: whether the record still holds exactly the content
    that was signed (False once it was amended after signing).
    """
    record = record_get(record if isinstance(record, str) else record.code)  # fresh content
    signatures = list(Signature.objects.filter(record_code=record.code).select_related("signer"))
    if signatures:
        digest = record_content_digest(record)[1]
        for signature in signatures:
            signature.content_matches = signature.content_sha256 == digest
    return signatures
