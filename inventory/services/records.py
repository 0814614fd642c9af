"""Datasets with file digests, and flags on any record."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from datetime import date

from django.db import transaction
from django.utils import timezone

from ..errors import refusal
from ..models import CodedRecord, Dataset, DatasetFile, Flag, Status, Substrate
from ..roles import MAKER, REVIEWER, require_role
from ._common import (
    CheckingMany,
    User,
    _check_substrates_usable,
    _link,
    _prepare_new,
    _require_not_future,
    _require_role,
    _save_changed,
    _save_new,
)
from .creation import NewRecord, new_record_save
from .lifecycle import record_transition
from .uploads import RawUpload, check_upload, files_removed_if_failed


def sha256_of(content: bytes) -> str:
    return hashlib.sha256(content).hexdigest()


@transaction.atomic
def dataset_register(
    *, actor: User | None, title: str, substrates: Sequence[Substrate], acquired_on: date,
    files: Sequence[RawUpload | tuple[str, bytes]] = (), instrument: str = "",
    operator: str = "", consume_substrates: bool = False, notes: str = "",
) -> Dataset:
    """Record data made on substrates; files are stored with their SHA-256 digests.

    ``files`` are uploads (a big one stays on disk, hashed once, stored from there in
    chunks: never held in memory) or, for small files, ``(name, bytes)``.
    """
    require_role(actor, MAKER, action="Registering a dataset")
    _require_not_future(acquired_on, field="acquired_on")
    _check_substrates_usable(substrates, role="a measured substrate", on_date=acquired_on,
                             date_field="acquired_on")
    uploads = [item if isinstance(item, RawUpload) else RawUpload.of_bytes(*item)
               for item in files]
    for upload in uploads:
        check_upload(upload, field="files", filename=upload.name, extensions=None)
    digests = [upload.sha256 for upload in uploads]
    if len(set(digests)) != len(digests):
        raise refusal("files", "The same file was given twice.", "duplicate_file")
    again = DatasetFile.objects.filter(sha256__in=digests, dataset__voided_at__isnull=True) \
        .select_related("dataset").first()
    if again is not None:
        raise refusal("files", f"{again.original_name} (sha256 {again.sha256[:12]}…) is already "
                               f"in {again.dataset.code}.", "duplicate_file")
    dataset = _save_new(Dataset(title=title, instrument=instrument, operator=operator,
                                acquired_on=acquired_on, notes=notes), actor=actor)
    dataset.substrates.set(substrates)
    stored = [DatasetFile(dataset=dataset, original_name=upload.name,
                          size_bytes=upload.size_bytes, sha256=upload.sha256)
              for upload in uploads]
    with files_removed_if_failed(*stored):
        for dataset_file, upload in zip(stored, uploads, strict=True):
            with upload.opened() as handle:  # copied by storage in chunks
                dataset_file.file.save(upload.name, handle, save=False)
            dataset_file.save()
        _link([(s, "measured on") for s in substrates], dataset, used_on=acquired_on,
              actor=actor)
        if consume_substrates:
            for substrate in substrates:
                if substrate.status == Status.RELEASED:
                    record_transition(actor=actor, record=substrate,
                                      to_status=Status.CONSUMED, reason=f"used for {dataset.code}")
    return dataset


def flag_check(*, actor: User | None, target: CodedRecord, category: str, message: str,
               many: CheckingMany | None = None) -> NewRecord:
    """Every rule of raising a flag, on the unsaved flag (with its code); no write.

    ``target`` may be a record checked in the same step and not written yet (its code is
    all a flag keeps).
    """
    _require_role(actor, MAKER, action="Raising a flag", many=many)
    if not message.strip():
        raise refusal("message", "Say what deviates.", "required")
    return NewRecord(_prepare_new(Flag(target_code=target.code, category=category,
                                       message=message), actor=actor, many=many))


@transaction.atomic
def flag_raise(*, actor: User | None, target: CodedRecord, category: str, message: str) -> Flag:
    """Record a deviation on any record; an open flag blocks readiness downstream."""
    return new_record_save(flag_check(actor=actor, target=target, category=category,
                                      message=message), actor=actor)


@transaction.atomic
def flag_resolve(*, actor: User | None, flag: Flag, resolution: str) -> Flag:
    require_role(actor, REVIEWER, action="Resolving a flag")
    flag = Flag.objects.select_for_update().get(pk=flag.pk)
    if flag.state != Flag.State.OPEN:
        raise refusal("state", f"{flag.code} is already resolved.", "resolved")
    if not resolution.strip():
        raise refusal("resolution", "Say how the deviation was resolved.", "required")
    flag.state = Flag.State.RESOLVED
    flag.resolution = resolution
    flag.resolved_by = actor
    flag.resolved_at = timezone.now()
    _save_changed(flag, actor=actor)
    return flag
