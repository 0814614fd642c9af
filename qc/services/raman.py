"""Reference-analyte Raman QC imports and release (writes).

An import is one request object (``QcImportRequest``, ``ReferenceImportRequest``) taken by a
thin orchestration: check the inputs, read and analyse the file (``raman_analysis``), work
out the enhancement factor (``enhancement``), judge against the lab's limits
(``raman_limits.qc_judge``), and store everything in one transaction, with the flag and hold
a failure calls for.  A bad file or value is a ``ValidationError`` keyed by the parameter at
fault, or by ``raw_file`` with the 1-based line, and nothing is saved.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date

from django.core.files.base import ContentFile
from django.db import transaction

from inventory.errors import refusal
from inventory.flags import flags_open
from inventory.lifecycle import check_usable
from inventory.models import ReagentKind, ReagentLot, Status, Substrate
from inventory.roles import MAKER, require_role
from inventory.services import flag_raise, record_release, record_transition, sha256_of
from inventory.services.toolkit import User, lock
from inventory.services.toolkit import check_substrates_usable as _check_substrates_usable
from inventory.services.toolkit import check_values as _check_values
from inventory.services.toolkit import files_removed_if_failed as _files_removed_if_failed
from inventory.services.toolkit import link as _link
from inventory.services.toolkit import require_kind as _require_kind
from inventory.services.toolkit import require_not_future as _require_not_future
from inventory.services.toolkit import save_new as _save_new
from inventory.services.toolkit import transition as _transition
from inventory.signatures import SignatureIntent
from qc.analysis.spectrum import RamanMap

from ..models.imports import QcImport
from ..models.raman import QcMeasurement, ReferenceAnalyte, ReferenceMeasurement
from ..selectors.current import qc_measurement_get_latest
from .enhancement import (
    FILM_HEIGHT_REL_U_DEFAULT,
    SurfaceCoverage,
    enhancement_fields,
    substrate_enhancement,
    surface_area_for,
)
from .raman_analysis import FILE_FIELD, analyse, read_upload, read_upload_checks

# The definitions live in raman_limits; named here too, so the Raman QC services stay one API.
from .raman_limits import (
    limit_set_for,
    qc_judge,
    qc_limit_defaults_fill,
    qc_limit_set_define,
    reference_analyte_define,
)
from .raman_results import results_fields

__all__ = [
    "QcImportRequest", "ReferenceImportRequest", "qc_measurement_import",
    "qc_judge", "qc_limit_defaults_fill", "qc_limit_set_define", "reference_analyte_define",
    "reference_measurement_import", "substrate_release", "substrate_release_check",
]

FLAG_CATEGORY = "qc"


# ---------------------------------------------------------------------------------------
# The parameters of an import
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True, kw_only=True)
class _Acquisition:
    """What every Raman import names: the analyte lot, the file and how it was measured."""

    analyte_lot: ReagentLot
    filename: str
    content: bytes
    measured_on: date
    laser_nm: float
    power_mW: float
    integration_s: float
    accumulations: int = 1
    objective: str = ""
    analyte: ReferenceAnalyte | None = None
    notes: str = ""


@dataclass(frozen=True, kw_only=True)
class ReferenceImportRequest(_Acquisition):
    """A non-enhanced spectrum of the analyte at a known concentration (Le Ru et al. 2007)."""

    concentration_mol_L: float
    effective_height_um: float
    effective_area_um2: float
    concentration_rel_u: float = 0.0
    effective_height_rel_u: float = 0.0


@dataclass(frozen=True, kw_only=True)
class QcImportRequest(_Acquisition):
    """A reference-analyte spectrum or map measured on a substrate, to be judged."""

    substrate: Substrate
    reference: ReferenceMeasurement | None = None
    surface_density_per_nm2: float | None = None
    surface_density_rel_u: float = 0.0
    # The surface-area factor: derived from the substrate's deposition unless entered (with
    # its source) or assumed to be 1 by explicit choice (enhancement.surface_area_for).
    surface_area_factor: float | None = None
    surface_area_rel_u: float = 0.0
    surface_area_source: str = ""
    surface_area_assumed_one: bool = False
    film_height_rel_u: float = FILM_HEIGHT_REL_U_DEFAULT
    # One file that really measured several substrates (else a reused file is refused).
    shared_measurement: bool = False

    def coverage(self, analyte: ReferenceAnalyte, substrate: Substrate) -> SurfaceCoverage:
        """Surface coverage for the EF: the analyte's monolayer density unless given, and
        the substrate's metal area per projected area."""
        density = (analyte.surface_density_per_nm2 if self.surface_density_per_nm2 is None
                   else self.surface_density_per_nm2)
        area = surface_area_for(substrate, entered=self.surface_area_factor,
                                entered_rel_u=self.surface_area_rel_u,
                                source=self.surface_area_source,
                                assumed_one=self.surface_area_assumed_one,
                                film_height_rel_u=self.film_height_rel_u)
        return SurfaceCoverage(surface_density_per_nm2=density, surface_area=area,
                               surface_density_rel_u=self.surface_density_rel_u)


def _acquisition_fields(request: _Acquisition) -> dict:
    """The acquisition as stored on every measurement (the file kept exactly as uploaded)."""
    return dict(
        analyte_lot=request.analyte_lot, measured_on=request.measured_on,
        raw_file=ContentFile(request.content, name=request.filename),
        raw_filename=request.filename, raw_sha256=sha256_of(request.content),
        laser_nm=request.laser_nm, power_mW=request.power_mW,
        integration_s=request.integration_s, accumulations=request.accumulations,
        objective=request.objective, notes=request.notes)


# ---------------------------------------------------------------------------------------
# Checks shared by both imports
# ---------------------------------------------------------------------------------------


def _resolve_analyte(lot: ReagentLot, analyte: ReferenceAnalyte | None) -> ReferenceAnalyte:
    _require_kind(lot, [ReagentKind.REFERENCE_ANALYTE], field="analyte_lot")
    known = list(lot.reference_analytes.all())
    if analyte is None:
        if len(known) != 1:
            raise refusal("analyte_lot", f"{lot.code} is not linked to exactly one reference "
                                         "analyte; say which analyte it holds.", "analyte_unknown")
        return known[0]
    if known and analyte not in known:
        raise refusal("analyte", f"{lot.code} holds {', '.join(a.name for a in known)}, "
                                 f"not {analyte.name}.", "analyte_mismatch")
    return analyte


def _check_acquisition(request: _Acquisition) -> ReferenceAnalyte:
    """Check the lot, date and settings of an acquisition; the analyte it measured."""
    analyte = _resolve_analyte(request.analyte_lot, request.analyte)
    _require_not_future(request.measured_on, field="measured_on")
    check_usable(request.analyte_lot, role="the reference analyte",
                 on_date=request.measured_on, field="analyte_lot")
    _require_positive(request, ("laser_nm", "power_mW", "integration_s"))
    accumulations = request.accumulations
    if int(accumulations) != accumulations or accumulations < 1:
        raise refusal("accumulations", "Must be a whole number of at least 1.", "invalid_value")
    return analyte


def _require_positive(request, fields) -> None:
    for field in fields:
        value = getattr(request, field)
        if value is None or not math.isfinite(value) or value <= 0:
            raise refusal(field, f"Must be a positive number, got {value}.", "invalid_value")


def _refuse_reimport(earlier, content: bytes) -> None:
    """The same file (by SHA-256) imported twice would count one measurement twice."""
    digest = sha256_of(content)
    same = earlier.filter(raw_sha256=digest, voided_at__isnull=True).first()
    if same is not None:
        raise refusal(FILE_FIELD, f"This file (sha256 {digest[:12]}…) was already imported as "
                                  f"{same.code} on {same.measured_on.isoformat()}.",
                      "duplicate_file")


def _refuse_reuse(substrate: Substrate, content: bytes) -> None:
    """One map file passed off as QC of several substrates, unless said to be shared."""
    digest = sha256_of(content)
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
    analyte = _check_acquisition(request)
    _require_positive(request, ("concentration_mol_L", "effective_height_um",
                                "effective_area_um2"))
    data = read_upload(request.content, request.filename)
    _refuse_reimport(ReferenceMeasurement.objects.filter(analyte_lot=request.analyte_lot),
                     request.content)
    if isinstance(data, RamanMap):
        raise refusal(FILE_FIELD, "A reference measurement is one spectrum, not a map.",
                      "map_not_allowed")
    band_cm1 = analyte.reference_band_cm1 or analyte.qc_band_cm1
    band = analyse(data, band_center_cm1=band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
                   power_mW=request.power_mW, integration_s=request.integration_s,
                   accumulations=request.accumulations)
    reference = ReferenceMeasurement(
        analyte=analyte, **_acquisition_fields(request), band_center_cm1=band_cm1,
        band_window_cm1=analyte.qc_band_window_cm1, **band.band_fields(),
        **results_fields(band.arrays, filename=request.filename),
        concentration_mol_L=request.concentration_mol_L,
        effective_height_um=request.effective_height_um,
        effective_area_um2=request.effective_area_um2,
        concentration_rel_u=request.concentration_rel_u,
        effective_height_rel_u=request.effective_height_rel_u)
    with _files_removed_if_failed(reference):
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
    analyte = _check_acquisition(request)
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
    data = read_upload(request.content, request.filename)
    if progress:
        progress("analysing")
    band = analyse(data, band_center_cm1=checked.analyte.qc_band_cm1,
                   band_window_cm1=checked.analyte.qc_band_window_cm1,
                   power_mW=request.power_mW, integration_s=request.integration_s,
                   accumulations=request.accumulations,
                   measure=checked.limits.intensity_measure)
    return isinstance(data, RamanMap), band


def refuse_qc_reimport(substrate: Substrate, content: bytes, *, shared: bool = False) -> None:
    """The same file twice on one substrate would count one measurement twice, and one map
    passed off as QC of several substrates would vouch for pieces it never measured
    (unless the maker says it is one shared measurement)."""
    _refuse_reimport(QcMeasurement.objects.filter(substrate=substrate), content)
    if not shared:
        _refuse_reuse(substrate, content)


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
        product_kind=substrate.stage, **_acquisition_fields(request),
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
    refuse_qc_reimport(checked.substrate, request.content,
                       shared=request.shared_measurement)
    is_map, band = qc_import_analyse(request, checked, progress=progress)
    if progress:
        progress("judging")
    return qc_import_record(actor=actor, request=request, checked=checked, is_map=is_map,
                            band=band)


# ---------------------------------------------------------------------------------------
# Release
# ---------------------------------------------------------------------------------------


def substrate_release_check(record) -> str | None:
    """Release rule for substrates (``SERSLEDGER_RELEASE_CHECKS``): QC passed, no open flag.

    Refused when there is no QC at the substrate's current stage, the latest failed, or a
    ``qc`` flag on it is still open (it must be resolved with a reason first).  Voided
    measurements and flags do not count.  Returns the note for the status-change reason.
    """
    if not isinstance(record, Substrate):
        return None
    if QcImport.objects.filter(substrate=record, state__in=QcImport.PENDING).exists():
        raise refusal("substrate", f"A QC file of {record.code} is still being analysed; "
                                   "release it once that QC is judged.", "qc_pending")
    latest = qc_measurement_get_latest(record, fields=("code", "passed", "failure_reasons"))
    if latest is None:
        raise refusal("substrate", f"{record.code} has no QC measurement at its current "
                                   f"stage ({record.get_stage_display()}).", "qc_missing")
    if latest.stale_reason:
        raise refusal("substrate", f"The latest QC of {record.code} ({latest.code}) has stale "
                                   f"figures: {latest.stale_reason}", "figures_stale")
    if not latest.passed:
        raise refusal("substrate", f"The latest QC of {record.code} ({latest.code}) failed: "
                                   f"{' '.join(latest.failure_reasons)}", "qc_failed")
    open_flags = list(flags_open(target_codes=[record.code], category=FLAG_CATEGORY)
                      .values_list("code", flat=True))
    if open_flags:
        raise refusal("substrate", f"Resolve the open QC flag(s) {', '.join(open_flags)} on "
                                   f"{record.code} first.", "open_flag")
    return f"QC {latest.code} passed"


@transaction.atomic
def substrate_release(*, actor: User | None, substrate: Substrate,
                      signature: SignatureIntent | None = None) -> Substrate:
    """Release a substrate whose latest QC (at its current stage) passed.

    With a ``signature`` this is ``inventory.services.record_release`` (which applies the
    same QC rule through ``SERSLEDGER_RELEASE_CHECKS``); without one it is the unsigned
    release the system and the demo loader use.
    """
    if signature is not None:
        return record_release(actor=actor, record=substrate, signature=signature)
    locked = Substrate.objects.select_for_update().get(pk=substrate.pk)
    note = substrate_release_check(locked)
    return record_transition(actor=actor, record=locked, to_status=Status.RELEASED,
                             reason=note)
