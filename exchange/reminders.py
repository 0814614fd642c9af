"""What each person should hear about: the daily digest and the calendar feed read this.

A person's records are those they created.  A reviewer also hears of every piece waiting
for review, since reviewing is their job.  A colloid batch is due for a stability
re-measurement ``SERSLEDGER_COLLOID_REMEASURE_DAYS`` after its last UV-vis reading (file or
sheet), or after it was made if it has none — a lab's routine, not a published interval.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, timedelta

from django.conf import settings
from django.db.models import Max

from inventory.codes import records_by_code
from inventory.flags import flags_open
from inventory.models import NanoparticleBatch, Status, Substrate
from inventory.roles import REVIEWER, user_has_role
from inventory.selectors import ACTIVE_STATUSES, records_expiring_within
from qc.models import UvVisRecord

from .models import SheetUvVisReading


def warning_days() -> int:
    return settings.SERSLEDGER_EXPIRY_WARNING_DAYS


def remeasure_days() -> int:
    return settings.SERSLEDGER_COLLOID_REMEASURE_DAYS


@dataclass(frozen=True)
class Reminder:
    code: str
    text: str
    day: date | None  # the date it is about (expiry, due date); None for open items


@dataclass
class Reminders:
    expiring: list[Reminder] = field(default_factory=list)
    open_flags: list[Reminder] = field(default_factory=list)
    awaiting_review: list[Reminder] = field(default_factory=list)
    remeasure_due: list[Reminder] = field(default_factory=list)

    SECTIONS = (("expiring", "Stock expiring"), ("open_flags", "Open flags on your records"),
                ("awaiting_review", "Pieces waiting for review"),
                ("remeasure_due", "Colloid batches due for a stability re-measurement"))

    def __len__(self) -> int:
        return sum(len(getattr(self, name)) for name, _title in self.SECTIONS)


def expiring_for(user, *, today: date, days: int | None = None) -> list[Reminder]:
    days = warning_days() if days is None else days
    return [Reminder(item.record.code,
                     f"{item.record.code} ({item.kind_label}) "
                     + (f"expired on {item.expires_on.isoformat()}" if item.days_left < 0
                        else f"expires on {item.expires_on.isoformat()} "
                             f"(in {item.days_left} d)"), item.expires_on)
            for item in records_expiring_within(days, on_date=today)
            if item.record.created_by_id == user.pk and item.record.voided_at is None]


def open_flags_for(user) -> list[Reminder]:
    flags = list(flags_open().order_by("code"))
    targets = records_by_code([flag.target_code for flag in flags], fields=["created_by"])
    return [Reminder(flag.code, f"{flag.code} on {flag.target_code}: {flag.message}", None)
            for flag in flags
            if getattr(targets.get(flag.target_code), "created_by_id", None) == user.pk]


def awaiting_review_for(user) -> list[Reminder]:
    pieces = Substrate.objects.filter(status=Status.QUARANTINE, voided_at__isnull=True)
    if not user_has_role(user, REVIEWER):
        pieces = pieces.filter(created_by=user)
    return [Reminder(piece.code, f"{piece.code} ({piece.get_stage_display().lower()}, made "
                                 f"{piece.made_on.isoformat()}) is in quarantine", None)
            for piece in pieces.order_by("made_on", "id")]


def remeasure_schedule_for(user) -> list[Reminder]:
    """Every active batch of ``user`` with the day its next stability reading is due."""
    batches = list(NanoparticleBatch.objects.filter(
        created_by=user, status__in=ACTIVE_STATUSES, voided_at__isnull=True).order_by("id"))
    last = {}
    for model in (UvVisRecord, SheetUvVisReading):
        for row in model.objects.filter(batch__in=batches).values("batch").annotate(
                last=Max("measured_on")):
            last[row["batch"]] = max(row["last"], last.get(row["batch"], row["last"]))
    interval = timedelta(days=remeasure_days())
    schedule = []
    for batch in batches:
        since = last.get(batch.pk, batch.made_on)
        due = since + interval
        schedule.append(Reminder(batch.code, f"{batch.code} ({batch.metal} colloid): UV-vis "
                                             f"stability re-measurement due "
                                             f"{due.isoformat()} (last "
                                             f"{'reading' if batch.pk in last else 'made'} "
                                             f"{since.isoformat()})", due))
    return schedule


def reminders_for(user, *, today: date) -> Reminders:
    return Reminders(
        expiring=expiring_for(user, today=today),
        open_flags=open_flags_for(user),
        awaiting_review=awaiting_review_for(user),
        remeasure_due=[r for r in remeasure_schedule_for(user) if r.day <= today],
    )
