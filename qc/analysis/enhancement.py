"""SERS enhancement factors as defined by Le Ru, Blackie, Meyer & Etchegoin (2007).

Two definitions: the analytical enhancement factor (AEF, from concentrations) and the SERS
substrate enhancement factor (SSEF, from molecule numbers on the surface and in the
scattering volume). Both come with a first-order propagated standard uncertainty.

References
----------
.. [1] Le Ru, E. C.; Blackie, E.; Meyer, M.; Etchegoin, P. G. Surface enhanced Raman
   scattering enhancement factors: a comprehensive study. J. Phys. Chem. C 2007, 111,
   13794–13803.
.. [2] JCGM 100:2008, Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement (GUM), §5.1 (law of propagation of uncertainty).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.constants import Avogadro

from ._validation import require_non_negative, require_positive
from .errors import AnalysisInputError

_UM3_PER_LITRE = 1e15  # 1 L = 1 dm³ = 10¹⁵ µm³
_NM2_PER_UM2 = 1e6
_NM2_PER_CM2 = 1e14


@dataclass(frozen=True)
class MoleculeCount:
    """A number of molecules with its relative standard uncertainty (a fraction)."""

    value: float
    relative_uncertainty: float


@dataclass(frozen=True)
class EnhancementFactor:
    """An enhancement factor with first-order standard uncertainty.

    Attributes
    ----------
    definition : str
        ``"AEF"`` or ``"SSEF"`` (Le Ru et al. 2007).
    value, standard_uncertainty : float
        EF (dimensionless) and its standard uncertainty.
    relative_uncertainty : float
        ``standard_uncertainty / value``.
    log10_value, log10_standard_uncertainty : float
        ``log10(EF)`` and ``u_rel / ln 10``.
    """

    definition: str
    value: float
    standard_uncertainty: float
    relative_uncertainty: float
    log10_value: float
    log10_standard_uncertainty: float


def _relative_quadrature(**relative_uncertainties: float) -> float:
    """√Σ u_rel² for a pure product/quotient model (GUM §5.1.6)."""
    total = 0.0
    for name, value in relative_uncertainties.items():
        total += require_non_negative(value, field=name) ** 2
    return float(np.sqrt(total))


def _result(definition: str, value: float, relative_u: float) -> EnhancementFactor:
    return EnhancementFactor(
        definition=definition,
        value=value,
        standard_uncertainty=value * relative_u,
        relative_uncertainty=relative_u,
        log10_value=float(np.log10(value)),
        log10_standard_uncertainty=relative_u / np.log(10.0),
    )


def analytical_enhancement_factor(
    *,
    sers_intensity_counts_per_mW_s: float,
    sers_concentration_M: float,
    raman_intensity_counts_per_mW_s: float,
    raman_concentration_M: float,
    sers_intensity_rel_u: float = 0.0,
    sers_concentration_rel_u: float = 0.0,
    raman_intensity_rel_u: float = 0.0,
    raman_concentration_rel_u: float = 0.0,
) -> EnhancementFactor:
    """Analytical enhancement factor ``AEF = (I_SERS / c_SERS) / (I_RS / c_RS)``.

    Parameters
    ----------
    sers_intensity_counts_per_mW_s, raman_intensity_counts_per_mW_s : float
        Band intensities normalised to power and time, counts/(mW·s), same band, laser and
        optics for both.
    sers_concentration_M, raman_concentration_M : float
        Analyte concentrations (mol/L) of the SERS and of the non-enhanced measurement.
    *_rel_u : float
        Relative standard uncertainties (fractions) of each input, taken as uncorrelated.

    Returns
    -------
    EnhancementFactor
        ``u_rel(AEF) = √(Σ u_rel,i²)`` (first order, all quantities in a quotient).

    References
    ----------
    .. [1] Le Ru, E. C.; Blackie, E.; Meyer, M.; Etchegoin, P. G. J. Phys. Chem. C 2007,
       111, 13794–13803 (definition of the AEF).
    """
    i_sers = require_positive(
        sers_intensity_counts_per_mW_s, field="sers_intensity_counts_per_mW_s"
    )
    c_sers = require_positive(sers_concentration_M, field="sers_concentration_M")
    i_rs = require_positive(
        raman_intensity_counts_per_mW_s, field="raman_intensity_counts_per_mW_s"
    )
    c_rs = require_positive(raman_concentration_M, field="raman_concentration_M")
    relative_u = _relative_quadrature(
        sers_intensity_rel_u=sers_intensity_rel_u,
        sers_concentration_rel_u=sers_concentration_rel_u,
        raman_intensity_rel_u=raman_intensity_rel_u,
        raman_concentration_rel_u=raman_concentration_rel_u,
    )
    return _result("AEF", (i_sers / c_sers) / (i_rs / c_rs), relative_u)


def molecules_in_scattering_volume(
    *,
    concentration_M: float,
    spot_area_um2: float,
    effective_height_um: float,
    concentration_rel_u: float = 0.0,
    effective_height_rel_u: float = 0.0,
) -> MoleculeCount:
    """Molecules probed in the non-enhanced measurement, ``N_Vol = c_RS · A_eff · H_eff``.

    ``N_Vol = c [mol/L] · N_A · 10⁻¹⁵ [L/µm³] · A_eff [µm²] · H_eff [µm]``.

    Parameters
    ----------
    concentration_M : float
        Analyte concentration (mol/L); for a neat liquid, density/molar mass.
    spot_area_um2 : float
        Effective laser spot area A_eff (µm²).
    effective_height_um : float
        Effective scattering height H_eff of the confocal volume (µm), measured e.g. by
        stepping through a silicon surface.
    concentration_rel_u, effective_height_rel_u : float
        Relative standard uncertainties (fractions).

    Returns
    -------
    MoleculeCount
        The spot area's uncertainty is left out on purpose: the same A_eff enters
        :func:`molecules_on_surface` and cancels in the SSEF.

    Notes
    -----
    Construction choice (REFERENCES lists it as unconfirmed): the scattering volume is the
    product of the effective spot area and an effective height, as Le Ru et al. describe
    for a confocal set-up; the lab measures H_eff for its objective.
    """
    c = require_positive(concentration_M, field="concentration_M")
    area = require_positive(spot_area_um2, field="spot_area_um2")
    height = require_positive(effective_height_um, field="effective_height_um")
    value = c * Avogadro / _UM3_PER_LITRE * area * height
    relative_u = _relative_quadrature(
        concentration_rel_u=concentration_rel_u, effective_height_rel_u=effective_height_rel_u
    )
    return MoleculeCount(value=float(value), relative_uncertainty=relative_u)


def molecules_on_surface(
    *,
    spot_area_um2: float,
    molecule_density_per_nm2: float | None = None,
    molecule_density_per_cm2: float | None = None,
    surface_area_factor: float | None = None,
    feature_density_per_um2: float | None = None,
    metal_area_per_feature_um2: float | None = None,
    molecule_density_rel_u: float = 0.0,
    surface_area_rel_u: float = 0.0,
) -> MoleculeCount:
    """Molecules adsorbed in the laser spot, ``N_Surf``.

    Two constructions, choose one:

    * features (Le Ru et al. 2007): ``N_Surf = μ_M · μ_S · A_M · A_eff`` with μ_M the surface
      density of metal features (per µm²), A_M the metal area per feature (µm²) and μ_S the
      molecule density on the metal;
    * direct coverage (a thiol monolayer, the common case): ``N_Surf = μ_S · f · A_eff``
      with ``f`` the metal surface area per unit projected area (roughness factor, ≥ 1,
      e.g. from electrochemical surface-area measurement).

    Parameters
    ----------
    spot_area_um2 : float
        Effective laser spot area A_eff (µm²).
    molecule_density_per_nm2, molecule_density_per_cm2 : float
        μ_S, molecules per nm² or per cm² of metal (give exactly one).
    surface_area_factor : float
        ``f`` for the direct construction.
    feature_density_per_um2, metal_area_per_feature_um2 : float
        μ_M and A_M for the feature construction (give both, and no ``surface_area_factor``).
    molecule_density_rel_u, surface_area_rel_u : float
        Relative standard uncertainties of μ_S and of ``f`` (or of μ_M·A_M).

    Returns
    -------
    MoleculeCount

    Notes
    -----
    ``μ_M · A_M`` is itself a metal area per projected area, so both constructions reduce
    to ``μ_S · (metal area per projected area) · A_eff``; the form of N_Surf is
    second-hand and its construction unconfirmed (REFERENCES), hence both are offered.
    """
    area = require_positive(spot_area_um2, field="spot_area_um2")
    if (molecule_density_per_nm2 is None) == (molecule_density_per_cm2 is None):
        raise AnalysisInputError(
            "give exactly one of molecule_density_per_nm2 or molecule_density_per_cm2",
            field="molecule_density_per_nm2",
        )
    if molecule_density_per_nm2 is not None:
        mu_s = require_positive(molecule_density_per_nm2, field="molecule_density_per_nm2")
    else:
        mu_s = require_positive(molecule_density_per_cm2, field="molecule_density_per_cm2")
        mu_s /= _NM2_PER_CM2
    features = (feature_density_per_um2, metal_area_per_feature_um2)
    if surface_area_factor is not None:
        if any(v is not None for v in features):
            raise AnalysisInputError(
                "give either surface_area_factor or the feature density and area, not both",
                field="surface_area_factor",
            )
        metal_per_projected = require_positive(surface_area_factor, field="surface_area_factor")
    elif all(v is not None for v in features):
        metal_per_projected = require_positive(
            feature_density_per_um2, field="feature_density_per_um2"
        ) * require_positive(metal_area_per_feature_um2, field="metal_area_per_feature_um2")
    else:
        raise AnalysisInputError(
            "give surface_area_factor, or both feature_density_per_um2 and "
            "metal_area_per_feature_um2",
            field="surface_area_factor",
        )
    value = mu_s * _NM2_PER_UM2 * metal_per_projected * area
    relative_u = _relative_quadrature(
        molecule_density_rel_u=molecule_density_rel_u, surface_area_rel_u=surface_area_rel_u
    )
    return MoleculeCount(value=float(value), relative_uncertainty=relative_u)


def substrate_enhancement_factor(
    *,
    sers_intensity_counts_per_mW_s: float,
    raman_intensity_counts_per_mW_s: float,
    molecules_surface: MoleculeCount,
    molecules_volume: MoleculeCount,
    sers_intensity_rel_u: float = 0.0,
    raman_intensity_rel_u: float = 0.0,
) -> EnhancementFactor:
    """SERS substrate enhancement factor ``SSEF = (I_SERS / N_Surf) / (I_RS / N_Vol)``.

    Parameters
    ----------
    sers_intensity_counts_per_mW_s, raman_intensity_counts_per_mW_s : float
        Normalised band intensities, counts/(mW·s), same band, laser and optics.
    molecules_surface : MoleculeCount
        From :func:`molecules_on_surface`.
    molecules_volume : MoleculeCount
        From :func:`molecules_in_scattering_volume`.
    sers_intensity_rel_u, raman_intensity_rel_u : float
        Relative standard uncertainties of the intensities.

    Returns
    -------
    EnhancementFactor
        ``u_rel = √(u_I,SERS² + u_I,RS² + u_N,Surf² + u_N,Vol²)`` (first order).

    References
    ----------
    .. [1] Le Ru, E. C.; Blackie, E.; Meyer, M.; Etchegoin, P. G. J. Phys. Chem. C 2007,
       111, 13794–13803 (definition of the SSEF).
    """
    i_sers = require_positive(
        sers_intensity_counts_per_mW_s, field="sers_intensity_counts_per_mW_s"
    )
    i_rs = require_positive(
        raman_intensity_counts_per_mW_s, field="raman_intensity_counts_per_mW_s"
    )
    n_surf = require_positive(molecules_surface.value, field="molecules_surface")
    n_vol = require_positive(molecules_volume.value, field="molecules_volume")
    relative_u = _relative_quadrature(
        sers_intensity_rel_u=sers_intensity_rel_u,
        raman_intensity_rel_u=raman_intensity_rel_u,
        molecules_surface=molecules_surface.relative_uncertainty,
        molecules_volume=molecules_volume.relative_uncertainty,
    )
    return _result("SSEF", (i_sers / n_surf) / (i_rs / n_vol), relative_u)
