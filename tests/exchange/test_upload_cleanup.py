"""Uploaded sheets do not pile up: abandoned ones are deleted by clean_sheet_uploads."""

from __future__ import annotations

from datetime import timedelta

import pytest
from django.core.management import call_command
from django.utils import timezone

from exchange.models import SheetUpload
from exchange.uploads import sheet_upload_check

from .sheets import csv_bytes

pytestmark = pytest.mark.django_db

ROWS = [["Material", "Nominal diameter (nm)", "Solids (%)", "Received on"],
        ["polystyrene", 600, 10, "2026-05-01"]]


def _upload(maker, age_days: int) -> SheetUpload:
    upload, _report = sheet_upload_check(actor=maker, kind="sphere_lots", file_name="lots.csv",
                                         content=csv_bytes(ROWS))
    SheetUpload.objects.filter(pk=upload.pk).update(
        uploaded_at=timezone.now() - timedelta(days=age_days))
    return upload


def test_the_command_deletes_abandoned_uploads_older_than_n_days(
        maker, today, django_capture_on_commit_callbacks):
    old, recent = _upload(maker, age_days=10), _upload(maker, age_days=1)
    confirmed = _upload(maker, age_days=30)
    SheetUpload.objects.filter(pk=confirmed.pk).update(confirmed_at=timezone.now(), file="")
    storage = old.file.storage
    with django_capture_on_commit_callbacks(execute=True):
        call_command("clean_sheet_uploads", "--days", "7")
    assert set(SheetUpload.objects.values_list("pk", flat=True)) == {recent.pk, confirmed.pk}
    assert not storage.exists(old.file.name)
    assert storage.exists(recent.file.name)
