"""Reference-analyte QC of one spectrum or a whole map: spikes → baseline → band → uniformity.

These two functions (with :mod:`qc.analysis.enhancement`) are what the Django service calls;
every number a page or the API shows is in the returned dataclasses. Intensities in the
results are normalised to counts/(mW·s) (see :func:`qc.analysis.bands.normalised_intensity`).
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from ._validation import all_finite, as_finite_1d, as_strictly_monotonic_axis
from .band_maps import band_heights_map, band_metrics_map
from .band_profiles import check_band_window
from .bands import BandFit, fit_band, normalised_intensity
from .baseline import DEFAULT_STIFFNESS_CM4, asls_baseline, asls_baseline_map, lam_for_spacing
from .errors import AnalysisInputError
from .spikes import remove_spikes
from .uniformity import MapUniformity, map_uniformity


@dataclass(frozen=True, eq=False)
class SpectrumQcResult:
    """QC numbers of one reference-analyte spectrum (intensities in counts/(mW·s)).

    Attributes
    ----------
    band : BandFit
        Fit of the reference band on the processed spectrum (position, height, FWHM, area,
        standard errors, S/N = height / residual SD, fitted curve for plotting).
    height_counts_per_mW_s, area_counts_per_mW_s_cm1, position_cm1, fwhm_cm1, snr : float
        The band's headline numbers, copied from ``band``.
    spikes_removed : int
        Points replaced by spike removal.
    shift_cm1, processed_intensity, baseline : numpy.ndarray
        Axis (ascending), spike-free baseline-corrected normalised spectrum, and the
        subtracted baseline (normalised), for plotting.
    """

    band: BandFit
    height_counts_per_mW_s: float
    area_counts_per_mW_s_cm1: float
    position_cm1: float
    fwhm_cm1: float
    snr: float
    spikes_removed: int
    shift_cm1: np.ndarray
    processed_intensity: np.ndarray
    baseline: np.ndarray


@dataclass(frozen=True, eq=False)
class MapQcResult:
    """QC numbers of a reference-analyte map (intensities in counts/(mW·s)).

    Attributes
    ----------
    n_points : int
    height_per_point, area_per_point : numpy.ndarray
        Fitted band height and area of every point, with the band shape (position, width)
        of the mean-spectrum fit (:func:`qc.analysis.band_maps.band_heights_map`, one linear
        solve for the whole map), so they agree with single-spectrum fits.
    position_per_point_cm1 : numpy.ndarray
        Raman shift of each point's maximum (:func:`qc.analysis.band_maps.band_metrics_map`).
    uniformity, area_uniformity : MapUniformity
        Spread of the height (the headline uniformity) and of the area over the map.
    median_height_counts_per_mW_s, rsd_percent, fraction_within_tolerance : float
        Headline numbers, copied from ``uniformity``.
    spikes_removed : int
        Points replaced over the whole map.
    spikes_per_point : numpy.ndarray
        Points replaced in each spectrum.
    mean_band : BandFit
        Fit of the reference band on the mean processed spectrum.
    snr : float
        S/N of the mean-spectrum fit (height / residual SD).
    shift_cm1, mean_spectrum : numpy.ndarray
        Axis and the mean processed spectrum, for plotting with ``mean_band.fitted_curve``.
    baseline_converged : bool
        Whether every spectrum's baseline iteration converged.
    percentile_q : numpy.ndarray
        The percentiles (%) of ``percentile_spectra``.
    percentile_spectra : numpy.ndarray, shape (len(percentile_q), n_shift)
        Percentiles of the processed spectra, point by point along the axis, over an evenly
        spaced sample of at most ``PERCENTILE_SAMPLE`` map points (the spread a page draws).
    sample_index : numpy.ndarray
        Evenly spaced map points whose baselines are kept.
    sample_spectra, sample_baselines : numpy.ndarray, shape (len(sample_index), n_shift)
        Those points' spike-free spectra and fitted baselines, normalised (counts/(mW·s)).
    """

    n_points: int
    height_per_point: np.ndarray
    area_per_point: np.ndarray
    position_per_point_cm1: np.ndarray
    uniformity: MapUniformity
    area_uniformity: MapUniformity
    median_height_counts_per_mW_s: float
    rsd_percent: float
    fraction_within_tolerance: float
    spikes_removed: int
    spikes_per_point: np.ndarray
    mean_band: BandFit
    snr: float
    shift_cm1: np.ndarray
    mean_spectrum: np.ndarray
    baseline_converged: bool
    percentile_q: np.ndarray
    percentile_spectra: np.ndarray
    sample_index: np.ndarray
    sample_spectra: np.ndarray
    sample_baselines: np.ndarray


PERCENTILE_SAMPLE = 1000  # points; percentiles of a sample this size move by < 1 % of a band
SAMPLE_BASELINES = 12  # points whose baselines are kept for display
PERCENTILES = (5.0, 25.0, 50.0, 75.0, 95.0)
# Points analysed at once, a block on each of MAP_THREADS threads: each float64 work array
# of a 512 × 1,024 block is 4 MiB, so the whole map is held only as float32 (as read, and
# processed); spectra are independent.
MAP_BLOCK_POINTS = 512
MAP_THREADS = 2


def _evenly_spaced(n_points: int, count: int) -> np.ndarray:
    """Indices of ``count`` points spread evenly over ``n_points`` (all of them if fewer)."""
    return np.unique(np.linspace(0, n_points - 1, min(count, n_points)).round().astype(int))


def _ascending(shift_cm1, counts):
    """Return the axis ascending (flipping the data with it), after validation."""
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=7)
    if axis[0] > axis[-1]:
        return axis[::-1].copy(), np.ascontiguousarray(np.asarray(counts)[..., ::-1])
    return axis, counts


def analyse_qc_spectrum(
    shift_cm1,
    counts,
    *,
    band_center_cm1: float,
    band_window_cm1: float,
    power_mW: float,
    integration_s: float,
    accumulations: int = 1,
    accumulations_summed: bool = True,
    profile: str = "lorentzian",
    baseline_stiffness_cm4: float = DEFAULT_STIFFNESS_CM4,
    baseline_p: float = 1e-2,
    spike_threshold: float = 6.0,
) -> SpectrumQcResult:
    """Spike removal, ASLS baseline, normalisation and band fit of one spectrum.

    Steps: :func:`~qc.analysis.spikes.remove_spikes` (Whitaker & Hayes 2018),
    :func:`~qc.analysis.baseline.asls_baseline` (Eilers & Boelens 2005, via pybaselines),
    division by ``power_mW · integration_s`` (× accumulations when summed), and
    :func:`~qc.analysis.bands.fit_band` in the window ``band_center_cm1 ± band_window_cm1/2``.

    Parameters
    ----------
    shift_cm1 : array_like, shape (n,)
        Raman shift (cm⁻¹), strictly monotonic (a descending axis is flipped).
    counts : array_like, shape (n,)
        Raw detector counts.
    band_center_cm1, band_window_cm1 : float
        Reference band position and full fitting window (cm⁻¹).
    power_mW, integration_s : float
        Laser power at the sample (mW) and integration time per accumulation (s).
    accumulations : int, default 1
    accumulations_summed : bool, default True
        Whether the counts are the sum (True) or the mean of the accumulations.
    profile : {"lorentzian", "pseudo_voigt"}
    baseline_stiffness_cm4, baseline_p : float
        ASLS smoothness on the wavenumber scale ((cm⁻¹)⁴, converted to λ for this axis by
        :func:`~qc.analysis.baseline.lam_for_spacing`, so the baseline does not depend on
        the sampling) and asymmetry p.
    spike_threshold : float, default 6
        Modified z-score threshold of the spike test.

    Returns
    -------
    SpectrumQcResult
    """
    axis, values = _ascending(shift_cm1, as_finite_1d(counts, field="counts", min_points=7))
    if values.size != axis.size:
        raise AnalysisInputError(
            f"has {values.size} points but shift_cm1 has {axis.size}", field="counts"
        )
    check_band_window(axis, band_center_cm1, band_window_cm1)
    scale = normalised_intensity(
        1.0,
        power_mW=power_mW,
        integration_s=integration_s,
        accumulations=accumulations,
        accumulations_summed=accumulations_summed,
    )
    despiked = remove_spikes(values, threshold=spike_threshold)
    baseline, _ = asls_baseline(
        axis, despiked.cleaned, lam=lam_for_spacing(axis, baseline_stiffness_cm4), p=baseline_p
    )
    processed = (despiked.cleaned - baseline) * scale
    band = fit_band(
        axis,
        processed,
        band_center_cm1=band_center_cm1,
        band_window_cm1=band_window_cm1,
        profile=profile,
    )
    return SpectrumQcResult(
        band=band,
        height_counts_per_mW_s=band.height,
        area_counts_per_mW_s_cm1=band.area,
        position_cm1=band.position_cm1,
        fwhm_cm1=band.fwhm_cm1,
        snr=band.snr,
        spikes_removed=despiked.replaced_count,
        shift_cm1=axis,
        processed_intensity=processed,
        baseline=baseline * scale,
    )


def analyse_qc_map(
    shift_cm1,
    counts_2d,
    *,
    band_center_cm1: float,
    band_window_cm1: float,
    power_mW: float,
    integration_s: float,
    accumulations: int = 1,
    accumulations_summed: bool = True,
    grid_shape: tuple[int, int] | None = None,
    tolerance_fraction: float = 0.2,
    profile: str = "lorentzian",
    baseline_stiffness_cm4: float = DEFAULT_STIFFNESS_CM4,
    baseline_p: float = 1e-2,
    spike_threshold: float = 6.0,
) -> MapQcResult:
    """Vectorised QC of a whole map: spikes, baseline, band metrics per point, uniformity.

    Steps: on blocks of ``MAP_BLOCK_POINTS`` spectra, ``MAP_THREADS`` blocks at a time (in
    float64; only the map as given and the processed map, in float32, are held whole)
    spike removal (Whitaker & Hayes 2018), batched P-spline ASLS baselines
    (:func:`~qc.analysis.baseline.asls_baseline_map`) and normalisation to counts/(mW·s);
    then the mean-spectrum band fit, the fitted band height/area per point
    (:func:`~qc.analysis.band_maps.band_heights_map`), RSD and share
    within ±tolerance of the median (:func:`~qc.analysis.uniformity.map_uniformity`).

    Parameters
    ----------
    shift_cm1 : array_like, shape (n_shift,)
        Raman shift (cm⁻¹), strictly monotonic (a descending axis is flipped).
    counts_2d : array_like, shape (n_points, n_shift)
        Raw counts, one spectrum per map point.
    grid_shape : (rows, cols), optional
        Map grid for the heat-map (row-major in point order).
    tolerance_fraction : float, default 0.2
        ±20 % around the median for the uniformity share.
    Other parameters
        As for :func:`analyse_qc_spectrum`.

    Returns
    -------
    MapQcResult
    """
    spectra = np.asarray(counts_2d)
    if spectra.ndim != 2 or spectra.shape[0] < 2 or spectra.dtype.kind not in "fiu":
        raise AnalysisInputError(
            f"expected numbers of shape (n_points ≥ 2, n_shift), got shape {spectra.shape}",
            field="counts_2d",
        )
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=7)
    descending = bool(axis[0] > axis[-1])
    axis = axis[::-1].copy() if descending else axis
    if spectra.shape[1] != axis.size:
        raise AnalysisInputError(
            f"has {spectra.shape[1]} shifts per point but shift_cm1 has {axis.size}",
            field="counts_2d",
        )
    check_band_window(axis, band_center_cm1, band_window_cm1)
    scale = normalised_intensity(
        1.0,
        power_mW=power_mW,
        integration_s=integration_s,
        accumulations=accumulations,
        accumulations_summed=accumulations_summed,
    )
    n_points = spectra.shape[0]
    sample_index = _evenly_spaced(n_points, SAMPLE_BASELINES)
    processed = np.empty(spectra.shape, dtype=np.float32)
    spikes_per_point = np.empty(n_points, dtype=np.int64)
    sample_spectra = np.empty((sample_index.size, axis.size))
    sample_baselines = np.empty_like(sample_spectra)
    lam = lam_for_spacing(axis, baseline_stiffness_cm4)

    def process(rows: slice) -> bool:
        """One block end to end, into ``processed``; whether every baseline converged."""
        first = rows.start
        block = np.array(spectra[rows, ::-1] if descending else spectra[rows], dtype=np.float64)
        if not all_finite(block):
            row = first + int(np.flatnonzero(~np.isfinite(block).all(axis=1))[0])
            raise AnalysisInputError(f"point {row} holds NaN or infinity", field="counts_2d")
        despiked = remove_spikes(block, threshold=spike_threshold, max_threads=1)
        del block
        cleaned = despiked.cleaned
        baseline, diagnostics = asls_baseline_map(axis, cleaned, lam=lam, p=baseline_p,
                                                  max_threads=1)
        kept = (sample_index >= rows.start) & (sample_index < rows.stop)
        sample_spectra[kept] = cleaned[sample_index[kept] - first] * scale
        sample_baselines[kept] = baseline[sample_index[kept] - first] * scale
        cleaned -= baseline  # in place: the cleaned copy is ours
        cleaned *= scale
        processed[rows] = cleaned  # float32: 7 digits, far below the counts' noise
        spikes_per_point[rows] = despiked.replaced_per_spectrum
        return bool(diagnostics["converged"].all())

    blocks = [slice(first, min(first + MAP_BLOCK_POINTS, n_points))
              for first in range(0, n_points, MAP_BLOCK_POINTS)]
    n_threads = min(MAP_THREADS, os.cpu_count() or 1, len(blocks))
    if n_threads < 2:
        converged = all([process(rows) for rows in blocks])
    else:
        # Whole blocks side by side: the compiled kernels and numpy's partitions release the
        # GIL, and no step waits for the other thread (a fault is raised in block order).
        pool = ThreadPoolExecutor(max_workers=n_threads)
        try:
            converged = all(list(pool.map(process, blocks)))
        finally:
            pool.shutdown(cancel_futures=True)
    percentile_spectra = np.percentile(
        processed[_evenly_spaced(n_points, PERCENTILE_SAMPLE)], PERCENTILES, axis=0)
    mean_spectrum = processed.mean(axis=0, dtype=np.float64)
    mean_band = fit_band(
        axis,
        mean_spectrum,
        band_center_cm1=band_center_cm1,
        band_window_cm1=band_window_cm1,
        profile=profile,
    )
    # The band functions read only the window; hand them its columns (and one beyond each
    # side, so the window still lies inside the axis) instead of a float64 copy of the map.
    inside = np.flatnonzero(check_band_window(axis, band_center_cm1, band_window_cm1))
    near = slice(max(inside[0] - 1, 0), min(inside[-1] + 2, axis.size))
    heights, areas = band_heights_map(axis[near], processed[:, near], band=mean_band)
    positions = band_metrics_map(
        axis[near], processed[:, near], band_center_cm1=band_center_cm1,
        band_window_cm1=band_window_cm1,
    ).position_cm1
    uniformity = map_uniformity(
        heights, grid_shape=grid_shape, tolerance_fraction=tolerance_fraction
    )
    area_uniformity = map_uniformity(
        areas, grid_shape=grid_shape, tolerance_fraction=tolerance_fraction
    )
    return MapQcResult(
        n_points=int(n_points),
        height_per_point=heights,
        area_per_point=areas,
        position_per_point_cm1=positions,
        uniformity=uniformity,
        area_uniformity=area_uniformity,
        median_height_counts_per_mW_s=uniformity.median,
        rsd_percent=uniformity.rsd_percent,
        fraction_within_tolerance=uniformity.fraction_within_tolerance,
        spikes_removed=int(spikes_per_point.sum()),
        spikes_per_point=spikes_per_point,
        mean_band=mean_band,
        snr=mean_band.snr,
        shift_cm1=axis,
        mean_spectrum=mean_spectrum,
        baseline_converged=converged,
        percentile_q=np.array(PERCENTILES),
        percentile_spectra=percentile_spectra,
        sample_index=sample_index,
        sample_spectra=sample_spectra,
        sample_baselines=sample_baselines,
    )
