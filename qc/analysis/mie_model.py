"""Mie-theory extinction of Au and Ag colloids in water, and its fit to a UV-vis spectrum.

The chain is: Johnson & Christy bulk permittivity → Kreibig size-dependent damping of the
free-electron (Drude) part → Mie efficiencies from ``miepython`` → a log-normal number
distribution of diameters → absorbance of the colloid in a 1 cm path.  Cross sections are
tabulated once per (metal, wavelength grid, medium) and kept in memory, so fitting a
spectrum is a cheap spline evaluation.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import cache, lru_cache

import numpy as np
from scipy import constants
from scipy.interpolate import CubicSpline
from scipy.optimize import least_squares

from ._validation import (
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_non_negative,
    require_positive,
)
from .errors import AnalysisInputError
from .optical_constants import johnson_christy_permittivity, medium_index


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

#: Range of median diameters the spectrum fit searches, nm.  A fit ending at either end
#: reports no size ("outside the fit range").
DIAMETER_SEARCH_NM = (5.0, 120.0)
# Table of cross sections: log-spaced diameters wide enough for citrate colloids.
_TABLE_DIAMETERS_NM = np.geomspace(2.0, 200.0, 72)
# Gauss–Hermite nodes for averaging over a log-normal distribution.
_HERMITE_NODES, _HERMITE_WEIGHTS = np.polynomial.hermite.hermgauss(24)


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


def _spline_for(metal, wavelength, medium_n, damping_constant) -> CubicSpline:
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
    spline = _spline_for(metal, wavelength, medium_n, damping_constant)
    return _lognormal_average(spline, median, log_sigma)


def _lognormal_average(spline: CubicSpline, median_nm: float, log_sigma: float) -> np.ndarray:
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


@dataclass(frozen=True)
class MieFit:
    """Result of fitting the log-normal Mie model to one spectrum.

    Attributes
    ----------
    metal : str
    median_diameter_nm : float
        Fitted median diameter of the number distribution.
    geometric_sigma : float
        Fitted geometric standard deviation (1 = monodisperse).
    number_per_mL : float
        Fitted particle concentration for the absorbance as given (scale it yourself if the
        spectrum was not corrected to the undiluted colloid in 1 cm).
    rms_residual : float
        Root-mean-square of (measured − model) absorbance.
    relative_rms_residual : float
        rms_residual divided by the RMS of the measured absorbance.
    evaluations : int
        Model evaluations used by the optimiser.
    diameter_bound : str
        "" when the median diameter lies inside the search range; "lower" or "upper" when
        the fit ended at that bound.  Then the spectrum lies outside the fit range and
        ``median_diameter_nm`` is the bound, not a size: report no size.
    diameter_bound_nm : float
        The search bound reached (nan when none).
    median_diameter_ci95_nm : (float, float) or None
        Approximate 95 % interval of the median diameter from the fit covariance
        (±1.96 standard errors of ln d, so asymmetric in d); None at a bound.
    median_diameter_u_nm : float or None
        Standard uncertainty of the median diameter (first order from ln d); None at a bound.
    sigma_bound : str
        "" inside the range; "upper" when σ_g ended at ``max_sigma`` (flag it: the spectrum
        may hold aggregates or a second population); "lower" when it ended at 1, i.e. the
        width is below what the spectrum resolves (not a measured 1.000).
    """

    metal: str
    median_diameter_nm: float
    geometric_sigma: float
    number_per_mL: float
    rms_residual: float
    relative_rms_residual: float
    evaluations: int
    diameter_bound: str = ""
    diameter_bound_nm: float = float("nan")
    median_diameter_ci95_nm: tuple[float, float] | None = None
    median_diameter_u_nm: float | None = None
    sigma_bound: str = ""

    @property
    def has_size(self) -> bool:
        """Whether the fitted median diameter is a size (not a search bound)."""
        return not self.diameter_bound

    @property
    def limit_note(self) -> str:
        """What the fit's bounds mean for the numbers, in words (empty when nothing)."""
        notes = []
        if self.diameter_bound:
            notes.append(f"outside the fit range: the median diameter reached the "
                         f"{self.diameter_bound} bound of {self.diameter_bound_nm:g} nm, so "
                         "no size is reported")
        if self.sigma_bound == "upper":
            notes.append(f"the width reached its upper bound (σ_g = {self.geometric_sigma:.2f}); "
                         "aggregates or a second population may be present")
        elif self.sigma_bound == "lower":
            notes.append("the size distribution is narrower than the spectrum resolves")
        return "; ".join(notes)


def fit_lognormal_mie(
    wavelength_nm,
    absorbance,
    metal: str,
    *,
    path_length_cm: float = 1.0,
    fit_range_nm: tuple[float, float] = (350.0, 800.0),
    initial_diameter_nm: float = 30.0,
    initial_sigma: float = 1.1,
    max_sigma: float = 1.5,
    medium_n: float | None = None,
) -> MieFit:
    """Fit median diameter and σ_g of a log-normal Mie model; N is solved linearly.

    Minimises Σ (A_meas − N·a(λ; d_med, σ_g))² with a(λ) = ⟨C_ext⟩·L/ln 10.  For any
    (d_med, σ_g) the best N ≥ 0 is the linear least-squares value
    N = Σ A·a / Σ a², so the non-linear search (scipy ``least_squares``, trust-region
    reflective with bounds) runs over ln d_med and ln σ_g only.

    Parameters
    ----------
    wavelength_nm, absorbance : array_like
        Spectrum (blank-corrected), vacuum wavelength in nm.
    metal : {"Au", "Ag"}
    path_length_cm : float, default 1
    fit_range_nm : (float, float), default (350, 800)
        Only points inside are fitted.
    initial_diameter_nm, initial_sigma : float
        Starting point.  Several starting diameters are tried and the best kept.
    max_sigma : float, default 1.5
        Upper bound on σ_g.
    medium_n : float, optional
        Medium index, default water 1.333.

    Returns
    -------
    MieFit

    Notes
    -----
    Interband absorption makes the short-wavelength part of gold spectra almost
    size-independent, so the size information sits in the peak position, width and the
    red wing.  Absorbance from aggregates (a long-wavelength shoulder) is not modelled; a
    large relative residual is the sign of it.
    """
    wavelength = as_strictly_monotonic_axis(wavelength_nm, field="wavelength_nm", min_points=10)
    measured = as_finite_1d(absorbance, field="absorbance")
    if measured.size != wavelength.size:
        raise AnalysisInputError("absorbance and wavelength lengths differ", field="absorbance")
    inside = (wavelength >= fit_range_nm[0]) & (wavelength <= fit_range_nm[1])
    if inside.sum() < 10:
        raise AnalysisInputError("fewer than 10 points inside the fit range", field="fit_range_nm")
    wavelength, measured = wavelength[inside], measured[inside]
    path = require_positive(path_length_cm, field="path_length_cm")

    spline = _spline_for(metal, wavelength, medium_n, DAMPING_CONSTANT_A)

    def unit_absorbance(params):
        cross = _lognormal_average(spline, np.exp(params[0]), params[1])
        return absorbance_from_cross_section(cross, 1.0, path)

    def residuals(params):
        model = unit_absorbance(params)
        number = max(float(measured @ model / (model @ model)), 0.0)
        return measured - number * model

    sigma_limit = float(max_sigma)
    if not np.isfinite(sigma_limit) or not 1.0 < sigma_limit <= 1.6:
        raise AnalysisInputError("max_sigma must lie in (1, 1.6]", field="max_sigma")
    lower = [np.log(DIAMETER_SEARCH_NM[0]), 0.0]
    upper = [np.log(DIAMETER_SEARCH_NM[1]), np.log(sigma_limit)]
    best = None
    for start_d in sorted({initial_diameter_nm, 12.0, 30.0, 70.0}):
        start = [
            np.clip(np.log(start_d), lower[0], upper[0]),
            np.clip(np.log(initial_sigma), 0.0, upper[1]),
        ]
        result = least_squares(residuals, start, bounds=(lower, upper), x_scale=[0.3, 0.1])
        if best is None or result.cost < best.cost:
            best = result
    assert best is not None  # the loop ran at least once
    model = unit_absorbance(best.x)
    number = max(float(measured @ model / (model @ model)), 0.0)
    rms = float(np.sqrt(np.mean((measured - number * model) ** 2)))
    diameter_bound = _bound_reached(best.x[0], lower[0], upper[0])
    median = float(np.exp(best.x[0]))
    interval = u_median = None
    if not diameter_bound:
        u_log_d = _log_diameter_standard_error(best, measured.size)
        if np.isfinite(u_log_d):
            interval = (median * float(np.exp(-1.96 * u_log_d)),
                        median * float(np.exp(1.96 * u_log_d)))
            u_median = median * u_log_d
    return MieFit(
        metal=metal,
        median_diameter_nm=median,
        geometric_sigma=float(np.exp(best.x[1])),
        number_per_mL=number,
        rms_residual=rms,
        relative_rms_residual=rms / float(np.sqrt(np.mean(measured**2))),
        evaluations=int(best.nfev),
        diameter_bound=diameter_bound,
        diameter_bound_nm=(DIAMETER_SEARCH_NM[0] if diameter_bound == "lower"
                           else DIAMETER_SEARCH_NM[1] if diameter_bound == "upper"
                           else float("nan")),
        median_diameter_ci95_nm=interval,
        median_diameter_u_nm=u_median,
        sigma_bound=_bound_reached(best.x[1], lower[1], upper[1]),
    )


def _bound_reached(value: float, low: float, high: float, *, tolerance: float = 1e-3) -> str:
    """"lower"/"upper" when a fitted log-parameter sits within ``tolerance`` of a bound."""
    if value - low <= tolerance:
        return "lower"
    if high - value <= tolerance:
        return "upper"
    return ""


def _log_diameter_standard_error(result, n_points: int) -> float:
    """Standard error of ln d_med from the Gauss–Newton covariance s²·(JᵀJ)⁻¹.

    s² = Σr²/(m − p) with p = 3 (d_med, σ_g and the linearly solved N); the Jacobian is of
    the residuals with N re-solved at every step (variable projection, Golub & Pereyra,
    SIAM J. Numer. Anal. 10, 413 (1973)), so the interval accounts for N.  A parameter at
    its bound is held fixed (its column dropped).
    """
    free = [0] + ([1] if result.active_mask[1] == 0 else [])
    jac = result.jac[:, free]
    dof = n_points - (len(free) + 1)
    if dof <= 0:
        return float("nan")
    s2 = 2.0 * result.cost / dof
    covariance = s2 * np.linalg.pinv(jac.T @ jac)
    return float(np.sqrt(max(covariance[0, 0], 0.0)))


@dataclass(frozen=True)
class SizeAgreement:
    """Mie-fitted size against a calibration's size.

    Attributes
    ----------
    mie_diameter_nm, calibration_diameter_nm : float
    difference_percent : float
        100·(mie − calibration)/calibration.
    agrees : bool or None
        |difference_percent| <= tolerance_percent; None when the calibration is not
        independent of the Mie model (then agreement would prove nothing).
    message : str
    """

    mie_diameter_nm: float
    calibration_diameter_nm: float
    difference_percent: float
    agrees: bool | None
    message: str


def compare_sizes(
    mie_diameter_nm: float,
    calibration_diameter_nm: float,
    *,
    tolerance_percent: float = 15.0,
    calibration_independent: bool = True,
) -> SizeAgreement:
    """Say whether the Mie-fitted size and a calibration size agree within a tolerance.

    Parameters
    ----------
    mie_diameter_nm : float
        From :func:`fit_lognormal_mie`.
    calibration_diameter_nm : float
        From Haiss et al. (gold) or a silver calibration table.
    tolerance_percent : float, default 15
        The lab's allowed difference (the Haiss ratio method itself has an average
        deviation of 11 %).
    calibration_independent : bool, default True
        False when the calibration was itself computed with this Mie model (the built-in
        silver table): the two sizes then share their model, so no verdict is given.
    """
    mie = require_positive(mie_diameter_nm, field="mie_diameter_nm")
    calibration = require_positive(calibration_diameter_nm, field="calibration_diameter_nm")
    tolerance = require_positive(tolerance_percent, field="tolerance_percent")
    difference = 100.0 * (mie - calibration) / calibration
    if not calibration_independent:
        message = (
            f"Mie fit {mie:.1f} nm and calibration {calibration:.1f} nm ({difference:+.1f} %): "
            "not an independent check, the calibration was computed with the same Mie model; "
            "a lab calibration (e.g. from electron microscopy) gives an independent one"
        )
        return SizeAgreement(mie, calibration, difference, None, message)
    agrees = abs(difference) <= tolerance
    verdict = "agree" if agrees else "differ"
    message = (
        f"Mie fit {mie:.1f} nm and calibration {calibration:.1f} nm {verdict} "
        f"({difference:+.1f} %, tolerance ±{tolerance:g} %)"
    )
    return SizeAgreement(mie, calibration, difference, agrees, message)


def _drude(metal: str) -> DrudeParameters:
    if metal not in DRUDE:
        raise AnalysisInputError(
            f"unknown metal {metal!r}; expected one of {sorted(DRUDE)}", field="metal"
        )
    return DRUDE[metal]
