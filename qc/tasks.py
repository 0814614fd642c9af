"""Background tasks of the qc app, on Django's task interface (``django_tasks``, the backport
of Django 6's ``django.tasks``: moving to Django 6 changes only this import)."""

from __future__ import annotations

from django_tasks import task

from qc.services.background import qc_import_run


@task()
def analyse_qc_import(pending_id: str) -> str | None:
    """Read, analyse and judge one pending QC import; the measurement's code when written."""
    return qc_import_run(pending_id)
