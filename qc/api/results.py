"""What a QC or UV-vis import computed, as one JSON object (API response and CLI --json).

``qc_measurement_summary`` and ``uvvis_import_summary`` shape the service results with the
keys the ``import_qc --json`` and ``import_uvvis --json`` commands print; the serializers
document those shapes, with units, for the OpenAPI schema.
"""

from __future__ import annotations

from django.urls import reverse
from rest_framework import serializers

from inventory.api.results import FlagItem, flag_items
from inventory.api.units import DocumentedFields
from inventory.flags import flags_open
from inventory.uncertainty_format import format_with_uncertainty
from qc.models import QcImport, QcMeasurement
from qc.services.colloid import UvVisImport
from qc.services.raman_release import FLAG_CATEGORY

# UvVisRecord fields an import reports, in the order a person reads them.
UVVIS_SHOWN = (
    "peak_nm", "peak_u_nm", "peak_absorbance_1cm", "fwhm_nm", "absorbance_450_1cm", "ratio_spr_450",
    "aggregation_index", "diameter_nm", "diameter_method", "calibration_source",
    "diameter_u_nm", "size_methods_note",
    "haiss_ratio_diameter_nm", "haiss_ratio_diameter_u_nm", "haiss_peak_diameter_nm",
    "haiss_peak_diameter_u_nm", "silver_table_diameter_nm", "calibration_independent",
    "number_per_mL", "molar_concentration_M", "mie_median_diameter_nm",
    "mie_median_diameter_u_nm", "mie_diameter_ci_low_nm", "mie_diameter_ci_high_nm",
    "mie_diameter_bound_nm", "mie_fit_note", "mie_geometric_sigma",
    "mie_number_per_mL", "mie_relative_residual", "size_difference_percent", "sizes_agree",
    "size_agreement_message", "age_days", "peak_shift_nm", "absorbance_loss_fraction",
    "broadening_nm", "aggregation_index_change", "limits_note",
)


def qc_measurement_summary(m: QcMeasurement) -> dict:
    """The stored figures, verdict and the open QC flag this measurement raised."""
    m.substrate.refresh_from_db()
    flags = flags_open(target_codes=[m.substrate.code], category=FLAG_CATEGORY,
                       mentioning=m.code)
    return {
        "measurement": m.code, "substrate": m.substrate.code,
        "substrate_status": m.substrate.status, "file": m.raw_filename, "sha256": m.raw_sha256,
        "measured_on": m.measured_on.isoformat(), "is_map": m.is_map, "n_points": m.n_points,
        "band_position_cm1": m.band_position_cm1, "band_fwhm_cm1": m.band_fwhm_cm1,
        "normalised_height_counts_per_mW_s": m.normalised_height_counts_per_mW_s,
        "snr": m.snr, "rsd_percent": m.rsd_percent,
        "fraction_within_20_percent": m.fraction_within_20_percent,
        "enhancement_factor": m.enhancement_factor,
        "enhancement_factor_u": m.enhancement_factor_u,
        "log10_enhancement_factor": m.log10_enhancement_factor,
        "enhancement_factor_text": format_with_uncertainty(m.enhancement_factor,
                                                           m.enhancement_factor_u),
        "intensity_measure": m.intensity_measure,
        "surface_area_factor": m.surface_area_factor,
        "surface_area_factor_u": m.surface_area_factor_u,
        "surface_area_factor_text": format_with_uncertainty(m.surface_area_factor,
                                                            m.surface_area_factor_u),
        "surface_area_origin": m.surface_area_origin,
        "passed": m.passed, "failure_reasons": list(m.failure_reasons),
        "limits": m.limits_used, "flags": flag_items(flags),
    }


def uvvis_import_summary(result: UvVisImport) -> dict:
    uv = result.record
    return {
        "record": uv.code, "batch": uv.batch.code, "metal": uv.batch.metal,
        "measured_on": uv.measured_on.isoformat(), "duplicate": result.duplicate,
        "sha256": uv.raw_sha256, **{name: getattr(uv, name) for name in UVVIS_SHOWN},
        "diameter_text": format_with_uncertainty(uv.diameter_nm, uv.diameter_u_nm, "nm"),
        "mie_median_diameter_text": format_with_uncertainty(
            uv.mie_median_diameter_nm, uv.mie_median_diameter_u_nm, "nm"),
        "peak_text": format_with_uncertainty(uv.peak_nm, uv.peak_u_nm, "nm"),
        "breaches": list(result.breaches),
        "flags_raised": [flag.code for flag in result.flags_raised],
    }


def _float(text: str = "", *, null: bool = True) -> serializers.FloatField:
    return serializers.FloatField(allow_null=null, help_text=text)


class QcResult(DocumentedFields, serializers.Serializer):
    measurement = serializers.CharField(help_text="Code of the stored QC measurement.")
    substrate = serializers.CharField(help_text="Code of the substrate measured.")
    substrate_status = serializers.CharField(help_text="Its status after the import (a failed "
                                                       "QC puts it back in quarantine).")
    file = serializers.CharField(help_text="The file's name as uploaded.")
    sha256 = serializers.CharField(help_text="SHA-256 digest of the file (hex).")
    measured_on = serializers.DateField()
    is_map = serializers.BooleanField()
    n_points = serializers.IntegerField()
    band_position_cm1 = _float("Fitted position of the QC band.", null=False)
    band_fwhm_cm1 = _float("Fitted full width at half maximum of the QC band.", null=False)
    normalised_height_counts_per_mW_s = _float("QC band height (mean spectrum of a map).",
                                               null=False)
    snr = _float("Signal-to-noise ratio of the band.", null=False)
    rsd_percent = _float("Uniformity: RSD of the band height over the map.")
    fraction_within_20_percent = _float("Share of map points within ±20 % of the median.")
    enhancement_factor = _float("Substrate enhancement factor (Le Ru et al., J. Phys. Chem. C "
                                "2007).")
    enhancement_factor_u = _float("Its standard uncertainty.")
    log10_enhancement_factor = _float()
    enhancement_factor_text = serializers.CharField(help_text="EF ± standard uncertainty, "
                                                    "rounded to the uncertainty's two digits.")
    intensity_measure = serializers.CharField(help_text="Band figure the EF and uniformity "
                                              "use: 'height' or 'area'.")
    surface_area_factor = _float("Metal area per projected area used in the EF.")
    surface_area_factor_u = _float("Its standard uncertainty.")
    surface_area_factor_text = serializers.CharField()
    surface_area_origin = serializers.CharField(
        allow_blank=True, help_text="Where the surface-area factor came from: 'derived: …', "
                                    "'entered: <source>' or 'assumed 1 …'.")
    passed = serializers.BooleanField(help_text="True when every limit was met.")
    failure_reasons = serializers.ListField(child=serializers.CharField())
    limits = serializers.JSONField(help_text="The limit set as it was when judged.")
    flags = FlagItem(many=True, help_text="Open QC flag raised by this measurement.")


class UvVisResult(DocumentedFields, serializers.Serializer):
    record = serializers.CharField(help_text="Code of the UV-vis record.")
    batch = serializers.CharField(help_text="Code of the colloid batch.")
    metal = serializers.CharField(help_text="Element symbol.")
    measured_on = serializers.DateField()
    duplicate = serializers.BooleanField(help_text="True when this file was already imported: "
                                                   "the existing record is returned.")
    sha256 = serializers.CharField(help_text="SHA-256 digest of the file (hex).")
    peak_nm = _float("Plasmon peak wavelength, from a local parabola (empty when the "
                     "spectrum has no plasmon maximum: see size_methods_note).")
    peak_u_nm = _float("Standard uncertainty of the peak wavelength.")
    peak_text = serializers.CharField(help_text="Peak ± uncertainty, as shown on pages.")
    peak_absorbance_1cm = _float()
    fwhm_nm = _float("Full width at half maximum of the plasmon band.")
    absorbance_450_1cm = _float()
    ratio_spr_450 = _float()
    aggregation_index = _float()
    size_methods_note = serializers.CharField(allow_blank=True, help_text="Why the size "
                                              "methods do not apply, when they do not.")
    diameter_nm = _float("Mean diameter from the calibration (Haiss et al. 2007 for gold, "
                         "the silver table for silver).")
    diameter_u_nm = _float("Its standard uncertainty: the method's published average "
                           "deviation combined with the propagated peak uncertainty.")
    diameter_text = serializers.CharField(help_text="Diameter ± uncertainty.")
    diameter_method = serializers.CharField()
    calibration_source = serializers.CharField()
    haiss_ratio_diameter_nm = _float("Gold: Haiss et al., Anal. Chem. 2007, ratio method.")
    haiss_ratio_diameter_u_nm = _float()
    haiss_peak_diameter_nm = _float("Gold: Haiss et al., Anal. Chem. 2007, peak position.")
    haiss_peak_diameter_u_nm = _float()
    silver_table_diameter_nm = _float("Silver: from the calibration table.")
    calibration_independent = serializers.BooleanField(
        allow_null=True, help_text="False when the table was computed with the same Mie model "
                                   "as the fit (no independent check).")
    number_per_mL = _float("Particle number concentration.")
    molar_concentration_M = _float("Molar particle concentration.")
    mie_median_diameter_nm = _float("Median diameter of the log-normal Mie fit; empty when "
                                    "the fit ended at a bound of its search range.")
    mie_median_diameter_u_nm = _float("Its standard uncertainty, from the fit covariance.")
    mie_median_diameter_text = serializers.CharField()
    mie_diameter_ci_low_nm = _float("Approximate 95 % interval, lower end.")
    mie_diameter_ci_high_nm = _float("Approximate 95 % interval, upper end.")
    mie_diameter_bound_nm = _float("The search bound reached (then there is no size).")
    mie_fit_note = serializers.CharField(allow_blank=True)
    mie_geometric_sigma = _float()
    mie_number_per_mL = _float("Particle concentration of the Mie fit.")
    mie_relative_residual = _float(null=False)
    size_difference_percent = _float("Mie versus calibration size.")
    sizes_agree = serializers.BooleanField(allow_null=True)
    size_agreement_message = serializers.CharField(allow_blank=True)
    age_days = serializers.IntegerField(help_text="Days since the batch was made.")
    peak_shift_nm = _float("Peak shift since the batch's first record.")
    absorbance_loss_fraction = _float("Loss of peak absorbance since the first record.")
    broadening_nm = _float("FWHM change since the first record.")
    aggregation_index_change = _float("Since the first record.")
    limits_note = serializers.CharField(allow_blank=True)
    breaches = serializers.ListField(child=serializers.JSONField(), help_text="Each limit "
                                     "breached: limit, value, limit value, sentence, flag.")
    flags_raised = serializers.ListField(child=serializers.CharField(),
                                         help_text="Codes of the flags raised.")


class QcImportOut(DocumentedFields, serializers.Serializer):
    """Where a background QC import stands; ``measurement`` once it is judged."""

    id = serializers.UUIDField()
    state = serializers.ChoiceField(choices=QcImport.State.choices)
    state_label = serializers.CharField(help_text="The state in words.")
    progress_percent = serializers.IntegerField(min_value=0, max_value=100)
    file = serializers.CharField()
    substrate = serializers.CharField(help_text="Code of the substrate measured.")
    error = serializers.JSONField(allow_null=True, help_text="Why it failed, field by field.")
    measurement = serializers.CharField(allow_null=True, help_text="Code of the judged "
                                        "measurement, once there is one.")
    progress_url = serializers.URLField(help_text="This answer's own address, to poll.")
    page_url = serializers.URLField(help_text="The progress page for people.")


def qc_import_progress(pending: QcImport, request) -> dict:
    """The progress of a background QC import, as the API and the progress page show it."""
    return {
        "id": pending.pk, "state": pending.state, "state_label": pending.get_state_display(),
        "progress_percent": pending.progress_percent, "file": pending.upload_filename,
        "substrate": pending.substrate.code, "error": pending.error,
        "measurement": pending.measurement.code if pending.measurement_id else None,
        "progress_url": request.build_absolute_uri(
            reverse("api:qc-import", args=[pending.pk])),
        "page_url": request.build_absolute_uri(reverse("qc_import_page", args=[pending.pk])),
    }
