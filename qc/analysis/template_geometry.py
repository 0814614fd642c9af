"""Geometry of a close-packed monolayer of template spheres.

A colloidal template is a single layer of equal spheres in hexagonal close packing on a
base slide.  This module gives the number of spheres per unit area, the fraction of the
slide they shadow, and how much sphere suspension is needed to make such a layer.

All lengths in the public interface carry their unit in the name; internally the sphere
count uses nm.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ._validation import require_positive
from .errors import AnalysisInputError

#: Area fraction of the plane covered by hexagonally close-packed equal circles, π/(2√3).
CLOSE_PACKED_AREA_FRACTION = math.pi / (2.0 * math.sqrt(3.0))

#: Typical densities of template sphere materials, g/cm³.  Polystyrene 1.05 is common
#: practice (supplier data sheets quote 1.04–1.06); silica 2.0 is from memory (Stöber
#: silica is porous and lies roughly between 1.9 and 2.2).  Pass the supplier's value when
#: it is known.
TYPICAL_SPHERE_DENSITY_G_CM3 = {"polystyrene": 1.05, "silica": 2.0}

_NM2_PER_UM2 = 1.0e6
_NM2_PER_CM2 = 1.0e14
_NM3_PER_CM3 = 1.0e21
_UL_PER_ML = 1.0e3


def close_packed_spheres_per_um2(diameter_nm: float) -> float:
    """Number of spheres per µm² in a hexagonally close-packed monolayer.

    Each sphere of diameter D occupies one hexagonal unit cell of area (√3/2)·D², so

    .. math:: n = \\frac{2}{\\sqrt{3}\\,D^2}

    Parameters
    ----------
    diameter_nm : float
        Sphere diameter D, nm; > 0.

    Returns
    -------
    float
        Spheres per µm².

    References
    ----------
    J. H. Conway and N. J. A. Sloane, *Sphere Packings, Lattices and Groups*, 3rd ed.,
    Springer, New York, 1999, ch. 1 (the hexagonal lattice is the densest circle packing,
    density π/√12).
    """
    diameter = require_positive(diameter_nm, field="diameter_nm")
    return _spheres_per_nm2(diameter) * _NM2_PER_UM2


def close_packed_spheres_per_cm2(diameter_nm: float) -> float:
    """Number of spheres per cm² in a hexagonally close-packed monolayer.

    Same relation as :func:`close_packed_spheres_per_um2`, n = 2/(√3·D²), expressed per cm².

    Parameters
    ----------
    diameter_nm : float
        Sphere diameter D, nm; > 0.

    Returns
    -------
    float
        Spheres per cm².

    References
    ----------
    J. H. Conway and N. J. A. Sloane, *Sphere Packings, Lattices and Groups*, 3rd ed.,
    Springer, New York, 1999, ch. 1.
    """
    diameter = require_positive(diameter_nm, field="diameter_nm")
    return _spheres_per_nm2(diameter) * _NM2_PER_CM2


def _spheres_per_nm2(diameter_nm: float) -> float:
    return 2.0 / (math.sqrt(3.0) * diameter_nm**2)


@dataclass(frozen=True)
class SuspensionNeed:
    """How much sphere suspension a close-packed monolayer on a slide needs.

    Attributes
    ----------
    sphere_count : float
        Spheres in one perfect monolayer over the slide area (before the excess factor).
    sphere_mass_g : float
        Mass of sphere material to dispense, g, including the excess factor.
    suspension_volume_uL : float
        Volume of suspension to dispense, µL, including the excess factor.
    slide_area_cm2, diameter_nm, solids_percent_w_v, sphere_density_g_cm3, excess_factor
        The inputs that produced the numbers.
    """

    sphere_count: float
    sphere_mass_g: float
    suspension_volume_uL: float
    slide_area_cm2: float
    diameter_nm: float
    solids_percent_w_v: float
    sphere_density_g_cm3: float
    excess_factor: float


def suspension_volume_for_monolayer(
    *,
    slide_area_cm2: float,
    diameter_nm: float,
    solids_percent_w_v: float,
    sphere_density_g_cm3: float,
    excess_factor: float = 1.0,
) -> SuspensionNeed:
    """Volume of sphere suspension needed to cover a slide with one close-packed layer.

    .. math::

        N = n\\,A, \\qquad m = f\\,N\\,\\rho\\,\\frac{\\pi D^3}{6}, \\qquad
        V = \\frac{m}{c/100}

    with n = 2/(√3·D²) spheres per area, A the slide area, ρ the sphere density, f the
    excess factor and c the solids content in % w/v (g per 100 mL).

    Parameters
    ----------
    slide_area_cm2 : float
        Area to cover, cm²; > 0.
    diameter_nm : float
        Sphere diameter, nm; > 0.
    solids_percent_w_v : float
        Solids content of the suspension, % w/v (g of spheres per 100 mL); in (0, 100].
    sphere_density_g_cm3 : float
        Density of the sphere material, g/cm³; > 0.  See
        :data:`TYPICAL_SPHERE_DENSITY_G_CM3` when the supplier gives none.
    excess_factor : float, optional
        Multiplier ≥ 1 on the geometric minimum.  The default 1.0 returns exactly one
        perfect monolayer, so the number has a clear meaning whatever the method; the loss
        depends on the assembly method (spin coating throws off most of the liquid, transfer
        from an air–water interface leaves spheres on the trough walls and in the subphase)
        and no single published excess applies to all of them, so the lab enters its own.

    Returns
    -------
    SuspensionNeed
        Sphere count, mass (g) and suspension volume (µL), with the inputs.

    Notes
    -----
    Assumes the solids content is by mass of dry spheres per volume of suspension and that
    every dispensed sphere ends in the monolayer (hence the excess factor).

    References
    ----------
    J. H. Conway and N. J. A. Sloane, *Sphere Packings, Lattices and Groups*, 3rd ed.,
    Springer, New York, 1999, ch. 1 (packing density of the hexagonal lattice).
    """
    area_cm2 = require_positive(slide_area_cm2, field="slide_area_cm2")
    diameter = require_positive(diameter_nm, field="diameter_nm")
    solids = require_positive(solids_percent_w_v, field="solids_percent_w_v")
    if solids > 100.0:
        raise AnalysisInputError(
            f"solids content cannot exceed 100 % w/v, got {solids_percent_w_v}",
            field="solids_percent_w_v",
        )
    density = require_positive(sphere_density_g_cm3, field="sphere_density_g_cm3")
    excess = require_positive(excess_factor, field="excess_factor")
    if excess < 1.0:
        raise AnalysisInputError(
            f"excess factor must be at least 1, got {excess_factor}", field="excess_factor"
        )

    sphere_count = _spheres_per_nm2(diameter) * area_cm2 * _NM2_PER_CM2
    sphere_volume_cm3 = math.pi * diameter**3 / 6.0 / _NM3_PER_CM3
    mass_g = excess * sphere_count * sphere_volume_cm3 * density
    volume_mL = mass_g / (solids / 100.0)
    return SuspensionNeed(
        sphere_count=sphere_count,
        sphere_mass_g=mass_g,
        suspension_volume_uL=volume_mL * _UL_PER_ML,
        slide_area_cm2=area_cm2,
        diameter_nm=diameter,
        solids_percent_w_v=solids,
        sphere_density_g_cm3=density,
        excess_factor=excess,
    )
