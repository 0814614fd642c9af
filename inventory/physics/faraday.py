"""Faraday's law from deposition charge to metal amount, volume and flat-film thickness.

n = ηQ/(zF) → V = nM/ρ → t = V/A, with the Faraday constant from scipy.constants and the
metals' molar mass and density from periodictable (gold and silver from the CRC Handbook).
"""

from __future__ import annotations

from dataclasses import dataclass

import periodictable
from scipy import constants

from .errors import AnalysisInputError
from .validation import require_fraction, require_non_negative, require_positive

#: Metals the film-height calculation supports (density and molar mass from periodictable).
SUPPORTED_METALS = ("Au", "Ag", "Cu", "Pt", "Pd", "Ni")

#: Densities at 20 °C from the CRC Handbook of Chemistry and Physics (W. M. Haynes, ed.,
#: CRC Press), used instead of periodictable's rounded values (it gives gold as 19.3).
HANDBOOK_DENSITY_G_CM3 = {"Au": 19.32, "Ag": 10.49}

#: Electrons transferred per deposited atom for common plating baths (second-hand for Au;
#: the others are the usual oxidation states of the salts, common practice).  The caller
#: always states the value; this table is for forms and help text.
COMMON_ELECTRONS_PER_ATOM = {
    "Au(I)": 1, "Au(III)": 3, "Ag(I)": 1, "Cu(II)": 2, "Cu(I)": 1,
    "Pt(II)": 2, "Pt(IV)": 4, "Pd(II)": 2, "Ni(II)": 2,
}

_CM_PER_NM = 1.0e-7


def faraday_constant_C_mol() -> float:
    """Faraday constant F, C/mol, from scipy.constants (CODATA).

    References
    ----------
    E. Tiesinga, P. J. Mohr, D. B. Newell and B. N. Taylor, "CODATA recommended values of the
    fundamental physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021).
    """
    return float(constants.value("Faraday constant"))



@dataclass(frozen=True)
class MetalProperties:
    """Handbook data for one metal, from the periodictable package.

    Attributes
    ----------
    symbol : str
    molar_mass_g_mol : float
    density_g_cm3 : float
        Density of the bulk solid near room temperature.
    """

    symbol: str
    molar_mass_g_mol: float
    density_g_cm3: float


def metal_properties(metal: str) -> MetalProperties:
    """Molar mass (g/mol) and bulk density (g/cm³) of a plating metal.

    Molar mass from periodictable; density from :data:`HANDBOOK_DENSITY_G_CM3` (CRC
    Handbook, 20 °C) for gold and silver, from periodictable for the others.

    Parameters
    ----------
    metal : str
        Element symbol, one of :data:`SUPPORTED_METALS`.

    Returns
    -------
    MetalProperties

    Notes
    -----
    Electrodeposited films can be slightly less dense than the bulk metal; the bulk value
    is used, so heights are lower bounds if the film is porous.

    References
    ----------
    periodictable (P. A. Kienzle), element densities and masses from the CRC Handbook of
    Chemistry and Physics and IUPAC atomic weights.
    CRC Handbook of Chemistry and Physics (W. M. Haynes, ed., CRC Press): Au 19.32 g/cm³ and
    Ag 10.49 g/cm³ at 20 °C.
    """
    if metal not in SUPPORTED_METALS:
        raise AnalysisInputError(
            f"unsupported metal {metal!r}; supported: {', '.join(SUPPORTED_METALS)}",
            field="metal",
        )
    element = periodictable.elements.symbol(metal)
    density = HANDBOOK_DENSITY_G_CM3.get(metal, float(element.density))
    return MetalProperties(symbol=metal, molar_mass_g_mol=float(element.mass),
                           density_g_cm3=density)


def metal_amount_mol(
    charge_C: float, *, electrons_per_atom: int, current_efficiency: float = 1.0
) -> float:
    """Amount of metal deposited, mol, by Faraday's law of electrolysis.

    .. math:: n = \\frac{\\eta\\,Q}{z\\,F}

    Parameters
    ----------
    charge_C : float
        Deposition charge Q, C; > 0.
    electrons_per_atom : int
        z, electrons per deposited atom (Au(I) 1, Au(III) 3, Cu(II) 2; see
        :data:`COMMON_ELECTRONS_PER_ATOM`).
    current_efficiency : float
        η, fraction of the charge that deposits metal, in (0, 1].

    Returns
    -------
    float
        Metal amount, mol.

    References
    ----------
    A. J. Bard and L. R. Faulkner, *Electrochemical Methods: Fundamentals and Applications*,
    2nd ed., Wiley, New York, 2001, ch. 1 (Faraday's law).
    """
    charge = require_positive(charge_C, field="charge_C")
    electrons = _electrons(electrons_per_atom)
    efficiency = require_fraction(current_efficiency, field="current_efficiency")
    return efficiency * charge / (electrons * faraday_constant_C_mol())


def metal_volume_cm3(amount_mol: float, *, metal: str) -> float:
    """Volume of deposited metal, cm³: V = n·M/ρ with handbook M and ρ.

    Parameters
    ----------
    amount_mol : float
        Metal amount, mol; ≥ 0.
    metal : str
        Element symbol, one of :data:`SUPPORTED_METALS`.

    Returns
    -------
    float
        Volume, cm³.

    References
    ----------
    Density and molar mass from periodictable (CRC Handbook values); see
    :func:`metal_properties`.
    """
    amount = require_non_negative(amount_mol, field="amount_mol")
    properties = metal_properties(metal)
    return amount * properties.molar_mass_g_mol / properties.density_g_cm3


def equivalent_thickness_nm(volume_cm3: float, *, electrode_area_cm2: float) -> float:
    """Equivalent flat-film thickness t = V/A, nm.

    Parameters
    ----------
    volume_cm3 : float
        Deposited metal volume, cm³.
    electrode_area_cm2 : float
        Electrode (immersed) area, cm²; > 0.

    Returns
    -------
    float
        Thickness a flat film of the same volume would have, nm.
    """
    area = require_positive(electrode_area_cm2, field="electrode_area_cm2")
    return float(volume_cm3) / area / _CM_PER_NM


def _electrons(electrons_per_atom) -> int:
    try:
        whole = not isinstance(electrons_per_atom, bool) and (
            int(electrons_per_atom) == float(electrons_per_atom)
        )
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole:
        raise AnalysisInputError(
            f"must be a whole number, got {electrons_per_atom!r}", field="electrons_per_atom"
        )
    electrons = int(electrons_per_atom)
    if not 1 <= electrons <= 8:
        raise AnalysisInputError(
            f"must be between 1 and 8, got {electrons}", field="electrons_per_atom"
        )
    return electrons


def thickness_per_charge_nm_C(
    *, metal: str, electrons_per_atom: int, current_efficiency: float, electrode_area_cm2: float
) -> float:
    """Equivalent thickness per coulomb, nm/C (the whole Faraday chain is linear in Q)."""
    amount = metal_amount_mol(
        1.0, electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency
    )
    return equivalent_thickness_nm(
        metal_volume_cm3(amount, metal=metal), electrode_area_cm2=electrode_area_cm2
    )
