"""Reference-analyte Raman QC (writes): analytes, limits, reference and QC imports, release.

Every number comes from ``qc.analysis`` (readers, ``qc_pipeline``, ``enhancement``); this
module only decides which inputs go in, judges the result against the lab's limits, stores
everything in one transaction, and raises the flag and hold a failure calls for.  A bad file
or value is a ``ValidationError`` keyed by the parameter at fault, or by ``raw_file`` with the
1-based line, and nothing is saved.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from typing import Any

import numpy as np
from django.core.files.base import ContentFile
from django.db import transaction

from inventory.errors import refusal
from inventory.lifecycle import check_usable
from inventory.models import Flag, ReagentKind, ReagentLot, Status, Substrate
from inventory.roles import ADMINISTRATOR, MAKER, require_role
from inventory.services import flag_raise, record_release, record_transition, sha256_of
from inventory.services.toolkit import User, lock
from inventory.services.toolkit import check_substrates_usable as _check_substrates_usable
from inventory.services.toolkit import check_upload as _check_upload
from inventory.services.toolkit import files_removed_if_failed as _files_removed_if_failed
from inventory.services.toolkit import link as _link
from inventory.services.toolkit import require_kind as _require_kind
from inventory.services.toolkit import require_not_future as _require_not_future
from inventory.services.toolkit import save_new as _save_new
from inventory.services.toolkit import stamp_history as _stamp_history
from inventory.services.toolkit import transition as _transition
from inventory.signatures import SignatureIntent
from qc.analysis import enhancement, qc_pipeline
from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import decode_text, read_map, read_spectrum
from qc.analysis.spectrum import RamanMap, Spectrum

from ..models.raman import (
    QcLimitSet,
    QcMeasurement,
    ReferenceAnalyte,
    ReferenceMeasurement,
)

__all__ = [
    "qc_judge", "qc_limit_set_define", "qc_measurement_import", "reference_analyte_define",
    "reference_measurement_import", "substrate_release", "substrate_release_check",
]

FLAG_CATEGORY = "qc"
FILE_FIELD = "raw_file"
# Parameters a science function may name; anything else it names is inside the file.
_PARAMETERS = {"laser_nm", "power_mW", "integration_s", "accumulations",
               "surface_density_per_nm2", "surface_area_factor",
               "concentration_mol_L", "effective_height_um", "effective_area_um2"}
# Science-side parameter names that mean one of ours.
_RENAMED = {"molecule_density_per_nm2": "surface_density_per_nm2",
            "concentration_M": "concentration_mol_L", "spot_area_um2": "effective_area_um2"}


# ---------------------------------------------------------------------------------------
# Definitions an administrator keeps
# ---------------------------------------------------------------------------------------


@transaction.atomic
def reference_analyte_define(
    *, actor: User | None, name: str, band_positions_cm1: Sequence[float],
    band_positions_source: str, qc_band_cm1: float, surface_density_per_nm2: float,
    surface_density_source: str, qc_band_window_cm1: float = 40.0,
    reference_band_cm1: float | None = None, lots: Sequence[ReagentLot] = (),
) -> ReferenceAnalyte:
    """Record a reference analyte, the band used for QC and its monolayer density."""
    require_role(actor, ADMINISTRATOR, action="Defining a reference analyte")
    for lot in lots:
        _require_kind(lot, [ReagentKind.REFERENCE_ANALYTE], field="lots")
    if not band_positions_source.strip() or not surface_density_source.strip():
        field = "band_positions_source" if not band_positions_source.strip() \
            else "surface_density_source"
        raise refusal(field, "Say where the value comes from (or write 'from memory').",
                      "source_required")
    analyte = ReferenceAnalyte(
        name=name, band_positions_cm1=[float(v) for v in band_positions_cm1],
        band_positions_source=band_positions_source, qc_band_cm1=qc_band_cm1,
        qc_band_window_cm1=qc_band_window_cm1, reference_band_cm1=reference_band_cm1,
        surface_density_per_nm2=surface_density_per_nm2,
        surface_density_source=surface_density_source, created_by=actor, updated_by=actor)
    analyte.full_clean()
    _stamp_history(analyte, actor=actor, reason="")
    analyte.save()
    analyte.lots.set(lots)
    return analyte


@transaction.atomic
def qc_limit_set_define(
    *, actor: User | None, product_kind: str, analyte: ReferenceAnalyte,
    band_position_tolerance_cm1: float, valid_days: int,
    min_enhancement_factor: float | None = None, max_rsd_percent: float | None = None,
    min_snr: float | None = None, is_example: bool = False, rationale: str = "",
) -> QcLimitSet:
    """Create or replace the limits for one product kind tested with one analyte."""
    require_role(actor, ADMINISTRATOR, action="Setting QC limits")
    limits = QcLimitSet.objects.select_for_update().filter(
        product_kind=product_kind, analyte=analyte).first() or QcLimitSet(
        product_kind=product_kind, analyte=analyte, created_by=actor)
    values = dict(band_position_tolerance_cm1=band_position_tolerance_cm1,
                  valid_days=valid_days, min_enhancement_factor=min_enhancement_factor,
                  max_rsd_percent=max_rsd_percent, min_snr=min_snr, is_example=is_example,
                  rationale=rationale)
    for name, value in values.items():
        setattr(limits, name, value)
    limits.updated_by = actor
    if limits.pk:
        limits.version += 1
    limits.full_clean()
    _stamp_history(limits, actor=actor, reason=rationale)
    limits.save()
    return limits


# ---------------------------------------------------------------------------------------
# Reading and analysing a file
# ---------------------------------------------------------------------------------------


def _as_validation_error(error: AnalysisInputError):
    """A science error as a refusal: keyed by our parameter, or by the file with its line."""
    field = _RENAMED.get(error.field or "", error.field)
    if field in _PARAMETERS and error.line is None:
        return refusal(field, error.message, "invalid_value")
    where = f"line {error.line}: " if error.line is not None else ""
    return refusal(FILE_FIELD, f"{where}{error.message}", "bad_file")


def _is_map_file(text: str, filename: str) -> bool:
    """A map has x, y and at least two more columns; JCAMP-DX and two columns are spectra."""
    first = next((line.strip() for line in text.splitlines()
                  if line.strip() and not line.lstrip().startswith("#")), "")
    if first.startswith("##") or filename.lower().endswith((".jdx", ".dx", ".jcamp", ".jcm")):
        return False
    return len([c for c in re.split(r"[,;\t]|\s+", first) if c]) >= 4


def _read(content: bytes, filename: str) -> Spectrum | RamanMap:
    _check_upload(content, field=FILE_FIELD, filename=filename)
    if not content or not content.strip():
        raise refusal(FILE_FIELD, "The file is empty.", "empty_file")
    try:
        text = decode_text(content)
        if _is_map_file(text, filename):
            return read_map(text)
        spectrum = read_spectrum(text, filename)
    except AnalysisInputError as error:
        raise _as_validation_error(error) from None
    if spectrum.x_unit not in ("1/cm", "cm-1", "cm^-1"):
        raise refusal(FILE_FIELD, f"The spectrum axis is in '{spectrum.x_unit}'; QC needs Raman "
                                  "shift in cm⁻¹.", "wrong_axis_unit")
    return spectrum


@dataclass(frozen=True)
class _Numbers:
    """What the pipeline gave, in the names the models use (counts/(mW·s) throughout)."""

    band_position_cm1: float
    band_fwhm_cm1: float
    normalised_height_counts_per_mW_s: float
    normalised_height_u_counts_per_mW_s: float
    normalised_area_counts_cm1_per_mW_s: float
    snr: float
    spikes_removed: int
    n_points: int = 1
    median_height_counts_per_mW_s: float | None = None
    rsd_percent: float | None = None
    fraction_within_20_percent: float | None = None
    point_values: dict | None = None
    map_nx: int | None = None
    map_ny: int | None = None
    map_step_um: float | None = None

    @property
    def height_rel_u(self) -> float:
        return _relative(self.normalised_height_u_counts_per_mW_s,
                         self.normalised_height_counts_per_mW_s)


def _relative(u: float, value: float) -> float:
    """Relative standard error of a fitted height (0 when it cannot be estimated)."""
    return u / value if value > 0 and math.isfinite(u) else 0.0


def _measured_fields(numbers: _Numbers) -> dict:
    """The band figures every acquisition stores, as model keyword arguments."""
    return dict(
        band_position_cm1=numbers.band_position_cm1, band_fwhm_cm1=numbers.band_fwhm_cm1,
        normalised_height_counts_per_mW_s=numbers.normalised_height_counts_per_mW_s,
        normalised_height_u_counts_per_mW_s=(numbers.normalised_height_u_counts_per_mW_s
                                             if math.isfinite(
                                                 numbers.normalised_height_u_counts_per_mW_s)
                                             else None),
        normalised_area_counts_cm1_per_mW_s=numbers.normalised_area_counts_cm1_per_mW_s,
        snr=numbers.snr, spikes_removed=numbers.spikes_removed)


def _map_step_um(raman_map: RamanMap) -> float | None:
    """The grid pitch: the median spacing of the distinct stage positions."""
    xs, ys = raman_map.grid_axes()
    steps = np.concatenate([np.diff(xs), np.diff(ys)])
    return float(np.median(steps)) if steps.size else None


def _analyse(data: Spectrum | RamanMap, *, band_center_cm1: float, band_window_cm1: float,
             power_mW: float, integration_s: float, accumulations: int) -> _Numbers:
    settings = dict(band_center_cm1=band_center_cm1, band_window_cm1=band_window_cm1,
                    power_mW=power_mW, integration_s=integration_s,
                    accumulations=accumulations)
    try:
        if isinstance(data, RamanMap):
            result = qc_pipeline.analyse_qc_map(data.shift_cm1, data.intensity, **settings)
            return _map_numbers(result, data)
        result = qc_pipeline.analyse_qc_spectrum(data.x, data.y, **settings)
        return _band_numbers(result.band, spikes_removed=result.spikes_removed)
    except AnalysisInputError as error:
        raise _as_validation_error(error) from None


def _band_numbers(band, *, spikes_removed: int, **extra) -> _Numbers:
    return _Numbers(
        band_position_cm1=float(band.position_cm1), band_fwhm_cm1=float(band.fwhm_cm1),
        normalised_height_counts_per_mW_s=float(band.height),
        normalised_height_u_counts_per_mW_s=float(band.height_se),
        normalised_area_counts_cm1_per_mW_s=float(band.area), snr=float(band.snr),
        spikes_removed=int(spikes_removed), **extra)


def _map_numbers(result, raman_map: RamanMap) -> _Numbers:
    """Map figures: headline band from the mean spectrum, spread from the per-point heights."""
    heights = np.asarray(result.height_per_point)
    point_values = {"x_um": raman_map.x_um.tolist(), "y_um": raman_map.y_um.tolist(),
                    "normalised_height_counts_per_mW_s": heights.tolist()}
    nx = ny = step = None
    if raman_map.grid_shape is not None:
        ny, nx = (int(n) for n in raman_map.grid_shape)
        xs, ys = raman_map.grid_axes()
        point_values["image"] = {"x_um": xs.tolist(), "y_um": ys.tolist(),
                                 "rows": raman_map.image(heights).tolist()}
        step = _map_step_um(raman_map)
    return _band_numbers(
        result.mean_band, spikes_removed=result.spikes_removed,
        n_points=int(result.n_points),
        median_height_counts_per_mW_s=float(result.median_height_counts_per_mW_s),
        rsd_percent=float(result.rsd_percent),
        fraction_within_20_percent=float(result.fraction_within_tolerance),
        point_values=point_values, map_nx=nx, map_ny=ny, map_step_um=step)


# ---------------------------------------------------------------------------------------
# Reference measurement
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


def _check_acquisition(*, lot: ReagentLot, measured_on: date, laser_nm: float, power_mW: float,
                       integration_s: float, accumulations: int) -> None:
    _require_not_future(measured_on, field="measured_on")
    check_usable(lot, role="the reference analyte", on_date=measured_on, field="analyte_lot")
    for field, value in (("laser_nm", laser_nm), ("power_mW", power_mW),
                         ("integration_s", integration_s)):
        if value is None or not math.isfinite(value) or value <= 0:
            raise refusal(field, f"Must be a positive number, got {value}.", "invalid_value")
    if int(accumulations) != accumulations or accumulations < 1:
        raise refusal("accumulations", "Must be a whole number of at least 1.", "invalid_value")


@transaction.atomic
def reference_measurement_import(
    *, actor: User | None, analyte_lot: ReagentLot, filename: str, content: bytes,
    measured_on: date, laser_nm: float, power_mW: float, integration_s: float,
    concentration_mol_L: float, effective_height_um: float, effective_area_um2: float,
    accumulations: int = 1, objective: str = "", analyte: ReferenceAnalyte | None = None,
    concentration_rel_u: float = 0.0, effective_height_rel_u: float = 0.0, notes: str = "",
) -> ReferenceMeasurement:
    """Import a non-enhanced Raman spectrum of the analyte at a known concentration."""
    require_role(actor, MAKER, action="Importing a reference measurement")
    analyte = _resolve_analyte(analyte_lot, analyte)
    _check_acquisition(lot=analyte_lot, measured_on=measured_on, laser_nm=laser_nm,
                       power_mW=power_mW, integration_s=integration_s,
                       accumulations=accumulations)
    for field, value in (("concentration_mol_L", concentration_mol_L),
                         ("effective_height_um", effective_height_um),
                         ("effective_area_um2", effective_area_um2)):
        if value is None or not math.isfinite(value) or value <= 0:
            raise refusal(field, f"Must be a positive number, got {value}.", "invalid_value")
    data = _read(content, filename)
    _refuse_reimport(ReferenceMeasurement.objects.filter(analyte_lot=analyte_lot), content)
    if isinstance(data, RamanMap):
        raise refusal(FILE_FIELD, "A reference measurement is one spectrum, not a map.",
                      "map_not_allowed")
    band_cm1 = analyte.reference_band_cm1 or analyte.qc_band_cm1
    numbers = _analyse(data, band_center_cm1=band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
                       power_mW=power_mW, integration_s=integration_s,
                       accumulations=accumulations)
    reference = ReferenceMeasurement(
        analyte=analyte, analyte_lot=analyte_lot, measured_on=measured_on,
        raw_file=ContentFile(content, name=filename), raw_filename=filename,
        raw_sha256=sha256_of(content), laser_nm=laser_nm, power_mW=power_mW,
        integration_s=integration_s, accumulations=accumulations, objective=objective,
        band_center_cm1=band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
        **_measured_fields(numbers), concentration_mol_L=concentration_mol_L,
        effective_height_um=effective_height_um, effective_area_um2=effective_area_um2,
        concentration_rel_u=concentration_rel_u, effective_height_rel_u=effective_height_rel_u,
        notes=notes)
    with _files_removed_if_failed(reference):
        _save_new(reference, actor=actor)
        _link([(analyte_lot, "reference analyte")], reference, used_on=measured_on,
              actor=actor)
    return reference


# ---------------------------------------------------------------------------------------
# QC measurement: EF, verdict, flag and hold
# ---------------------------------------------------------------------------------------


def _enhancement(numbers: _Numbers, reference: ReferenceMeasurement, *,
                 surface_density_per_nm2: float, surface_density_rel_u: float,
                 surface_area_factor: float, surface_area_rel_u: float) -> tuple[Any, dict]:
    """Substrate EF of Le Ru et al. (2007) with the reference's scattering volume."""
    inputs = {
        "definition": "SSEF (Le Ru et al., J. Phys. Chem. C 2007)",
        "reference_code": reference.code,
        "sers_intensity_counts_per_mW_s": numbers.normalised_height_counts_per_mW_s,
        "sers_intensity_rel_u": numbers.height_rel_u,
        "raman_intensity_counts_per_mW_s": reference.normalised_height_counts_per_mW_s,
        "raman_intensity_rel_u": _relative(
            reference.normalised_height_u_counts_per_mW_s or float("nan"),
            reference.normalised_height_counts_per_mW_s),
        "surface_density_per_nm2": surface_density_per_nm2,
        "surface_density_rel_u": surface_density_rel_u,
        "surface_area_factor": surface_area_factor, "surface_area_rel_u": surface_area_rel_u,
        "spot_area_um2": reference.effective_area_um2,
        "effective_height_um": reference.effective_height_um,
        "effective_height_rel_u": reference.effective_height_rel_u,
        "concentration_mol_L": reference.concentration_mol_L,
        "concentration_rel_u": reference.concentration_rel_u,
    }
    try:
        surface = enhancement.molecules_on_surface(
            spot_area_um2=reference.effective_area_um2,
            molecule_density_per_nm2=surface_density_per_nm2,
            surface_area_factor=surface_area_factor,
            molecule_density_rel_u=surface_density_rel_u, surface_area_rel_u=surface_area_rel_u)
        volume = enhancement.molecules_in_scattering_volume(
            concentration_M=reference.concentration_mol_L,
            spot_area_um2=reference.effective_area_um2,
            effective_height_um=reference.effective_height_um,
            concentration_rel_u=reference.concentration_rel_u,
            effective_height_rel_u=reference.effective_height_rel_u)
        factor = enhancement.substrate_enhancement_factor(
            sers_intensity_counts_per_mW_s=inputs["sers_intensity_counts_per_mW_s"],
            raman_intensity_counts_per_mW_s=inputs["raman_intensity_counts_per_mW_s"],
            molecules_surface=surface, molecules_volume=volume,
            sers_intensity_rel_u=inputs["sers_intensity_rel_u"],
            raman_intensity_rel_u=inputs["raman_intensity_rel_u"])
    except AnalysisInputError as error:
        if error.field in ("sers_intensity_counts_per_mW_s",):
            raise refusal(FILE_FIELD, "The reference band has no positive intensity on this "
                                      "substrate, so no enhancement factor exists.",
                          "no_band") from None
        raise _as_validation_error(error) from None
    inputs["molecules_surface"] = float(surface.value)
    inputs["molecules_volume"] = float(volume.value)
    return factor, inputs


def qc_judge(*, limits: QcLimitSet, band_center_cm1: float, band_position_cm1: float,
             snr: float, rsd_percent: float | None,
             enhancement_factor: float | None) -> list[str]:
    """Every reason the figures fail the limits; empty when they pass.

    Limits are inclusive: a value exactly at a limit passes.
    """
    reasons = []
    offset = abs(band_position_cm1 - band_center_cm1)
    if offset > limits.band_position_tolerance_cm1:
        reasons.append(f"Band at {band_position_cm1:.1f} cm⁻¹ is {offset:.1f} cm⁻¹ from "
                       f"{band_center_cm1:g} cm⁻¹ (tolerance ±"
                       f"{limits.band_position_tolerance_cm1:g} cm⁻¹).")
    if limits.min_snr is not None and not snr >= limits.min_snr:
        reasons.append(f"S/N {snr:.1f} is below the minimum {limits.min_snr:g}.")
    if limits.max_rsd_percent is not None and rsd_percent is not None \
            and not rsd_percent <= limits.max_rsd_percent:
        reasons.append(f"Uniformity RSD {rsd_percent:.1f} % exceeds the maximum "
                       f"{limits.max_rsd_percent:g} %.")
    if limits.min_enhancement_factor is not None:
        if enhancement_factor is None:
            reasons.append("No enhancement factor: give a reference measurement.")
        elif not enhancement_factor >= limits.min_enhancement_factor:
            reasons.append(f"Enhancement factor {enhancement_factor:.2e} is below the minimum "
                           f"{limits.min_enhancement_factor:.2e}.")
    return reasons


def _refuse_reimport(earlier, content: bytes) -> None:
    """The same file (by SHA-256) imported twice would count one measurement twice."""
    digest = sha256_of(content)
    same = earlier.filter(raw_sha256=digest, voided_at__isnull=True).first()
    if same is not None:
        raise refusal(FILE_FIELD, f"This file (sha256 {digest[:12]}…) was already imported as "
                                  f"{same.code} on {same.measured_on.isoformat()}.",
                      "duplicate_file")


def _limit_set_for(substrate: Substrate, analyte: ReferenceAnalyte) -> QcLimitSet:
    limits = QcLimitSet.objects.select_related("analyte").filter(
        product_kind=substrate.stage, analyte=analyte).first()
    if limits is None:
        raise refusal("substrate", f"No QC limits are set for {substrate.get_stage_display()} "
                                   f"substrates tested with {analyte.name}; an administrator "
                                   "must set them first.", "no_limits")
    return limits


def _hold_failed(measurement: QcMeasurement, substrate: Substrate, actor: User | None) -> None:
    """Raise the QC flag on the substrate and put a released substrate back on hold."""
    summary = " ".join(measurement.failure_reasons)
    flag_raise(actor=actor, target=substrate, category=FLAG_CATEGORY,
               message=f"QC {measurement.code} failed: {summary}")
    if substrate.status == Status.RELEASED:
        # A consequence of the import, not a reviewer's decision: no role check here.
        _transition(lock(substrate), Status.QUARANTINE, actor=actor,
                    reason=f"Held: QC {measurement.code} failed. {summary}")


@transaction.atomic
def qc_measurement_import(
    *, actor: User | None, substrate: Substrate, analyte_lot: ReagentLot, filename: str,
    content: bytes, measured_on: date, laser_nm: float, power_mW: float,
    integration_s: float, accumulations: int = 1, objective: str = "",
    reference: ReferenceMeasurement | None = None,
    surface_density_per_nm2: float | None = None, surface_density_rel_u: float = 0.0,
    surface_area_factor: float = 1.0, surface_area_rel_u: float = 0.0,
    analyte: ReferenceAnalyte | None = None, notes: str = "",
) -> QcMeasurement:
    """Import a reference-analyte spectrum or map measured on ``substrate`` and judge it.

    The file is read and analysed by ``qc.analysis.qc_pipeline``; with a ``reference`` the
    substrate enhancement factor of Le Ru et al. (2007) is computed by
    ``qc.analysis.enhancement`` using the analyte's monolayer density (or
    ``surface_density_per_nm2``) and the reference's scattering volume.  The figures are
    judged against the limit set for the substrate's stage and analyte.  A failure raises an
    open ``qc`` flag on the substrate and puts a released substrate back in quarantine.
    """
    require_role(actor, MAKER, action="Importing a QC measurement")
    substrate = Substrate.objects.get(pk=substrate.pk)
    analyte = _resolve_analyte(analyte_lot, analyte)
    _check_acquisition(lot=analyte_lot, measured_on=measured_on, laser_nm=laser_nm,
                       power_mW=power_mW, integration_s=integration_s,
                       accumulations=accumulations)
    _check_substrates_usable([substrate], role="a QC substrate", on_date=measured_on,
                             field="substrate")
    if reference is not None and reference.analyte_id != analyte.pk:
        raise refusal("reference", f"{reference.code} is a reference of {reference.analyte}, "
                                   f"not {analyte.name}.", "reference_mismatch")
    if reference is not None and reference.laser_nm != laser_nm:
        raise refusal("reference", f"{reference.code} was measured at {reference.laser_nm:g} nm; "
                                   f"this measurement at {laser_nm:g} nm.", "laser_mismatch")
    density = analyte.surface_density_per_nm2 if surface_density_per_nm2 is None \
        else surface_density_per_nm2
    limits = _limit_set_for(substrate, analyte)
    data = _read(content, filename)
    _refuse_reimport(QcMeasurement.objects.filter(substrate=substrate), content)
    numbers = _analyse(data, band_center_cm1=analyte.qc_band_cm1,
                       band_window_cm1=analyte.qc_band_window_cm1, power_mW=power_mW,
                       integration_s=integration_s, accumulations=accumulations)
    factor, ef_inputs = (None, None)
    if reference is not None:
        factor, ef_inputs = _enhancement(numbers, reference, surface_density_per_nm2=density,
                                         surface_density_rel_u=surface_density_rel_u,
                                         surface_area_factor=surface_area_factor,
                                         surface_area_rel_u=surface_area_rel_u)
    reasons = qc_judge(limits=limits, band_center_cm1=analyte.qc_band_cm1,
                       band_position_cm1=numbers.band_position_cm1, snr=numbers.snr,
                       rsd_percent=numbers.rsd_percent,
                       enhancement_factor=factor.value if factor else None)
    measurement = QcMeasurement(
        substrate=substrate, analyte=analyte, analyte_lot=analyte_lot, reference=reference,
        limit_set=limits, product_kind=substrate.stage, measured_on=measured_on,
        raw_file=ContentFile(content, name=filename), raw_filename=filename,
        raw_sha256=sha256_of(content), laser_nm=laser_nm, power_mW=power_mW,
        integration_s=integration_s, accumulations=accumulations, objective=objective,
        band_center_cm1=analyte.qc_band_cm1, band_window_cm1=analyte.qc_band_window_cm1,
        is_map=isinstance(data, RamanMap),
        **_measured_fields(numbers), n_points=numbers.n_points,
        median_height_counts_per_mW_s=numbers.median_height_counts_per_mW_s,
        rsd_percent=numbers.rsd_percent,
        fraction_within_20_percent=numbers.fraction_within_20_percent,
        point_values=numbers.point_values, map_nx=numbers.map_nx, map_ny=numbers.map_ny,
        map_step_um=numbers.map_step_um,
        enhancement_factor=float(factor.value) if factor else None,
        enhancement_factor_u=float(factor.standard_uncertainty) if factor else None,
        log10_enhancement_factor=float(factor.log10_value) if factor else None,
        log10_enhancement_factor_u=float(factor.log10_standard_uncertainty) if factor else None,
        ef_inputs=ef_inputs, limits_used=limits.as_snapshot(), passed=not reasons,
        failure_reasons=reasons, notes=notes)
    parents = [(substrate, "measured"), (analyte_lot, "reference analyte")]
    if reference is not None:
        parents.append((reference, "enhancement reference"))
    with _files_removed_if_failed(measurement):
        _save_new(measurement, actor=actor)
        _link(parents, measurement, used_on=measured_on, actor=actor)
        if reasons:
            _hold_failed(measurement, substrate, actor)
    return measurement


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
    latest = QcMeasurement.objects.filter(substrate=record, product_kind=record.stage,
                                          voided_at__isnull=True).first()
    if latest is None:
        raise refusal("substrate", f"{record.code} has no QC measurement at its current "
                                   f"stage ({record.get_stage_display()}).", "qc_missing")
    if not latest.passed:
        raise refusal("substrate", f"The latest QC of {record.code} ({latest.code}) failed: "
                                   f"{' '.join(latest.failure_reasons)}", "qc_failed")
    open_flags = list(Flag.objects.filter(target_code=record.code, category=FLAG_CATEGORY,
                                          state=Flag.State.OPEN, voided_at__isnull=True)
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
