"""Colloid UV-vis QC (selectors): a batch's series, its latest size, and curves for plots."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np

from inventory.models import NanoparticleBatch
from qc.analysis.mie_cross_section import synthesize_absorbance
from qc.analysis.readers import read_spectrum
from qc.analysis.uvvis import subtract_blank, to_undiluted_1cm

from ..models.colloid import UvVisRecord

__all__ = [
    "ColloidSize", "UvVisCurves", "UvVisPoint", "nanoparticle_batch_get_latest_size",
    "nanoparticle_batch_get_uvvis_series", "uvvis_record_get_curves",
]


@dataclass(frozen=True)
class UvVisPoint:
    """One record of a batch's series: band numbers and the change since the first record."""

    code: str
    measured_on: date
    age_days: int
    peak_nm: float | None
    peak_absorbance_1cm: float | None
    fwhm_nm: float | None
    aggregation_index: float | None
    diameter_nm: float | None
    mie_median_diameter_nm: float | None
    number_per_mL: float | None
    peak_shift_nm: float | None
    absorbance_loss_fraction: float | None
    broadening_nm: float | None
    aggregation_index_change: float | None
    breaches: tuple[str, ...]


@dataclass(frozen=True)
class ColloidSize:
    """The latest size and concentration of a batch, and which record and method gave them."""

    record_code: str
    measured_on: date
    diameter_nm: float | None
    diameter_method: str
    calibration_source: str
    number_per_mL: float | None
    molar_concentration_M: float | None
    mie_median_diameter_nm: float | None
    mie_geometric_sigma: float | None
    sizes_agree: bool | None
    size_agreement_message: str


@dataclass(frozen=True)
class UvVisCurves:
    """Measured (blank-corrected, undiluted, 1 cm) and Mie-model absorbance for one record."""

    wavelength_nm: np.ndarray
    absorbance_1cm: np.ndarray
    model_wavelength_nm: np.ndarray
    model_absorbance_1cm: np.ndarray


def nanoparticle_batch_get_uvvis_series(batch: NanoparticleBatch) -> list[UvVisPoint]:
    """Every UV-vis record of ``batch`` in date order, in one query."""
    return [
        UvVisPoint(
            code=r.code, measured_on=r.measured_on, age_days=r.age_days, peak_nm=r.peak_nm,
            peak_absorbance_1cm=r.peak_absorbance_1cm, fwhm_nm=r.fwhm_nm,
            aggregation_index=r.aggregation_index, diameter_nm=r.diameter_nm,
            mie_median_diameter_nm=r.mie_median_diameter_nm, number_per_mL=r.number_per_mL,
            peak_shift_nm=r.peak_shift_nm, absorbance_loss_fraction=r.absorbance_loss_fraction,
            broadening_nm=r.broadening_nm, aggregation_index_change=r.aggregation_index_change,
            breaches=tuple(b["limit"] for b in r.breaches),
        )
        for r in UvVisRecord.objects.filter(batch=batch, voided_at__isnull=True)
        .order_by("measured_on", "id")
    ]


def nanoparticle_batch_get_latest_size(batch: NanoparticleBatch) -> ColloidSize | None:
    """Size and concentration from the batch's most recent record (None without records)."""
    r = (UvVisRecord.objects.filter(batch=batch, voided_at__isnull=True)
         .order_by("-measured_on", "-id").first())
    if r is None:
        return None
    return ColloidSize(
        record_code=r.code, measured_on=r.measured_on, diameter_nm=r.diameter_nm,
        diameter_method=r.diameter_method, calibration_source=r.calibration_source,
        number_per_mL=r.number_per_mL, molar_concentration_M=r.molar_concentration_M,
        mie_median_diameter_nm=r.mie_median_diameter_nm, mie_geometric_sigma=r.mie_geometric_sigma,
        sizes_agree=r.sizes_agree, size_agreement_message=r.size_agreement_message,
    )


def uvvis_record_get_curves(record: UvVisRecord) -> UvVisCurves:
    """Re-read the stored file(s) and redraw the fitted Mie curve, for plots.

    The stored file was accepted at import, so reading it again cannot fail unless storage
    was tampered with (then AnalysisInputError propagates).
    """
    with record.raw_file.open("rb") as handle:
        spectrum = read_spectrum(handle.read(), filename=record.raw_file_name)
    absorbance = spectrum.y
    if record.blank_file:
        with record.blank_file.open("rb") as handle:
            blank = read_spectrum(handle.read(), filename=record.blank_file.name)
        absorbance = subtract_blank(spectrum.x, absorbance, blank.x, blank.y)
    absorbance_1cm = to_undiluted_1cm(absorbance, dilution_factor=record.dilution_factor,
                                      path_length_cm=record.path_length_cm)
    if record.mie_median_diameter_nm is None:  # the fit ended at a bound: no model to draw
        return UvVisCurves(spectrum.x, absorbance_1cm, spectrum.x[:0], spectrum.x[:0])
    inside = (spectrum.x >= record.mie_fit_min_nm) & (spectrum.x <= record.mie_fit_max_nm)
    model_wavelength = spectrum.x[inside]
    model = synthesize_absorbance(
        record.batch.metal, model_wavelength, median_diameter_nm=record.mie_median_diameter_nm,
        geometric_sigma=record.mie_geometric_sigma, number_per_mL=record.mie_number_per_mL)
    return UvVisCurves(spectrum.x, absorbance_1cm, model_wavelength, model)
