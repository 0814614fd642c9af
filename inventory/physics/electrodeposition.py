"""Electrodeposition through a sphere template: the whole chain from charge to film height.

The chain is: chronoamperogram → deposition charge Q (integral of current,
:mod:`~inventory.physics.deposition_charge`) → amount of metal n = ηQ/(zF) → volume
V = nM/ρ → equivalent flat thickness t = V/A (:mod:`~inventory.physics.faraday`) → film
height h inside the close-packed template, slab minus sphere caps
(:mod:`~inventory.physics.template_geometry`) → h/D.  Each step is one public function;
:func:`analyse_deposition` runs the whole chain for the services layer: it integrates the
curve, then hands the charge to :func:`figures_from_charge`, which is also the whole path of a
charge entered as the potentiostat reported it (no curve).
:func:`charge_for_target_height_C` runs the chain backwards.  Runs withdrawn in steps are in
:mod:`~inventory.physics.graded_deposition`.  The names of those modules are re-exported
here, so ``inventory.physics.electrodeposition`` stays the one import for the services.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from .deposition_charge import (
    CathodicSign,
    checked_time_and_current,
    deposition_charge_C,
    integration_bounds,
)
from .faraday import (
    COMMON_ELECTRONS_PER_ATOM,
    HANDBOOK_DENSITY_G_CM3,
    SUPPORTED_METALS,
    MetalProperties,
    equivalent_thickness_nm,
    faraday_constant_C_mol,
    metal_amount_mol,
    metal_properties,
    metal_volume_cm3,
    thickness_per_charge_nm_C,
)
from .graded_deposition import GradedDeposition, graded_deposition
from .template_geometry import equivalent_thickness_for_height_nm, film_height_nm
from .validation import require_positive

__all__ = [
    "COMMON_ELECTRONS_PER_ATOM", "HANDBOOK_DENSITY_G_CM3", "SUPPORTED_METALS", "CathodicSign",
    "DepositionAnalysis", "GradedDeposition", "MetalProperties", "analyse_deposition",
    "charge_for_target_height_C", "deposition_charge_C", "equivalent_thickness_nm",
    "faraday_constant_C_mol", "figures_from_charge", "film_height_nm", "graded_deposition",
    "metal_amount_mol", "metal_properties", "metal_volume_cm3",
]


def charge_for_target_height_C(
    *,
    target_height_over_diameter: float,
    sphere_diameter_nm: float,
    electrode_area_cm2: float,
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
) -> float:
    """Charge, C, that brings a film in a close-packed template to a target h/D.

    Forward model then Faraday's law inverted: h = (h/D)·D → t(h) → Q = t / (nm per C).

    Parameters
    ----------
    target_height_over_diameter : float
        Target normalised height h/D; > 0 (values above 1 bury the spheres).
    sphere_diameter_nm : float
        Template sphere diameter D, nm.
    electrode_area_cm2 : float
        Electrode area, cm².
    metal, electrons_per_atom, current_efficiency
        As for :func:`metal_amount_mol` and :func:`metal_properties`.

    Returns
    -------
    float
        Deposition charge, C.

    References
    ----------
    Faraday's law as in :func:`metal_amount_mol`; geometry as in
    :func:`equivalent_thickness_for_height_nm`.
    """
    ratio = require_positive(target_height_over_diameter, field="target_height_over_diameter")
    diameter = require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
    thickness = equivalent_thickness_for_height_nm(ratio * diameter, sphere_diameter_nm=diameter)
    nm_per_C = thickness_per_charge_nm_C(
        metal=metal, electrons_per_atom=electrons_per_atom,
        current_efficiency=current_efficiency, electrode_area_cm2=electrode_area_cm2,
    )
    return thickness / nm_per_C



@dataclass(frozen=True)
class DepositionAnalysis:
    """Everything computed from one deposition run, with the inputs that produced it.

    Attributes
    ----------
    charge_C : float
        Deposition charge, C (positive).
    metal_amount_mol : float
    metal_volume_cm3 : float
    equivalent_thickness_nm : float
        Metal volume per electrode area as a flat thickness, nm.
    film_height_nm : float
        Height inside the template (equal to the thickness for a flat film), nm.
    height_over_diameter : float or None
        h/D; None for a flat film.
    metal, electrons_per_atom, current_efficiency, electrode_area_cm2, sphere_diameter_nm
        The inputs.
    start_s, end_s, cathodic_sign
        The integration window as actually used, s, and the sign convention of the curve;
        None when the charge was given rather than integrated.
    molar_mass_g_mol, density_g_cm3, faraday_constant_C_mol : float
        The constants used.
    """

    charge_C: float
    metal_amount_mol: float
    metal_volume_cm3: float
    equivalent_thickness_nm: float
    film_height_nm: float
    height_over_diameter: float | None
    metal: str
    electrons_per_atom: int
    current_efficiency: float
    electrode_area_cm2: float
    sphere_diameter_nm: float | None
    start_s: float | None
    end_s: float | None
    cathodic_sign: str | None
    molar_mass_g_mol: float
    density_g_cm3: float
    faraday_constant_C_mol: float


def analyse_deposition(
    *,
    time_s,
    current_A,
    electrode_area_cm2: float,
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
    sphere_diameter_nm: float | None = None,
    start_s: float | None = None,
    end_s: float | None = None,
    cathodic_sign: CathodicSign = "negative",
) -> DepositionAnalysis:
    """Charge, metal amount, volume, equivalent thickness and film height of one run.

    Chains :func:`deposition_charge_C`, :func:`metal_amount_mol` (Faraday's law),
    :func:`metal_volume_cm3`, :func:`equivalent_thickness_nm` and :func:`film_height_nm`.

    Parameters
    ----------
    time_s, current_A : array_like
        The chronoamperogram (e.g. from
        :func:`inventory.physics.chronoamperogram.parse_chronoamperogram`), s and A.
    electrode_area_cm2 : float
        Geometric electrode area exposed to the bath, cm²; > 0.
    metal : str
        One of :data:`SUPPORTED_METALS`.
    electrons_per_atom : int
        Electrons per deposited atom (Au(I) 1, Au(III) 3, Ag(I) 1, Cu(II) 2 …).
    current_efficiency : float
        Fraction of the charge that deposits metal, in (0, 1]; default 1.
    sphere_diameter_nm : float or None
        Template sphere diameter, nm; None for a flat film.
    start_s, end_s : float, optional
        Integration bounds, s; default the whole record.
    cathodic_sign : {"negative", "positive", "auto"}
        Sign of cathodic current in the record; "negative" is the IUPAC convention.

    Returns
    -------
    DepositionAnalysis

    References
    ----------
    See the functions chained above.
    """
    time, _ = checked_time_and_current(time_s, current_A)
    low, high = integration_bounds(time, start_s, end_s)
    charge = deposition_charge_C(
        time_s, current_A, start_s=low, end_s=high, cathodic_sign=cathodic_sign
    )
    figures = figures_from_charge(
        charge_C=charge, electrode_area_cm2=electrode_area_cm2, metal=metal,
        electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency,
        sphere_diameter_nm=sphere_diameter_nm,
    )
    return replace(figures, start_s=low, end_s=high, cathodic_sign=cathodic_sign)


def figures_from_charge(
    *,
    charge_C: float,
    electrode_area_cm2: float,
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
    sphere_diameter_nm: float | None = None,
) -> DepositionAnalysis:
    """Metal amount, volume, equivalent thickness and film height from a deposition charge.

    Chains :func:`metal_amount_mol` (Faraday's law), :func:`metal_volume_cm3`,
    :func:`equivalent_thickness_nm` and :func:`film_height_nm`.  The figures of a charge
    integrated from a curve (:func:`analyse_deposition`) and of the same charge as reported
    by the instrument are the same by construction.

    Parameters
    ----------
    charge_C : float
        Cathodic deposition charge Q, C; finite and > 0.
    electrode_area_cm2, metal, electrons_per_atom, current_efficiency, sphere_diameter_nm
        As for :func:`analyse_deposition`.

    Returns
    -------
    DepositionAnalysis
        With ``start_s``, ``end_s`` and ``cathodic_sign`` None (no curve was integrated).

    References
    ----------
    Faraday's law: A. J. Bard and L. R. Faulkner, *Electrochemical Methods: Fundamentals and
    Applications*, 2nd ed., Wiley, New York, 2001, ch. 1; geometry as in
    :func:`film_height_nm`.
    """
    charge = require_positive(charge_C, field="charge_C")
    amount = metal_amount_mol(
        charge, electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency
    )
    volume = metal_volume_cm3(amount, metal=metal)
    thickness = equivalent_thickness_nm(volume, electrode_area_cm2=electrode_area_cm2)
    height = film_height_nm(thickness, sphere_diameter_nm=sphere_diameter_nm)
    properties = metal_properties(metal)
    diameter = None if sphere_diameter_nm is None else float(sphere_diameter_nm)
    return DepositionAnalysis(
        charge_C=charge,
        metal_amount_mol=amount,
        metal_volume_cm3=volume,
        equivalent_thickness_nm=thickness,
        film_height_nm=height,
        height_over_diameter=None if diameter is None else height / diameter,
        metal=metal,
        electrons_per_atom=int(electrons_per_atom),
        current_efficiency=float(current_efficiency),
        electrode_area_cm2=float(electrode_area_cm2),
        sphere_diameter_nm=diameter,
        start_s=None,
        end_s=None,
        cathodic_sign=None,
        molar_mass_g_mol=properties.molar_mass_g_mol,
        density_g_cm3=properties.density_g_cm3,
        faraday_constant_C_mol=faraday_constant_C_mol(),
    )
