"""QC imports analysed in the background, on Django's task interface (django-tasks backport).

``qc_measurement_submit`` analyses a small file at once, as ``qc_measurement_import`` does;
a file over ``SERSLEDGER_INLINE_ANALYSIS_BYTES`` is checked (everything that needs no
parsing), kept as a ``QcImport`` and handed to a worker (``qc.tasks.analyse_qc_import``).
The worker claims it with one conditional UPDATE, so two workers never analyse one import
at the same time, and writes the measurement in one transaction under a row lock that
re-checks nothing was written already, so none is written twice.  A worker that dies
mid-way leaves the import pending; after ``SERSLEDGER_ANALYSIS_LEASE_S`` another run (the
worker's retry, or ``manage.py resume_qc_imports``) claims it and completes it.  A refused
file marks the import failed with the refusal, field by field, and saves no measurement.
"""

from __future__ import annotations

import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import fields
from datetime import date, timedelta

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from inventory.models import ReagentLot, Substrate
from inventory.services.toolkit import User, files_removed_if_failed, stored_file_on_disk

from ..models import QcImport, QcMeasurement, ReferenceAnalyte, ReferenceMeasurement
from .raman import (
    QcImportRequest,
    qc_import_analyse,
    qc_import_check,
    qc_import_record,
    qc_measurement_import,
    refuse_qc_reimport,
)
from .raman_analysis import FILE_FIELD, read_upload_checks

__all__ = ["qc_import_run", "qc_imports_resume", "qc_measurement_submit", "request_of"]

# Share of the work done when each state begins (parsing is about a tenth of the analysis).
PROGRESS_AT = {QcImport.State.QUEUED: 0, QcImport.State.PARSING: 5,
               QcImport.State.ANALYSING: 20, QcImport.State.JUDGING: 90,
               QcImport.State.DONE: 100}
_RECORDS = {"substrate": Substrate, "analyte_lot": ReagentLot,
            "reference": ReferenceMeasurement, "analyte": ReferenceAnalyte}


def _parameters_of(request: QcImportRequest) -> dict:
    """The request as JSON: records by primary key, the date in ISO form, no file content."""
    stored = {}
    for item in fields(request):
        if item.name in ("content", "filename", "upload"):
            continue
        value = getattr(request, item.name)
        if item.name in _RECORDS:
            value = None if value is None else value.pk
        elif isinstance(value, date):
            value = value.isoformat()
        stored[item.name] = value
    return stored


@contextmanager
def request_of(pending: QcImport) -> Iterator[QcImportRequest]:
    """The pending import as a request: its stored upload by path, with the digest taken
    when it was received (the worker neither holds the file in memory nor hashes it again)."""
    values = dict(pending.parameters)
    for name, model in _RECORDS.items():
        values[name] = None if values.get(name) is None else model.objects.get(pk=values[name])
    values["measured_on"] = date.fromisoformat(values["measured_on"])
    with stored_file_on_disk(pending.upload, name=pending.upload_filename,
                             sha256=pending.upload_sha256) as upload:
        yield QcImportRequest(upload=upload, **values)


def _refuse_pending_duplicate(substrate: Substrate, digest: str) -> None:
    waiting = QcImport.objects.filter(substrate=substrate, upload_sha256=digest,
                                      state__in=QcImport.PENDING).first()
    if waiting is not None:
        raise ValidationError({FILE_FIELD: ValidationError(
            f"This file (sha256 {digest[:12]}…) is already being analysed for "
            f"{substrate.code}.", code="duplicate_file")})


@transaction.atomic
def qc_measurement_submit(*, actor: User | None, request: QcImportRequest | None = None,
                          **parameters) -> QcMeasurement | QcImport:
    """A judged ``QcMeasurement`` for a small file; a queued ``QcImport`` for a big one."""
    request = request or QcImportRequest(**parameters)
    upload = request.upload
    if upload.size_bytes <= settings.SERSLEDGER_INLINE_ANALYSIS_BYTES:
        return qc_measurement_import(actor=actor, request=request)
    checked = qc_import_check(actor=actor, request=request)
    if request.reference is not None:
        # The EF's surface area needs no file: refuse it now (400), not from the worker.
        request.coverage(checked.analyte, checked.substrate)
    read_upload_checks(request)
    refuse_qc_reimport(checked.substrate, upload.sha256, shared=request.shared_measurement)
    _refuse_pending_duplicate(checked.substrate, upload.sha256)
    pending = QcImport(created_by=actor, substrate=checked.substrate,
                       parameters=_parameters_of(request), upload_filename=request.filename,
                       upload_sha256=upload.sha256, upload_bytes=upload.size_bytes)
    with files_removed_if_failed(pending):
        with upload.opened() as handle:  # stored from disk in chunks
            pending.upload.save(request.filename, handle, save=False)
        pending.full_clean()
        pending.save()
    _enqueue_on_commit(pending)
    return pending


def _enqueue_on_commit(pending: QcImport) -> None:
    from qc.tasks import analyse_qc_import  # the task module imports this one

    transaction.on_commit(lambda: analyse_qc_import.enqueue(str(pending.pk)))


def _claim(pending_id, worker: str) -> bool:
    """Take the import for this worker if nobody holds it (or a holder's lease ran out)."""
    stale = timezone.now() - timedelta(seconds=settings.SERSLEDGER_ANALYSIS_LEASE_S)
    free = Q(state=QcImport.State.QUEUED) | Q(state__in=QcImport.RUNNING, claimed_at__lt=stale)
    return bool(QcImport.objects.filter(free, pk=pending_id, measurement__isnull=True).update(
        state=QcImport.State.PARSING, progress_percent=PROGRESS_AT[QcImport.State.PARSING],
        claimed_at=timezone.now(), claimed_by=worker, error=None))


def _report(pending_id, worker: str, state: str) -> None:
    """Record progress (autocommit, so pages see it while the analysis runs)."""
    QcImport.objects.filter(pk=pending_id, claimed_by=worker).update(
        state=state, progress_percent=PROGRESS_AT[state], claimed_at=timezone.now())


def _fail(pending_id, worker: str, error: dict) -> None:
    QcImport.objects.filter(pk=pending_id, claimed_by=worker).update(
        state=QcImport.State.FAILED, error=error, finished_at=timezone.now())


def _refusal_as_json(error: ValidationError) -> dict:
    if hasattr(error, "error_dict"):
        return {field: [str(m) for e in errors for m in e.messages]
                for field, errors in error.error_dict.items()}
    return {"non_field_errors": list(error.messages)}


def qc_import_run(pending_id, *, worker: str | None = None) -> str | None:
    """Analyse and judge one pending import; the measurement's code, or None if not ours.

    Returns None when another worker holds the import or it is finished already.
    """
    worker = worker or uuid.uuid4().hex
    if not _claim(pending_id, worker):
        return None
    pending = QcImport.objects.select_related("created_by").get(pk=pending_id)
    QcImport.objects.filter(pk=pending_id).update(attempts=pending.attempts + 1)
    try:
        with request_of(pending) as request:
            measurement = _analyse_and_record(pending_id, worker, request, pending.created_by)
        if measurement is None:
            return None  # another worker took over after our lease ran out and finished
    except ValidationError as error:
        _fail(pending_id, worker, _refusal_as_json(error))
        return None
    except (QcImport.DoesNotExist, Substrate.DoesNotExist, ReagentLot.DoesNotExist,
            ReferenceMeasurement.DoesNotExist, ReferenceAnalyte.DoesNotExist, OSError) as error:
        _fail(pending_id, worker, {"non_field_errors": [f"The import cannot be analysed: "
                                                        f"{error}"]})
        return None
    except Exception as error:  # a defect: say so on the import, and let the worker log it
        _fail(pending_id, worker, {"non_field_errors": [
            f"The analysis stopped unexpectedly ({type(error).__name__}); nothing was saved. "
            "Tell the lab's administrator."]})
        raise
    if pending.upload:
        pending.upload.delete(save=False)  # the measurement keeps its own copy of the file
        QcImport.objects.filter(pk=pending_id).update(upload="")
    return measurement.code


def _analyse_and_record(pending_id, worker: str, request: QcImportRequest,
                        actor: User | None) -> QcMeasurement | None:
    with transaction.atomic():  # the checks lock their rows (PostgreSQL needs a transaction)
        checked = qc_import_check(actor=actor, request=request)
    is_map, band = qc_import_analyse(
        request, checked, progress=lambda state: _report(pending_id, worker, state))
    _report(pending_id, worker, QcImport.State.JUDGING)
    with transaction.atomic():
        locked = QcImport.objects.select_for_update().get(pk=pending_id)
        if locked.measurement_id is not None or locked.claimed_by != worker:
            return None
        checked = qc_import_check(actor=actor, request=request)  # inputs re-read, locked
        refuse_qc_reimport(checked.substrate, request.upload.sha256,
                           shared=request.shared_measurement)
        measurement = qc_import_record(actor=actor, request=request, checked=checked,
                                       is_map=is_map, band=band)
        locked.measurement = measurement
        locked.state, locked.progress_percent = QcImport.State.DONE, 100
        locked.finished_at = timezone.now()
        locked.save(update_fields=["measurement", "state", "progress_percent", "finished_at"])
    return measurement


def qc_imports_resume() -> int:
    """Hand every pending import whose worker went quiet (or never came) to a worker again."""
    stale = timezone.now() - timedelta(seconds=settings.SERSLEDGER_ANALYSIS_LEASE_S)
    waiting = QcImport.objects.filter(
        Q(state=QcImport.State.QUEUED) | Q(state__in=QcImport.RUNNING, claimed_at__lt=stale),
        measurement__isnull=True)
    from qc.tasks import analyse_qc_import

    count = 0
    for pending_id in waiting.values_list("pk", flat=True):
        analyse_qc_import.enqueue(str(pending_id))
        count += 1
    return count
