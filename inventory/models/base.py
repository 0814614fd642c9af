"""Abstract bases: who/when stamps, human-readable codes, lifecycle status and expiry."""

from __future__ import annotations

from typing import ClassVar

from django.conf import settings
from django.db import models
from simple_history.models import HistoricalRecords


class Status(models.TextChoices):
    """Lifecycle of a material record (trade terms: quarantine, release, reject)."""

    QUARANTINE = "quarantine", "Quarantine (awaiting QC)"
    RELEASED = "released", "Released"
    REJECTED = "rejected", "Rejected"
    CONSUMED = "consumed", "Consumed"
    DISPOSED = "disposed", "Disposed"


class StampedRecord(models.Model):
    """Created/updated timestamps, who did it, and a version for conflict detection."""

    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT,
        related_name="+",
    )
    updated_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT,
        related_name="+",
    )
    version = models.PositiveIntegerField(default=1, editable=False)
    # Finite, physical range of each number and date (inventory.models.ranges): checked by
    # the services before saving and by the CHECK constraints each kind builds from it.
    RANGES: ClassVar[dict] = {}
    # Every create and change of every concrete subclass, with who, when and the reason
    # (django-simple-history; read through inventory.selectors.record_get_history).
    # Reasons are sentences (a QC failure summary can be long): text, not varchar(100).
    history = HistoricalRecords(inherit=True,
                                history_change_reason_field=models.TextField(null=True))

    class Meta:
        abstract = True


class CodedRecord(StampedRecord):
    """A record with a lab-readable code such as ``SUB-00042``.

    ``CODE_PREFIX`` is unique per model; the code registry finds every model that declares
    one, which is how lineage and readiness resolve a code without knowing the app.
    """

    CODE_PREFIX: ClassVar[str] = ""
    # What ``record_amend`` may change, declared by each kind (one place per kind): plain
    # values the maker typed.  Codes, states, expiry, owners, links to other records and
    # computed figures are never listed; tests/integrity/test_amend_whitelist.py checks.
    AMENDABLE_FIELDS: ClassVar[frozenset[str]] = frozenset({"notes"})

    code = models.CharField(max_length=24, unique=True, editable=False)
    notes = models.TextField(blank=True)
    # Nothing is deleted: a record made in error is voided with a reason (record_void) and
    # stays in lineage and history, but is no longer usable or ready.
    voided_at = models.DateTimeField(null=True, blank=True, editable=False)
    voided_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT,
        related_name="+", editable=False,
    )
    void_reason = models.TextField(blank=True, editable=False)

    class Meta:
        abstract = True

    @property
    def is_voided(self) -> bool:
        return self.voided_at is not None

    def __str__(self) -> str:
        return self.code


class LifecycleRecord(CodedRecord):
    """A material that goes through quarantine and release and may expire."""

    status = models.CharField(
        max_length=16, choices=Status.choices, default=Status.QUARANTINE, db_index=True
    )
    # Derived by inventory.shelf_life from the dates and the lab's rules; never typed.
    expires_on = models.DateField(null=True, blank=True, editable=False, db_index=True)
    storage = models.ForeignKey(
        "inventory.StorageLocation", null=True, blank=True, on_delete=models.PROTECT,
        related_name="+",
    )

    class Meta:
        abstract = True
