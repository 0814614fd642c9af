"""Metal surface area per projected area of a segment-void film (for enhancement factors).

A film grown through a close-packed sphere template (:mod:`inventory.physics.template_geometry`)
and freed of its spheres keeps a spherical-segment void per sphere; the substrate enhancement
factor needs its metal area per laser-spot area, F = 1 + (2π/√3)(h/D)².
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .errors import AnalysisInputError
from .validation import require_non_negative, require_positive

#: 2π/√3 = n·π·D², the coefficient of (h/D)² in the surface-area factor.
_ZONE_COEFFICIENT = 2.0 * math.pi / math.sqrt(3.0)

MODEL_DESCRIPTION = (
    "segment-void film: hexagonally close-packed spheres of diameter D, metal to height h, "
    "smooth metal, template removed; F = 1 + (2π/√3)·(h/D)²"
)


@dataclass(frozen=True)
class SurfaceAreaFactor:
    """Metal area per projected area and its standard uncertainty.

    Attributes
    ----------
    value : float
        F, dimensionless (≥ 1).
    standard_uncertainty : float
        u(F) propagated to first order from u(h) and u(D) (GUM, JCGM 100:2008, §5.1.2).
    relative_uncertainty : float
        u(F)/F.
    height_over_diameter : float
        h/D used.
    model : str
        The geometric model in words.
    """

    value: float
    standard_uncertainty: float
    relative_uncertainty: float
    height_over_diameter: float
    model: str


def segment_void_surface_area_factor(
    *,
    sphere_diameter_nm: float,
    film_height_nm: float,
    film_height_u_nm: float = 0.0,
    sphere_diameter_u_nm: float = 0.0,
) -> SurfaceAreaFactor:
    """Metal surface area per projected area of a segment-void film, F = 1 + (2π/√3)(h/D)².

    Flat top outside the void openings plus the inner spherical-zone surface of every void,
    per unit projected area.  Model and assumptions under Notes.

    Parameters
    ----------
    sphere_diameter_nm : float
        Template sphere diameter D, nm; > 0.
    film_height_nm : float
        Metal film height h above the base, nm; 0 ≤ h ≤ D.
    film_height_u_nm, sphere_diameter_u_nm : float, default 0
        Standard uncertainties of h and D, nm (uncorrelated).

    Returns
    -------
    SurfaceAreaFactor
        u(F)² = (∂F/∂h·u_h)² + (∂F/∂D·u_D)², ∂F/∂h = 2c·h/D², ∂F/∂D = −2c·h²/D³,
        c = 2π/√3.

    Raises
    ------
    AnalysisInputError
        A non-finite or negative input, D = 0, or h > D (the voids would be closed and the
        film no longer a segment-void film).

    Notes
    -----
    A segment-void film is grown by electrodeposition through a close-packed monolayer of equal
    template spheres up to a height h, after which the spheres are removed.  Each sphere leaves a
    spherical-segment void in the metal.  The SERS substrate enhancement factor needs the metal
    area per projected (laser spot) area, because the analyte covers the inner void surfaces as
    well as the flat top.  No library computes this geometry, so it is written out here.

    Model (plain geometry, no source needed beyond the packing density):

    * spheres of diameter D = 2R in perfect hexagonal close packing, touching the base,
      n = 2/(√3·D²) spheres per area (Conway & Sloane, *Sphere Packings, Lattices and Groups*,
      3rd ed., Springer 1999, ch. 1: the hexagonal packing's density is π/√12);
    * the metal fills all space between the spheres from the base up to a flat top at height h;
    * the metal is smooth, and the template is fully removed, so every void surface is exposed.

    Per sphere the flat top loses the void's opening, a disc of radius r² = h·(D − h), and gains
    the spherical zone between heights 0 and h, area 2π·R·h (Archimedes' zone theorem).  Per
    projected area therefore

        F(h) = 1 − n·π·h·(D − h) + n·π·D·h = 1 + n·π·h² = 1 + (2π/√3)·(h/D)².

    F = 1 at h = 0, 1 + π/(2√3) ≈ 1.907 at h = D/2 and 1 + 2π/√3 ≈ 4.628 at h = D (where
    the voids close).  Above about h/D = 0.9 the openings are narrow and an analyte may not
    reach the whole inner surface; the model then overstates the accessible area.

    References
    ----------
    J. H. Conway and N. J. A. Sloane, *Sphere Packings, Lattices and Groups*, 3rd ed.,
    Springer, New York, 1999, ch. 1 (hexagonal packing, n = 2/(√3·D²)).
    JCGM 100:2008 (GUM), §5.1.2 (first-order propagation of uncertainty).
    """
    diameter = require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
    height = require_non_negative(film_height_nm, field="film_height_nm")
    u_height = require_non_negative(film_height_u_nm, field="film_height_u_nm")
    u_diameter = require_non_negative(sphere_diameter_u_nm, field="sphere_diameter_u_nm")
    if height > diameter:
        raise AnalysisInputError(
            f"film height {height:g} nm exceeds the sphere diameter {diameter:g} nm: the voids "
            "are closed and the segment-void model does not apply",
            field="film_height_nm",
        )
    ratio = height / diameter
    value = 1.0 + _ZONE_COEFFICIENT * ratio**2
    d_height = 2.0 * _ZONE_COEFFICIENT * height / diameter**2
    d_diameter = -2.0 * _ZONE_COEFFICIENT * height**2 / diameter**3
    uncertainty = math.hypot(d_height * u_height, d_diameter * u_diameter)
    return SurfaceAreaFactor(
        value=value,
        standard_uncertainty=uncertainty,
        relative_uncertainty=uncertainty / value,
        height_over_diameter=ratio,
        model=MODEL_DESCRIPTION,
    )
