"""Gold nanoparticle size and concentration from UV-vis after Haiss et al. (2007).

Every function returns a :class:`~qc.analysis.uvvis.CalibratedValue`: outside the range the
paper states, there is no number and the reason is given (no extrapolation).  Absorbances
must be for the undiluted colloid in a 1 cm cell (see :mod:`qc.analysis.uvvis`).

References
----------
W. Haiss, N. T. K. Thanh, J. Aveyard and D. G. Fernig, "Determination of size and
concentration of gold nanoparticles from UV-vis spectra", Anal. Chem. 79, 4215–4221 (2007).
"""

from __future__ import annotations

import numpy as np
from scipy import constants

from ._validation import require_non_negative, require_positive
from .errors import AnalysisInputError
from .uvvis import CalibratedValue

#: Ratio method, parameters fitted to experiment (average deviation 11 %).
RATIO_B1_EXPERIMENTAL, RATIO_B2_EXPERIMENTAL = 3.00, 2.20
#: Ratio method, parameters fitted to the paper's Mie calculations (18 %).
RATIO_B1_THEORETICAL, RATIO_B2_THEORETICAL = 3.55, 3.11
#: The paper's average deviation of the sizes from its reference sizes, as a fraction.
#: Used here as the method's relative standard uncertainty (a project choice: an average
#: absolute deviation is about 0.8 σ for a normal spread, so this slightly understates σ).
METHOD_DEVIATION = {"experimental": 0.11, "theoretical": 0.18}
#: The peak-position parameters are a fit to the paper's calculated spectra, so the
#: deviation of the theoretical parameter set (18 %) is applied to it (project's choice).
PEAK_METHOD_DEVIATION = METHOD_DEVIATION["theoretical"]
RATIO_RANGE_NM = (5.0, 80.0)
RATIO_ESTIMATE_BELOW_NM = 10.0
#: Peak-position method λ_spr = λ0 + L1·exp(L2·d).
PEAK_LAMBDA0_NM, PEAK_L1_NM, PEAK_L2_PER_NM = 512.0, 6.53, 0.0216
PEAK_MIN_NM = 25.0
PEAK_ADVISED_MIN_NM = 35.0
#: Upper end of the paper's Mie calculations (from memory, unconfirmed): 100 nm.
PEAK_MAX_NM = 100.0
#: Sizes over which this project applies the number-concentration fit (the paper's stated
#: range for it is unconfirmed here, so the ratio method's fitted range is used).
CONCENTRATION_RANGE_NM = (5.0, 80.0)

_CITATION = "Haiss, Thanh, Aveyard & Fernig, Anal. Chem. 79, 4215 (2007)"


def diameter_from_ratio(
    ratio_spr_450: float, *, parameters: str = "experimental", ratio_u: float = 0.0
) -> CalibratedValue:
    """Gold diameter from the ratio of plasmon-peak to 450 nm absorbance.

    d = exp(B1·A_spr/A_450 − B2), d in nm, with standard uncertainty
    u(d) = d·√(δ² + (B1·u_R)²): δ the method's published average deviation (11 % or 18 %)
    and u_R the ratio's own standard uncertainty (∂d/∂R = B1·d).

    Parameters
    ----------
    ratio_spr_450 : float
        A_spr / A_450 (dimensionless).
    ratio_u : float, default 0
        Standard uncertainty of the ratio (e.g. from the peak-absorbance fit).
    parameters : {"experimental", "theoretical"}
        B1 = 3.00, B2 = 2.20 (fitted to experiment, average deviation 11 %) or
        B1 = 3.55, B2 = 3.11 (fitted to the paper's Mie results, 18 %).

    Returns
    -------
    CalibratedValue
        Diameter in nm; None outside 5–80 nm; flagged as an estimate below 10 nm.

    References
    ----------
    Haiss et al., Anal. Chem. 79, 4215–4221 (2007).
    """
    ratio = require_positive(ratio_spr_450, field="ratio_spr_450")
    if parameters == "experimental":
        b1, b2 = RATIO_B1_EXPERIMENTAL, RATIO_B2_EXPERIMENTAL
    elif parameters == "theoretical":
        b1, b2 = RATIO_B1_THEORETICAL, RATIO_B2_THEORETICAL
    else:
        raise AnalysisInputError(
            f"parameters must be 'experimental' or 'theoretical', got {parameters!r}",
            field="parameters",
        )
    method = f"{_CITATION}, ratio method, d = exp({b1}·A_spr/A_450 − {b2})"
    diameter = float(np.exp(b1 * ratio - b2))
    u_ratio = require_non_negative(ratio_u, field="ratio_u")
    uncertainty = diameter * float(np.hypot(METHOD_DEVIATION[parameters], b1 * u_ratio))
    low, high = RATIO_RANGE_NM
    if not low <= diameter <= high:
        return CalibratedValue(
            None, "nm", method, False, False,
            f"ratio {ratio:.3f} gives {diameter:.1f} nm, outside the method's {low:g}–{high:g} nm",
        )
    estimate = diameter < RATIO_ESTIMATE_BELOW_NM
    note = "below 10 nm the paper calls the result an estimate" if estimate else ""
    return CalibratedValue(diameter, "nm", method, True, estimate, note, uncertainty)


def diameter_from_peak(peak_nm: float, *, peak_u_nm: float = 0.0) -> CalibratedValue:
    """Gold diameter from the plasmon peak position, λ_spr = λ0 + L1·exp(L2·d).

    Inverted: d = ln((λ_spr − λ0)/L1)/L2 with λ0 = 512 nm, L1 = 6.53 nm, L2 = 0.0216 nm⁻¹.
    Standard uncertainty u(d) = √((δ·d)² + (u_λ / (L2·(λ_spr − λ0)))²), with δ = 18 %
    (see :data:`PEAK_METHOD_DEVIATION`) and u_λ the peak position's uncertainty
    (∂d/∂λ = 1/(L2·(λ − λ0)): about 3 nm of diameter per nm of peak near 40 nm).

    Parameters
    ----------
    peak_nm : float
        Plasmon peak wavelength in nm (from a local fit, not the highest sample).
    peak_u_nm : float, default 0
        Standard uncertainty of the peak wavelength, nm.

    Returns
    -------
    CalibratedValue
        Diameter in nm; None below 25 nm (where the fit does not hold) and above 100 nm;
        between 25 and 35 nm a note says the paper advises this method above 35 nm.

    Notes
    -----
    The 100 nm upper bound is the end of the paper's calculated range as recalled
    (from memory, unconfirmed); the 25 nm and 35 nm limits are the paper's.

    References
    ----------
    Haiss et al., Anal. Chem. 79, 4215–4221 (2007).
    """
    peak = require_positive(peak_nm, field="peak_nm")
    method = (
        f"{_CITATION}, peak position, "
        f"λ = {PEAK_LAMBDA0_NM:g} + {PEAK_L1_NM}·exp({PEAK_L2_PER_NM}·d)"
    )
    excess = peak - PEAK_LAMBDA0_NM
    floor = PEAK_L1_NM * np.exp(PEAK_L2_PER_NM * PEAK_MIN_NM)
    if excess <= floor:
        return CalibratedValue(
            None, "nm", method, False, False,
            f"peak {peak:.1f} nm is below {PEAK_LAMBDA0_NM + floor:.1f} nm, i.e. d < 25 nm where "
            "the peak-position fit does not hold; use the ratio method",
        )
    diameter = float(np.log(excess / PEAK_L1_NM) / PEAK_L2_PER_NM)
    u_peak = require_non_negative(peak_u_nm, field="peak_u_nm")
    uncertainty = float(np.hypot(PEAK_METHOD_DEVIATION * diameter,
                                 u_peak / (PEAK_L2_PER_NM * excess)))
    if diameter > PEAK_MAX_NM:
        return CalibratedValue(
            None, "nm", method, False, False,
            f"peak {peak:.1f} nm gives {diameter:.0f} nm, beyond the calibrated {PEAK_MAX_NM:g} nm",
        )
    note = (
        "the paper advises this method above 35 nm; prefer the ratio method here"
        if diameter < PEAK_ADVISED_MIN_NM
        else ""
    )
    return CalibratedValue(diameter, "nm", method, True, False, note, uncertainty)


def number_concentration_per_mL(absorbance_450_1cm: float, diameter_nm: float) -> CalibratedValue:
    """Gold particles per mL from the absorbance at 450 nm and the diameter.

    N = A_450·10¹⁴ / (d²·(−0.295 + 1.36·exp(−((d − 96.8)/78.2)²))), d in nm, 1 cm path.

    Parameters
    ----------
    absorbance_450_1cm : float
        A_450 of the undiluted colloid in 1 cm.
    diameter_nm : float
        Mean diameter (e.g. from :func:`diameter_from_ratio`).

    Returns
    -------
    CalibratedValue
        Particles per mL; None outside 5–80 nm.

    Notes
    -----
    The paper's stated validity range for this fit is not confirmed here; the project
    applies it over the ratio method's fitted 5–80 nm.

    References
    ----------
    Haiss et al., Anal. Chem. 79, 4215–4221 (2007).
    """
    a450 = require_positive(absorbance_450_1cm, field="absorbance_450_1cm")
    d = require_positive(diameter_nm, field="diameter_nm")
    method = f"{_CITATION}, number concentration from A_450"
    low, high = CONCENTRATION_RANGE_NM
    if not low <= d <= high:
        return CalibratedValue(
            None, "1/mL", method, False, False,
            f"diameter {d:.1f} nm is outside the {low:g}–{high:g} nm over which it is applied",
        )
    number = a450 * 1e14 / (d**2 * (-0.295 + 1.36 * np.exp(-(((d - 96.8) / 78.2) ** 2))))
    return CalibratedValue(
        float(number), "1/mL", method, True, d < RATIO_ESTIMATE_BELOW_NM,
        "applied over 5–80 nm; the paper's own range for this fit is unconfirmed",
    )


def molar_concentration_M(number_per_mL: float) -> float:
    """Particle molar concentration c = N·1000/N_A in mol/L, N in particles per mL.

    N_A from scipy.constants (CODATA).
    """
    number = require_positive(number_per_mL, field="number_per_mL")
    return number * 1000.0 / constants.Avogadro
