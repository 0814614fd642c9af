"""From an uploaded Raman file to the figures a measurement stores (no database writes).

Reading is ``qc.analysis.readers``, the numbers ``qc.analysis.qc_pipeline``; this module
checks the upload, translates a science error into the project's refusal (keyed by our
parameter, or by ``raw_file`` with the 1-based line) and names the results as the models do.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from inventory.errors import refusal
from inventory.services.toolkit import RawUpload, check_upload
from qc.analysis import qc_pipeline
from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import read_spectrum_or_map
from qc.analysis.spectrum import RamanMap, Spectrum

FILE_FIELD = "raw_file"
# Parameters a science function may name; anything else it names is inside the file.
_PARAMETERS = {"laser_nm", "power_mW", "integration_s", "accumulations",
               "surface_density_per_nm2", "surface_area_factor", "surface_area_rel_u",
               "concentration_mol_L", "effective_height_um", "effective_area_um2"}
# Science-side parameter names that mean one of ours.
_RENAMED = {"molecule_density_per_nm2": "surface_density_per_nm2",
            "concentration_M": "concentration_mol_L", "spot_area_um2": "effective_area_um2"}
_RAMAN_SHIFT_UNITS = ("1/cm", "cm-1", "cm^-1")


def as_validation_error(error: AnalysisInputError):
    """A science error as a refusal: keyed by our parameter, or by the file with its line."""
    field = _RENAMED.get(error.field or "", error.field)
    if field in _PARAMETERS and error.line is None:
        return refusal(field, error.message, "invalid_value")
    where = f"line {error.line}: " if error.line is not None else ""
    return refusal(FILE_FIELD, f"{where}{error.message}", "bad_file")


def read_upload_checks(request) -> None:
    """The checks of an upload that need no parsing: size, kind of file, not empty."""
    check_upload(request.upload, field=FILE_FIELD, filename=request.filename)
    if request.upload.is_blank():
        raise refusal(FILE_FIELD, "The file is empty.", "empty_file")


def read_upload(upload: RawUpload) -> Spectrum | RamanMap:
    """The spectrum or map in an upload, refused with the line at fault when unreadable.

    A file on disk is handed to the reader as its path (a wide map is then parsed from disk
    by columns, never held whole in memory).
    """
    check_upload(upload, field=FILE_FIELD, filename=upload.name)
    if upload.is_blank():
        raise refusal(FILE_FIELD, "The file is empty.", "empty_file")
    try:
        data = read_spectrum_or_map(upload.source(), upload.name)
    except AnalysisInputError as error:
        raise as_validation_error(error) from None
    if isinstance(data, Spectrum) and data.x_unit not in _RAMAN_SHIFT_UNITS:
        raise refusal(FILE_FIELD, f"The spectrum axis is in '{data.x_unit}'; QC needs Raman "
                                  "shift in cm⁻¹.", "wrong_axis_unit")
    return data


def relative_u(u: float, value: float) -> float:
    """Relative standard error of a fitted height (0 when it cannot be estimated)."""
    return u / value if value > 0 and math.isfinite(u) else 0.0


@dataclass(frozen=True)
class MeasuredBand:
    """What the pipeline gave, in the names the models use (counts/(mW·s) throughout)."""

    band_position_cm1: float
    band_fwhm_cm1: float
    normalised_height_counts_per_mW_s: float
    normalised_height_u_counts_per_mW_s: float
    normalised_area_counts_cm1_per_mW_s: float
    normalised_area_u_counts_cm1_per_mW_s: float
    snr: float
    spikes_removed: int
    n_points: int = 1
    median_height_counts_per_mW_s: float | None = None
    rsd_percent: float | None = None
    fraction_within_20_percent: float | None = None
    point_values: dict | None = None
    map_nx: int | None = None
    map_ny: int | None = None
    map_step_um: float | None = None
    band_limit_note: str = ""
    arrays: dict = field(default_factory=dict, repr=False)  # what the pages draw

    def intensity(self, measure: str) -> tuple[float, float]:
        """The band figure an EF uses ("height" or "area") and its relative uncertainty."""
        if measure == "area":
            return (self.normalised_area_counts_cm1_per_mW_s,
                    relative_u(self.normalised_area_u_counts_cm1_per_mW_s,
                               self.normalised_area_counts_cm1_per_mW_s))
        return (self.normalised_height_counts_per_mW_s,
                relative_u(self.normalised_height_u_counts_per_mW_s,
                           self.normalised_height_counts_per_mW_s))

    def band_fields(self) -> dict:
        """The band figures every acquisition stores, as model keyword arguments."""
        height_u = self.normalised_height_u_counts_per_mW_s
        area_u = self.normalised_area_u_counts_cm1_per_mW_s
        return dict(
            band_position_cm1=self.band_position_cm1, band_fwhm_cm1=self.band_fwhm_cm1,
            normalised_height_counts_per_mW_s=self.normalised_height_counts_per_mW_s,
            normalised_height_u_counts_per_mW_s=height_u if math.isfinite(height_u) else None,
            normalised_area_counts_cm1_per_mW_s=self.normalised_area_counts_cm1_per_mW_s,
            normalised_area_u_counts_cm1_per_mW_s=area_u if math.isfinite(area_u) else None,
            snr=self.snr, spikes_removed=self.spikes_removed)

    def map_fields(self) -> dict:
        """The spread over a map (empty figures for one spectrum), as model keyword arguments."""
        return dict(n_points=self.n_points,
                    median_height_counts_per_mW_s=self.median_height_counts_per_mW_s,
                    rsd_percent=self.rsd_percent,
                    fraction_within_20_percent=self.fraction_within_20_percent,
                    point_values=self.point_values, map_nx=self.map_nx, map_ny=self.map_ny,
                    map_step_um=self.map_step_um,
                    has_heatmap=bool(self.point_values and "image" in self.point_values))


def analyse(data: Spectrum | RamanMap, *, band_center_cm1: float, band_window_cm1: float,
            power_mW: float, integration_s: float, accumulations: int,
            measure: str = "height") -> MeasuredBand:
    """Run the QC pipeline on a spectrum or a map; a science error becomes a refusal.

    ``measure`` ("height" or "area", from the limit set) picks the per-point figure a map's
    uniformity and heat map describe.
    """
    settings = dict(band_center_cm1=band_center_cm1, band_window_cm1=band_window_cm1,
                    power_mW=power_mW, integration_s=integration_s,
                    accumulations=accumulations)
    try:
        if isinstance(data, RamanMap):
            result = qc_pipeline.analyse_qc_map(data.shift_cm1, data.intensity, **settings)
            return _map_band(result, data, measure)
        result = qc_pipeline.analyse_qc_spectrum(data.x, data.y, **settings)
        arrays = dict(_band_arrays(result.band), shift_cm1=result.shift_cm1,
                      spectrum=result.processed_intensity, baseline=result.baseline)
        return _band(result.band, spikes_removed=result.spikes_removed, arrays=arrays)
    except AnalysisInputError as error:
        raise as_validation_error(error) from None


def _band(band, *, spikes_removed: int, **extra) -> MeasuredBand:
    return MeasuredBand(
        band_position_cm1=float(band.position_cm1), band_fwhm_cm1=float(band.fwhm_cm1),
        normalised_height_counts_per_mW_s=float(band.height),
        normalised_height_u_counts_per_mW_s=float(band.height_se),
        normalised_area_counts_cm1_per_mW_s=float(band.area),
        normalised_area_u_counts_cm1_per_mW_s=float(band.area_se), snr=float(band.snr),
        spikes_removed=int(spikes_removed), band_limit_note=band.limit_note, **extra)


def _band_arrays(band) -> dict:
    return {"band_shift_cm1": band.window_shift_cm1, "band_fitted": band.fitted_curve}


def _map_step_um(raman_map: RamanMap) -> float | None:
    """The grid pitch: the median spacing of the distinct stage positions."""
    xs, ys = raman_map.grid_axes()
    steps = np.concatenate([np.diff(xs), np.diff(ys)])
    return float(np.median(steps)) if steps.size else None


def _map_band(result, raman_map: RamanMap, measure: str) -> MeasuredBand:
    """Map figures: headline band from the mean spectrum, spread from the per-point values."""
    heights = np.asarray(result.height_per_point)
    areas = np.asarray(result.area_per_point)
    uniformity = result.area_uniformity if measure == "area" else result.uniformity
    shown = areas if measure == "area" else heights
    point_values = {"x_um": raman_map.x_um.tolist(), "y_um": raman_map.y_um.tolist(),
                    "normalised_height_counts_per_mW_s": heights.tolist(),
                    "normalised_area_counts_cm1_per_mW_s": areas.tolist(),
                    "measure": measure}
    arrays = dict(_band_arrays(result.mean_band), shift_cm1=result.shift_cm1,
                  spectrum=result.mean_spectrum, percentile_q=result.percentile_q,
                  percentile_spectra=result.percentile_spectra,
                  sample_index=result.sample_index, sample_spectra=result.sample_spectra,
                  sample_baselines=result.sample_baselines, height_per_point=heights,
                  area_per_point=areas)
    nx = ny = step = None
    if raman_map.grid_shape is not None:
        ny, nx = (int(n) for n in raman_map.grid_shape)
        xs, ys = raman_map.grid_axes()
        image = raman_map.image(shown)
        point_values["image"] = {"x_um": xs.tolist(), "y_um": ys.tolist(),
                                 "rows": image.tolist()}
        arrays.update(heatmap=image, heatmap_x_um=xs, heatmap_y_um=ys)
        step = _map_step_um(raman_map)
    return _band(
        result.mean_band, spikes_removed=result.spikes_removed,
        n_points=int(result.n_points),
        median_height_counts_per_mW_s=float(result.median_height_counts_per_mW_s),
        rsd_percent=float(uniformity.rsd_percent),
        fraction_within_20_percent=float(uniformity.fraction_within_tolerance),
        point_values=point_values, map_nx=nx, map_ny=ny, map_step_um=step, arrays=arrays)
