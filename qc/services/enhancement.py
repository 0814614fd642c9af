"""Enhancement-factor bookkeeping of a QC import: the inputs, the SSEF, the stored fields.

The numbers are ``qc.analysis.enhancement`` (the substrate enhancement factor, SSEF, of
Le Ru, Blackie, Meyer and Etchegoin, J. Phys. Chem. C 111, 13794 (2007)); this module
gathers its inputs from the measurement and its reference, keeps them beside the result
(``ef_inputs``) so the figure can be re-derived, and names the model fields it fills.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from inventory.errors import refusal
from inventory.models import DepositionRun, Substrate
from inventory.physics.segment_void import segment_void_surface_area_factor
from inventory.services.toolkit import User, save_changed
from qc.analysis import enhancement
from qc.analysis.errors import AnalysisInputError

from ..models.raman import QcMeasurement, ReferenceMeasurement
from .raman_analysis import FILE_FIELD, MeasuredBand, as_validation_error, relative_u

__all__ = ["FILM_HEIGHT_REL_U_DEFAULT", "SurfaceArea", "SurfaceCoverage",
           "ef_mark_stale_on_geometry_change", "enhancement_fields", "substrate_enhancement",
           "surface_area_for"]

#: Relative standard uncertainty of a film height from the deposition charge when the lab
#: gives none: current efficiency, electrode area and roughness together (project's
#: default, not a published value; enter the lab's own from cross-sections).
FILM_HEIGHT_REL_U_DEFAULT = 0.10


#: How ``SurfaceArea.origin`` begins for a factor worked out from the substrate's deposition.
DERIVED_ORIGIN = "derived"


@dataclass(frozen=True)
class SurfaceArea:
    """Metal area per projected area used for an EF, its relative uncertainty and origin.

    ``origin`` starts with "derived", "entered: <source>" or "assumed 1" and is stored
    with the EF, shown on its page, in the API and in the audit report.
    """

    factor: float
    rel_u: float
    origin: str


@dataclass(frozen=True)
class SurfaceCoverage:
    """Analyte molecules per nm² of metal and the metal area per projected area."""

    surface_density_per_nm2: float
    surface_area: SurfaceArea
    surface_density_rel_u: float = 0.0


def surface_area_for(substrate: Substrate, *, entered: float | None = None,
                     entered_rel_u: float = 0.0, source: str = "", assumed_one: bool = False,
                     film_height_rel_u: float = FILM_HEIGHT_REL_U_DEFAULT) -> SurfaceArea:
    """The surface-area factor of ``substrate``: derived from its deposition, or as given.

    Derived: a segment-void film's factor from its template sphere diameter and film height
    (``inventory.physics.segment_void.segment_void_surface_area_factor``), with the
    film height's relative uncertainty ``film_height_rel_u``; a film grown on a flat slide
    is 1 (smooth metal).  Entered: the lab's value with the source it names (factor ≥ 1).
    Assumed 1: only when asked for.  A substrate with no deposition to derive from must be
    entered or assumed explicitly.
    """
    if assumed_one:
        if entered is not None:
            raise refusal("surface_area_factor", "Either enter a surface-area factor or choose "
                                                 "to assume 1, not both.", "conflicting_values")
        return SurfaceArea(1.0, 0.0, "assumed 1 (chosen explicitly; the metal area is not known)")
    if entered is not None:
        return _entered_surface_area(entered, entered_rel_u, source)
    run = substrate.deposition_run
    if run is None:
        raise refusal("surface_area_factor", f"{substrate.code} was not made here, so its metal "
                      "area cannot be derived: enter the surface-area factor with its source, "
                      "or choose to assume 1.", "surface_area_unknown")
    if run.template_id is None:
        return SurfaceArea(1.0, 0.0,
                           f"{DERIVED_ORIGIN}: flat film from {run.code} (smooth metal), 1")
    if run.film_height_nm is None or run.sphere_diameter_nm is None:
        raise refusal("surface_area_factor", f"{run.code} has no film height (no "
                      "chronoamperogram), so the metal area cannot be derived: enter the factor "
                      "with its source, or choose to assume 1.", "surface_area_unknown")
    if not (math.isfinite(film_height_rel_u) and 0 <= film_height_rel_u < 1):
        raise refusal("film_height_rel_u", "Must be a fraction from 0 to below 1.",
                      "invalid_value")
    try:
        area = segment_void_surface_area_factor(
            sphere_diameter_nm=run.sphere_diameter_nm, film_height_nm=run.film_height_nm,
            film_height_u_nm=film_height_rel_u * run.film_height_nm)
    except AnalysisInputError as error:
        raise refusal("surface_area_factor", f"{run.code}: {error.message}; enter the factor "
                      "with its source.", "surface_area_unknown") from None
    return SurfaceArea(area.value, area.relative_uncertainty, (
        f"{DERIVED_ORIGIN}: {area.model}; D = {run.sphere_diameter_nm:g} nm, h = "
        f"{run.film_height_nm:.0f} nm (±{100 * film_height_rel_u:g} %) from {run.code}"))


def _entered_surface_area(entered: float, rel_u: float, source: str) -> SurfaceArea:
    if not source.strip():
        raise refusal("surface_area_source", "Say where the surface-area factor comes from "
                      "(e.g. electrochemical surface area, or 'from memory').", "source_required")
    if entered is None or not math.isfinite(entered) or entered < 1:
        raise refusal("surface_area_factor", f"Metal area per projected area is at least 1, "
                      f"got {entered}.", "invalid_value")
    if not (math.isfinite(rel_u) and 0 <= rel_u < 1):
        raise refusal("surface_area_rel_u", "Must be a fraction from 0 to below 1.",
                      "invalid_value")
    return SurfaceArea(float(entered), float(rel_u), f"entered: {source.strip()}")


def substrate_enhancement(band: MeasuredBand, reference: ReferenceMeasurement,
                          coverage: SurfaceCoverage, *,
                          measure: str = "height") -> tuple[Any, dict]:
    """SSEF of Le Ru et al. (2007) with the reference's scattering volume, and its inputs.

    ``measure`` ("height" or "area", from the limit set) is the band figure on both sides.
    """
    sers, sers_rel_u = band.intensity(measure)
    raman, raman_u = ((reference.normalised_area_counts_cm1_per_mW_s,
                       reference.normalised_area_u_counts_cm1_per_mW_s) if measure == "area"
                      else (reference.normalised_height_counts_per_mW_s,
                            reference.normalised_height_u_counts_per_mW_s))
    area = coverage.surface_area
    inputs = {
        "definition": "SSEF (Le Ru et al., J. Phys. Chem. C 2007)",
        "intensity_measure": measure,
        "reference_code": reference.code,
        "sers_intensity_counts_per_mW_s": sers,
        "sers_intensity_rel_u": sers_rel_u,
        "raman_intensity_counts_per_mW_s": raman,
        "raman_intensity_rel_u": relative_u(raman_u if raman_u is not None else float("nan"),
                                            raman),
        "surface_density_per_nm2": coverage.surface_density_per_nm2,
        "surface_density_rel_u": coverage.surface_density_rel_u,
        "surface_area_factor": area.factor,
        "surface_area_rel_u": area.rel_u,
        "surface_area_origin": area.origin,
        "spot_area_um2": reference.effective_area_um2,
        "effective_height_um": reference.effective_height_um,
        "effective_height_rel_u": reference.effective_height_rel_u,
        "concentration_mol_L": reference.concentration_mol_L,
        "concentration_rel_u": reference.concentration_rel_u,
    }
    try:
        surface = enhancement.molecules_on_surface(
            spot_area_um2=reference.effective_area_um2,
            molecule_density_per_nm2=coverage.surface_density_per_nm2,
            surface_area_factor=area.factor,
            molecule_density_rel_u=coverage.surface_density_rel_u,
            surface_area_rel_u=area.rel_u)
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
        raise as_validation_error(error) from None
    inputs["molecules_surface"] = float(surface.value)
    inputs["molecules_volume"] = float(volume.value)
    return factor, inputs


def enhancement_fields(factor, inputs: dict | None,
                       surface_area: SurfaceArea | None = None) -> dict:
    """The model fields of an enhancement factor (all empty without a reference)."""
    if factor is None:
        return dict(enhancement_factor=None, enhancement_factor_u=None,
                    log10_enhancement_factor=None, log10_enhancement_factor_u=None,
                    ef_inputs=None, surface_area_factor=None, surface_area_factor_u=None,
                    surface_area_origin="")
    return dict(enhancement_factor=float(factor.value),
                enhancement_factor_u=float(factor.standard_uncertainty),
                log10_enhancement_factor=float(factor.log10_value),
                log10_enhancement_factor_u=float(factor.log10_standard_uncertainty),
                ef_inputs=inputs, surface_area_factor=surface_area.factor,
                surface_area_factor_u=surface_area.factor * surface_area.rel_u,
                surface_area_origin=surface_area.origin)


# A run's figures the derived surface-area factor of a segment-void film depends on.
GEOMETRY_FIELDS = frozenset({"sphere_diameter_nm", "film_height_nm", "height_over_diameter",
                             "stale_reason"})


def ef_mark_stale_on_geometry_change(*, actor: User | None, record, changed: dict,
                                     why: str) -> None:
    """``SERSLEDGER_AMEND_HOOKS``: an EF whose surface-area factor came from a changed film.

    When a deposition run's sphere diameter or film height is worked out again (or marked
    stale), the segment-void factor derived from the old pair no longer holds; working the EF
    out again needs a person to confirm the factor, so each live QC result that derived its
    factor from that run is marked stale with the reason (readiness then reports it).  A flat
    film's factor is 1 whatever its height, and an entered or assumed factor does not depend
    on the film, so those stay current.
    """
    if not isinstance(record, DepositionRun) or record.template_id is None \
            or not GEOMETRY_FIELDS & changed.keys():
        return
    for measurement in QcMeasurement.objects.select_for_update().filter(
            substrate__deposition_run=record, voided_at__isnull=True,
            surface_area_origin__startswith=DERIVED_ORIGIN):
        measurement.stale_reason = (f"{why}; its surface-area factor was derived from "
                                    f"{record.code}'s film geometry before that change: "
                                    "import the map again to work the EF out anew.")
        save_changed(measurement, actor=actor, reason=f"figures stale: {why}")
