"""What the page shows right after a step that computes numbers: the figures and the verdict.

Only reads and formats what the services stored; no number is computed here except the
target check, which is the deposition service's own read (``deposition_run_check_target``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from inventory.flags import flags_open
from inventory.models import Dataset, DepositionRun, Flag
from inventory.services import deposition_run_check_target
from inventory.uncertainty_format import format_with_uncertainty
from qc.models import QcMeasurement, ReferenceMeasurement, UvVisRecord


@dataclass
class Result:
    title: str
    verdict: str = ""
    verdict_ok: bool | None = None
    reasons: list[str] = field(default_factory=list)
    figures: list[tuple[str, str]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    links: list[tuple[str, str]] = field(default_factory=list)
    files: list[tuple[str, int, str]] = field(default_factory=list)
    flags: list[Flag] = field(default_factory=list)


def fmt(value, spec: str = ".4g", unit: str = "") -> str:
    """A stored number for the page; an em dash when it was not computed."""
    if value is None:
        return "—"
    return f"{value:{spec}}{' ' + unit if unit else ''}"


def _open_flags(codes: list[str], *, mentioning: str = "") -> list[Flag]:
    """Open flags on these records (those whose message names ``mentioning``, if given)."""
    return list(flags_open(target_codes=codes, mentioning=mentioning).order_by("code"))


def deposition_result(run: DepositionRun) -> Result:
    check = deposition_run_check_target(run)
    result = Result(title=f"Deposition run {run.code}")
    result.figures = [
        ("Charge passed", fmt(run.charge_C, unit="C")),
        ("Charge for the target h/D", fmt(check.target_charge_C, unit="C")),
        ("Film height h", fmt(run.film_height_nm, ".1f", "nm")),
        ("Normalised height h/D", fmt(run.height_over_diameter, ".3f")),
        ("Target h/D", fmt(run.target_height_over_diameter, ".3f")),
        ("Deviation from target", fmt(check.deviation_height_over_diameter, "+.3f")),
        ("Sphere diameter D", fmt(run.sphere_diameter_nm, ".0f", "nm")),
        ("Equivalent flat thickness", fmt(run.equivalent_thickness_nm, ".1f", "nm")),
    ]
    where = ("in a close-packed sphere template" if run.template_id else
             "as a flat film (no template: the height is the equivalent flat thickness)")
    if run.charge_C is None:
        result.notes.append("No chronoamperogram was attached and no charge entered, so charge "
                            "and film height are not known yet.")
    elif run.chronoamperogram_sha256:
        result.notes.append(f"From {run.chronoamperogram_name} (SHA-256 "
                            f"{run.chronoamperogram_sha256}); Faraday's law {where} "
                            "(inventory.physics.electrodeposition).")
    else:
        result.notes.append(f"From the charge {run.get_charge_source_display().lower()}; "
                            f"Faraday's law {where} (inventory.physics.electrodeposition).")
    if check.tolerance is not None:
        result.notes.append(f"Tolerance ±{check.tolerance.max_abs_deviation_height_over_diameter:g}"
                            f" on h/D, from {check.tolerance.source}.")
        result.verdict_ok = bool(check.within_tolerance)
        result.verdict = "ON TARGET" if check.within_tolerance else "OFF TARGET"
    result.links = [(piece.code, piece.piece_label) for piece in run.substrates.order_by("code")]
    result.flags = _open_flags([run.code, *(code for code, _label in result.links)],
                               mentioning=run.code)
    return result


def _mie_size(record: UvVisRecord) -> str:
    """The Mie-fitted size, or why there is none (a fit at its search bound)."""
    if record.mie_median_diameter_nm is None:
        return (f"outside the fit range (reached the {record.mie_diameter_bound_nm:g} nm bound);"
                " no size")
    text = format_with_uncertainty(record.mie_median_diameter_nm,
                                   record.mie_median_diameter_u_nm, "nm")
    if record.mie_diameter_ci_low_nm is not None:
        text += (f" (95 % interval {record.mie_diameter_ci_low_nm:.1f}–"
                 f"{record.mie_diameter_ci_high_nm:.1f} nm)")
    return text


def _mie_width(record: UvVisRecord) -> str:
    if record.mie_geometric_sigma is None:
        return "—"
    if record.mie_sigma_bound == "lower":
        return "below what the spectrum resolves"
    suffix = " (at the upper bound: flagged)" if record.mie_sigma_bound == "upper" else ""
    return f"{record.mie_geometric_sigma:.3f}{suffix}"


def uvvis_figures(record: UvVisRecord) -> list[tuple[str, str]]:
    """The sizes and band numbers of a UV-vis record, each with its uncertainty."""
    return [
        ("Particle diameter", format_with_uncertainty(record.diameter_nm,
                                                      record.diameter_u_nm, "nm")),
        ("Size from", record.diameter_method or "—"),
        ("Haiss ratio method", format_with_uncertainty(
            record.haiss_ratio_diameter_nm, record.haiss_ratio_diameter_u_nm, "nm")),
        ("Haiss peak-position method", format_with_uncertainty(
            record.haiss_peak_diameter_nm, record.haiss_peak_diameter_u_nm, "nm")),
        ("Mie-fit median diameter", _mie_size(record)),
        ("Mie-fit geometric σ", _mie_width(record)),
        ("Number concentration", fmt(record.number_per_mL, ".3g", "particles/mL")),
        ("Molar concentration", fmt(record.molar_concentration_M, ".3g", "mol/L")),
        ("Plasmon peak", format_with_uncertainty(record.peak_nm, record.peak_u_nm, "nm")
         if record.peak_nm is not None else "no plasmon maximum"),
        ("Peak absorbance (undiluted, 1 cm)", fmt(record.peak_absorbance_1cm, ".3f")),
        ("FWHM", fmt(record.fwhm_nm, ".1f", "nm")),
        ("Aggregation index", fmt(record.aggregation_index, ".4f")),
        ("Peak shift since first record", fmt(record.peak_shift_nm, "+.1f", "nm")),
    ]


def uvvis_result(record: UvVisRecord) -> Result:
    result = Result(title=f"UV-vis {record.code} of colloid {record.batch.code}")
    result.figures = uvvis_figures(record)
    notes = (("Sizes", record.size_methods_note), ("Mie fit", record.mie_fit_note),
             ("Size", record.size_agreement_message), ("FWHM", record.fwhm_note),
             ("Concentration", record.concentration_note), ("Limits", record.limits_note),
             ("Calibration", record.calibration_source))
    result.notes = [f"{topic}: {note}" for topic, note in notes if note]
    result.reasons = [breach["message"] for breach in record.breaches]
    result.flags = _open_flags([record.batch.code], mentioning=record.code)
    if record.limit_set_id:
        result.verdict_ok = not record.breaches
        result.verdict = "WITHIN LIMITS" if not record.breaches else "OUT OF LIMITS"
    result.links = [(record.batch.code, "the colloid batch")]
    return result


def qc_figures(m: QcMeasurement) -> list[tuple[str, str]]:
    """The figures of a QC measurement; the EF with its uncertainty and surface-area origin."""
    measure = m.get_intensity_measure_display().lower()
    figures = [
        ("Enhancement factor (SSEF, Le Ru et al. 2007)",
         format_with_uncertainty(m.enhancement_factor, m.enhancement_factor_u)),
        ("log10 EF", fmt(m.log10_enhancement_factor, ".2f")),
        ("EF and uniformity from", measure),
    ]
    if m.enhancement_factor is not None:
        figures += [
            ("Surface-area factor (metal ÷ projected area)",
             format_with_uncertainty(m.surface_area_factor, m.surface_area_factor_u)),
            ("Surface-area factor from", m.surface_area_origin),
        ]
    figures += [
        ("Uniformity RSD", fmt(m.rsd_percent, ".1f", "%")),
        ("Signal-to-noise", fmt(m.snr, ".1f")),
        ("Band position", fmt(m.band_position_cm1, ".1f", "cm⁻¹")),
        ("Points measured", fmt(m.n_points, "d")),
        ("Points within ±20 % of the median", fmt(
            None if m.fraction_within_20_percent is None else 100 * m.fraction_within_20_percent,
            ".0f", "%")),
    ]
    return figures


def qc_result(measurement: QcMeasurement) -> Result:
    m = measurement
    result = Result(title=f"QC {m.code} on {m.substrate.code}",
                    verdict="PASS" if m.passed else "FAIL", verdict_ok=m.passed,
                    reasons=list(m.failure_reasons))
    result.figures = qc_figures(m)
    m.substrate.refresh_from_db()
    result.notes = [substrate_after_qc(m), f"File {m.raw_filename}, SHA-256 {m.raw_sha256}."]
    if m.surface_area_origin.startswith("assumed"):
        result.notes.append("The surface-area factor was assumed to be 1: the EF is an upper "
                            "bound if the metal area exceeds the projected area.")
    result.flags = _open_flags([m.substrate.code], mentioning=m.code)
    result.links = [(m.substrate.code, "the substrate")]
    if m.reference_id:
        result.links.append((m.reference.code, "the reference measurement"))
    return result


def substrate_after_qc(m: QcMeasurement) -> str:
    """What the QC meant for the substrate, in words."""
    code, status = m.substrate.code, m.substrate.status
    if status == "quarantine":
        return (f"{code} passed QC and stays in quarantine until a reviewer releases it "
                "(Review)." if m.passed else
                f"{code} failed QC and stays in quarantine: it cannot be used until the flag "
                "is resolved and a later QC passes.")
    return f"{code} is {m.substrate.get_status_display().lower()}."


def reference_result(reference: ReferenceMeasurement) -> Result:
    result = Result(title=f"Reference {reference.code} of {reference.analyte}")
    result.figures = [
        ("Band position", fmt(reference.band_position_cm1, ".1f", "cm⁻¹")),
        ("Band FWHM", fmt(reference.band_fwhm_cm1, ".1f", "cm⁻¹")),
        ("Band height", fmt(reference.normalised_height_counts_per_mW_s, ".4g",
                            "counts/(mW·s)")),
        ("Signal-to-noise", fmt(reference.snr, ".1f")),
    ]
    result.notes = [f"File {reference.raw_filename}, SHA-256 {reference.raw_sha256}."]
    result.links = [(reference.analyte_lot.code, "the analyte lot")]
    return result


def dataset_result(dataset: Dataset) -> Result:
    result = Result(title=f"Dataset {dataset.code}: {dataset.title}")
    result.files = [(f.original_name, f.size_bytes, f.sha256)
                    for f in dataset.files.order_by("original_name")]
    result.links = [(s.code, s.piece_label) for s in dataset.substrates.order_by("code")]
    return result


RESULTS = {
    DepositionRun: deposition_result, UvVisRecord: uvvis_result, QcMeasurement: qc_result,
    ReferenceMeasurement: reference_result, Dataset: dataset_result,
}
