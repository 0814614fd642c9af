"""The joined table's settings and outcomes: column name (unit in it) → label for people."""

#: Numeric settings: column → human label with unit.
NUMERIC_SETTINGS = {
    "height_over_diameter": "film height / sphere diameter h/D",
    "sphere_diameter_nm": "sphere diameter (nm)",
    "template_coverage_percent": "template coverage (%)",
    "charge_density_mC_per_cm2": "deposition charge density (mC/cm²)",
    "film_height_nm": "film height (nm)",
    "linker_concentration_mM": "linker concentration (mM)",
    "linker_immersion_h": "linker immersion time (h)",
    "linker_age_at_attachment_d": "linker-layer age at particle attachment (d)",
    "colloid_age_at_use_d": "colloid age at use (d)",
    "particle_diameter_nm": "particle diameter (nm)",
    "aggregation_index": "colloid aggregation index",
    "making_to_qc_d": "time from making to QC (d)",
}
#: Categorical settings: column → human label.
CATEGORICAL_SETTINGS = {
    "sphere_lot": "sphere lot",
    "colloid_batch": "colloid batch",
    "linker_thiol": "linker thiol",
    "operator": "operator",
    "bath_lot": "plating bath lot",
}
#: Outcomes: column → human label with unit.
OUTCOMES = {
    "log10_ef": "log10 enhancement factor",
    "log10_ef_u": "standard uncertainty of log10 EF",
    "rsd_percent": "map RSD (%)",
    "band_position_cm1": "band position (cm⁻¹)",
    "passed": "passed QC",
    "passed_first_time": "passed QC first time",
    "qc_count": "QC measurements at this stage",
}
