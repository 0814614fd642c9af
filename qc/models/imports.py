"""A QC import waiting for (or in) background analysis: the pending measurement.

An upload too big to analyse inside the request is kept here with its parameters until a
worker has read, analysed and judged it; only then does a ``QcMeasurement`` exist, written in
one transaction.  So a pending import can never be released or counted as QC by readiness,
and a failed one leaves its error here and no measurement behind.
"""

from __future__ import annotations

import uuid

from django.conf import settings
from django.db import models
from django.db.models import Q

__all__ = ["QcImport"]


class QcImport(models.Model):
    """One background QC import: who asked, with what, how far it got, and the result."""

    class State(models.TextChoices):
        QUEUED = "queued", "Waiting for a worker"
        PARSING = "parsing", "Reading the file"
        ANALYSING = "analysing", "Analysing the spectra"
        JUDGING = "judging", "Judging against the limits"
        DONE = "done", "Judged"
        FAILED = "failed", "Failed"

    RUNNING = (State.PARSING, State.ANALYSING, State.JUDGING)
    PENDING = (State.QUEUED, *RUNNING)

    id = models.UUIDField(primary_key=True, default=uuid.uuid4, editable=False)
    created_at = models.DateTimeField(auto_now_add=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, blank=True,
                                   on_delete=models.PROTECT, related_name="+")
    substrate = models.ForeignKey("inventory.Substrate", on_delete=models.PROTECT,
                                  related_name="pending_qc_imports")
    parameters = models.JSONField(help_text="The import's parameters, records by primary key.")
    upload = models.FileField(upload_to="qc/pending/", blank=True)
    upload_filename = models.CharField(max_length=255)
    upload_sha256 = models.CharField(max_length=64)
    upload_bytes = models.PositiveBigIntegerField()
    state = models.CharField(max_length=10, choices=State.choices, default=State.QUEUED)
    progress_percent = models.PositiveSmallIntegerField(default=0)
    claimed_at = models.DateTimeField(null=True, blank=True)
    claimed_by = models.CharField(max_length=64, blank=True)
    attempts = models.PositiveSmallIntegerField(default=0)
    finished_at = models.DateTimeField(null=True, blank=True)
    error = models.JSONField(null=True, blank=True, help_text="The refusal, field by field.")
    measurement = models.OneToOneField("qc.QcMeasurement", null=True, blank=True,
                                       on_delete=models.PROTECT, related_name="pending_import")

    class Meta:
        ordering = ["-created_at"]
        indexes = [models.Index(fields=["substrate", "state"])]
        constraints = [
            models.CheckConstraint(name="qc_import_progress_range",
                                   condition=Q(progress_percent__lte=100)),
            models.CheckConstraint(name="qc_import_done_has_measurement",
                                   condition=~Q(state="done") | Q(measurement__isnull=False)),
        ]

    def __str__(self) -> str:
        return f"QC import of {self.upload_filename} ({self.get_state_display()})"

    @property
    def is_pending(self) -> bool:
        return self.state in self.PENDING
