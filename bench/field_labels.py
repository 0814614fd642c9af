"""Labels a person reads for the raw fields of the result pages (deposition run, UV-vis).

Keyed by field name; the unit still comes from the name's suffix
(``bench.page_queries.unit_of``) unless ``UNIT_OVERRIDES`` gives a clearer one.
"""

from __future__ import annotations

DEPOSITION_LABELS = {
    "bath_lot": "plating bath lot", "electrons_per_atom": "electrons per deposited atom",
    "current_efficiency": "current efficiency (fraction of the charge that deposits metal)",
    "mode": "deposition mode", "setpoint_potential_V": "set potential",
    "setpoint_current_mA": "set current", "electrode_area_cm2": "electrode area",
    "target_height_over_diameter": "planned h/D (film height ÷ sphere diameter)",
    "chronoamperogram_sha256": "chronoamperogram SHA-256",
    "chronoamperogram_name": "chronoamperogram file", "charge_C": "deposition charge",
    "charge_source": "deposition charge from",
    "metal_volume_cm3": "metal volume", "equivalent_thickness_nm": "equivalent flat thickness",
    "film_height_nm": "film height h", "height_over_diameter":
    "h/D (film height ÷ sphere diameter)", "sphere_diameter_nm": "sphere diameter D",
    "cathodic_sign": "sign of the cathodic current in the file",
    "charge_start_s": "charge integrated from", "charge_end_s": "charge integrated to",
    "time_unit": "time unit in the file", "current_unit": "current unit in the file",
}

UVVIS_LABELS = {
    "batch": "colloid batch", "dilution_factor": "dilution factor (×)",
    "raw_file_name": "spectrum file", "raw_sha256": "spectrum SHA-256",
    "blank_sha256": "blank SHA-256", "point_count": "points in the spectrum",
    "wavelength_min_nm": "shortest wavelength", "wavelength_max_nm": "longest wavelength",
    "peak_nm": "plasmon peak position",
    "peak_u_nm": "plasmon peak position, standard uncertainty",
    "peak_absorbance_1cm": "peak absorbance (undiluted, 1 cm)",
    "fwhm_nm": "plasmon band width (FWHM)", "half_width_blue_nm":
    "half width, short-wavelength side", "half_width_red_nm":
    "half width, long-wavelength side", "fwhm_note": "band width note",
    "absorbance_450_1cm": "absorbance at 450 nm (undiluted, 1 cm)",
    "ratio_spr_450": "peak absorbance ÷ absorbance at 450 nm",
    "aggregation_index": "aggregation index", "size_methods_note": "sizing note",
    "haiss_ratio_diameter_nm": "diameter, Haiss absorbance-ratio method",
    "haiss_ratio_diameter_u_nm": "diameter, Haiss absorbance-ratio method, standard "
                                 "uncertainty",
    "haiss_ratio_in_range": "ratio within the Haiss ratio method's range",
    "haiss_ratio_is_estimate": "ratio-method diameter is an estimate",
    "haiss_ratio_note": "Haiss ratio-method note",
    "haiss_peak_diameter_nm": "diameter, Haiss peak-position method",
    "haiss_peak_diameter_u_nm": "diameter, Haiss peak-position method, standard uncertainty",
    "haiss_peak_in_range": "peak within the Haiss peak-position method's range",
    "haiss_peak_note": "Haiss peak-position note",
    "silver_table_diameter_nm": "diameter, silver calibration table",
    "silver_table_in_range": "peak within the silver table's range",
    "silver_table_note": "silver table note", "silver_calibration": "lab's silver table",
    "calibration_source": "calibration source",
    "calibration_independent": "calibration independent of the Mie fit",
    "diameter_nm": "diameter used", "diameter_u_nm": "diameter used, standard uncertainty",
    "diameter_method": "diameter from", "number_per_mL": "number concentration",
    "molar_concentration_M": "molar particle concentration",
    "concentration_note": "concentration note",
    "size_difference_percent": "Mie size against the calibration size",
    "sizes_agree": "Mie and calibration sizes agree",
    "size_agreement_message": "size comparison",
    "first_record": "first spectrum of the batch", "age_days": "batch age when measured",
    "peak_shift_nm": "peak shift since the first spectrum",
    "broadening_nm": "band broadening since the first spectrum",
    "aggregation_index_change": "aggregation index change since the first spectrum",
    "limit_set": "colloid limits applied", "limits_note": "limits note",
}

# The log-normal Mie fit's own figures (qc.analysis.mie_model.fit_lognormal_mie).
MIE_FIT_LABELS = {f"mie_{name}": f"Mie fit: {label}" for name, label in (
    ("median_diameter_nm", "median diameter"),
    ("median_diameter_u_nm", "median diameter, standard uncertainty"),
    ("diameter_ci_low_nm", "95 % interval of the median, low end"),
    ("diameter_ci_high_nm", "95 % interval of the median, high end"),
    ("diameter_bound_nm", "search bound reached"),
    ("geometric_sigma", "geometric standard deviation σg"), ("sigma_bound", "width at a bound"),
    ("fit_note", "note"), ("number_per_mL", "number concentration"),
    ("rms_residual", "RMS residual (absorbance)"),
    ("relative_residual", "RMS residual ÷ peak absorbance"),
    ("fit_min_nm", "range from"), ("fit_max_nm", "range to"))}

FIELD_LABELS = {**DEPOSITION_LABELS, **UVVIS_LABELS, **MIE_FIT_LABELS}

# The limits a UV-vis record can breach (qc.services.colloid), in words for the batch's table.
UVVIS_BREACH_WORDS = {
    "peak_window_nm": "peak position", "fwhm_max_nm": "band width",
    "aggregation_index_max": "aggregation", "peak_shift_max_nm": "peak shift",
    "absorbance_loss_max_fraction": "absorbance loss", "size_tolerance_percent":
    "sizes disagree", "size_methods": "no plasmon maximum", "mie_fit_range":
    "Mie fit at its bound", "mie_width_bound": "Mie width at its bound",
}

# Where the unit the name's suffix implies reads worse than a plain one.
UNIT_OVERRIDES = {"molar_concentration_M": "mol/L", "number_per_mL": "particles/mL",
                  "mie_number_per_mL": "particles/mL"}

# Stored as fractions (0–1), shown as percentages.
FRACTION_LABELS = {"absorbance_loss_fraction":
                   "peak absorbance lost since the first spectrum"}
