"""Band metrics of every spectrum of a map at once, by array operations.

The fitted height and area with one band shape (a single linear solve for the whole map),
and the model-free height, area and position above a local line.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ._validation import as_strictly_monotonic_axis
from .band_profiles import check_band_window, pseudo_voigt, pseudo_voigt_area_factor
from .errors import AnalysisInputError

if TYPE_CHECKING:
    from .bands import BandFit


@dataclass(frozen=True, eq=False)
class MapBandMetrics:
    """Band metrics of every spectrum of a map, from array operations.

    Attributes
    ----------
    height : numpy.ndarray, shape (n_points,)
        Maximum inside the window above the local line through the window edges.
    area : numpy.ndarray, shape (n_points,)
        Trapezoidal integral over the window above that line (intensity × cm⁻¹).
    position_cm1 : numpy.ndarray, shape (n_points,)
        Raman shift of the maximum (cm⁻¹, on the measured grid).
    """

    height: np.ndarray
    area: np.ndarray
    position_cm1: np.ndarray



def band_heights_map(shift_cm1, intensity, *, band: BandFit) -> tuple[np.ndarray, np.ndarray]:
    """Fitted band height and area of every spectrum, with the band shape of ``band``.

    For a fixed position x0, width Γ (and η) the model of :func:`fit_band`,
    ``y = h·P(x; x0, 1, Γ, η) + a + b·(x − x_c)``, is linear in (h, a, b), so every spectrum
    is fitted at once by one least-squares solve (pseudo-inverse of the window's design
    matrix applied to all rows).  The shape comes from the fit of the map's mean spectrum.

    Parameters
    ----------
    shift_cm1 : array_like, shape (n_shift,)
    intensity : array_like, shape (n_points, n_shift)
        Baseline-corrected spectra.
    band : BandFit
        Fit of the mean spectrum (its window, position, width and η are used).

    Returns
    -------
    height, area : numpy.ndarray, shape (n_points,)
        Fitted heights and areas (area = h·Γ·½[η·π + (1 − η)·√(π/ln2)]).

    Notes
    -----
    Unlike the direct metric of :func:`band_metrics_map` (maximum above the line through
    the window edges), this does not lose the band's wings to the local line nor the top to
    the sampling, so map heights agree with single-spectrum heights.  It assumes the band
    keeps its position and width over the map; a point whose band moves by a sizeable
    fraction of Γ reads low (its position from :func:`band_metrics_map` shows that).
    """
    axis = np.asarray(shift_cm1, dtype=float)
    spectra = np.asarray(intensity, dtype=float)
    x = band.window_shift_cm1
    inside = np.isin(axis, x)
    centre = float(np.mean([x.min(), x.max()]))
    shape = pseudo_voigt(x, band.position_cm1, 1.0, band.fwhm_cm1, band.eta)
    design = np.column_stack([shape, np.ones_like(x), x - centre])
    coefficients = np.linalg.pinv(design) @ spectra[:, inside].T
    height = coefficients[0]
    return height, height * band.fwhm_cm1 * pseudo_voigt_area_factor(band.eta)


def band_metrics_map(
    shift_cm1,
    intensity,
    *,
    band_center_cm1: float,
    band_window_cm1: float,
    edge_points: int = 3,
) -> MapBandMetrics:
    """Band height, area and position for every spectrum of a map with array operations.

    Inside the window ``|x − x_c| ≤ w/2`` a straight line through the means of the first
    and last ``edge_points`` points is subtracted (a local linear term), then
    ``height = max(y − line)``, ``position = x[argmax]`` and
    ``area = ∫ (y − line) dx`` by the trapezoidal rule.

    Parameters
    ----------
    shift_cm1 : array_like, shape (n_shift,)
        Raman shift (cm⁻¹), strictly monotonic.
    intensity : array_like, shape (n_points, n_shift)
        Baseline-corrected spectra, one per row.
    band_center_cm1, band_window_cm1 : float
        Expected band position and full window width (cm⁻¹).
    edge_points : int, default 3
        Points averaged at each window edge to anchor the local line.

    Returns
    -------
    MapBandMetrics

    Notes
    -----
    This is the direct-integration counterpart of :func:`fit_band` (common practice for
    fast map metrics): no model is assumed, so a band wider than the window is truncated.
    """
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=7)
    spectra = np.asarray(intensity, dtype=float)
    if spectra.ndim != 2 or spectra.shape[1] != axis.size:
        raise AnalysisInputError(
            f"expected shape (n_points, {axis.size}), got {spectra.shape}", field="intensity"
        )
    inside = check_band_window(axis, band_center_cm1, band_window_cm1)
    index = np.flatnonzero(inside)
    if int(edge_points) != edge_points or not 1 <= edge_points <= index.size // 3:
        raise AnalysisInputError(
            f"must be a whole number between 1 and {index.size // 3}", field="edge_points"
        )
    x = axis[index]
    y = spectra[:, index[0] : index[-1] + 1]
    k = int(edge_points)
    x_left, x_right = x[:k].mean(), x[-k:].mean()
    y_left, y_right = y[:, :k].mean(axis=1), y[:, -k:].mean(axis=1)
    slope = (y_right - y_left) / (x_right - x_left)
    above_line = y - (y_left[:, None] + slope[:, None] * (x - x_left))
    peak = np.argmax(above_line, axis=1)
    height = np.take_along_axis(above_line, peak[:, None], axis=1)[:, 0]
    area = np.trapezoid(above_line, x, axis=1)
    if x[0] > x[-1]:  # descending axis: keep the area positive for a positive band
        area = -area
    return MapBandMetrics(height=height, area=area, position_cm1=x[peak])
