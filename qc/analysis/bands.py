"""Reference-band metrics: peak fitting of one band and intensity normalisation to laser
power and integration time.  The line shapes are in :mod:`qc.analysis.band_profiles`, the
fast array metrics for maps in :mod:`qc.analysis.band_maps` (both re-exported here).
"""

from dataclasses import dataclass

import numpy as np
from scipy.optimize import curve_fit

from ._validation import as_finite_1d, as_strictly_monotonic_axis, require_positive
from .band_maps import MapBandMetrics, band_heights_map, band_metrics_map
from .band_profiles import (
    PROFILES,
    check_band_window,
    lorentzian,
    pseudo_voigt,
    pseudo_voigt_area_factor,
    pseudo_voigt_area_factor_slope,
)
from .errors import AnalysisInputError

__all__ = [
    "PROFILES", "BandFit", "MapBandMetrics", "band_heights_map", "band_metrics_map",
    "check_band_window", "fit_band", "lorentzian", "normalised_intensity", "pseudo_voigt",
]


@dataclass(frozen=True, eq=False)
class BandFit:
    """A fitted band (all intensities in the units of the input, e.g. counts or counts/(mW·s)).

    Attributes
    ----------
    profile : str
        ``"lorentzian"`` or ``"pseudo_voigt"``.
    position_cm1, height, fwhm_cm1, area : float
        Fitted centre (cm⁻¹), peak height above the local line, full width at half maximum
        (cm⁻¹) and integrated area (intensity × cm⁻¹).
    eta : float
        Lorentzian fraction of the pseudo-Voigt (1.0 for a pure Lorentzian).
    position_se_cm1, height_se, fwhm_se_cm1, area_se, eta_se : float
        Standard errors from the least-squares covariance (scaled by the residual variance).
    snr : float
        Signal-to-noise: fitted height divided by the standard deviation of the fit
        residuals inside the window.
    residual_sd : float
        Standard deviation of the residuals (ddof = number of fitted parameters).
    window_shift_cm1, window_intensity, fitted_curve : numpy.ndarray
        The window's axis and data, and the fitted model on it (for plotting).
    """

    profile: str
    position_cm1: float
    height: float
    fwhm_cm1: float
    area: float
    eta: float
    position_se_cm1: float
    height_se: float
    fwhm_se_cm1: float
    area_se: float
    eta_se: float
    snr: float
    residual_sd: float
    window_shift_cm1: np.ndarray
    window_intensity: np.ndarray
    fitted_curve: np.ndarray
    at_bound: tuple[str, ...] = ()

    @property
    def limit_note(self) -> str:
        """Which fitted parameter ended at its bound, in words (empty when none).

        A parameter at its bound is not a measurement: the band lies (partly) outside the
        window, is wider than the window allows, narrower than the sampling, or absent.
        """
        return "; ".join(_BOUND_NOTES[name] for name in self.at_bound)


_BOUND_NOTES = {
    "position": "the band position reached the edge of the fitting window",
    "fwhm_upper": "the band width reached its upper bound (twice the window)",
    "fwhm_lower": "the band width reached its lower bound (one sampling step)",
    "height": "the fitted band height is zero (no band)",
}



def fit_band(
    shift_cm1,
    intensity,
    *,
    band_center_cm1: float,
    band_window_cm1: float,
    profile: str = "lorentzian",
) -> BandFit:
    """Fit one band plus a local straight line by non-linear least squares.

    Model inside the window ``|x − x_c| ≤ w/2``:
    ``y = P(x; x0, h, Γ[, η]) + a + b·(x − x_c)`` with P a Lorentzian or pseudo-Voigt,
    fitted with :func:`scipy.optimize.curve_fit` (trust-region reflective, bounded).

    Parameters
    ----------
    shift_cm1 : array_like, shape (n,)
        Raman shift (cm⁻¹), strictly monotonic.
    intensity : array_like, shape (n,)
        Baseline-corrected (or raw) intensities; the local line absorbs what is left.
    band_center_cm1 : float
        Expected band position (cm⁻¹).
    band_window_cm1 : float
        Full width of the fitting window (cm⁻¹), centred on ``band_center_cm1``.
    profile : {"lorentzian", "pseudo_voigt"}

    Returns
    -------
    BandFit
        Position, height, FWHM, area (area = π·h·Γ/2 for a Lorentzian) with standard
        errors; area errors propagated from the parameter covariance to first order.
        S/N is the fitted height over the residual standard deviation in the window.

    Notes
    -----
    Standard errors assume independent residuals of equal variance (the covariance is
    scaled by the reduced chi-square, ``absolute_sigma=False``).

    References
    ----------
    .. [1] Virtanen, P. et al. SciPy 1.0: fundamental algorithms for scientific computing in
       Python. Nature Methods 2020, 17, 261–272 (``scipy.optimize.curve_fit``).
    .. [2] Thompson, P.; Cox, D. E.; Hastings, J. B. Rietveld refinement of Debye–Scherrer
       synchrotron X-ray data from Al2O3. J. Appl. Crystallogr. 1987, 20, 79–83
       (pseudo-Voigt as a Lorentzian–Gaussian sum).
    """
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=7)
    values = as_finite_1d(intensity, field="intensity")
    if values.size != axis.size:
        raise AnalysisInputError(
            f"has {values.size} points but shift_cm1 has {axis.size}", field="intensity"
        )
    if profile not in PROFILES:
        raise AnalysisInputError(f"must be one of {PROFILES}", field="profile")
    inside = check_band_window(axis, band_center_cm1, band_window_cm1)
    x, y = axis[inside], values[inside]
    center, width = float(band_center_cm1), float(band_window_cm1)

    step = np.median(np.abs(np.diff(x)))
    edge = max(2, x.size // 10)
    slope0 = (y[-edge:].mean() - y[:edge].mean()) / (x[-edge:].mean() - x[:edge].mean())
    line0 = y[:edge].mean() + slope0 * (x - x[:edge].mean())
    height0 = max(float(np.max(y - line0)), np.finfo(float).tiny)
    guess = [float(x[np.argmax(y - line0)]), height0, width / 4]
    lower = [center - width / 2, 0.0, step]
    upper = [center + width / 2, np.inf, 2 * width]
    if profile == "pseudo_voigt":
        guess.append(0.5)
        lower.append(0.0)
        upper.append(1.0)
    offset0 = float(np.mean(line0 - slope0 * (x - center)))
    guess += [offset0, float(slope0)]
    lower += [-np.inf, -np.inf]
    upper += [np.inf, np.inf]

    n_shape = 4 if profile == "pseudo_voigt" else 3

    def model(xv, *params):
        shape = params[:n_shape]
        peak = pseudo_voigt(xv, *shape) if n_shape == 4 else lorentzian(xv, *shape)
        return peak + params[n_shape] + params[n_shape + 1] * (xv - center)

    if x.size <= len(guess):
        raise AnalysisInputError(
            "the band window holds too few points for the fit", field="band_window_cm1"
        )
    try:
        params, cov = curve_fit(model, x, y, p0=guess, bounds=(lower, upper), maxfev=20000)
    except (RuntimeError, ValueError) as exc:
        raise AnalysisInputError(
            f"the band could not be fitted ({exc})", field="band_center_cm1"
        ) from exc
    fitted = model(x, *params)
    residuals = y - fitted
    residual_sd = float(np.sqrt(np.sum(residuals**2) / (x.size - len(params))))
    errors = (
        np.sqrt(np.clip(np.diag(cov), 0, None))
        if np.all(np.isfinite(cov))
        else (np.full(len(params), np.nan))
    )

    position, height, fwhm = (float(v) for v in params[:3])
    eta = float(params[3]) if n_shape == 4 else 1.0
    factor = pseudo_voigt_area_factor(eta)
    area = height * fwhm * factor
    # First-order propagation: ∂A/∂h = Γ·f, ∂A/∂Γ = h·f, ∂A/∂η = h·Γ·½(π − √(π/ln2)).
    gradient = np.zeros(len(params))
    gradient[1], gradient[2] = fwhm * factor, height * factor
    if n_shape == 4:
        gradient[3] = height * fwhm * pseudo_voigt_area_factor_slope()
    area_se = (
        float(np.sqrt(max(gradient @ cov @ gradient, 0.0))) if np.all(np.isfinite(cov)) else np.nan
    )
    return BandFit(
        at_bound=_bounds_reached(params, lower, upper),
        profile=profile,
        position_cm1=position,
        height=height,
        fwhm_cm1=fwhm,
        area=float(area),
        eta=eta,
        position_se_cm1=float(errors[0]),
        height_se=float(errors[1]),
        fwhm_se_cm1=float(errors[2]),
        area_se=area_se,
        eta_se=float(errors[3]) if n_shape == 4 else 0.0,
        snr=height / residual_sd if residual_sd > 0 else float("inf"),
        residual_sd=residual_sd,
        window_shift_cm1=x,
        window_intensity=y,
        fitted_curve=fitted,
    )


def _bounds_reached(params, lower, upper, *, relative=1e-6) -> tuple[str, ...]:
    """Names of the shape parameters (position, height, FWHM) that ended at a bound."""
    reached = []
    span = upper[0] - lower[0]
    if min(params[0] - lower[0], upper[0] - params[0]) <= relative * span:
        reached.append("position")
    if params[1] <= 0.0:
        reached.append("height")
    if params[2] >= upper[2] * (1 - relative):
        reached.append("fwhm_upper")
    elif params[2] <= lower[2] * (1 + relative):
        reached.append("fwhm_lower")
    return tuple(reached)



def normalised_intensity(
    intensity,
    *,
    power_mW: float,
    integration_s: float,
    accumulations: int = 1,
    accumulations_summed: bool = True,
):
    """Intensity per unit laser power and exposure, counts/(mW·s).

    ``I_norm = I / (P · t · N_acc)`` when the instrument summed ``N_acc`` accumulations,
    ``I / (P · t)`` when it averaged them (``accumulations_summed=False``).

    Parameters
    ----------
    intensity : float or array_like
        Counts (or a count-based metric such as a band height or area).
    power_mW : float
        Laser power at the sample (mW), > 0.
    integration_s : float
        Integration time per accumulation (s), > 0.
    accumulations : int, default 1
        Number of accumulations, ≥ 1.
    accumulations_summed : bool, default True
        Whether the file holds the sum (True) or the mean (False) of the accumulations.

    Returns
    -------
    float or numpy.ndarray
        Intensity in counts/(mW·s) (or the metric's unit per mW·s).

    Notes
    -----
    Dividing by power and time assumes a linear detector response and no photodamage,
    common practice for comparing SERS intensities across acquisitions.
    """
    power = require_positive(power_mW, field="power_mW")
    time_s = require_positive(integration_s, field="integration_s")
    if int(accumulations) != accumulations or accumulations < 1:
        raise AnalysisInputError("must be a whole number ≥ 1", field="accumulations")
    divisor = power * time_s * (int(accumulations) if accumulations_summed else 1)
    result = np.asarray(intensity, dtype=float) / divisor
    return float(result) if result.ndim == 0 else result
