"""Colloid UV-vis QC (models): one record per spectrum, the lab's limits, a silver calibration.

Numbers are computed by qc.analysis at import (qc.services.colloid) and stored with units in
their names; absorbances marked ``_1cm`` are for the undiluted colloid in a 1 cm cell.
"""

from __future__ import annotations

from django.db import models
from django.db.models import F, Q

from inventory.models import CodedRecord, StampedRecord
from inventory.models.ranges import PastDate, Span, finite, positive, range_constraints

# UV-vis(-NIR) spectrometers cover about 175–3300 nm (common practice).
WAVELENGTH_NM = Span(150, 3300, "nm")
SIZE_NM = positive(1e4, "nm")
COLLOID_LIMIT_RANGES = {
    "peak_min_nm": WAVELENGTH_NM, "peak_max_nm": WAVELENGTH_NM,
    "fwhm_max_nm": positive(1000, "nm"), "peak_shift_max_nm": positive(500, "nm"),
    "absorbance_loss_max_fraction": positive(1), "aggregation_index_max": positive(100),
    "size_tolerance_percent": positive(100, "%"),
}
UVVIS_RANGES = {
    "measured_on": PastDate(),
    # Stock colloids are diluted at most about 1:10⁴ for a reading; cells are 0.01–10 cm.
    "dilution_factor": Span(1, 1e4), "path_length_cm": Span(0.001, 10, "cm"),
    "point_count": Span(2, 1e6), "wavelength_min_nm": WAVELENGTH_NM,
    "wavelength_max_nm": WAVELENGTH_NM, "peak_nm": WAVELENGTH_NM,
    "peak_absorbance_1cm": finite(1e9), "fwhm_nm": Span(0, 3300, "nm", computed=True),
    "half_width_blue_nm": finite(1e4, "nm"), "half_width_red_nm": finite(1e4, "nm"),
    "absorbance_450_1cm": finite(1e9), "ratio_spr_450": finite(), "aggregation_index": finite(),
    "haiss_ratio_diameter_nm": SIZE_NM, "haiss_peak_diameter_nm": SIZE_NM,
    "silver_table_diameter_nm": SIZE_NM, "diameter_nm": SIZE_NM,
    "number_per_mL": positive(1e25, "per mL", computed=True),
    "molar_concentration_M": positive(10, "mol/L", computed=True),
    "mie_median_diameter_nm": SIZE_NM, "mie_geometric_sigma": Span(1, 100, computed=True),
    "mie_number_per_mL": Span(0, 1e25, "per mL", computed=True),
    "mie_rms_residual": finite(), "mie_relative_residual": finite(),
    "mie_fit_min_nm": WAVELENGTH_NM, "mie_fit_max_nm": WAVELENGTH_NM,
    "size_difference_percent": finite(), "age_days": Span(0, 36_500, "days"),
    "peak_shift_nm": finite(1e4, "nm"), "absorbance_loss_fraction": finite(),
    "broadening_nm": finite(1e4, "nm"), "aggregation_index_change": finite(),
}

__all__ = ["ColloidLimitSet", "ColloidMetal", "SilverCalibration", "UvVisRecord"]


class ColloidMetal(models.TextChoices):
    SILVER = "Ag", "Silver"
    GOLD = "Au", "Gold"


class ColloidLimitSet(StampedRecord):
    """The lab's limits for colloids of one metal (edited by an administrator).

    ``is_example`` marks values shipped with the demo, which a lab must replace with its
    own.  ``flag_size_disagreement`` makes a Mie-versus-calibration size difference beyond
    the tolerance an open flag rather than only a note on the record.
    """

    RANGES = COLLOID_LIMIT_RANGES

    metal = models.CharField(max_length=4, choices=ColloidMetal.choices, unique=True)
    peak_min_nm = models.FloatField()
    peak_max_nm = models.FloatField()
    fwhm_max_nm = models.FloatField()
    peak_shift_max_nm = models.FloatField()
    absorbance_loss_max_fraction = models.FloatField()
    aggregation_index_max = models.FloatField()
    size_tolerance_percent = models.FloatField(default=15.0)
    flag_size_disagreement = models.BooleanField(default=False)
    is_example = models.BooleanField(default=False)
    rationale = models.TextField(blank=True)

    class Meta:
        constraints = [
            models.CheckConstraint(
                name="colloid_peak_window_ordered",
                condition=Q(peak_min_nm__gt=0) & Q(peak_min_nm__lt=F("peak_max_nm")),
            ),
            *range_constraints("colloid_limit", COLLOID_LIMIT_RANGES),
        ]

    def __str__(self) -> str:
        return f"{self.metal} colloid limits{' (example)' if self.is_example else ''}"


class SilverCalibration(StampedRecord):
    """The lab's own silver table: plasmon peak → mean diameter and molar extinction.

    ``rows`` is a list of ``[peak_nm, diameter_nm, extinction_M1cm1]``; ``provenance`` says
    where the numbers come from (e.g. the lab's TEM sizing series).  At most one table is
    active; without one, imports use the built-in Mie-derived table and say so.
    """

    name = models.CharField(max_length=120)
    provenance = models.TextField()
    rows = models.JSONField()
    is_active = models.BooleanField(default=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["is_active"], condition=Q(is_active=True),
                                    name="one_active_silver_calibration"),
            models.CheckConstraint(name="silver_calibration_has_provenance",
                                   condition=~Q(provenance="")),
        ]

    def __str__(self) -> str:
        return f"{self.name} ({len(self.rows)} rows)"


class UvVisRecord(CodedRecord):
    """One UV-vis spectrum of a colloid batch at a date, dilution and path length.

    The raw file (and optional blank) is kept as uploaded with its SHA-256 digest; every
    computed number is for the undiluted colloid in 1 cm.  Stability numbers compare this
    record with the batch's first (``first_record``; empty on the first record itself).
    The Mie curve is redrawn from the stored median, σ_g, N and fit range
    (qc.selectors.colloid.uvvis_record_get_curves).
    """

    CODE_PREFIX = "UV"
    RANGES = UVVIS_RANGES

    batch = models.ForeignKey("inventory.NanoparticleBatch", on_delete=models.PROTECT,
                              related_name="uvvis_records")
    measured_on = models.DateField()
    dilution_factor = models.FloatField(default=1.0)
    path_length_cm = models.FloatField(default=1.0)
    raw_file = models.FileField(upload_to="uvvis/")
    raw_file_name = models.CharField(max_length=255)
    raw_sha256 = models.CharField(max_length=64, db_index=True)
    blank_file = models.FileField(upload_to="uvvis/blanks/", blank=True)
    blank_sha256 = models.CharField(max_length=64, blank=True)
    point_count = models.PositiveIntegerField()
    wavelength_min_nm = models.FloatField()
    wavelength_max_nm = models.FloatField()

    # Plasmon band (qc.analysis.uvvis.measure_plasmon_band); empty when the spectrum has no
    # plasmon maximum (size_methods_note says why), which is kept and flagged for review.
    peak_nm = models.FloatField(null=True, blank=True)
    peak_u_nm = models.FloatField(null=True, blank=True,
                                  help_text="Standard uncertainty of the fitted peak position.")
    peak_absorbance_1cm = models.FloatField(null=True, blank=True)
    fwhm_nm = models.FloatField(null=True, blank=True)
    half_width_blue_nm = models.FloatField(null=True, blank=True)
    half_width_red_nm = models.FloatField(null=True, blank=True)
    fwhm_note = models.CharField(max_length=200, blank=True)
    absorbance_450_1cm = models.FloatField(null=True, blank=True)
    ratio_spr_450 = models.FloatField(null=True, blank=True)
    aggregation_index = models.FloatField(null=True, blank=True)
    size_methods_note = models.TextField(blank=True)

    # Gold: Haiss et al. (2007), ratio and peak-position methods.
    haiss_ratio_diameter_nm = models.FloatField(null=True, blank=True)
    haiss_ratio_diameter_u_nm = models.FloatField(null=True, blank=True)
    haiss_ratio_in_range = models.BooleanField(null=True, blank=True)
    haiss_ratio_is_estimate = models.BooleanField(null=True, blank=True)
    haiss_ratio_note = models.CharField(max_length=300, blank=True)
    haiss_peak_diameter_nm = models.FloatField(null=True, blank=True)
    haiss_peak_diameter_u_nm = models.FloatField(null=True, blank=True)
    haiss_peak_in_range = models.BooleanField(null=True, blank=True)
    haiss_peak_note = models.CharField(max_length=300, blank=True)

    # Silver: calibration table (the lab's own when active, else the built-in Mie table).
    silver_table_diameter_nm = models.FloatField(null=True, blank=True)
    silver_table_in_range = models.BooleanField(null=True, blank=True)
    silver_table_note = models.CharField(max_length=300, blank=True)
    silver_calibration = models.ForeignKey(SilverCalibration, null=True, blank=True,
                                           on_delete=models.PROTECT, related_name="records")
    calibration_source = models.TextField(blank=True)
    calibration_independent = models.BooleanField(
        null=True, blank=True,
        help_text="False when the calibration was computed with the same Mie model as the fit.")

    # The calibration size used for concentration and the Mie comparison.
    diameter_nm = models.FloatField(null=True, blank=True)
    diameter_u_nm = models.FloatField(null=True, blank=True)
    diameter_method = models.CharField(max_length=200, blank=True)
    number_per_mL = models.FloatField(null=True, blank=True)
    molar_concentration_M = models.FloatField(null=True, blank=True)
    concentration_note = models.CharField(max_length=300, blank=True)

    # Log-normal Mie fit (qc.analysis.mie_fit.fit_lognormal_mie).  At a bound of the
    # diameter search there is no size: the bound is kept in mie_diameter_bound_nm.
    mie_median_diameter_nm = models.FloatField(null=True, blank=True)
    mie_median_diameter_u_nm = models.FloatField(null=True, blank=True)
    mie_diameter_ci_low_nm = models.FloatField(null=True, blank=True)
    mie_diameter_ci_high_nm = models.FloatField(null=True, blank=True)
    mie_diameter_bound_nm = models.FloatField(null=True, blank=True)
    mie_geometric_sigma = models.FloatField(null=True, blank=True)
    mie_sigma_bound = models.CharField(max_length=8, blank=True)
    mie_fit_note = models.CharField(max_length=300, blank=True)
    mie_number_per_mL = models.FloatField(null=True, blank=True)
    mie_rms_residual = models.FloatField()
    mie_relative_residual = models.FloatField()
    mie_fit_min_nm = models.FloatField()
    mie_fit_max_nm = models.FloatField()
    size_difference_percent = models.FloatField(null=True, blank=True)
    sizes_agree = models.BooleanField(null=True, blank=True)
    size_agreement_message = models.CharField(max_length=300, blank=True)

    # Versus the batch's first record (qc.analysis.colloid_stability.compare_with_first).
    first_record = models.ForeignKey("self", null=True, blank=True, on_delete=models.PROTECT,
                                     related_name="+")
    age_days = models.IntegerField()
    peak_shift_nm = models.FloatField(null=True, blank=True)
    absorbance_loss_fraction = models.FloatField(null=True, blank=True)
    broadening_nm = models.FloatField(null=True, blank=True)
    aggregation_index_change = models.FloatField(null=True, blank=True)

    # Evaluation against the lab's limits at import time.
    limit_set = models.ForeignKey(ColloidLimitSet, null=True, blank=True,
                                  on_delete=models.PROTECT, related_name="records")
    # The version of that limit set which judged this spectrum: the set is changed in place
    # (a new version each time), and a later change never re-judges an earlier spectrum.
    limits_version = models.PositiveIntegerField(null=True, blank=True, editable=False)
    limits_note = models.CharField(max_length=300, blank=True)
    breaches = models.JSONField(default=list, blank=True)
    # Why the figures no longer follow from the batch as it is now recorded (its metal was
    # amended): they need the spectrum imported again.  Empty while current.
    stale_reason = models.TextField(blank=True, editable=False)

    class Meta:
        ordering = ["batch", "measured_on", "id"]
        constraints = [
            models.UniqueConstraint(
                fields=["batch", "raw_sha256"], name="uvvis_file_once_per_batch"
            ),
            *range_constraints("uvvis", UVVIS_RANGES),
        ]
