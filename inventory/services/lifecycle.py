"""Lifecycle transitions of material records, and who may make each one."""

from __future__ import annotations

from django.conf import settings
from django.db import transaction

from ..errors import refusal
from ..lifecycle import check_transition
from ..models import LifecycleRecord, Status, StatusChange
from ..roles import MAKER, REVIEWER, require_role
from ._common import CheckingMany, User, _prepare_changed, _stamp_history

# Release, reject and hold are decisions about quality; using up or disposing is bench work.
ROLE_FOR_STATUS = {
    Status.RELEASED: REVIEWER,
    Status.REJECTED: REVIEWER,
    Status.QUARANTINE: REVIEWER,
    Status.CONSUMED: MAKER,
    Status.DISPOSED: MAKER,
}

SIGNED_STATUSES = frozenset({Status.RELEASED, Status.REJECTED})


def check_not_self_release(actor: User | None, record: LifecycleRecord) -> None:
    """A maker may not release what they made unless the lab's setting allows it."""
    if actor is None or getattr(settings, "SERSLEDGER_ALLOW_SELF_RELEASE", False):
        return
    if record.created_by_id is not None and record.created_by_id == actor.pk:
        raise refusal("record", f"{actor.get_username()} made {record.code}; a second person "
                                "must release it (SERSLEDGER_ALLOW_SELF_RELEASE is off).",
                      "self_release")


def check_not_voided(record) -> None:
    if getattr(record, "voided_at", None) is not None:
        raise refusal("record", f"{record.code} was voided ({record.void_reason}); it cannot "
                                "be changed.", "voided")


def transition_prepare(record: LifecycleRecord, to_status: str, *, reason: str,
                       actor: User | None, many: CheckingMany | None = None) -> StatusChange:
    """The check part of a transition: ``record`` (changed in place; a caller that writes
    later passes a copy) moves to ``to_status``, a new version checked; returns the unsaved
    StatusChange.  Nothing is written.  No role check (see ``_transition``).
    """
    check_transition(record, to_status, reason)
    change = StatusChange(record_code=record.code, from_status=record.status,
                          to_status=to_status, reason=reason, changed_by=actor)
    record.status = to_status
    _prepare_changed(record, actor=actor, many=many, changed=("status",))
    return change


def transition_reason(to_status: str, reason: str) -> str:
    """The reason a transition's history row keeps."""
    return reason or f"status: {to_status}"


def _transition(locked: LifecycleRecord, to_status: str, *, reason: str,
                actor: User | None) -> LifecycleRecord:
    """Apply a checked transition to a row the caller holds locked; no role check.

    For services that move a record as a consequence of work the actor may do (a failed
    QC import holds the substrate it measured; plating consumes the template).
    """
    change = transition_prepare(locked, to_status, reason=reason, actor=actor)
    change.save()
    _stamp_history(locked, actor=actor, reason=transition_reason(to_status, reason))
    locked.save()
    return locked


def lock(record):
    """The current row of ``record``, locked until the transaction ends."""
    return type(record).objects.select_for_update().get(pk=record.pk)


@transaction.atomic
def record_transition(*, actor: User | None, record: LifecycleRecord, to_status: str,
                      reason: str = "") -> LifecycleRecord:
    """Move a record through its lifecycle, refusing illegal moves; keeps a StatusChange.

    Unsigned, so a person cannot release or reject through it (``signature_required``):
    pages and the API use ``record_release`` and ``record_reject`` (electronic signatures).
    It serves holds, consumption and disposal, and the system (``actor=None``: demo loader,
    data migrations, test set-up), which may set any legal state.
    """
    role = ROLE_FOR_STATUS.get(to_status, REVIEWER)
    require_role(actor, role, action=f"Making {record.code} {to_status}")
    if actor is not None and to_status in SIGNED_STATUSES:
        # A person's release or reject is an electronic signature; only the system may set
        # these states unsigned (demo loader, data migrations, test set-up).
        raise refusal("to_status", f"Making {record.code} {to_status} is a signed decision: "
                                   "use record_release or record_reject with the signer's "
                                   "password and meaning.", "signature_required")
    locked = lock(record)
    check_not_voided(locked)
    return _transition(locked, to_status, reason=reason, actor=actor)
