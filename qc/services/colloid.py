"""Colloid UV-vis QC (services): importing a spectrum (limits and the silver table are in
``colloid_limits``, sizing by the metal's calibration in ``colloid_sizing``, limits and
flags of a record in ``colloid_breaches``; named here too so the colloid services stay one
API).

``uvvis_record_import`` is the one place where a colloid spectrum becomes a record: it reads
the file, calls qc.analysis for every number, compares with the batch's first record,
evaluates the lab's limits, stores it all and raises an open flag on the batch for each
breach.  An open flag on a batch already makes every substrate decorated with it NOT
READY (inventory.readiness), so no readiness provider is needed here.

Disagreement between the calibration size and the Mie-fitted size is stored and reported,
but is a flag only when the lab turns ``ColloidLimitSet.flag_size_disagreement`` on: the two
routes are both estimates (Haiss's ratio method alone deviates 11 % on average; the
built-in silver table shifts a few nm with the coarse optical-constant grid), so a
difference says the size is uncertain, not that the colloid is unfit.  Aggregation, which
is what spoils a colloid, is caught by the stability limits.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction

from inventory.errors import refusal
from inventory.models import Flag, NanoparticleBatch
from inventory.roles import MAKER, require_role
from inventory.services import sha256_of
from inventory.services.toolkit import User
from inventory.services.toolkit import check_upload as _check_upload
from inventory.services.toolkit import check_values as _check_values
from inventory.services.toolkit import files_removed_if_failed as _files_removed_if_failed
from inventory.services.toolkit import link as _link
from inventory.services.toolkit import require_not_future as _require_not_future
from inventory.services.toolkit import save_changed as _save_changed
from inventory.services.toolkit import save_new as _save_new
from qc.analysis.colloid_stability import (
    ColloidSnapshot,
    colloid_snapshot,
    compare_with_first,
)
from qc.analysis.errors import AnalysisInputError
from qc.analysis.mie_fit import compare_sizes, fit_lognormal_mie
from qc.analysis.readers import read_spectrum
from qc.analysis.spectrum import Spectrum
from qc.analysis.uvvis import (
    NoPlasmonPeakError,
    PlasmonBand,
    check_wavelength_axis_nm,
    subtract_blank,
    to_undiluted_1cm,
)

from ..models.colloid import (
    ColloidLimitSet,
    ColloidMetal,
    UvVisRecord,
)
from .colloid_breaches import (
    evaluate_limits,
    flag_breaches,
    review_breaches,
)
from .colloid_limits import (
    colloid_limit_set_set,
    silver_calibration_active,
    silver_calibration_record,
)
from .colloid_sizing import SilverTable, store_calibration, uvvis_sizes_from_band

__all__ = [
    "UvVisImport",
    "colloid_limit_set_set",
    "SilverTable",
    "silver_calibration_active",
    "silver_calibration_record",
    "uvvis_record_import",
    "uvvis_sizes_from_band",
]

MIE_FIT_RANGE_NM = (350.0, 800.0)
_PARAMETER_FIELDS = {"dilution_factor", "path_length_cm"}


@dataclass(frozen=True)
class UvVisImport:
    """What an import did: the record, whether it was already there, breaches and flags."""

    record: UvVisRecord
    duplicate: bool
    breaches: tuple[dict, ...]
    flags_raised: tuple[Flag, ...]


# --------------------------------------------------------------------------------------
# Import
# --------------------------------------------------------------------------------------


@transaction.atomic
def uvvis_record_import(
    *, actor: User | None, batch: NanoparticleBatch, filename: str, content: bytes,
    measured_on: date, dilution_factor: float = 1, path_length_cm: float = 1,
    blank: tuple[str, bytes] | None = None, notes: str = "",
) -> UvVisImport:
    """Import one UV-vis spectrum of ``batch`` and evaluate it; all or nothing.

    ``blank`` is an optional ``(filename, content)`` blank spectrum subtracted point by
    point.  The same file (by SHA-256) for the same batch is recognised and returns the
    existing record with ``duplicate=True`` (refused if its dilution, path or date differ).
    Bad files raise ``ValidationError`` keyed ``raw_file`` / ``blank_file`` naming the line
    where known; bad parameters are keyed by the parameter.
    """
    require_role(actor, MAKER, action="Importing a UV-vis record")
    if batch.metal not in ColloidMetal.values:
        raise refusal("batch", f"{batch.code} is a {batch.metal} colloid; UV-vis sizing covers "
                               "silver (Ag) and gold (Au) only.", "unsupported_metal")
    _check_values(UvVisRecord, {"measured_on": measured_on, "dilution_factor": dilution_factor,
                                "path_length_cm": path_length_cm})
    digest = sha256_of(content)
    existing = UvVisRecord.objects.filter(batch=batch, raw_sha256=digest).first()
    if existing is not None:
        return _recognise_duplicate(existing, measured_on, dilution_factor, path_length_cm)
    first = _check_dates(batch, measured_on)

    record = UvVisRecord(batch=batch, measured_on=measured_on, dilution_factor=dilution_factor,
                         path_length_cm=path_length_cm, raw_file_name=filename,
                         raw_sha256=digest, notes=notes,
                         age_days=(measured_on - batch.made_on).days)
    snapshot, absorbance_1cm, wavelength_nm = _measure(
        record, batch.metal, filename, content, blank
    )
    calibration_diameter = None
    if snapshot is not None:
        _store_band(record, snapshot)
        calibration_diameter = store_calibration(record, batch.metal, snapshot.band)
    _store_mie(record, batch.metal, wavelength_nm, absorbance_1cm, calibration_diameter)
    limits = ColloidLimitSet.objects.filter(metal=batch.metal).first()
    _store_size_agreement(record, limits)
    if first is not None and snapshot is not None and first.peak_nm is not None:
        _store_stability(record, first, snapshot)

    record.raw_file = ContentFile(content, name=filename)
    if blank is not None:
        record.blank_file = ContentFile(blank[1], name=blank[0])
        record.blank_sha256 = sha256_of(blank[1])
    breaches = review_breaches(record) + evaluate_limits(record, limits)
    with _files_removed_if_failed(record):
        record = _save_new(record, actor=actor)
        _link([(batch, "colloid measured")], record, used_on=measured_on, actor=actor)
        flags = flag_breaches(actor, batch, record, breaches)
        record.breaches = breaches
        UvVisRecord.objects.filter(pk=record.pk).update(breaches=breaches)
    return UvVisImport(record=record, duplicate=False, breaches=tuple(breaches),
                       flags_raised=tuple(flags))


def _recognise_duplicate(existing: UvVisRecord, measured_on, dilution_factor,
                         path_length_cm) -> UvVisImport:
    same = (existing.measured_on == measured_on
            and np.isclose(existing.dilution_factor, float(dilution_factor))
            and np.isclose(existing.path_length_cm, float(path_length_cm)))
    if not same:
        raise refusal("raw_file", f"This file was already imported as {existing.code} "
                                  f"(measured {existing.measured_on.isoformat()}, dilution "
                                  f"{existing.dilution_factor:g}, path {existing.path_length_cm:g}"
                                  " cm); the same spectrum cannot be a second measurement.",
                      "duplicate_file")
    return UvVisImport(record=existing, duplicate=True, breaches=tuple(existing.breaches),
                       flags_raised=())


def _check_dates(batch: NanoparticleBatch, measured_on: date) -> UvVisRecord | None:
    """Refuse impossible dates; return the batch's first record (None if this is the first)."""
    _require_not_future(measured_on, field="measured_on")
    if measured_on < batch.made_on:
        raise refusal("measured_on", f"{batch.code} was made on {batch.made_on.isoformat()}, "
                                     "after this measurement.", "date_order")
    first = UvVisRecord.objects.filter(batch=batch).order_by("measured_on", "id").first()
    if first is not None and measured_on < first.measured_on:
        raise refusal("measured_on", f"Records are compared with the batch's first, "
                                     f"{first.code} of {first.measured_on.isoformat()}; a record "
                                     "dated before it cannot be added afterwards.", "date_order")
    return first


def _analysis_refusal(
    error: AnalysisInputError, *, file_field: str, filename: str
) -> ValidationError:
    """AnalysisInputError → ValidationError keyed by the file (with its line) or the parameter."""
    if error.field in _PARAMETER_FIELDS:
        return refusal(error.field, error.message, "bad_value")
    where = f"{filename}, line {error.line}" if error.line is not None else filename
    return refusal(file_field, f"{where}: {error.message}", "bad_file")


def _read(filename: str, content: bytes, *, file_field: str) -> Spectrum:
    _check_upload(content, field=file_field, filename=filename)
    try:
        spectrum = read_spectrum(content, filename=filename)
    except AnalysisInputError as error:
        raise _analysis_refusal(error, file_field=file_field, filename=filename) from None
    # A JCAMP-DX file states its x unit; a two-column text file does not (its axis is
    # checked for plausible nm values by the analysis instead).
    if "jcamp_dx" in spectrum.metadata and spectrum.x_unit != "nm":
        raise refusal(file_field, f"{filename}: the x axis is in '{spectrum.x_unit}', not "
                                  "nanometres (##XUNITS=NANOMETERS).", "wrong_unit")
    return spectrum


def _measure(record: UvVisRecord, metal: str, filename: str, content: bytes,
             blank: tuple[str, bytes] | None):
    """Read, blank-correct and measure; returns the snapshot, A (undiluted, 1 cm) and λ."""
    spectrum = _read(filename, content, file_field="raw_file")
    wavelength_nm, absorbance = spectrum.x, spectrum.y
    if blank is not None:
        blank_spectrum = _read(blank[0], blank[1], file_field="blank_file")
        try:
            absorbance = subtract_blank(
                wavelength_nm, absorbance, blank_spectrum.x, blank_spectrum.y
            )
        except AnalysisInputError as error:
            field = "blank_file" if error.field and error.field.startswith("blank") else "raw_file"
            name = blank[0] if field == "blank_file" else filename
            raise _analysis_refusal(error, file_field=field, filename=name) from None
    try:
        absorbance_1cm = to_undiluted_1cm(absorbance, dilution_factor=record.dilution_factor,
                                          path_length_cm=record.path_length_cm)
        try:
            snapshot = colloid_snapshot(wavelength_nm, absorbance, metal=metal,
                                        day=record.age_days,
                                        dilution_factor=record.dilution_factor,
                                        path_length_cm=record.path_length_cm)
        except NoPlasmonPeakError as error:
            snapshot = None
            _store_unsized(record, wavelength_nm, absorbance_1cm, error.message)
    except AnalysisInputError as error:
        raise _analysis_refusal(error, file_field="raw_file", filename=filename) from None
    record.point_count = int(wavelength_nm.size)
    record.wavelength_min_nm = float(wavelength_nm[0])
    record.wavelength_max_nm = float(wavelength_nm[-1])
    return snapshot, absorbance_1cm, wavelength_nm


def _store_unsized(record: UvVisRecord, wavelength_nm, absorbance_1cm, reason: str) -> None:
    """A spectrum without a plasmon maximum: keep what applies and say why sizes do not."""
    axis = check_wavelength_axis_nm(wavelength_nm)
    order = np.argsort(axis)
    if axis[order][0] <= 450.0 <= axis[order][-1]:
        record.absorbance_450_1cm = float(np.interp(450.0, axis[order], absorbance_1cm[order]))
    record.size_methods_note = (
        f"No size from the peak-based methods: {reason}. The Haiss et al. (2007) ratio and "
        "peak-position methods and the calibration table need a single plasmon maximum, as "
        "do the peak and width limits; large particles (a broad dipole band with a "
        "quadrupole shoulder) or aggregates give none. The spectrum is kept for review.")


def _store_band(record: UvVisRecord, snapshot: ColloidSnapshot) -> None:
    band = snapshot.band
    record.peak_nm = band.peak_nm
    record.peak_u_nm = band.peak_u_nm
    record.peak_absorbance_1cm = band.peak_absorbance_1cm
    record.fwhm_nm = band.fwhm_nm
    record.half_width_blue_nm = band.half_width_blue_nm
    record.half_width_red_nm = band.half_width_red_nm
    record.fwhm_note = band.fwhm_note
    record.absorbance_450_1cm = band.absorbance_450_1cm
    record.ratio_spr_450 = band.ratio_spr_450
    record.aggregation_index = snapshot.aggregation_index


def _store_mie(record: UvVisRecord, metal: str, wavelength_nm, absorbance_1cm,
               calibration_diameter_nm: float | None) -> None:
    try:
        fit = fit_lognormal_mie(wavelength_nm, absorbance_1cm, metal, fit_range_nm=MIE_FIT_RANGE_NM,
                                initial_diameter_nm=calibration_diameter_nm or 30.0)
    except AnalysisInputError as error:
        raise _analysis_refusal(error, file_field="raw_file",
                                filename=record.raw_file_name) from None
    record.mie_fit_note = fit.limit_note
    record.mie_sigma_bound = fit.sigma_bound
    if fit.has_size:
        record.mie_median_diameter_nm = fit.median_diameter_nm
        record.mie_median_diameter_u_nm = fit.median_diameter_u_nm
        if fit.median_diameter_ci95_nm is not None:
            record.mie_diameter_ci_low_nm, record.mie_diameter_ci_high_nm = \
                fit.median_diameter_ci95_nm
        record.mie_geometric_sigma = fit.geometric_sigma
        record.mie_number_per_mL = fit.number_per_mL
    else:
        record.mie_diameter_bound_nm = fit.diameter_bound_nm
    record.mie_rms_residual = fit.rms_residual
    record.mie_relative_residual = fit.relative_rms_residual
    record.mie_fit_min_nm, record.mie_fit_max_nm = MIE_FIT_RANGE_NM


def _store_size_agreement(record: UvVisRecord, limits: ColloidLimitSet | None) -> None:
    if record.diameter_nm is None:
        record.size_agreement_message = "no calibration size to compare with the Mie fit"
        return
    if record.mie_median_diameter_nm is None:
        record.size_agreement_message = "the Mie fit gave no size to compare"
        return
    tolerance = limits.size_tolerance_percent if limits else 15.0
    agreement = compare_sizes(record.mie_median_diameter_nm, record.diameter_nm,
                              tolerance_percent=tolerance,
                              calibration_independent=record.calibration_independent
                              is not False)
    record.size_difference_percent = agreement.difference_percent
    record.sizes_agree = agreement.agrees
    record.size_agreement_message = agreement.message + ("" if limits else " (default tolerance: "
                                                         "no limits set for this metal)")


def _snapshot_of(record: UvVisRecord) -> ColloidSnapshot:
    """Rebuild the stored numbers of a record as the analysis' snapshot (no re-reading)."""
    band = PlasmonBand(record.peak_nm, record.peak_absorbance_1cm, record.fwhm_nm,
                       record.half_width_blue_nm, record.half_width_red_nm, record.fwhm_note,
                       record.absorbance_450_1cm, record.ratio_spr_450, record.peak_u_nm or 0.0)
    return ColloidSnapshot(float(record.age_days), band, record.aggregation_index)


def _store_stability(record: UvVisRecord, first: UvVisRecord, snapshot: ColloidSnapshot) -> None:
    # compare_with_first sorts stably by day, so a same-day first record stays the baseline.
    (change,) = compare_with_first([_snapshot_of(first), snapshot])
    record.first_record = first
    record.peak_shift_nm = change.peak_shift_nm
    record.absorbance_loss_fraction = change.absorbance_loss_fraction
    record.broadening_nm = change.broadening_nm
    record.aggregation_index_change = change.aggregation_index_change


def uvvis_mark_stale_on_amend(*, actor: User | None, record, changed: dict, why: str) -> None:
    """``SERSLEDGER_AMEND_HOOKS``: a colloid's metal decides its UV-vis figures.

    Gold is sized by Haiss et al. (2007), silver by a calibration table; the Mie fit's
    optical constants and the limit set are the metal's too.  Working them out again needs
    the spectrum re-imported, so an amended metal marks every live record of the batch stale
    with the reason (readiness then reports it) rather than leaving old-metal numbers current.
    """
    if not isinstance(record, NanoparticleBatch) or "metal" not in changed:
        return
    for uvvis in UvVisRecord.objects.select_for_update().filter(batch=record,
                                                                voided_at__isnull=True):
        uvvis.stale_reason = (f"{why}; its sizes, concentration and limits were worked out "
                              "for the old metal: import the spectrum again.")
        _save_changed(uvvis, actor=actor, reason=f"figures stale: {why}")
