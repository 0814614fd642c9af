"""Fitting the log-normal Mie model to a UV-vis spectrum, and comparing its size with a calibration.

The model is :func:`qc.analysis.mie_cross_section.mean_cross_section_nm2`; the fit searches
median diameter and geometric σ_g, and solves the number concentration linearly.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from ._validation import as_finite_1d, as_strictly_monotonic_axis, require_positive
from .drude_size_correction import DAMPING_CONSTANT_A
from .errors import AnalysisInputError
from .mie_cross_section import (
    absorbance_from_cross_section,
    cross_section_spline,
    lognormal_average_nm2,
)

#: Range of median diameters the spectrum fit searches, nm.  A fit ending at either end
#: reports no size ("outside the fit range").
DIAMETER_SEARCH_NM = (5.0, 120.0)


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

    spline = cross_section_spline(metal, wavelength, medium_n, DAMPING_CONSTANT_A)

    def unit_absorbance(params):
        cross = lognormal_average_nm2(spline, np.exp(params[0]), params[1])
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
