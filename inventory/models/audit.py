"""Electronic signatures: who signed which record, meaning what, over which content."""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q


class SignatureQuerySet(models.QuerySet):
    """Signatures are written once; the ORM offers no way to change or remove them.

    The database backs this with triggers (migration 0003): UPDATE is refused on every
    backend, DELETE on PostgreSQL (SQLite's test flush deletes rows, so it keeps DELETE).
    """

    def update(self, **kwargs):
        raise TypeError("Signatures are immutable; they cannot be updated.")

    def delete(self):
        raise TypeError("Signatures are immutable; they cannot be deleted.")


class Signature(models.Model):
    """One electronic signature (DESIGN §7; in the spirit of 21 CFR Part 11 §11.50).

    The signer's printed name, the time, the meaning and the record are stored as text at
    the moment of signing, so renaming a user or changing the record later cannot alter
    what was signed.  ``content_json`` is the canonical JSON of the record's fields that
    were signed and ``content_sha256`` its digest (inventory.signatures.record_content).
    """

    record_code = models.CharField(max_length=24, db_index=True)
    record_kind = models.CharField(max_length=80)
    record_version = models.PositiveIntegerField()
    meaning = models.CharField(max_length=16)
    action = models.CharField(max_length=16)  # "release" or "reject"
    to_status = models.CharField(max_length=16)
    reason = models.TextField(blank=True)
    signer = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT,
                               related_name="+")
    signer_username = models.CharField(max_length=150)
    signer_name = models.CharField(max_length=300)
    signed_at = models.DateTimeField()
    content_json = models.TextField()
    content_sha256 = models.CharField(max_length=64)

    objects = SignatureQuerySet.as_manager()

    class Meta:
        ordering = ["signed_at", "id"]
        constraints = [
            models.CheckConstraint(name="signature_meaning_known",
                                   condition=Q(meaning__in=["reviewed", "approved", "rejected"])),
        ]

    def __str__(self) -> str:
        return (f"{self.record_code} {self.meaning} by {self.signer_name} "
                f"at {self.signed_at.isoformat(timespec='seconds')}")
