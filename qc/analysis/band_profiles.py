"""Line shapes of a Raman band (Lorentzian, pseudo-Voigt) and the window they are fitted in.

Shared by the single-band fit (:mod:`qc.analysis.bands`) and the map metrics
(:mod:`qc.analysis.band_maps`).
"""

from __future__ import annotations

import numpy as np

from ._validation import require_positive
from .errors import AnalysisInputError

_LN2 = np.log(2.0)
PROFILES = ("lorentzian", "pseudo_voigt")


def lorentzian(shift_cm1, position_cm1: float, height: float, fwhm_cm1: float):
    """Lorentzian band ``h / (1 + ((x − x0)/(Γ/2))²)``; its area is ``π·h·Γ/2``."""
    return height / (1.0 + ((np.asarray(shift_cm1) - position_cm1) / (fwhm_cm1 / 2.0)) ** 2)


def pseudo_voigt(shift_cm1, position_cm1: float, height: float, fwhm_cm1: float, eta: float):
    """Pseudo-Voigt ``h·[η·L + (1 − η)·G]`` with one FWHM for both parts (peak value h).

    ``G = exp(−4 ln2 (x − x0)²/Γ²)``; area ``h·Γ/2·[η·π + (1 − η)·√(π/ln2)]``.
    """
    x = np.asarray(shift_cm1) - position_cm1
    lorentz = 1.0 / (1.0 + (x / (fwhm_cm1 / 2.0)) ** 2)
    gauss = np.exp(-4.0 * _LN2 * x**2 / fwhm_cm1**2)
    return height * (eta * lorentz + (1.0 - eta) * gauss)


def pseudo_voigt_area_factor(eta):
    """Area per (height × FWHM) of a pseudo-Voigt: ½·[η·π + (1 − η)·√(π/ln2)]."""
    return 0.5 * (eta * np.pi + (1.0 - eta) * np.sqrt(np.pi / _LN2))


def check_band_window(shift_cm1, band_center_cm1: float, band_window_cm1: float) -> np.ndarray:
    """Return the boolean window ``|x − centre| ≤ window/2``, refusing a band off the axis."""
    axis = np.asarray(shift_cm1, dtype=float)
    center = float(band_center_cm1)
    width = require_positive(band_window_cm1, field="band_window_cm1")
    low, high = axis.min(), axis.max()
    if not np.isfinite(center) or center - width / 2 < low or center + width / 2 > high:
        raise AnalysisInputError(
            f"band window {center - width / 2:g}–{center + width / 2:g} cm⁻¹ lies outside the "
            f"measured range {low:g}–{high:g} cm⁻¹",
            field="band_center_cm1",
        )
    inside = np.abs(axis - center) <= width / 2
    if np.count_nonzero(inside) < 7:
        raise AnalysisInputError(
            "the band window holds fewer than 7 points; widen it", field="band_window_cm1"
        )
    return inside



def pseudo_voigt_area_factor_slope() -> float:
    """d(area factor)/dη = ½·(π − √(π/ln2)), for propagating η's uncertainty to the area."""
    return 0.5 * (np.pi - np.sqrt(np.pi / _LN2))
