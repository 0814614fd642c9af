"""The lifecycle rules: which transitions are legal and which inputs may be used."""

from __future__ import annotations

from datetime import date

from .errors import refusal
from .models import Status
from .shelf_life import is_expired

ALLOWED_TRANSITIONS: dict[str, frozenset[str]] = {
    Status.QUARANTINE: frozenset({Status.RELEASED, Status.REJECTED, Status.DISPOSED}),
    # A released lot can be put back on hold (quarantine) while a deviation is investigated.
    Status.RELEASED: frozenset({Status.CONSUMED, Status.DISPOSED, Status.QUARANTINE,
                                Status.REJECTED}),
    Status.REJECTED: frozenset({Status.DISPOSED}),
    Status.CONSUMED: frozenset(),
    Status.DISPOSED: frozenset(),
}

# Transitions that change a decision already made need a written reason.
REASON_REQUIRED = frozenset({Status.REJECTED, Status.DISPOSED, Status.QUARANTINE})

UNUSABLE_STATUSES = frozenset({Status.REJECTED, Status.DISPOSED, Status.CONSUMED})


def check_transition(record, to_status: str, reason: str) -> None:
    """Refuse an illegal lifecycle transition with a sentence naming both states."""
    if to_status not in Status.values:
        raise refusal("to_status", f"Unknown status '{to_status}'.", "unknown_status")
    current = record.status
    if to_status not in ALLOWED_TRANSITIONS[current]:
        allowed = ", ".join(sorted(ALLOWED_TRANSITIONS[current])) or "none (final state)"
        raise refusal("to_status", f"{record.code} is {current}; it cannot become {to_status}. "
                          f"Allowed next: {allowed}.", "illegal_transition")
    if to_status in REASON_REQUIRED and not reason.strip():
        raise refusal(
            "reason", f"Give a reason for making {record.code} {to_status}.", "reason_required"
        )


def check_usable(record, *, role: str, on_date: date, field: str,
                 state_read: bool = False) -> None:
    """Refuse a voided, rejected, disposed, consumed or expired input to a new step.

    The status, expiry and void are re-read under a row lock, so a caller holding a stale
    copy (or a reviewer rejecting the lot at the same moment) cannot slip an unusable input in.
    ``state_read``: the caller read the record under a row lock in this transaction already
    (a sheet import reads every input it names in one query).
    """
    columns = [name for name in ("status", "expires_on", "voided_at", "void_reason")
               if hasattr(record, name)]
    if columns and not state_read:
        current = (type(record).objects.select_for_update().filter(pk=record.pk)
                   .values(*columns).get())
        for name, value in current.items():
            setattr(record, name, value)
    if getattr(record, "voided_at", None) is not None:
        raise refusal(field, f"{record.code} cannot be used as {role}: it was voided "
                             f"({record.void_reason}).", "input_voided")
    status = getattr(record, "status", None)
    if status in UNUSABLE_STATUSES:
        raise refusal(
            field, f"{record.code} cannot be used as {role}: it is {status}.", "input_unusable"
        )
    if is_expired(record, on_date):
        raise refusal(field, f"{record.code} cannot be used as {role} on {on_date.isoformat()}: "
                    f"it expired on {record.expires_on.isoformat()}.", "input_expired")
