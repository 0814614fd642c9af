"""Check of the Raman-shift axis against the band positions of a calibration standard."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ._validation import as_finite_1d, require_positive
from .bands import fit_band
from .errors import AnalysisInputError

#: Silicon first-order optical phonon used for calibration, cm⁻¹ (common practice).
SILICON_CALIBRATION_CM1 = 520.7
#: Parker, Feldman & Ashkin, Phys. Rev. 155, 712 (1967): 520.2 ± 0.5 cm⁻¹ at 300 K.
SILICON_PARKER_1967_CM1 = 520.2
SILICON_PARKER_1967_U_CM1 = 0.5

#: ASTM E1840 polystyrene band positions, cm⁻¹ — second-hand values, allow ±0.2 cm⁻¹.
POLYSTYRENE_ASTM_E1840_CM1 = (
    620.9,
    795.8,
    1001.4,
    1031.8,
    1155.3,
    1450.5,
    1583.1,
    1602.3,
    2852.4,
    2904.5,
    3054.3,
)
#: ASTM E1840 cyclohexane band positions, cm⁻¹ — second-hand values, allow ±0.2 cm⁻¹.
#: Each value's status is in :data:`CYCLOHEXANE_ASTM_E1840_STATUS`.
CYCLOHEXANE_ASTM_E1840_CM1 = (
    384.1,
    426.3,
    801.3,
    1028.3,
    1157.6,
    1266.4,
    1444.4,
    2852.9,
    2923.8,
    2938.3,
)
#: Status of each cyclohexane value (ASTM E1840, Standard Guide for Raman Shift Standards
#: for Spectrometer Calibration): none was checked against the standard itself.
CYCLOHEXANE_ASTM_E1840_STATUS = {
    **{value: "second-hand" for value in CYCLOHEXANE_ASTM_E1840_CM1},
    426.3: "second-hand; sources differ by 0.1 cm⁻¹ (another gives 426.4)",
    2664.4: "from memory; listed by some second-hand sources and not by others, so it is "
            "left out of CYCLOHEXANE_ASTM_E1840_CM1",
}
#: Uncertainty allowed for the second-hand ASTM E1840 values, cm⁻¹.
ASTM_E1840_SECOND_HAND_U_CM1 = 0.2


@dataclass(frozen=True)
class BandOffset:
    """One calibration band: measured minus reference position (cm⁻¹)."""

    reference_cm1: float
    measured_cm1: float
    offset_cm1: float
    measured_se_cm1: float
    passed: bool


@dataclass(frozen=True)
class AxisCheck:
    """Result of an axis check: per-band offsets, mean offset and the verdict."""

    bands: tuple[BandOffset, ...]
    mean_offset_cm1: float
    max_abs_offset_cm1: float
    tolerance_cm1: float
    passed: bool


def compare_band_positions(
    measured_cm1: Sequence[float] | np.ndarray,
    reference_cm1: Sequence[float] | np.ndarray,
    *,
    tolerance_cm1: float = 1.0,
    measured_se_cm1: Sequence[float] | None = None,
) -> AxisCheck:
    """Offsets ``δ_i = x_measured,i − x_reference,i`` and pass/fail on ``|δ_i| ≤ tolerance``.

    Parameters
    ----------
    measured_cm1, reference_cm1 : sequence of float
        Paired band positions (cm⁻¹).
    tolerance_cm1 : float, default 1.0
        Largest acceptable |offset| per band (cm⁻¹); the lab sets it.
    measured_se_cm1 : sequence of float, optional
        Standard errors of the measured positions (cm⁻¹), carried into the result.

    Returns
    -------
    AxisCheck
        Passes when every band is within tolerance.
    """
    measured = as_finite_1d(measured_cm1, field="measured_cm1")
    reference = as_finite_1d(reference_cm1, field="reference_cm1")
    if measured.size != reference.size:
        raise AnalysisInputError(
            f"has {measured.size} bands but reference_cm1 has {reference.size}",
            field="measured_cm1",
        )
    tolerance = require_positive(tolerance_cm1, field="tolerance_cm1")
    errors = (
        np.full(measured.size, np.nan)
        if measured_se_cm1 is None
        else as_finite_1d(measured_se_cm1, field="measured_se_cm1")
    )
    offsets = measured - reference
    bands = tuple(
        BandOffset(float(r), float(m), float(o), float(e), bool(abs(o) <= tolerance))
        for r, m, o, e in zip(reference, measured, offsets, errors, strict=True)
    )
    return AxisCheck(
        bands=bands,
        mean_offset_cm1=float(offsets.mean()),
        max_abs_offset_cm1=float(np.abs(offsets).max()),
        tolerance_cm1=tolerance,
        passed=all(b.passed for b in bands),
    )


def check_wavenumber_axis(
    shift_cm1,
    intensity,
    *,
    reference_cm1: Sequence[float] = (SILICON_CALIBRATION_CM1,),
    tolerance_cm1: float = 1.0,
    band_window_cm1: float = 20.0,
    profile: str = "lorentzian",
) -> AxisCheck:
    """Fit each reference band of a calibration spectrum and compare its position.

    Each band is fitted by :func:`qc.analysis.bands.fit_band` in a window of
    ``band_window_cm1`` around its reference position; bands whose window falls outside the
    measured range are refused (field ``reference_cm1``).

    Parameters
    ----------
    shift_cm1, intensity : array_like
        Calibration spectrum (cm⁻¹, counts); baseline-correct it first if it has a strong
        background (the fit's local line absorbs a mild one).
    reference_cm1 : sequence of float, default (520.7,)
        Reference positions, e.g. :data:`SILICON_CALIBRATION_CM1`,
        :data:`POLYSTYRENE_ASTM_E1840_CM1` or :data:`CYCLOHEXANE_ASTM_E1840_CM1`.
    tolerance_cm1 : float, default 1.0
        Largest acceptable |offset| per band (cm⁻¹).
    band_window_cm1 : float, default 20
        Full fitting window per band (cm⁻¹).
    profile : {"lorentzian", "pseudo_voigt"}

    Returns
    -------
    AxisCheck

    References
    ----------
    .. [1] Parker, J. H.; Feldman, D. W.; Ashkin, M. Raman scattering by silicon and
       germanium. Phys. Rev. 1967, 155, 712–714.
    .. [2] ASTM E1840, Standard Guide for Raman Shift Standards for
       Spectrometer Calibration. ASTM International.
    """
    references = as_finite_1d(reference_cm1, field="reference_cm1")
    positions, errors = [], []
    for reference in references:
        try:
            fit = fit_band(
                shift_cm1,
                intensity,
                band_center_cm1=float(reference),
                band_window_cm1=band_window_cm1,
                profile=profile,
            )
        except AnalysisInputError as exc:
            if exc.field == "band_center_cm1":
                raise AnalysisInputError(
                    f"reference band {reference:g} cm⁻¹: {exc.message}", field="reference_cm1"
                ) from exc
            raise
        positions.append(fit.position_cm1)
        errors.append(fit.position_se_cm1)
    return compare_band_positions(
        positions, references, tolerance_cm1=tolerance_cm1, measured_se_cm1=errors
    )
