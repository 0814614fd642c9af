"""Signed release and reject, void and amendment: the writes an audit trail is built on.

Release and reject are electronic signatures (DESIGN §7, in the spirit of 21 CFR Part 11):
the signer re-enters their password and chooses the meaning; the signature stores the
signer's name, the time, the meaning, the record and a SHA-256 digest of the record's
canonical content (inventory.signatures).  Nothing is deleted: a record made in error is
voided with a reason.  Amendments name the version they were made against, so two people
editing the same record cannot silently overwrite each other.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import date
from functools import lru_cache
from typing import Any

from django.conf import settings
from django.core.exceptions import PermissionDenied
from django.db import models, transaction
from django.utils import timezone
from django.utils.module_loading import import_string

from .. import signature_throttle
from ..errors import refusal
from ..lifecycle import check_transition
from ..models import CodedRecord, LifecycleRecord, LineageEdge, Signature, Status
from ..roles import MAKER, REVIEWER, require_role
from ..signatures import (
    REJECT_MEANINGS,
    RELEASE_MEANINGS,
    SignatureIntent,
    record_content_digest,
)
from ._common import User, _check_fields, _require_not_future, _save_changed
from .derived import refresh_derived
from .lifecycle import _transition, check_not_self_release, check_not_voided, lock


@lru_cache(maxsize=8)
def _import_checks(paths: tuple[str, ...]) -> list[Callable[[Any], str | None]]:
    return [import_string(path) for path in paths]


def _release_checks() -> list[Callable[[Any], str | None]]:
    """``settings.SERSLEDGER_RELEASE_CHECKS``: ``check(record) -> note or None``, may refuse.

    Other apps add release rules here (the qc app: a substrate needs a passed QC and no
    open QC flag), so inventory never imports them.
    """
    return _import_checks(tuple(getattr(settings, "SERSLEDGER_RELEASE_CHECKS", ())))


def _verify_signer(actor: User | None, signature: SignatureIntent, *,
                   meanings: tuple[str, ...]) -> None:
    if actor is None:
        raise PermissionDenied("An electronic signature needs a signed-in person; the system "
                               "cannot sign.")
    if not isinstance(signature, SignatureIntent):
        raise refusal("password", "Re-enter your password to sign.", "signature_invalid")
    if signature.meaning not in meanings:
        raise refusal("meaning", f"Choose what the signature means: {', '.join(meanings)}.",
                      "signature_meaning")
    username = actor.get_username()
    if signature_throttle.is_locked(username):
        raise refusal("password", signature_throttle.lockout_message(), "signature_locked")
    if not signature.password or not actor.check_password(signature.password):
        signature_throttle.record_failure(username)
        raise refusal("password", "The password does not match; the signature was not made.",
                      "signature_invalid")
    signature_throttle.reset(username)


def _signer_name(actor: User) -> str:
    full = actor.get_full_name().strip() if hasattr(actor, "get_full_name") else ""
    return full or actor.get_username()


def _sign(actor: User, record: CodedRecord, *, meaning: str, action: str,
          reason: str) -> Signature:
    content_json, digest = record_content_digest(record)
    signature = Signature(
        record_code=record.code, record_kind=record._meta.label, record_version=record.version,
        meaning=meaning, action=action, to_status=getattr(record, "status", ""),
        reason=reason, signer=actor, signer_username=actor.get_username(),
        signer_name=_signer_name(actor), signed_at=timezone.now(), content_json=content_json,
        content_sha256=digest)
    signature.full_clean()
    signature.save()
    return signature


@transaction.atomic
def record_release(*, actor: User, record: LifecycleRecord,
                   signature: SignatureIntent) -> LifecycleRecord:
    """Release ``record`` under the reviewer's electronic signature.

    Refused without the reviewer role (PermissionDenied), on a wrong password (``password``,
    ``signature_invalid``), for the maker of the record unless SERSLEDGER_ALLOW_SELF_RELEASE
    (``self_release``), for an illegal transition, and by any release check of another app
    (a substrate's QC).  The release checks' notes become the status-change reason.
    """
    require_role(actor, REVIEWER, action=f"Releasing {record.code}")
    _verify_signer(actor, signature, meanings=RELEASE_MEANINGS)
    locked = lock(record)
    check_not_voided(locked)
    check_transition(locked, Status.RELEASED, "")
    check_not_self_release(actor, locked)
    notes = [note for check in _release_checks() if (note := check(locked))]
    reason = "; ".join([*notes, f"signed: {signature.meaning}"])
    _transition(locked, Status.RELEASED, reason=reason, actor=actor)
    _sign(actor, locked, meaning=signature.meaning, action="release", reason=reason)
    return locked


@transaction.atomic
def record_reject(*, actor: User, record: LifecycleRecord, signature: SignatureIntent,
                  reason: str) -> LifecycleRecord:
    """Reject ``record`` under the reviewer's electronic signature, with a written reason."""
    require_role(actor, REVIEWER, action=f"Rejecting {record.code}")
    _verify_signer(actor, signature, meanings=REJECT_MEANINGS)
    locked = lock(record)
    check_not_voided(locked)
    _transition(locked, Status.REJECTED, reason=reason, actor=actor)
    _sign(actor, locked, meaning=signature.meaning, action="reject", reason=reason)
    return locked


@transaction.atomic
def record_void(*, actor: User | None, record: CodedRecord, reason: str) -> CodedRecord:
    """Void a record made in error: kept in lineage and history, no longer usable or ready."""
    require_role(actor, REVIEWER, action=f"Voiding {record.code}")
    if not reason.strip():
        raise refusal("reason", f"Say why {record.code} is void.", "reason_required")
    locked = lock(record)
    if locked.voided_at is not None:
        raise refusal("record", f"{locked.code} was already voided on "
                                f"{locked.voided_at.date().isoformat()}.", "already_voided")
    locked.voided_at = timezone.now()
    locked.voided_by = actor
    locked.void_reason = reason.strip()
    _save_changed(locked, actor=actor, reason=f"voided: {reason.strip()}")
    return locked


def amendable_fields(model: type[CodedRecord]) -> frozenset[str]:
    """The fields of ``model`` that ``record_amend`` accepts: its ``AMENDABLE_FIELDS``.

    Each kind declares them beside its fields; a flag, for one, takes only notes (its state
    changes through ``flag_resolve``), and a record computed from an instrument file only
    notes: its figures and acquisition settings belong to the file.
    """
    return model.AMENDABLE_FIELDS


# A lineage edge carries the date of the step that made it (LineageEdge.used_on).  A step
# makes the edges into its own record, except these, which it makes out of its record to what
# it produced or modified: a run's pieces, a linker layer's or an attachment's substrate.
OUTPUT_ROLES = ("cut from", "linker layer", "particles")
# Where each kind keeps the date of its step, in the order the services choose it.
STEP_DATE_FIELDS = ("prepared_on", "made_on", "acquired_on", "received_on")


def step_date_field(record: CodedRecord) -> str | None:
    """The field holding the date of the step ``record`` stands for (None: no step date)."""
    return next((name for name in STEP_DATE_FIELDS if getattr(record, name, None) is not None),
                None)


def _step_date(record: CodedRecord) -> date | None:
    name = step_date_field(record)
    return None if name is None else getattr(record, name)


def _follow_step_date(record: CodedRecord, old: date, new: date) -> None:
    """Move the lineage edges the step made to its new date.

    (A deposition run's date, which its pieces share, is never amended: its figures belong to
    its chronoamperogram, so ``amendable_fields`` offers only notes and storage.)
    """
    made_by_step = (models.Q(child_code=record.code) & ~models.Q(role__in=OUTPUT_ROLES)) | \
        (models.Q(parent_code=record.code) & models.Q(role__in=OUTPUT_ROLES))
    LineageEdge.objects.filter(made_by_step, used_on=old).update(used_on=new)


def _reason_needed(record: CodedRecord) -> bool:
    """A record that has left quarantine (or was ever signed) is only changed with a reason."""
    if isinstance(record, LifecycleRecord) and record.status != Status.QUARANTINE:
        return True
    return Signature.objects.filter(record_code=record.code).exists()


@transaction.atomic
def record_amend(*, actor: User | None, record: CodedRecord, changes: dict[str, Any],
                 reason: str, expected_version: int) -> CodedRecord:
    """Change typed fields of ``record`` if nobody changed it since ``expected_version``.

    The row is re-read under a lock, so of two amendments made against the same version
    exactly one wins and the other is refused (``version``, ``version_conflict``).  A
    released (or otherwise decided, or signed) record needs a reason; every amendment is a
    history row with the old and new values.  Changing the date of a step moves the lineage
    edges that step made to the new date (so readiness judges inputs on the day they were
    really used).
    """
    require_role(actor, MAKER, action=f"Amending {record.code}")
    if not changes:
        raise refusal("changes", "Nothing to change.", "required")
    allowed = amendable_fields(type(record))
    for name in changes:
        if name not in allowed:
            raise refusal(name, f"{name} of {record.code} cannot be amended; allowed: "
                                f"{', '.join(sorted(allowed))}.", "not_amendable")
    locked = lock(record)
    if locked.version != expected_version:
        raise refusal("version", f"{locked.code} was changed by someone else since version "
                                 f"{expected_version} (now {locked.version}); reload it and "
                                 "amend again.", "version_conflict")
    check_not_voided(locked)
    if _reason_needed(locked) and not reason.strip():
        raise refusal("reason", f"{locked.code} is {getattr(locked, 'status', 'signed')}; give "
                                "a reason for the amendment.", "reason_required")
    old_date = _step_date(locked)
    old_values = {name: getattr(locked, name) for name in changes}
    for name, value in changes.items():
        setattr(locked, name, value)
    _check_fields(locked)  # typed text to dates and numbers, each inside its range
    changed = {name: (old, getattr(locked, name)) for name, old in old_values.items()
               if getattr(locked, name) != old}
    new_date = _step_date(locked)
    if new_date is not None and new_date != old_date:
        _require_not_future(new_date, field=step_date_field(locked))
    _save_changed(locked, actor=actor, reason=reason.strip() or "amended")
    if old_date is not None and new_date is not None and new_date != old_date:
        _follow_step_date(locked, old_date, new_date)
    refresh_derived(actor=actor, record=locked, changed=changed)
    return locked
