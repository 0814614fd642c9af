"""Enhancement-factor bookkeeping of a QC import: the inputs, the SSEF, the stored fields.

The numbers are ``qc.analysis.enhancement`` (the substrate enhancement factor, SSEF, of
Le Ru, Blackie, Meyer and Etchegoin, J. Phys. Chem. C 111, 13794 (2007)); this module
gathers its inputs from the measurement and its reference, keeps them beside the result
(``ef_inputs``) so the figure can be re-derived, and names the model fields it fills.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from inventory.errors import refusal
from qc.analysis import enhancement
from qc.analysis.errors import AnalysisInputError

from ..models.raman import ReferenceMeasurement
from .raman_analysis import FILE_FIELD, MeasuredBand, as_validation_error, relative_u

__all__ = ["SurfaceCoverage", "substrate_enhancement", "enhancement_fields"]


@dataclass(frozen=True)
class SurfaceCoverage:
    """Analyte molecules per nm² of metal and the real/projected area, with relative u."""

    surface_density_per_nm2: float
    surface_density_rel_u: float = 0.0
    surface_area_factor: float = 1.0
    surface_area_rel_u: float = 0.0


def substrate_enhancement(band: MeasuredBand, reference: ReferenceMeasurement,
                          coverage: SurfaceCoverage) -> tuple[Any, dict]:
    """SSEF of Le Ru et al. (2007) with the reference's scattering volume, and its inputs."""
    inputs = {
        "definition": "SSEF (Le Ru et al., J. Phys. Chem. C 2007)",
        "reference_code": reference.code,
        "sers_intensity_counts_per_mW_s": band.normalised_height_counts_per_mW_s,
        "sers_intensity_rel_u": band.height_rel_u,
        "raman_intensity_counts_per_mW_s": reference.normalised_height_counts_per_mW_s,
        "raman_intensity_rel_u": relative_u(
            reference.normalised_height_u_counts_per_mW_s or float("nan"),
            reference.normalised_height_counts_per_mW_s),
        "surface_density_per_nm2": coverage.surface_density_per_nm2,
        "surface_density_rel_u": coverage.surface_density_rel_u,
        "surface_area_factor": coverage.surface_area_factor,
        "surface_area_rel_u": coverage.surface_area_rel_u,
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
            surface_area_factor=coverage.surface_area_factor,
            molecule_density_rel_u=coverage.surface_density_rel_u,
            surface_area_rel_u=coverage.surface_area_rel_u)
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


def enhancement_fields(factor, inputs: dict | None) -> dict:
    """The model fields of an enhancement factor (all empty without a reference)."""
    if factor is None:
        return dict(enhancement_factor=None, enhancement_factor_u=None,
                    log10_enhancement_factor=None, log10_enhancement_factor_u=None,
                    ef_inputs=None)
    return dict(enhancement_factor=float(factor.value),
                enhancement_factor_u=float(factor.standard_uncertainty),
                log10_enhancement_factor=float(factor.log10_value),
                log10_enhancement_factor_u=float(factor.log10_standard_uncertainty),
                ef_inputs=inputs)
