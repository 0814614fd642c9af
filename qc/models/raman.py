"""Reference-analyte Raman QC: the analyte, its non-enhanced reference, QC measurements, limits.

Raw files are kept exactly as uploaded with their SHA-256 digest; every number below is
computed from them by ``qc.analysis`` (through ``qc.services.raman``) and stored with its unit
in the field name.  Intensities normalised to laser power and exposure are counts/(mW·s).
"""

from __future__ import annotations

from django.db import models
from django.db.models import Q

from inventory.models import CodedRecord, StampedRecord, Substrate
from inventory.models.ranges import PastDate, Span, finite, positive, range_constraints

# Raman shifts of molecular bands lie within ±4000 cm⁻¹; excitation lasers run from deep UV
# (about 200 nm) to the near infrared (about 1100 nm) (common practice).
SHIFT_CM1 = Span(-5000, 5000, "cm⁻¹")
ANALYTE_RANGES = {
    "qc_band_cm1": positive(5000, "cm⁻¹"), "qc_band_window_cm1": positive(2000, "cm⁻¹"),
    "reference_band_cm1": positive(5000, "cm⁻¹"),
    # A close-packed thiol monolayer holds about 4–7 molecules per nm² (from memory).
    "surface_density_per_nm2": positive(20, "per nm²"),
}
ACQUISITION_RANGES = {
    "measured_on": PastDate(), "laser_nm": Span(200, 2000, "nm"),
    "power_mW": positive(5000, "mW"), "integration_s": positive(86_400, "s"),
    "accumulations": Span(1, 10_000), "band_center_cm1": SHIFT_CM1,
    "band_window_cm1": positive(2000, "cm⁻¹"),
    "band_position_cm1": Span(-5000, 5000, "cm⁻¹", computed=True),
    "band_fwhm_cm1": finite(1e6, "cm⁻¹"), "normalised_height_counts_per_mW_s": finite(),
    "normalised_height_u_counts_per_mW_s": finite(),
    "normalised_area_counts_cm1_per_mW_s": finite(),
    "normalised_area_u_counts_cm1_per_mW_s": finite(), "snr": finite(),
    "spikes_removed": Span(0, 1e9),
}
REFERENCE_RANGES = {
    **ACQUISITION_RANGES,
    "concentration_mol_L": positive(60, "mol/L"), "effective_height_um": positive(1e5, "µm"),
    "effective_area_um2": positive(1e8, "µm²"), "concentration_rel_u": Span(0, 10),
    "effective_height_rel_u": Span(0, 10),
}
QC_LIMIT_RANGES = {
    "min_enhancement_factor": positive(1e15), "max_rsd_percent": positive(1000, "%"),
    "min_snr": positive(1e6), "band_position_tolerance_cm1": positive(500, "cm⁻¹"),
    "valid_days": Span(1, 3650, "days"), "min_map_points": Span(2, 1e6),
}
QC_MEASUREMENT_RANGES = {
    **ACQUISITION_RANGES,
    "map_nx": Span(1, 10_000), "map_ny": Span(1, 10_000), "map_step_um": positive(1e5, "µm"),
    "n_points": Span(1, 1e7, computed=True), "median_height_counts_per_mW_s": finite(),
    "rsd_percent": Span(0, 1e6, "%", computed=True), "fraction_within_20_percent": Span(0, 1),
    # The largest single-molecule enhancement factors reported are about 10¹⁴ (from memory).
    "enhancement_factor": positive(1e20, computed=True),
    "enhancement_factor_u": Span(0, 1e21, computed=True),
    "log10_enhancement_factor": finite(100), "log10_enhancement_factor_u": finite(100),
    # Real over projected metal area: 1 for a flat film, up to a few hundred for rough metal.
    "surface_area_factor": Span(1, 1000), "surface_area_factor_u": Span(0, 1000),
}

__all__ = ["IntensityMeasure", "QcLimitSet", "QcMeasurement", "ReferenceAnalyte",
           "ReferenceMeasurement"]


class ReferenceAnalyte(StampedRecord):
    """A molecule used to test substrates (e.g. benzenethiol), and what is known about it.

    ``band_positions_cm1`` lists the Raman bands it is known by; ``band_positions_source``
    says where they come from ("from memory" when recalled, not looked up).  The QC band is
    the one measured; the window is the full width around it used for band metrics.
    ``reference_band_cm1`` is that mode in the non-enhanced (neat) analyte, for the
    reference measurement, when adsorption shifts it.
    ``lots`` are the reagent lots (kind reference analyte) that hold this molecule.
    """

    RANGES = ANALYTE_RANGES

    name = models.CharField(max_length=120, unique=True)
    band_positions_cm1 = models.JSONField(default=list)
    band_positions_source = models.CharField(max_length=200)
    qc_band_cm1 = models.FloatField()
    qc_band_window_cm1 = models.FloatField(default=40.0)
    reference_band_cm1 = models.FloatField(
        null=True, blank=True,
        help_text="The same mode in the non-enhanced analyte, when binding shifts it "
                  "(blank: the QC band).")
    surface_density_per_nm2 = models.FloatField(
        help_text="Molecules per nm² in a full monolayer, the default for enhancement factors.")
    surface_density_source = models.CharField(max_length=200)
    lots = models.ManyToManyField("inventory.ReagentLot", blank=True,
                                  related_name="reference_analytes")

    class Meta:
        constraints = [
            *range_constraints("analyte", ANALYTE_RANGES),
        ]

    def __str__(self) -> str:
        return self.name


class _Acquisition(models.Model):
    """Raw file and instrument settings shared by reference and QC measurements."""

    analyte = models.ForeignKey(ReferenceAnalyte, on_delete=models.PROTECT, related_name="+")
    analyte_lot = models.ForeignKey("inventory.ReagentLot", on_delete=models.PROTECT,
                                    related_name="+")
    measured_on = models.DateField(db_index=True)
    raw_file = models.FileField(upload_to="qc/raman/")
    raw_filename = models.CharField(max_length=255)
    raw_sha256 = models.CharField(max_length=64, db_index=True)
    laser_nm = models.FloatField()
    power_mW = models.FloatField()
    integration_s = models.FloatField()
    accumulations = models.PositiveIntegerField(default=1)
    objective = models.CharField(max_length=60, blank=True)
    band_center_cm1 = models.FloatField()
    band_window_cm1 = models.FloatField()
    # Computed from the file: the reference band fitted on the processed spectrum (for a
    # map, on its mean processed spectrum), intensities per mW of laser and s of exposure.
    band_position_cm1 = models.FloatField(editable=False)
    band_fwhm_cm1 = models.FloatField(editable=False)
    normalised_height_counts_per_mW_s = models.FloatField(editable=False)
    normalised_height_u_counts_per_mW_s = models.FloatField(null=True, blank=True,
                                                            editable=False)
    normalised_area_counts_cm1_per_mW_s = models.FloatField(editable=False)
    normalised_area_u_counts_cm1_per_mW_s = models.FloatField(null=True, blank=True,
                                                              editable=False)
    snr = models.FloatField(editable=False)
    spikes_removed = models.PositiveIntegerField(default=0, editable=False)
    # The arrays the pages draw (spectrum, band fit; for a map also the percentile spectra,
    # heat-map grid and a sample of baselines), written once at import as a compressed .npz
    # (qc.services.raman_results) with its SHA-256; empty for records made before it existed.
    results_file = models.FileField(upload_to="qc/results/", blank=True, editable=False)
    results_sha256 = models.CharField(max_length=64, blank=True, editable=False)

    class Meta:
        abstract = True


class ReferenceMeasurement(_Acquisition, CodedRecord):
    """Non-enhanced Raman of the analyte at a known concentration, for enhancement factors.

    ``effective_height_um`` (H_eff) and ``effective_area_um2`` (A_eff) describe the
    scattering volume of the optics used, as Le Ru et al. (2007) define them; the ``*_rel_u``
    fields are relative standard uncertainties (fractions) carried into the EF.
    """

    CODE_PREFIX = "REF"
    RANGES = REFERENCE_RANGES

    concentration_mol_L = models.FloatField()
    effective_height_um = models.FloatField()
    effective_area_um2 = models.FloatField()
    concentration_rel_u = models.FloatField(default=0.0)
    effective_height_rel_u = models.FloatField(default=0.0)

    class Meta:
        constraints = [
            *range_constraints("reference", REFERENCE_RANGES),
        ]


class IntensityMeasure(models.TextChoices):
    """Which band figure enhancement factors and uniformity use (labs report either)."""

    HEIGHT = "height", "Band height"
    AREA = "area", "Integrated band area"


class QcLimitSet(StampedRecord):
    """The lab's limits for one product kind (substrate stage) tested with one analyte.

    A limit set also says that QC is required for that product kind: readiness reports
    missing or stale QC only where a limit set exists.  ``min_enhancement_factor`` left
    empty means enhancement is not judged; ``max_rsd_percent`` applies to maps only.
    ``is_example`` marks shipped demo values that a lab must replace with its own.
    """

    RANGES = QC_LIMIT_RANGES

    product_kind = models.CharField(max_length=12, choices=Substrate.Stage.choices)
    analyte = models.ForeignKey(ReferenceAnalyte, on_delete=models.PROTECT,
                                related_name="limit_sets")
    min_enhancement_factor = models.FloatField(null=True, blank=True)
    max_rsd_percent = models.FloatField(null=True, blank=True)
    min_snr = models.FloatField(null=True, blank=True)
    band_position_tolerance_cm1 = models.FloatField()
    valid_days = models.PositiveIntegerField()
    # A map of fewer points fails the uniformity limit: its RSD says nothing.
    min_map_points = models.PositiveIntegerField(default=25)
    is_example = models.BooleanField(default=False)
    rationale = models.TextField(blank=True)
    intensity_measure = models.CharField(max_length=8, choices=IntensityMeasure.choices,
                                         default=IntensityMeasure.HEIGHT)

    class Meta:
        constraints = [
            models.CheckConstraint(name="limit_intensity_measure_known",
                                   condition=Q(intensity_measure__in=IntensityMeasure.values)),
            models.UniqueConstraint(fields=["product_kind", "analyte"],
                                    name="one_limit_set_per_kind_and_analyte"),
            *range_constraints("limit", QC_LIMIT_RANGES),
        ]

    def __str__(self) -> str:
        return f"{self.get_product_kind_display()} / {self.analyte}"

    def as_snapshot(self) -> dict:
        """The limit values as they were when a measurement was judged."""
        return {
            "limit_set_id": self.pk, "version": self.version, "product_kind": self.product_kind,
            "analyte": self.analyte.name, "min_enhancement_factor": self.min_enhancement_factor,
            "max_rsd_percent": self.max_rsd_percent, "min_snr": self.min_snr,
            "band_position_tolerance_cm1": self.band_position_tolerance_cm1,
            "valid_days": self.valid_days, "min_map_points": self.min_map_points,
            "is_example": self.is_example, "intensity_measure": self.intensity_measure,
        }


class QcMeasurement(_Acquisition, CodedRecord):
    """A reference-analyte spectrum or map on one substrate, its numbers and its verdict.

    ``product_kind`` is the substrate's stage when measured: QC of a bare film says nothing
    about the same piece after particles are bound.  ``point_values`` keeps, for a map, the
    stage positions (µm) and the normalised band height of every point (counts/(mW·s)),
    and for a full grid the heat-map image (rows = ascending y) with its axes; ``ef_inputs``
    keeps every input of the enhancement factor as used;
    ``limits_used`` the limits as they were when judged; ``failure_reasons`` why it failed.
    """

    CODE_PREFIX = "QCM"
    RANGES = QC_MEASUREMENT_RANGES

    substrate = models.ForeignKey("inventory.Substrate", on_delete=models.PROTECT,
                                  related_name="qc_measurements")
    reference = models.ForeignKey(ReferenceMeasurement, null=True, blank=True,
                                  on_delete=models.PROTECT, related_name="qc_measurements")
    limit_set = models.ForeignKey(QcLimitSet, on_delete=models.PROTECT,
                                  related_name="measurements")
    product_kind = models.CharField(max_length=12, choices=Substrate.Stage.choices)
    is_map = models.BooleanField(default=False)
    map_nx = models.PositiveIntegerField(null=True, blank=True)
    map_ny = models.PositiveIntegerField(null=True, blank=True)
    map_step_um = models.FloatField(null=True, blank=True)
    n_points = models.PositiveIntegerField(default=1, editable=False)
    median_height_counts_per_mW_s = models.FloatField(null=True, blank=True, editable=False)
    rsd_percent = models.FloatField(null=True, blank=True, editable=False)
    fraction_within_20_percent = models.FloatField(null=True, blank=True, editable=False)
    point_values = models.JSONField(null=True, blank=True, editable=False)
    # Whether point_values holds a full-grid heat-map: a column, so lists need not decode it.
    has_heatmap = models.BooleanField(default=False, editable=False)
    enhancement_factor = models.FloatField(null=True, blank=True, editable=False)
    enhancement_factor_u = models.FloatField(null=True, blank=True, editable=False)
    log10_enhancement_factor = models.FloatField(null=True, blank=True, editable=False)
    log10_enhancement_factor_u = models.FloatField(null=True, blank=True, editable=False)
    # Which band figure the EF and uniformity use, and the EF's surface-area factor with its
    # standard uncertainty and origin ("derived: …", "entered: <source>", "assumed 1 …").
    intensity_measure = models.CharField(max_length=8, choices=IntensityMeasure.choices,
                                         default=IntensityMeasure.HEIGHT, editable=False)
    surface_area_factor = models.FloatField(null=True, blank=True, editable=False)
    surface_area_factor_u = models.FloatField(null=True, blank=True, editable=False)
    surface_area_origin = models.CharField(max_length=400, blank=True, editable=False)
    ef_inputs = models.JSONField(null=True, blank=True, editable=False)
    limits_used = models.JSONField(default=dict, editable=False)
    passed = models.BooleanField(editable=False)
    # Why the EF is no longer current (the film geometry its derived surface-area factor
    # came from was amended); empty while it is.  Readiness treats a stale result as not passed.
    stale_reason = models.TextField(blank=True, editable=False)
    failure_reasons = models.JSONField(default=list, editable=False)

    class Meta:
        ordering = ["-measured_on", "-id"]
        indexes = [models.Index(fields=["substrate", "product_kind", "measured_on"])]
        constraints = [
            *range_constraints("qc", QC_MEASUREMENT_RANGES),
            models.CheckConstraint(name="qc_ef_has_surface_area_origin",
                                   condition=Q(enhancement_factor__isnull=True)
                                   | (Q(surface_area_factor__isnull=False)
                                      & ~Q(surface_area_origin=""))),
            models.CheckConstraint(name="qc_measurement_measure_known",
                                   condition=Q(intensity_measure__in=IntensityMeasure.values)),
        ]
