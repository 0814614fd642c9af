"""What the exchange app keeps: column mappings, sheet keys, uploads, figures from sheets,
digest preferences and calendar secrets.

Figures typed into a lab's old sheets (a UV-vis peak and absorbances, a QC result's EF and
RSD) have no instrument file behind them, so they are not ``UvVisRecord``/``QcMeasurement``
rows (whose numbers are computed from a kept file); they are kept here, marked as imported,
and never count as QC for release or readiness.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from inventory.models import StampedRecord


class ColumnMapping(models.Model):
    """A sheet header the lab mapped once to a field of a record kind (one lab per site)."""

    kind = models.CharField(max_length=32)
    header = models.CharField(max_length=200)  # normalised (exchange.kinds.normalise)
    field = models.CharField(max_length=64)  # "" = ignore this column
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, blank=True,
                                   on_delete=models.PROTECT, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["kind", "header"],
                                               name="one_mapping_per_kind_header")]


class SheetKey(models.Model):
    """The lab's own identifier of a row (its old lot number or code) -> the record made."""

    kind = models.CharField(max_length=32)
    key = models.CharField(max_length=120)
    record_code = models.CharField(max_length=24, db_index=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["kind", "key"], name="one_record_per_key")]


class SheetUpload(models.Model):
    """An uploaded sheet kept between its dry run and the confirmation."""

    kind = models.CharField(max_length=32)
    file = models.FileField(upload_to="exchange/uploads/")
    file_name = models.CharField(max_length=255)
    sha256 = models.CharField(max_length=64)
    uploaded_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT,
                                    related_name="+")
    uploaded_at = models.DateTimeField(auto_now_add=True)
    confirmed_at = models.DateTimeField(null=True, blank=True)


class SheetUvVisReading(StampedRecord):
    """A colloid's UV-vis reading typed in a sheet: peak and absorbances, sized at import.

    Sizes come from qc.services.colloid.uvvis_sizes_from_band, the same calibration code a
    spectrum file goes through (Haiss et al. 2007 for gold; the silver table for silver).
    """

    batch = models.ForeignKey("inventory.NanoparticleBatch", on_delete=models.PROTECT,
                              related_name="sheet_uvvis_readings")
    measured_on = models.DateField()
    peak_nm = models.FloatField()
    peak_absorbance_1cm = models.FloatField()
    absorbance_450_1cm = models.FloatField(null=True, blank=True)
    dilution_factor = models.FloatField(default=1.0)
    path_length_cm = models.FloatField(default=1.0)
    diameter_nm = models.FloatField(null=True, blank=True)
    diameter_method = models.CharField(max_length=200, blank=True)
    number_per_mL = models.FloatField(null=True, blank=True)
    molar_concentration_M = models.FloatField(null=True, blank=True)
    sizing_note = models.TextField(blank=True)
    source = models.TextField()

    class Meta:
        constraints = [
            models.CheckConstraint(name="sheet_uvvis_peak_range",
                                   condition=Q(peak_nm__gte=300) & Q(peak_nm__lte=1100)),
            models.CheckConstraint(name="sheet_uvvis_absorbance_positive",
                                   condition=Q(peak_absorbance_1cm__gt=0)
                                   & Q(peak_absorbance_1cm__lte=1000)),
            models.CheckConstraint(name="sheet_uvvis_a450_positive",
                                   condition=Q(absorbance_450_1cm__isnull=True)
                                   | (Q(absorbance_450_1cm__gt=0)
                                      & Q(absorbance_450_1cm__lte=1000))),
            models.CheckConstraint(name="sheet_uvvis_dilution_at_least_one",
                                   condition=Q(dilution_factor__gte=1)),
            models.CheckConstraint(name="sheet_uvvis_path_positive",
                                   condition=Q(path_length_cm__gt=0) & Q(path_length_cm__lte=10)),
        ]


class ImportedQcResult(StampedRecord):
    """A historical QC result (EF, RSD, verdict) typed in a sheet; an imported figure only.

    It shows in the substrate's history and exports, but release and readiness read QC
    measurements computed from spectra (qc.readiness), never these.
    """

    # Kept as the sheet gave it: a sheet row with other figures is refused, not amended.
    AMENDABLE_FIELDS = frozenset()

    class Verdict(models.TextChoices):
        PASSED = "passed", "Passed"
        FAILED = "failed", "Failed"

    substrate = models.ForeignKey("inventory.Substrate", on_delete=models.PROTECT,
                                  related_name="imported_qc_results")
    measured_on = models.DateField()
    enhancement_factor = models.FloatField(null=True, blank=True)
    rsd_percent = models.FloatField(null=True, blank=True)
    verdict = models.CharField(max_length=8, choices=Verdict.choices)
    analyte = models.CharField(max_length=120, blank=True)
    laser_nm = models.FloatField(null=True, blank=True)
    notes = models.TextField(blank=True)
    source = models.TextField()

    class Meta:
        constraints = [
            models.CheckConstraint(name="imported_qc_ef_range",
                                   condition=Q(enhancement_factor__isnull=True)
                                   | (Q(enhancement_factor__gte=1)
                                      & Q(enhancement_factor__lte=1e15))),
            models.CheckConstraint(name="imported_qc_rsd_range",
                                   condition=Q(rsd_percent__isnull=True)
                                   | (Q(rsd_percent__gte=0) & Q(rsd_percent__lte=1000))),
            models.CheckConstraint(name="imported_qc_laser_range",
                                   condition=Q(laser_nm__isnull=True)
                                   | (Q(laser_nm__gte=200) & Q(laser_nm__lte=2000))),
        ]


class DigestPreference(models.Model):
    """Whether a person wants the daily digest, and where it goes (default: their e-mail)."""

    user = models.OneToOneField(settings.AUTH_USER_MODEL, on_delete=models.CASCADE,
                                related_name="digest_preference")
    daily_digest = models.BooleanField(default=False)
    email = models.EmailField(blank=True)
    last_sent_on = models.DateField(null=True, blank=True)


class CalendarSecret(models.Model):
    """A per-person calendar feed URL secret; only its SHA-256 is kept, so it can be revoked."""

    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE,
                             related_name="calendar_secrets")
    secret_sha256 = models.CharField(max_length=64, unique=True)
    created_at = models.DateTimeField(auto_now_add=True)
    revoked_at = models.DateTimeField(null=True, blank=True)
