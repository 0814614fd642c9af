"""Geometry of a close-packed monolayer of template spheres.

A colloidal template is a single layer of equal spheres in hexagonal close packing on a
base slide.  This module gives the number of spheres per unit area, the fraction of the
slide they shadow, how much sphere suspension is needed to make such a layer, and how
high a metal film grown through the layer stands for a given metal volume per area (the
one home of the template formulas; :mod:`inventory.physics.electrodeposition` uses them).
The metal surface area of the resulting segment-void film is in
:mod:`inventory.physics.segment_void` (re-exported here).

All lengths in the public interface carry their unit in the name; internally the sphere
count uses nm.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from .errors import AnalysisInputError
from .segment_void import MODEL_DESCRIPTION, SurfaceAreaFactor, segment_void_surface_area_factor
from .validation import require_non_negative, require_positive

__all__ = [
    "CLOSE_PACKED_AREA_FRACTION", "MODEL_DESCRIPTION", "TYPICAL_SPHERE_DENSITY_G_CM3",
    "SuspensionNeed", "SurfaceAreaFactor", "close_packed_spheres_per_cm2",
    "close_packed_spheres_per_um2", "equivalent_thickness_for_height_nm", "film_height_nm",
    "segment_void_surface_area_factor", "suspension_volume_for_monolayer",
]

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


def _sphere_volume_nm3(diameter_nm: float) -> float:
    return math.pi * diameter_nm**3 / 6.0


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
    sphere_volume_cm3 = _sphere_volume_nm3(diameter) / _NM3_PER_CM3
    mass_g = excess * sphere_count * sphere_volume_cm3 * density
    # Multiply first: a subnormal solids content divided by 100 underflows to zero.
    volume_mL = mass_g * 100.0 / solids
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


def equivalent_thickness_for_height_nm(film_height_nm, *, sphere_diameter_nm: float | None):
    """Metal volume per unit area (equivalent thickness, nm) of a film of height h.

    The spheres sit on the substrate in a close-packed monolayer and the metal fills the
    space around them from the substrate up to h:

    .. math::

        t(h) = h - n\\,V_{cap}(h), \\qquad
        V_{cap}(h) = \\begin{cases} \\pi h^2 (3R - h)/3 & 0 \\le h \\le 2R \\\\
                                   4\\pi R^3/3 & h > 2R \\end{cases}

    with n = 2/(√3·D²) spheres per area and R = D/2.  Without a template t = h.

    Parameters
    ----------
    film_height_nm : float or array_like
        Film height h, nm; ≥ 0.  Vectorised.
    sphere_diameter_nm : float or None
        Template sphere diameter D, nm; None for a flat film.

    Returns
    -------
    float or numpy.ndarray
        Equivalent thickness t, nm (same shape as ``film_height_nm``).

    Notes
    -----
    Assumes a perfect close-packed layer of equal spheres touching the substrate at a
    point, no metal under the spheres, and conformal filling of the voids.

    References
    ----------
    P. N. Bartlett, J. J. Baumberg, P. R. Birkin, M. A. Ghanem and M. C. Netti, "Highly
    ordered macroporous gold and platinum films formed by electrochemical deposition through
    templates assembled from submicron diameter monodisperse polystyrene spheres",
    Chem. Mater. 14, 2199–2208 (2002) (citation from memory; not in REFERENCES.md).
    """
    height = np.asarray(film_height_nm, dtype=float)
    if np.any(~np.isfinite(height)) or np.any(height < 0):
        raise AnalysisInputError("film height must be finite and >= 0", field="film_height_nm")
    if sphere_diameter_nm is None:
        return height if height.ndim else float(height)
    diameter = require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
    thickness = _thickness_in_template_nm(height, diameter)
    return thickness if thickness.ndim else float(thickness)


def film_height_nm(equivalent_thickness_nm: float, *, sphere_diameter_nm: float | None) -> float:
    """Film height h, nm, inside a close-packed template from the equivalent thickness t.

    Solves t = h − n·V_cap(h) (see :func:`equivalent_thickness_for_height_nm`) for h with
    Brent's bracketing method.  t(h) increases strictly (dt/dh = 1 − nπr² ≥ 1 − π/(2√3) > 0,
    r the sphere's cross-section radius at height h), and h lies between t and
    t + n·4πR³/3, so the bracket always holds a single root.  Without a template h = t.

    Parameters
    ----------
    equivalent_thickness_nm : float
        Metal volume per area expressed as a flat thickness t, nm; ≥ 0.
    sphere_diameter_nm : float or None
        Template sphere diameter D, nm; None for a flat film.

    Returns
    -------
    float
        Film height h, nm.

    References
    ----------
    R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973,
    ch. 4 (scipy.optimize.brentq).  Geometry as in Bartlett et al., Chem. Mater. 14,
    2199–2208 (2002) (citation from memory).
    """
    thickness = require_non_negative(equivalent_thickness_nm, field="equivalent_thickness_nm")
    if sphere_diameter_nm is None or thickness == 0.0:
        if sphere_diameter_nm is not None:
            require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
        return thickness
    diameter = require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
    sphere_volume_per_area = _spheres_per_nm2(diameter) * _sphere_volume_nm3(diameter)

    def residual(height: float) -> float:
        return float(_thickness_in_template_nm(np.float64(height), diameter)) - thickness

    upper = thickness + sphere_volume_per_area
    return float(optimize.brentq(residual, thickness, upper, xtol=1e-9 * upper, rtol=1e-12))


def _thickness_in_template_nm(height_nm: np.ndarray | np.float64,
                              diameter_nm: float) -> np.ndarray | np.float64:
    return height_nm - _spheres_per_nm2(diameter_nm) * _cap_volume_nm3(height_nm, diameter_nm / 2.0)


def _cap_volume_nm3(height_nm: np.ndarray | np.float64, radius_nm: float) -> np.ndarray:
    """Volume of each sphere below height h (a cap for h ≤ 2R, the whole sphere above)."""
    capped = np.minimum(height_nm, 2.0 * radius_nm)
    return math.pi * capped**2 * (3.0 * radius_nm - capped) / 3.0
