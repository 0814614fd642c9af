"""A sheet kept between its dry run and its confirmation, and removed once it is done with.

The page, the API and the cleanup command share these writes: ``sheet_upload_check`` runs
the dry run (``exchange.importer.import_sheet``, the one service every import goes through)
and keeps the file; ``sheet_upload_confirm`` imports it in one transaction and then deletes
the stored file; ``sheet_upload_abandon`` and ``sheet_uploads_clean`` (the
``clean_sheet_uploads`` command, run daily by cron) delete what nobody confirmed.  Files are
deleted only after the transaction commits, so a rolled-back confirmation keeps its file.
"""

from __future__ import annotations

from datetime import datetime, timedelta

from django.core.files.base import ContentFile
from django.db import transaction
from django.utils import timezone

from inventory.errors import refusal

from .import_report import ImportReport
from .importer import import_sheet
from .models import SheetUpload


def _delete_file_on_commit(upload: SheetUpload) -> None:
    name, storage = upload.file.name, upload.file.storage
    if name:
        transaction.on_commit(lambda: storage.delete(name))


def _require_owner(actor, upload: SheetUpload) -> None:
    if actor is None or upload.uploaded_by_id != actor.pk:
        raise refusal("upload", "Only the person who uploaded a sheet can confirm or abandon "
                                "it.", "not_your_upload")
    if upload.confirmed_at is not None:
        raise refusal("upload", f"{upload.file_name} was already imported.", "already_imported")


@transaction.atomic
def sheet_upload_check(*, actor, kind: str, file_name: str, content: bytes,
                       keep_when_rows_fail: bool = True,
                       ) -> tuple[SheetUpload | None, ImportReport]:
    """Dry-run a sheet and keep it for the confirmation; nothing else is saved.

    A sheet refused as a whole raises (nothing kept).  With ``keep_when_rows_fail=False``
    (the API) a sheet with row errors is not kept either: the caller sends a corrected one.
    """
    report = import_sheet(kind=kind, content=content, file_name=file_name, actor=actor,
                          commit=False)
    if not report.ok and not keep_when_rows_fail:
        return None, report
    upload = SheetUpload(kind=kind, file_name=file_name, uploaded_by=actor,
                         sha256=report.sha256)
    upload.file.save(f"{report.sha256}.upload", ContentFile(content), save=True)
    return upload, report


def sheet_upload_content(upload: SheetUpload) -> bytes:
    upload.file.open("rb")
    try:
        return upload.file.read()
    finally:
        upload.file.close()


def sheet_upload_recheck(*, actor, upload: SheetUpload,
                         mapping: dict[str, str] | None = None) -> ImportReport:
    """The dry run again (after the lab mapped its columns); saves nothing."""
    _require_owner(actor, upload)
    return import_sheet(kind=upload.kind, content=sheet_upload_content(upload),
                        file_name=upload.file_name, actor=actor, commit=False,
                        mapping=mapping)


@transaction.atomic
def sheet_upload_confirm(*, actor, upload: SheetUpload) -> ImportReport:
    """Import every row in one transaction (or none); once imported the file is deleted."""
    upload = SheetUpload.objects.select_for_update().get(pk=upload.pk)
    _require_owner(actor, upload)
    report = import_sheet(kind=upload.kind, content=sheet_upload_content(upload),
                          file_name=upload.file_name, actor=actor, commit=True)
    if report.committed:
        _delete_file_on_commit(upload)
        SheetUpload.objects.filter(pk=upload.pk).update(confirmed_at=timezone.now(), file="")
    return report


@transaction.atomic
def sheet_upload_abandon(*, actor, upload: SheetUpload) -> None:
    """Forget a sheet that will not be imported: its file and its row go."""
    _require_owner(actor, upload)
    _delete_file_on_commit(upload)
    upload.delete()


@transaction.atomic
def sheet_uploads_clean(*, older_than: timedelta, now: datetime | None = None) -> int:
    """Delete the uploads nobody confirmed within ``older_than``; returns how many."""
    cutoff = (now or timezone.now()) - older_than
    stale = list(SheetUpload.objects.filter(confirmed_at__isnull=True, uploaded_at__lt=cutoff))
    for upload in stale:
        _delete_file_on_commit(upload)
    SheetUpload.objects.filter(pk__in=[upload.pk for upload in stale]).delete()
    return len(stale)
