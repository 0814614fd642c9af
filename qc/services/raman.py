"""Reference-analyte Raman QC imports and release (writes).

An import is one request object (``QcImportRequest``, ``ReferenceImportRequest``) taken by a
thin orchestration: check the inputs, read and analyse the file (``raman_analysis``), work
out the enhancement factor (``enhancement``), judge against the lab's limits
(``raman_limits.qc_judge``), and store everything in one transaction, with the flag and hold
a failure calls for.  A bad file or value is a ``ValidationError`` keyed by the parameter at
fault, or by ``raw_file`` with the 1-based line, and nothing is saved.  The request objects
and their checks are in ``raman_requests``, the release rule in ``raman_release`` (both
named here too, so the Raman QC services stay one API).
"""

from __future__ import annotations

from dataclasses import dataclass

from django.db import transaction

from inventory.errors import refusal
from inventory.models import Status, Substrate
from inventory.roles import MAKER, require_role
from inventory.services import flag_raise
from inventory.services.toolkit import User, lock
from inventory.services.toolkit import check_substrates_usable as _check_substrates_usable
from inventory.services.toolkit import check_values as _check_values
from inventory.services.toolkit import files_removed_if_failed as _files_removed_if_failed
from inventory.services.toolkit import link as _link
from inventory.services.toolkit import save_new as _save_new
from inventory.services.toolkit import transition as _transition
from qc.analysis.spectrum import RamanMap

from ..models.raman import QcMeasurement, ReferenceAnalyte, ReferenceMeasurement
from .enhancement import enhancement_fields, substrate_enhancement
from .raman_analysis import FILE_FIELD, analyse, read_upload, read_upload_checks

# The definitions live in raman_limits; named here too, so the Raman QC services stay one API.
from .raman_limits import (
    limit_set_for,
    qc_judge,
    qc_limit_defaults_fill,
    qc_limit_set_define,
    reference_analyte_define,
)
from .raman_release import FLAG_CATEGORY, substrate_release, substrate_release_check
from .raman_requests import (
    QcImportRequest,
    ReferenceImportRequest,
    acquisition_fields,
    check_acquisition,
    require_positive_parameters,
    store_raw_file,
)
from .raman_results import results_fields

__all__ = [
    "QcImportRequest", "ReferenceImportRequest", "qc_measurement_import",
    "qc_judge", "qc_limit_defaults_fill", "qc_limit_set_define", "reference_analyte_define",
    "reference_measurement_import", "substrate_release", "substrate_release_check",
]

# ---------------------------------------------------------------------------------------
# Checks shared by both imports
# ---------------------------------------------------------------------------------------


def _refuse_reimport(earlier, digest: str) -> None:
    """The same file (by SHA-256) imported twice would count one measurement twice."""
    same = earlier.filter(raw_sha256=digest, voided_at__isnull=True).first()
    if same is not None:
        raise refusal(FILE_FIELD, f"This file (sha256 {digest[:12]}…) was already imported as "
                                  f"{same.code} on {same.measured_on.isoformat()}.",
                      "duplicate_file")


def _refuse_reuse(substrate: Substrate, digest: str) -> None:
    """One map file passed off as QC of several substrates, unless said to be shared."""
    other = (QcMeasurement.objects.filter(raw_sha256=digest, voided_at__isnull=True)
             .exclude(substrate=substrate).select_related("substrate").first())
    if other is not None:
        raise refusal(FILE_FIELD, f"This file (sha256 {digest[:12]}…) is already the QC of "
                                  f"{other.substrate.code} ({other.code}); a map measures one "
                                  "substrate.  If it really is one measurement of several "
                                  "substrates, say so with shared_measurement.", "file_reused")



# ---------------------------------------------------------------------------------------
# Reference measurement
# ---------------------------------------------------------------------------------------


@transaction.atomic
def reference_measurement_import(*, actor: User | None,
                                 request: ReferenceImportRequest | None = None,
                                 **parameters) -> ReferenceMeasurement:
    """Import a non-enhanced Raman spectrum of the analyte at a known concentration.

    Takes a ``ReferenceImportRequest`` or its fields as keyword arguments.
    """
    request = request or ReferenceImportRequest(**parameters)
    require_role(actor, MAKER, action="Importing a reference measurement")
    analyte = check_acquisition(request)
    require_positive_parameters(request, ("concentration_mol_L", "effective_height_um",
                                "effective_area_um2"))
    data = read_upload(request.upload)
    _refuse_reimport(ReferenceMeasurement.objects.filter(analyte_lot=request.analyte_lot),
                     request.upload.sha256)
    if isinstance(data, RamanMap):
        raise refusal(FILE_FIELD, "A reference measurement is one spectrum, not a map.",
                      "map_not_allowed")
    band_cm1 = analyte.reference_band_cm1 or analyte.qc_band_cm1
    band = analyse(data, band_center_cm1=band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
                   power_mW=request.power_mW, integration_s=request.integration_s,
                   accumulations=request.accumulations)
    reference = ReferenceMeasurement(
        analyte=analyte, **acquisition_fields(request), band_center_cm1=band_cm1,
        band_window_cm1=analyte.qc_band_window_cm1, **band.band_fields(),
        **results_fields(band.arrays, filename=request.filename),
        concentration_mol_L=request.concentration_mol_L,
        effective_height_um=request.effective_height_um,
        effective_area_um2=request.effective_area_um2,
        concentration_rel_u=request.concentration_rel_u,
        effective_height_rel_u=request.effective_height_rel_u)
    with _files_removed_if_failed(reference):
        store_raw_file(reference, request.upload)
        _save_new(reference, actor=actor)
        _link([(request.analyte_lot, "reference analyte")], reference,
              used_on=request.measured_on, actor=actor)
    return reference


# ---------------------------------------------------------------------------------------
# QC measurement: EF, verdict, flag and hold
# ---------------------------------------------------------------------------------------


def _hold_failed(measurement: QcMeasurement, substrate: Substrate, actor: User | None) -> None:
    """Raise the QC flag on the substrate and put a released substrate back on hold."""
    summary = " ".join(measurement.failure_reasons)
    flag_raise(actor=actor, target=substrate, category=FLAG_CATEGORY,
               message=f"QC {measurement.code} failed: {summary}")
    if substrate.status == Status.RELEASED:
        # A consequence of the import, not a reviewer's decision: no role check here.
        _transition(lock(substrate), Status.QUARANTINE, actor=actor,
                    reason=f"Held: QC {measurement.code} failed. {summary}")


def _check_reference(request: QcImportRequest, analyte: ReferenceAnalyte) -> None:
    reference = request.reference
    if reference is None:
        return
    if reference.analyte_id != analyte.pk:
        raise refusal("reference", f"{reference.code} is a reference of {reference.analyte}, "
                                   f"not {analyte.name}.", "reference_mismatch")
    if reference.laser_nm != request.laser_nm:
        raise refusal("reference", f"{reference.code} was measured at {reference.laser_nm:g} nm; "
                                   f"this measurement at {request.laser_nm:g} nm.",
                      "laser_mismatch")


@dataclass(frozen=True)
class CheckedQcImport:
    """What the checks of a QC import found: the records it will be judged with."""

    substrate: Substrate
    analyte: ReferenceAnalyte
    limits: object  # QcLimitSet


def qc_import_check(*, actor: User | None, request: QcImportRequest) -> CheckedQcImport:
    """Every check that needs no file: role, lot, dates, settings, reference, limits."""
    require_role(actor, MAKER, action="Importing a QC measurement")
    substrate = Substrate.objects.get(pk=request.substrate.pk)
    analyte = check_acquisition(request)
    _check_substrates_usable([substrate], role="a QC substrate", on_date=request.measured_on,
                             field="substrate", date_field="measured_on")
    _check_reference(request, analyte)
    _check_values(ReferenceAnalyte, {"surface_density_per_nm2": (
        analyte.surface_density_per_nm2 if request.surface_density_per_nm2 is None
        else request.surface_density_per_nm2)})
    return CheckedQcImport(substrate, analyte, limit_set_for(substrate, analyte))


def qc_import_analyse(request: QcImportRequest, checked: CheckedQcImport, *,
                      progress=None) -> tuple[bool, object]:
    """Read and analyse the file (no writes): (whether it is a map, the measured band).

    ``progress(state)`` is told "parsing" and "analysing" as the work moves on.
    """
    if progress:
        progress("parsing")
    data = read_upload(request.upload)
    if progress:
        progress("analysing")
    band = analyse(data, band_center_cm1=checked.analyte.qc_band_cm1,
                   band_window_cm1=checked.analyte.qc_band_window_cm1,
                   power_mW=request.power_mW, integration_s=request.integration_s,
                   accumulations=request.accumulations,
                   measure=checked.limits.intensity_measure)
    return isinstance(data, RamanMap), band


def refuse_qc_reimport(substrate: Substrate, digest: str, *, shared: bool = False) -> None:
    """The same file (``digest``, its SHA-256) twice on one substrate would count one
    measurement twice, and one map passed off as QC of several substrates would vouch for
    pieces it never measured (unless the maker says it is one shared measurement)."""
    _refuse_reimport(QcMeasurement.objects.filter(substrate=substrate), digest)
    if not shared:
        _refuse_reuse(substrate, digest)


def qc_import_record(*, actor: User | None, request: QcImportRequest,
                     checked: CheckedQcImport, is_map: bool, band) -> QcMeasurement:
    """Judge an analysed import and store it with its lineage, flag and hold (one transaction
    with the caller's: call inside ``transaction.atomic``)."""
    substrate, analyte, limits = checked.substrate, checked.analyte, checked.limits
    factor, ef_inputs, coverage = (None, None, None)
    if request.reference is not None:
        coverage = request.coverage(analyte, substrate)
        factor, ef_inputs = substrate_enhancement(band, request.reference, coverage,
                                                  measure=limits.intensity_measure)
    reasons = qc_judge(limits=limits, band_center_cm1=analyte.qc_band_cm1,
                       band_position_cm1=band.band_position_cm1, snr=band.snr,
                       rsd_percent=band.rsd_percent,
                       enhancement_factor=factor.value if factor else None,
                       n_points=band.n_points)
    if band.band_limit_note:
        reasons.append(f"The band fit is not a measurement: {band.band_limit_note}.")
    measurement = QcMeasurement(
        substrate=substrate, analyte=analyte, reference=request.reference, limit_set=limits,
        product_kind=substrate.stage, **acquisition_fields(request),
        band_center_cm1=analyte.qc_band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
        is_map=is_map, **band.band_fields(), **band.map_fields(),
        **results_fields(band.arrays, filename=request.filename),
        **enhancement_fields(factor, ef_inputs, coverage.surface_area if coverage else None),
        intensity_measure=limits.intensity_measure, limits_used=limits.as_snapshot(),
        passed=not reasons, failure_reasons=reasons)
    parents = [(substrate, "measured"), (request.analyte_lot, "reference analyte")]
    if request.reference is not None:
        parents.append((request.reference, "enhancement reference"))
    with _files_removed_if_failed(measurement):
        store_raw_file(measurement, request.upload)
        _save_new(measurement, actor=actor)
        _link(parents, measurement, used_on=request.measured_on, actor=actor)
        if reasons:
            _hold_failed(measurement, substrate, actor)
    return measurement


@transaction.atomic
def qc_measurement_import(*, actor: User | None, request: QcImportRequest | None = None,
                          progress=None, **parameters) -> QcMeasurement:
    """Import a reference-analyte spectrum or map measured on a substrate and judge it.

    Takes a ``QcImportRequest`` or its fields as keyword arguments.  The file is read and
    analysed by ``qc.analysis`` (``raman_analysis``); with a ``reference`` the substrate
    enhancement factor of Le Ru et al. (2007) is worked out (``enhancement``) with the
    analyte's monolayer density (or ``surface_density_per_nm2``) and the reference's
    scattering volume.  The figures are judged against the limit set for the substrate's
    stage and analyte.  A failure raises an open ``qc`` flag on the substrate and puts a
    released substrate back in quarantine.  ``progress(state)`` hears "parsing",
    "analysing" and "judging" (the commands draw a progress bar from it).

    The EF's surface-area factor is derived from the substrate's deposition unless
    ``surface_area_factor`` is entered (with ``surface_area_source``) or
    ``surface_area_assumed_one`` is chosen (``enhancement.surface_area_for``); the limit
    set's ``intensity_measure`` says whether band heights or areas are used, and both the
    origin and the measure are stored with the EF.
    """
    request = request or QcImportRequest(**parameters)
    checked = qc_import_check(actor=actor, request=request)
    read_upload_checks(request)
    refuse_qc_reimport(checked.substrate, request.upload.sha256,
                       shared=request.shared_measurement)
    is_map, band = qc_import_analyse(request, checked, progress=progress)
    if progress:
        progress("judging")
    return qc_import_record(actor=actor, request=request, checked=checked, is_map=is_map,
                            band=band)
