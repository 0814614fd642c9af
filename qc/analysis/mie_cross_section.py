"""Mie extinction of Au and Ag spheres, averaged over a log-normal size distribution.

Mie efficiencies from ``miepython`` with the size-corrected permittivity of
:mod:`qc.analysis.drude_size_correction` → a log-normal number distribution of diameters →
absorbance of the colloid in a 1 cm path.  Cross sections are tabulated once per (metal,
wavelength grid, medium) and kept in memory, so fitting a spectrum
(:mod:`qc.analysis.mie_fit`) is a cheap spline evaluation.
"""

from __future__ import annotations

import os
from functools import cache, lru_cache

import numpy as np
from scipy.interpolate import CubicSpline

from ._validation import (
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_non_negative,
    require_positive,
)
from .drude_size_correction import DAMPING_CONSTANT_A, size_corrected_permittivity
from .errors import AnalysisInputError
from .optical_constants import medium_index

# Table of cross sections: log-spaced diameters wide enough for citrate colloids.
_TABLE_DIAMETERS_NM = np.geomspace(2.0, 200.0, 72)
# Gauss–Hermite nodes for averaging over a log-normal distribution.
_HERMITE_NODES, _HERMITE_WEIGHTS = np.polynomial.hermite.hermgauss(24)


@cache
def _miepython():
    """miepython with its compiled (numba) backend, imported on the first Mie calculation.

    The compiled backend fills a 72 × 451 cross-section table in about 0.05 s, the
    pure-Python one in 1.5 s (benchmarks/REPORT.md), and each new wavelength grid, metal or
    medium needs a new table.  Importing it costs about 1.2 s more, because numba loads its
    compiled functions from the on-disk cache (about 7 s once per machine, to compile them),
    so it is imported here, when a process first needs it, not whenever Django starts.
    ``MIEPYTHON_USE_JIT=0`` in the environment keeps the pure-Python backend.
    """
    os.environ.setdefault("MIEPYTHON_USE_JIT", "1")
    import miepython

    return miepython


def extinction_cross_section_nm2(
    metal: str,
    wavelength_nm,
    diameter_nm,
    *,
    medium_n: float | None = None,
    damping_constant: float = DAMPING_CONSTANT_A,
) -> np.ndarray:
    """Mie extinction cross section C_ext = Q_ext·πd²/4 of single spheres in a medium.

    Parameters
    ----------
    metal : {"Au", "Ag"}
    wavelength_nm : array_like, shape (n_wavelengths,)
        Vacuum wavelengths in nm.
    diameter_nm : array_like, shape (n_diameters,)
        Sphere diameters in nm.
    medium_n : float, optional
        Medium index; default water n = 1.333 (Haiss et al. 2007).
    damping_constant : float, default 1
        A in the Kreibig damping.

    Returns
    -------
    numpy.ndarray, shape (n_diameters, n_wavelengths)
        C_ext in nm².

    Notes
    -----
    Q_ext comes from ``miepython.efficiencies_mx`` (Bohren & Huffman series) with relative
    index m = n_sphere/n_medium and size parameter x = π·d·n_medium/λ; miepython's sign
    convention (m = n − ik) is applied by conjugation.

    References
    ----------
    C. F. Bohren and D. R. Huffman, Absorption and Scattering of Light by Small Particles
    (Wiley, 1983), ch. 4.
    """
    wavelength = as_finite_1d(wavelength_nm, field="wavelength_nm")
    diameter = as_finite_1d(np.atleast_1d(diameter_nm), field="diameter_nm")
    if np.any(diameter <= 0):
        raise AnalysisInputError("diameters must be positive", field="diameter_nm")
    n_medium = medium_index(wavelength, medium_n)
    sphere_index = np.sqrt(
        size_corrected_permittivity(metal, wavelength, diameter, damping_constant=damping_constant)
    )
    relative_index = np.conj(sphere_index) / n_medium[None, :]
    size_parameter = np.pi * diameter[:, None] * n_medium[None, :] / wavelength[None, :]
    q_ext, _, _, _ = _miepython().efficiencies_mx(relative_index.ravel(), size_parameter.ravel())
    return np.asarray(q_ext).reshape(relative_index.shape) * np.pi * diameter[:, None] ** 2 / 4.0


def cross_section_tables_clear() -> None:
    """Forget the tabulated cross sections (benchmarks time a first fit with it)."""
    _cross_section_spline.cache_clear()


@lru_cache(maxsize=16)
def _cross_section_spline(
    metal: str, wavelength_key: bytes, medium_n: float | None, damping_constant: float
) -> CubicSpline:
    """Spline of ln C_ext over ln d, one column per wavelength, built once per grid."""
    wavelength = np.frombuffer(wavelength_key, dtype=float)
    table = extinction_cross_section_nm2(
        metal, wavelength, _TABLE_DIAMETERS_NM, medium_n=medium_n, damping_constant=damping_constant
    )
    return CubicSpline(np.log(_TABLE_DIAMETERS_NM), np.log(table), axis=0)


def cross_section_spline(metal, wavelength, medium_n, damping_constant) -> CubicSpline:
    """The cached spline of ln C_ext over ln d for this wavelength grid (built on first use)."""
    key = np.ascontiguousarray(wavelength, dtype=float).tobytes()
    return _cross_section_spline(metal, key, medium_n, float(damping_constant))


def mean_cross_section_nm2(
    metal: str,
    wavelength_nm,
    median_diameter_nm: float,
    geometric_sigma: float = 1.0,
    *,
    medium_n: float | None = None,
    damping_constant: float = DAMPING_CONSTANT_A,
) -> np.ndarray:
    """Number-averaged C_ext over a log-normal distribution of diameters.

    ⟨C_ext⟩(λ) = ∫ C_ext(λ, d) p(d) dd, with ln d ~ Normal(ln d_med, ln σ_g),
    evaluated by 24-point Gauss–Hermite quadrature in ln d.

    Parameters
    ----------
    metal : {"Au", "Ag"}
    wavelength_nm : array_like
        Vacuum wavelengths in nm.
    median_diameter_nm : float
        Median d_med of the number distribution, nm.
    geometric_sigma : float, default 1
        Geometric standard deviation σ_g (>= 1; 1 means all spheres equal).
    medium_n : float, optional
        Medium index, default water 1.333.
    damping_constant : float, default 1

    Returns
    -------
    numpy.ndarray
        ⟨C_ext⟩ in nm² at each wavelength.

    Notes
    -----
    Single-sphere cross sections are tabulated at 72 log-spaced diameters (2–200 nm) on
    the caller's wavelength grid and interpolated with a cubic spline of ln C_ext in ln d;
    the table is cached per (metal, grid, medium, A).  Distributions reaching outside
    2–200 nm (beyond 3 σ) are refused.
    """
    wavelength = as_strictly_monotonic_axis(wavelength_nm, field="wavelength_nm")
    median = require_positive(median_diameter_nm, field="median_diameter_nm")
    sigma = float(geometric_sigma)
    if not np.isfinite(sigma) or sigma < 1.0:
        raise AnalysisInputError("geometric sigma must be >= 1", field="geometric_sigma")
    log_sigma = np.log(sigma)
    low, high = np.log(median) - 3 * log_sigma, np.log(median) + 3 * log_sigma
    if low < np.log(_TABLE_DIAMETERS_NM[0]) or high > np.log(_TABLE_DIAMETERS_NM[-1]):
        raise AnalysisInputError(
            f"size distribution (median {median:.1f} nm, σ_g {sigma:.2f}) reaches outside the "
            f"modelled {_TABLE_DIAMETERS_NM[0]:.0f}–{_TABLE_DIAMETERS_NM[-1]:.0f} nm",
            field="median_diameter_nm",
        )
    spline = cross_section_spline(metal, wavelength, medium_n, damping_constant)
    return lognormal_average_nm2(spline, median, log_sigma)


def lognormal_average_nm2(spline: CubicSpline, median_nm: float, log_sigma: float) -> np.ndarray:
    """Gauss–Hermite average of tabulated C_ext over ln d ~ Normal(ln median, log_sigma)."""
    log_d = np.log(median_nm) + np.sqrt(2.0) * log_sigma * _HERMITE_NODES
    # Far-tail nodes (weights < 1e-20) may fall off the table: clamp, never extrapolate.
    log_d = np.clip(log_d, np.log(_TABLE_DIAMETERS_NM[0]), np.log(_TABLE_DIAMETERS_NM[-1]))
    cross_sections = np.exp(spline(log_d))
    return _HERMITE_WEIGHTS @ cross_sections / np.sqrt(np.pi)


def absorbance_from_cross_section(
    cross_section_nm2, number_per_mL: float, path_length_cm: float = 1.0
) -> np.ndarray:
    """Absorbance of a dilute colloid, A = N·C_ext·L/ln 10 (Beer–Lambert, single scattering).

    Parameters
    ----------
    cross_section_nm2 : array_like
        Extinction cross section in nm².
    number_per_mL : float
        Particle number concentration N in 1/mL (= 1/cm³).
    path_length_cm : float, default 1
        Optical path L in cm.

    Returns
    -------
    numpy.ndarray
        Decadic absorbance.

    References
    ----------
    C. F. Bohren and D. R. Huffman (1983), §3.4 (extinction by a collection of particles).
    """
    number = require_non_negative(number_per_mL, field="number_per_mL")
    path = require_positive(path_length_cm, field="path_length_cm")
    return number * np.asarray(cross_section_nm2, dtype=float) * 1e-14 * path / np.log(10.0)


def synthesize_absorbance(
    metal: str,
    wavelength_nm,
    *,
    median_diameter_nm: float,
    geometric_sigma: float,
    number_per_mL: float,
    path_length_cm: float = 1.0,
    medium_n: float | None = None,
) -> np.ndarray:
    """Modelled absorbance of a log-normal colloid (used for demos and round-trip tests).

    Parameters are as in :func:`mean_cross_section_nm2` and
    :func:`absorbance_from_cross_section`; returns the decadic absorbance at each
    wavelength.
    """
    cross_section = mean_cross_section_nm2(
        metal, wavelength_nm, median_diameter_nm, geometric_sigma, medium_n=medium_n
    )
    return absorbance_from_cross_section(cross_section, number_per_mL, path_length_cm)
