"""UV-vis spectra of metal colloids: blank correction, dilution, and the plasmon-band numbers.

All reported absorbances are for the **undiluted colloid in a 1 cm cell**
(A_reported = A_measured × dilution_factor / path_length_cm), which is what the size and
concentration calibrations expect.  Wavelengths are vacuum wavelengths in nm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._validation import (
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_non_negative,
    require_positive,
)
from .errors import AnalysisInputError

#: Plausible UV-vis wavelengths in nm; values outside suggest another unit (µm, cm⁻¹, eV).
_PLAUSIBLE_NM = (150.0, 3300.0)
_MIN_POINTS = 10


@dataclass(frozen=True)
class CalibratedValue:
    """A number read from a published or lab calibration, with its range verdict.

    Attributes
    ----------
    value : float or None
        The number, or None when the input lies outside the calibration's stated range
        (no extrapolation).
    unit : str
    method : str
        Which calibration and equation produced it.
    within_range : bool
    is_estimate : bool
        True where the source itself calls results in this region estimates.
    note : str
        Why there is no number, or caveats on the number.
    standard_uncertainty : float or None
        Standard uncertainty of ``value`` in ``unit`` (None where the source gives no basis
        for one, or there is no value).
    """

    value: float | None
    unit: str
    method: str
    within_range: bool
    is_estimate: bool
    note: str
    standard_uncertainty: float | None = None


@dataclass(frozen=True)
class PlasmonBand:
    """Numbers read from one colloid spectrum, for the undiluted colloid in a 1 cm cell.

    Attributes
    ----------
    peak_nm : float
        Plasmon peak wavelength from a quadratic fit around the maximum.
    peak_absorbance_1cm : float
        Absorbance at the fitted peak, undiluted, 1 cm.
    fwhm_nm : float or None
        Full width at half maximum; None when a side does not reach half maximum.
    half_width_blue_nm, half_width_red_nm : float or None
        Peak-to-half-maximum distance on each side (None where not reached).
    fwhm_note : str
        Empty, or which side does not fall to half maximum inside the data.
    absorbance_450_1cm : float
        A at 450 nm (linear interpolation), undiluted, 1 cm.
    ratio_spr_450 : float
        peak_absorbance_1cm / absorbance_450_1cm (the Haiss ratio).
    peak_u_nm : float
        Standard uncertainty of ``peak_nm``: the parabola's statistical error (from the fit
        covariance) combined with how far the vertex moves when the fit window is widened
        by half (the band's asymmetry biases a parabola; this bounds that bias).
    peak_absorbance_u_1cm : float
        Standard uncertainty of ``peak_absorbance_1cm``, estimated the same way.
    """

    peak_nm: float
    peak_absorbance_1cm: float
    fwhm_nm: float | None
    half_width_blue_nm: float | None
    half_width_red_nm: float | None
    fwhm_note: str
    absorbance_450_1cm: float
    ratio_spr_450: float
    peak_u_nm: float = 0.0
    peak_absorbance_u_1cm: float = 0.0


class NoPlasmonPeakError(AnalysisInputError):
    """The spectrum has no single well-defined plasmon maximum inside the search window.

    Typical of large particles (above about 100 nm for gold: a broad dipole band with a
    quadrupole shoulder) and of aggregated colloids.  The spectrum is still a measurement;
    callers record it and say that peak-based size methods do not apply.
    """


def check_wavelength_axis_nm(wavelength_nm, *, min_points: int = _MIN_POINTS) -> np.ndarray:
    """Return the axis if it looks like a UV-vis axis in nm; refuse other units and short data.

    Values below 150 nm or above 3300 nm are refused with a guess at the unit (µm if all
    below 5; cm⁻¹ if all above 3300; common practice, no source).
    """
    axis = as_strictly_monotonic_axis(wavelength_nm, field="wavelength_nm", min_points=min_points)
    low, high = float(axis.min()), float(axis.max())
    if low >= _PLAUSIBLE_NM[0] and high <= _PLAUSIBLE_NM[1]:
        return axis
    if high < 5.0:
        guess = "µm or eV"
    elif low > _PLAUSIBLE_NM[1]:
        guess = "cm⁻¹ (wavenumber)"
    else:
        guess = "an unexpected unit"
    raise AnalysisInputError(
        f"wavelengths {low:g}–{high:g} do not look like nm (they look like {guess}); "
        "convert to nm first",
        field="wavelength_nm",
    )


def subtract_blank(wavelength_nm, absorbance, blank_wavelength_nm, blank_absorbance) -> np.ndarray:
    """Subtract a blank spectrum interpolated (linearly) onto the sample's wavelength axis.

    Parameters
    ----------
    wavelength_nm, absorbance : array_like
        Sample spectrum.
    blank_wavelength_nm, blank_absorbance : array_like
        Blank (solvent/cuvette) spectrum; it must cover the sample's range.

    Returns
    -------
    numpy.ndarray
        A_sample − A_blank(λ_sample).
    """
    axis = check_wavelength_axis_nm(wavelength_nm)
    sample = _same_length(absorbance, axis, "absorbance")
    blank_axis = check_wavelength_axis_nm(blank_wavelength_nm, min_points=2)
    blank = _same_length(blank_absorbance, blank_axis, "blank_absorbance")
    if axis.min() < blank_axis.min() or axis.max() > blank_axis.max():
        raise AnalysisInputError(
            f"blank covers {blank_axis.min():g}–{blank_axis.max():g} nm but the sample spans "
            f"{axis.min():g}–{axis.max():g} nm",
            field="blank_wavelength_nm",
        )
    order = np.argsort(blank_axis)
    return sample - np.interp(axis, blank_axis[order], blank[order])


def subtract_offset(wavelength_nm, absorbance, *, band_nm: tuple[float, float] = (780.0, 800.0)):
    """Subtract a constant offset: the mean absorbance in a band where the colloid is clear.

    Parameters
    ----------
    wavelength_nm, absorbance : array_like
    band_nm : (float, float), default (780, 800)
        Band whose mean is taken as the offset (common practice for small Au/Ag colloids,
        which barely absorb there; do not use it for aggregated or large particles).

    Returns
    -------
    numpy.ndarray
        A − mean(A in band).
    """
    axis = check_wavelength_axis_nm(wavelength_nm)
    values = _same_length(absorbance, axis, "absorbance")
    inside = (axis >= band_nm[0]) & (axis <= band_nm[1])
    if inside.sum() < 2:
        raise AnalysisInputError(
            f"fewer than 2 points in the offset band {band_nm[0]:g}–{band_nm[1]:g} nm",
            field="band_nm",
        )
    return values - values[inside].mean()


def to_undiluted_1cm(absorbance, *, dilution_factor: float = 1.0, path_length_cm: float = 1.0):
    """Scale measured absorbance to the undiluted colloid in a 1 cm cell (Beer–Lambert).

    A_1cm,undiluted = A_measured × dilution_factor / path_length_cm, where dilution_factor
    is total volume / colloid volume (e.g. 10 for 1 part colloid + 9 parts water).
    """
    factor = require_positive(dilution_factor, field="dilution_factor")
    if factor < 1.0:
        raise AnalysisInputError(
            f"dilution factor is total/colloid volume and must be >= 1, got {factor}",
            field="dilution_factor",
        )
    path = require_positive(path_length_cm, field="path_length_cm")
    return np.asarray(absorbance, dtype=float) * factor / path


def measure_plasmon_band(
    wavelength_nm,
    absorbance,
    *,
    dilution_factor: float = 1.0,
    path_length_cm: float = 1.0,
    search_window_nm: tuple[float, float] = (380.0, 650.0),
    fit_half_width_nm: float = 6.0,
    linear_limit: float = 2.0,
    negative_tolerance: float = 0.01,
) -> PlasmonBand:
    """Peak, width and 450 nm absorbance of a blank-corrected colloid spectrum.

    The peak is the vertex of a least-squares parabola through the points within
    ``fit_half_width_nm`` of the highest point in the search window (not the highest
    sample, so the result does not jump with the instrument step).  FWHM is the distance
    between the half-maximum crossings, each found by linear interpolation between the
    two samples that straddle A_peak/2, walking outwards from the peak.

    Parameters
    ----------
    wavelength_nm, absorbance : array_like
        Blank-corrected spectrum as measured (diluted, in its cell).
    dilution_factor, path_length_cm : float
        See :func:`to_undiluted_1cm`; the results are for undiluted colloid, 1 cm.
    search_window_nm : (float, float), default (380, 650)
        Where to look for the plasmon peak (Ag about 390–420, Au about 515–560 nm).
    fit_half_width_nm : float, default 6
        Half-width of the parabola fit; narrow enough that the quartic part of a 25–30 nm
        wide silver band biases the fitted height by well under 1 %.
    linear_limit : float, default 2.0
        Highest measured absorbance accepted as linear; above it the photometer's stray
        light makes Beer–Lambert fail (common practice; the lab may change it).
    negative_tolerance : float, default 0.01
        Measured absorbance below −tolerance is refused as a bad blank.

    Returns
    -------
    PlasmonBand

    Raises
    ------
    NoPlasmonPeakError
        No local maximum inside the window, or no well-defined one (see the class).
    AnalysisInputError
        Too few points, wrong wavelength unit, absorbance above the linear range,
        negative absorbance beyond the tolerance, or no data at 450 nm.
    """
    axis = check_wavelength_axis_nm(wavelength_nm)
    measured = _same_length(absorbance, axis, "absorbance")
    order = np.argsort(axis)
    axis, measured = axis[order], measured[order]
    _check_absorbance_range(axis, measured, linear_limit, negative_tolerance)
    values = to_undiluted_1cm(
        measured, dilution_factor=dilution_factor, path_length_cm=path_length_cm
    )
    peak_nm, peak_a, peak_u, peak_a_u = _fit_peak(axis, values, search_window_nm,
                                                  fit_half_width_nm)
    blue, red = _half_max_crossings(axis, values, peak_nm, peak_a)
    a450 = _absorbance_at(axis, values, 450.0)
    if a450 <= 0:
        raise AnalysisInputError("absorbance at 450 nm is not positive", field="absorbance")
    half_blue = None if blue is None else peak_nm - blue
    half_red = None if red is None else red - peak_nm
    missing = [
        side for side, x in (("short-wavelength", blue), ("long-wavelength", red)) if x is None
    ]
    note = (
        f"the {' and '.join(missing)} side does not fall to half maximum inside the data"
        if missing
        else ""
    )
    fwhm = None if missing else red - blue
    return PlasmonBand(peak_nm, peak_a, fwhm, half_blue, half_red, note, a450, peak_a / a450,
                       peak_u, peak_a_u)


def _same_length(values, axis: np.ndarray, field: str) -> np.ndarray:
    array = as_finite_1d(values, field=field)
    if array.size != axis.size:
        raise AnalysisInputError(
            f"{array.size} values for {axis.size} wavelengths", field=field
        )
    return array


def _check_absorbance_range(axis, measured, linear_limit, negative_tolerance) -> None:
    limit = require_positive(linear_limit, field="linear_limit")
    tolerance = require_non_negative(negative_tolerance, field="negative_tolerance")
    too_high = np.flatnonzero(measured > limit)
    if too_high.size:
        i = too_high[0]
        raise AnalysisInputError(
            f"absorbance {measured[i]:.3f} at {axis[i]:g} nm exceeds the linear range "
            f"({limit:g}); dilute the colloid and measure again",
            field="absorbance",
        )
    too_low = np.flatnonzero(measured < -tolerance)
    if too_low.size:
        i = too_low[0]
        raise AnalysisInputError(
            f"absorbance {measured[i]:.3f} at {axis[i]:g} nm is negative beyond the noise "
            f"tolerance ({tolerance:g}); check the blank",
            field="absorbance",
        )


def _fit_peak(axis, values, window, half_width_nm):
    """Vertex of a local parabola: (peak_nm, height, u_peak_nm, u_height)."""
    inside = np.flatnonzero((axis >= window[0]) & (axis <= window[1]))
    if inside.size < 5:
        raise AnalysisInputError(
            f"fewer than 5 points in the peak search window {window[0]:g}–{window[1]:g} nm",
            field="search_window_nm",
        )
    top = inside[np.argmax(values[inside])]
    if top in (inside[0], inside[-1]):
        raise NoPlasmonPeakError(
            f"no peak inside {window[0]:g}–{window[1]:g} nm: the absorbance is highest at the "
            f"window edge ({axis[top]:g} nm)",
            field="search_window_nm",
        )
    half = require_positive(half_width_nm, field="fit_half_width_nm")
    peak, height, u_peak, u_height = _parabola_vertex(axis, values, axis[top], half)
    if peak is None:
        raise NoPlasmonPeakError(
            f"no well-defined peak near {axis[top]:g} nm (the fitted parabola has no maximum "
            "inside the fit range)",
            field="absorbance",
        )
    wide_peak, wide_height, _, _ = _parabola_vertex(axis, values, axis[top], 1.5 * half)
    if wide_peak is not None:
        u_peak = float(np.hypot(u_peak, wide_peak - peak))
        u_height = float(np.hypot(u_height, wide_height - height))
    return peak, height, u_peak, u_height


def _parabola_vertex(axis, values, centre_nm, half_width_nm):
    """Least-squares parabola through the points within half_width_nm of centre_nm.

    Returns (vertex_nm, height, u_vertex_nm, u_height) with the uncertainties propagated to
    first order from numpy's scaled fit covariance (GUM, JCGM 100:2008, §5.1.2), or Nones
    when the parabola has no maximum inside the range.
    """
    near = np.abs(axis - centre_nm) <= half_width_nm
    if near.sum() < 3:
        raise AnalysisInputError("fewer than 3 points for the peak fit", field="fit_half_width_nm")
    # Centre the axis so the parabola fit is well conditioned.
    x = axis[near] - centre_nm
    if near.sum() > 3:
        (a, b, c), cov = np.polyfit(x, values[near], 2, cov=True)
    else:
        (a, b, c), cov = np.polyfit(x, values[near], 2), np.zeros((3, 3))
    vertex = -b / (2 * a) if a < 0 else np.inf
    if not abs(vertex) <= half_width_nm:
        return None, None, None, None
    # Gradients of x0 = −b/(2a) and y0 = c − b²/(4a) with respect to (a, b, c).
    # Absurd scalings (refused later by the range checks) must not warn on the way there.
    with np.errstate(all="ignore"):
        grad_x = np.array([b / (2 * a**2), -1 / (2 * a), 0.0])
        grad_y = np.array([b**2 / (4 * a**2), -b / (2 * a), 1.0])
        u_x = float(np.sqrt(max(grad_x @ cov @ grad_x, 0.0)))
        u_y = float(np.sqrt(max(grad_y @ cov @ grad_y, 0.0)))
        height = float(c - b**2 / (4 * a))
    return float(centre_nm + vertex), height, u_x, u_y


def _half_max_crossings(axis, values, peak_nm, peak_a):
    half = peak_a / 2.0
    top = int(np.argmin(np.abs(axis - peak_nm)))
    below = values < half
    blue_idx = np.flatnonzero(below[:top])
    red_idx = np.flatnonzero(below[top:]) + top
    blue = red = None
    if blue_idx.size:
        i = blue_idx[-1]  # last sample below half before the peak; i+1 is above
        blue = float(np.interp(half, values[i : i + 2], axis[i : i + 2]))
    if red_idx.size:
        j = red_idx[0]  # first sample below half after the peak; j-1 is above
        # np.interp needs increasing x, so read the falling pair backwards.
        red = float(np.interp(half, values[j - 1 : j + 1][::-1], axis[j - 1 : j + 1][::-1]))
    return blue, red


def _absorbance_at(axis, values, wavelength_nm: float) -> float:
    if not axis[0] <= wavelength_nm <= axis[-1]:
        raise AnalysisInputError(
            f"the spectrum ({axis[0]:g}–{axis[-1]:g} nm) does not include {wavelength_nm:g} nm",
            field="wavelength_nm",
        )
    return float(np.interp(wavelength_nm, axis, values))
