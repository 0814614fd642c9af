"""Datasets, lineage edges and flags: records about other records."""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import F, Q

from .base import CodedRecord
from .ranges import PastDate, range_constraints

DATASET_RANGES = {"acquired_on": PastDate()}


class Dataset(CodedRecord):
    """Data produced on one or more substrates, with its files' SHA-256 digests."""

    CODE_PREFIX = "DS"
    RANGES = DATASET_RANGES
    AMENDABLE_FIELDS = frozenset(("title", "instrument", "operator", "acquired_on", "notes"))

    title = models.CharField(max_length=200)
    instrument = models.CharField(max_length=120, blank=True)
    operator = models.CharField(max_length=120, blank=True)
    acquired_on = models.DateField()
    substrates = models.ManyToManyField("inventory.Substrate", related_name="datasets")

    class Meta:
        constraints = range_constraints("dataset", DATASET_RANGES)


class DatasetFile(models.Model):
    dataset = models.ForeignKey(Dataset, on_delete=models.PROTECT, related_name="files")
    file = models.FileField(upload_to="datasets/")
    original_name = models.CharField(max_length=255)
    size_bytes = models.PositiveBigIntegerField()
    sha256 = models.CharField(max_length=64, db_index=True)
    added_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["dataset", "sha256"], name="dataset_file_once"),
        ]

    def __str__(self) -> str:
        return f"{self.original_name} ({self.sha256[:12]})"


class LineageEdge(models.Model):
    """``parent_code`` was used to make ``child_code``; who recorded it and when.

    Edges are keyed by record codes so one table spans every record kind of every app, and
    a recursive query walks the whole graph in one statement (inventory.lineage).
    ``used_on`` is the date of the child step, for "was the input already expired?".
    """

    parent_code = models.CharField(max_length=24, db_index=True)
    child_code = models.CharField(max_length=24, db_index=True)
    role = models.CharField(max_length=40)
    used_on = models.DateField()
    created_at = models.DateTimeField(auto_now_add=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, blank=True,
                                   on_delete=models.PROTECT, related_name="+")

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["parent_code", "child_code", "role"],
                                    name="lineage_edge_once"),
            models.CheckConstraint(name="lineage_no_self_loop",
                                   condition=~Q(parent_code=F("child_code"))),
        ]

    def __str__(self) -> str:
        return f"{self.parent_code} -[{self.role}]-> {self.child_code}"


class Flag(CodedRecord):
    """A deviation on any record: what, why, who raised it, who resolved it and how."""

    CODE_PREFIX = "FLG"

    class State(models.TextChoices):
        OPEN = "open", "Open"
        RESOLVED = "resolved", "Resolved"

    target_code = models.CharField(max_length=24, db_index=True)
    category = models.CharField(max_length=40)
    message = models.TextField()
    state = models.CharField(max_length=10, choices=State.choices, default=State.OPEN,
                             db_index=True)
    resolved_by = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, blank=True,
                                    on_delete=models.PROTECT, related_name="+")
    resolved_at = models.DateTimeField(null=True, blank=True)
    resolution = models.TextField(blank=True)

    class Meta:
        indexes = [models.Index(fields=["target_code", "state"])]
        constraints = [
            models.CheckConstraint(
                name="flag_resolution_recorded",
                condition=Q(state="open") | (Q(resolved_at__isnull=False) & ~Q(resolution="")),
            ),
        ]


class StatusChange(models.Model):
    """One lifecycle transition of a coded record, with who, when and why."""

    record_code = models.CharField(max_length=24, db_index=True)
    from_status = models.CharField(max_length=16)
    to_status = models.CharField(max_length=16)
    reason = models.TextField(blank=True)
    changed_at = models.DateTimeField(auto_now_add=True)
    changed_by = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, blank=True,
                                   on_delete=models.PROTECT, related_name="+")

    class Meta:
        ordering = ["changed_at", "id"]

    def __str__(self) -> str:
        return f"{self.record_code}: {self.from_status} -> {self.to_status}"
