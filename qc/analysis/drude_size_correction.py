"""Size-dependent damping of the free electrons in small Au and Ag spheres (Kreibig).

The bulk Johnson & Christy permittivity with its Drude part's collision rate raised by
surface scattering, Γ(R) = Γ_bulk + A·v_F/R: the permittivity the Mie model
(:mod:`qc.analysis.mie_cross_section`) needs for spheres smaller than the electrons' mean
free path.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants

from ._validation import as_finite_1d
from .errors import AnalysisInputError
from .optical_constants import johnson_christy_permittivity


@dataclass(frozen=True)
class DrudeParameters:
    """Free-electron constants for the size-dependent damping correction.

    Attributes
    ----------
    plasma_frequency_rad_s : float
        Bulk plasma frequency ω_p in rad/s.
    bulk_damping_rad_s : float
        Bulk collision frequency Γ_bulk in 1/s.
    fermi_velocity_nm_s : float
        Fermi velocity v_F in nm/s.
    source : str
        Where the numbers come from.
    """

    plasma_frequency_rad_s: float
    bulk_damping_rad_s: float
    fermi_velocity_nm_s: float
    source: str


#: Gold constants used by Haiss et al. (2007) for their mean-free-path correction.
GOLD_DRUDE = DrudeParameters(
    plasma_frequency_rad_s=1.38e16,
    bulk_damping_rad_s=3.33e13,
    fermi_velocity_nm_s=1.4e15,  # 1.4e8 cm/s
    source="Haiss, Thanh, Aveyard & Fernig, Anal. Chem. 79, 4215 (2007)",
)
#: Silver constants after Kreibig (1974).
SILVER_DRUDE = DrudeParameters(
    plasma_frequency_rad_s=1.37e16,
    bulk_damping_rad_s=2.7e13,
    fermi_velocity_nm_s=1.4e15,
    source="Kreibig, J. Phys. F: Met. Phys. 4, 999 (1974)",
)
DRUDE = {"Au": GOLD_DRUDE, "Ag": SILVER_DRUDE}

#: Surface-scattering constant A in Γ(R) = Γ_bulk + A·v_F/R.  A = 1 is the plain
#: mean-free-path limit τ = R/v_F used by Haiss et al. (2007).
DAMPING_CONSTANT_A = 1.0



def damping_rate_rad_s(radius_nm, metal: str, *, damping_constant: float = DAMPING_CONSTANT_A):
    """Size-dependent collision frequency Γ(R) = Γ_bulk + A·v_F/R (Kreibig).

    Parameters
    ----------
    radius_nm : array_like
        Particle radius R in nm.
    metal : {"Au", "Ag"}
    damping_constant : float, default 1
        A; 1 is the mean-free-path limit τ = R/v_F used by Haiss et al. (2007).

    Returns
    -------
    numpy.ndarray
        Γ(R) in 1/s.

    References
    ----------
    U. Kreibig, "Electronic properties of small silver particles: the optical constants and
    their temperature dependence", J. Phys. F: Met. Phys. 4, 999–1014 (1974).
    W. Haiss et al., Anal. Chem. 79, 4215–4221 (2007).
    """
    drude = _drude(metal)
    radius = np.asarray(radius_nm, dtype=float)
    if np.any(radius <= 0):
        raise AnalysisInputError("radius must be positive", field="radius_nm")
    return drude.bulk_damping_rad_s + damping_constant * drude.fermi_velocity_nm_s / radius


def size_corrected_permittivity(
    metal: str, wavelength_nm, diameter_nm, *, damping_constant: float = DAMPING_CONSTANT_A
) -> np.ndarray:
    """Permittivity of a sphere of given diameter with Kreibig size-dependent damping.

    ε(ω, R) = ε_bulk(ω) + ω_p²/(ω² + iωΓ_bulk) − ω_p²/(ω² + iωΓ(R)),
    Γ(R) = Γ_bulk + A·v_F/R, with ε_bulk from Johnson & Christy.

    Parameters
    ----------
    metal : {"Au", "Ag"}
    wavelength_nm : array_like, shape (n_wavelengths,)
        Vacuum wavelengths in nm.
    diameter_nm : array_like, shape (n_diameters,) or scalar
        Sphere diameters in nm (R = diameter/2).
    damping_constant : float, default 1
        A in Γ(R).

    Returns
    -------
    numpy.ndarray of complex, shape (n_diameters, n_wavelengths)
        ε1 + iε2.

    References
    ----------
    U. Kreibig, J. Phys. F: Met. Phys. 4, 999–1014 (1974).
    P. B. Johnson and R. W. Christy, Phys. Rev. B 6, 4370–4379 (1972).
    W. Haiss et al., Anal. Chem. 79, 4215–4221 (2007) (τ = R/v_F, Drude constants for Au).
    """
    drude = _drude(metal)
    wavelength = as_finite_1d(wavelength_nm, field="wavelength_nm")
    radius = np.atleast_1d(np.asarray(diameter_nm, dtype=float))[:, None] / 2.0
    omega = 2.0 * np.pi * constants.c / (wavelength * 1e-9)
    gamma_r = damping_rate_rad_s(radius, metal, damping_constant=damping_constant)
    wp2 = drude.plasma_frequency_rad_s**2
    bulk_drude = wp2 / (omega**2 + 1j * omega * drude.bulk_damping_rad_s)
    size_drude = wp2 / (omega**2 + 1j * omega * gamma_r)
    return johnson_christy_permittivity(metal, wavelength)[None, :] + bulk_drude - size_drude



def _drude(metal: str) -> DrudeParameters:
    if metal not in DRUDE:
        raise AnalysisInputError(
            f"unknown metal {metal!r}; expected one of {sorted(DRUDE)}", field="metal"
        )
    return DRUDE[metal]
