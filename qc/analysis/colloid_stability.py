"""Aggregation and ageing of a colloid batch from its UV-vis records over time.

The aggregation index here is the project's own definition (no published source is
claimed): the mean absorbance in a long-wavelength band, where single small spheres barely
absorb but touching pairs and clusters do, divided by the plasmon-peak absorbance,

    AI = mean(A(λ), λ in band) / A_peak,

with default bands 600–750 nm for silver and 650–800 nm for gold.  It rises as a red
shoulder or second band grows.  Each later record is compared with the batch's first.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import AnalysisInputError
from .uvvis import PlasmonBand, check_wavelength_axis_nm, measure_plasmon_band, to_undiluted_1cm

#: Long-wavelength bands for the aggregation index, nm (project's choice).
AGGREGATION_BAND_NM = {"Ag": (600.0, 750.0), "Au": (650.0, 800.0)}
#: Peak search windows per metal, nm (common practice).
PEAK_WINDOW_NM = {"Ag": (370.0, 480.0), "Au": (500.0, 600.0)}


@dataclass(frozen=True)
class ColloidSnapshot:
    """One UV-vis record of a batch reduced to the numbers used for stability.

    Attributes
    ----------
    day : float
        Age of the batch at the measurement, days.
    band : PlasmonBand
        Peak, width and A_450 for the undiluted colloid in 1 cm.
    aggregation_index : float
        Mean long-wavelength absorbance / peak absorbance (project's definition).
    """

    day: float
    band: PlasmonBand
    aggregation_index: float


@dataclass(frozen=True)
class StabilityChange:
    """A later record compared with the batch's first.

    Attributes
    ----------
    day : float
    peak_shift_nm : float
        λ_peak(later) − λ_peak(first); positive is a red shift.
    absorbance_loss_fraction : float
        1 − A_peak(later)/A_peak(first); positive means particles were lost.
    broadening_nm : float or None
        FWHM(later) − FWHM(first); when either FWHM is undefined, twice the change of the
        long-wavelength half width; None if neither is available.
    aggregation_index_change : float
        AI(later) − AI(first).
    aggregation_index_ratio : float
        AI(later)/AI(first) (shoulder growth factor).
    """

    day: float
    peak_shift_nm: float
    absorbance_loss_fraction: float
    broadening_nm: float | None
    aggregation_index_change: float
    aggregation_index_ratio: float


def aggregation_index(
    wavelength_nm, absorbance_1cm, peak_absorbance_1cm: float, *, band_nm: tuple[float, float]
) -> float:
    """Project's aggregation index AI = mean(A in band) / A_peak (see the module text).

    Parameters
    ----------
    wavelength_nm, absorbance_1cm : array_like
        Blank-corrected spectrum, undiluted colloid in 1 cm (or any common scaling).
    peak_absorbance_1cm : float
        Plasmon-peak absorbance on the same scaling.
    band_nm : (float, float)
        Long-wavelength band, e.g. (600, 750) for Ag or (650, 800) for Au.
    """
    axis = check_wavelength_axis_nm(wavelength_nm)
    values = np.asarray(absorbance_1cm, dtype=float)
    if values.shape != axis.shape:
        raise AnalysisInputError("absorbance and wavelength lengths differ", field="absorbance")
    inside = (axis >= band_nm[0]) & (axis <= band_nm[1])
    if inside.sum() < 2:
        raise AnalysisInputError(
            f"the spectrum has fewer than 2 points in {band_nm[0]:g}–{band_nm[1]:g} nm",
            field="band_nm",
        )
    if not peak_absorbance_1cm > 0:
        raise AnalysisInputError("peak absorbance must be positive", field="peak_absorbance_1cm")
    return float(values[inside].mean() / peak_absorbance_1cm)


def colloid_snapshot(
    wavelength_nm,
    absorbance,
    *,
    metal: str,
    day: float,
    dilution_factor: float = 1.0,
    path_length_cm: float = 1.0,
    **band_options,
) -> ColloidSnapshot:
    """Measure one blank-corrected record: plasmon band and aggregation index.

    ``band_options`` go to :func:`qc.analysis.uvvis.measure_plasmon_band` (e.g.
    ``linear_limit``); the search window defaults per metal.
    """
    if metal not in AGGREGATION_BAND_NM:
        raise AnalysisInputError(f"unknown metal {metal!r}", field="metal")
    band_options.setdefault("search_window_nm", PEAK_WINDOW_NM[metal])
    band = measure_plasmon_band(
        wavelength_nm, absorbance, dilution_factor=dilution_factor,
        path_length_cm=path_length_cm, **band_options,
    )
    scaled = to_undiluted_1cm(
        absorbance, dilution_factor=dilution_factor, path_length_cm=path_length_cm
    )
    index = aggregation_index(
        wavelength_nm, scaled, band.peak_absorbance_1cm, band_nm=AGGREGATION_BAND_NM[metal]
    )
    return ColloidSnapshot(float(day), band, index)


def compare_with_first(snapshots: list[ColloidSnapshot]) -> list[StabilityChange]:
    """Compare every record of a batch with its first (earliest ``day``).

    Returns one :class:`StabilityChange` per record after the first, in order of day.
    """
    if len(snapshots) < 2:
        raise AnalysisInputError("need at least two records to compare", field="snapshots")
    ordered = sorted(snapshots, key=lambda s: s.day)
    first = ordered[0]
    return [_change(first, later) for later in ordered[1:]]


def _change(first: ColloidSnapshot, later: ColloidSnapshot) -> StabilityChange:
    a, b = first.band, later.band
    if a.fwhm_nm is not None and b.fwhm_nm is not None:
        broadening = b.fwhm_nm - a.fwhm_nm
    elif a.half_width_red_nm is not None and b.half_width_red_nm is not None:
        broadening = 2.0 * (b.half_width_red_nm - a.half_width_red_nm)
    else:
        broadening = None
    return StabilityChange(
        day=later.day,
        peak_shift_nm=b.peak_nm - a.peak_nm,
        absorbance_loss_fraction=1.0 - b.peak_absorbance_1cm / a.peak_absorbance_1cm,
        broadening_nm=broadening,
        aggregation_index_change=later.aggregation_index - first.aggregation_index,
        aggregation_index_ratio=later.aggregation_index / first.aggregation_index,
    )
