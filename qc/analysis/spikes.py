"""Cosmic-ray spike removal for Raman spectra and whole maps.

One method: the modified z-score of the first difference (Whitaker & Hayes 2018), applied to
every spectrum of a map at once with array operations.
"""

from __future__ import annotations

import itertools
import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from ._validation import all_finite, require_positive
from .errors import AnalysisInputError

# 0.6745 is the 0.75 quantile of the standard normal; it makes MAD comparable to a standard
# deviation (Iglewicz & Hoaglin's modified z-score, used by Whitaker & Hayes).
_MODIFIED_Z_FACTOR = 0.6745


@dataclass(frozen=True, eq=False)
class SpikeRemoval:
    """Result of :func:`remove_spikes`.

    Attributes
    ----------
    cleaned : numpy.ndarray
        Intensities with spike points replaced, same shape as the input (counts).
    spike_mask : numpy.ndarray of bool
        True where a point was replaced (same shape as the input).
    replaced_per_spectrum : numpy.ndarray of int
        Number of replaced points in each spectrum (length 1 for a single spectrum).
    replaced_count : int
        Total number of replaced points.
    threshold : float
        The modified z-score threshold that was used.
    """

    cleaned: np.ndarray
    spike_mask: np.ndarray
    replaced_per_spectrum: np.ndarray
    replaced_count: int
    threshold: float


def modified_z_score_of_difference(intensity) -> np.ndarray:
    """Modified z-score of the first difference of each spectrum (Whitaker & Hayes 2018).

    Parameters
    ----------
    intensity : array_like, shape (n_shift,) or (n_points, n_shift)
        Raw intensities (counts); rows are spectra.

    Returns
    -------
    numpy.ndarray, shape (..., n_shift - 1)
        ``z = 0.6745 (Δy − median(Δy)) / MAD`` with ``Δy_i = y_{i+1} − y_i`` and
        ``MAD = median(|Δy − median(Δy)|)``, computed per spectrum. Where MAD is zero (a
        perfectly flat or stepped spectrum) z is set to 0, so nothing there is called a spike.

    References
    ----------
    .. [1] Whitaker, D. A.; Hayes, K. A simple algorithm for despiking Raman spectra.
       Chemometrics and Intelligent Laboratory Systems 2018, 179, 82–84.
    """
    values = np.asarray(intensity, dtype=float)
    delta = np.diff(values, axis=-1)
    median = np.median(delta, axis=-1, keepdims=True)
    deviation = delta - median
    mad = np.median(np.abs(deviation), axis=-1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(mad > 0, _MODIFIED_Z_FACTOR * deviation / mad, 0.0)
    return z


def remove_spikes(
    intensity,
    *,
    threshold: float = 6.0,
    max_spike_width_points: int = 3,
    widen_points: int = 1,
    replace_window_points: int = 3,
    sharpness: float = 3.0,
    max_threads: int | None = None,
) -> SpikeRemoval:
    """Find and replace cosmic-ray spikes (Whitaker & Hayes 2018), for a spectrum or a map.

    Parameters
    ----------
    intensity : array_like, shape (n_shift,) or (n_points, n_shift)
        Raw intensities (counts); a 2-D array is a map with one spectrum per row and is
        processed in one vectorised pass.
    threshold : float, default 6
        Modified z-score above which a first difference is called abnormal (the authors'
        own code uses 6).
    max_spike_width_points : int, default 3
        Widest run of points treated as one spike (see Notes).
    widen_points : int, default 1
        Points added on each side of a detected spike before replacement, so the spike's
        shoulders are replaced too.
    replace_window_points : int, default 3
        Half-width of the neighbourhood whose non-spike points are averaged to replace a
        spike point; doubled automatically where a neighbourhood holds no clean point.
    sharpness : float, default 3
        How many times larger than the difference just outside it a spike's opening and
        closing jumps must be (see Notes).
    max_threads : int, optional
        Threads the rows of a map may be split over (default: up to four, by the rows); 1
        for a caller that already runs blocks of a map side by side.

    Returns
    -------
    SpikeRemoval
        Cleaned array, mask of replaced points, and counts.

    Notes
    -----
    Whitaker & Hayes flag every point whose first difference has ``|z| > threshold``. A
    strong, narrow Raman band on a low-noise spectrum can exceed that on its flanks, so this
    implementation adds one condition: a spike must show an abnormal jump up followed, within
    ``max_spike_width_points``, by an abnormal jump down (or the reverse), and each of the two
    jumps must be ``sharpness`` times larger than the difference just outside the spike. A
    band's flank rises over several similar differences, a cosmic ray in one step. A spike
    on the first (last) points has no opening (closing) jump inside the spectrum; it is
    accepted on its one abnormal, sharp jump when the differences between that jump and
    the spectrum's end are ``sharpness`` times smaller.

    The replacement is the mean of the non-spike points within ``replace_window_points`` of
    each flagged point, as in the paper; the running sums are computed for all spectra at once.

    References
    ----------
    .. [1] Whitaker, D. A.; Hayes, K. A simple algorithm for despiking Raman spectra.
       Chemometrics and Intelligent Laboratory Systems 2018, 179, 82–84.
    """
    values = np.asarray(intensity, dtype=float)
    if values.ndim not in (1, 2):
        raise AnalysisInputError(
            f"expected a spectrum (1-D) or a map (2-D), got shape {values.shape}",
            field="intensity",
        )
    if values.shape[-1] < 5:
        raise AnalysisInputError("needs at least 5 points per spectrum", field="intensity")
    if not all_finite(values):
        raise AnalysisInputError("contains NaN or infinite values", field="intensity")
    require_positive(threshold, field="threshold")
    require_positive(sharpness, field="sharpness")
    for name, number in (
        ("max_spike_width_points", max_spike_width_points),
        ("replace_window_points", replace_window_points),
    ):
        if int(number) != number or number < 1:
            raise AnalysisInputError("must be a whole number ≥ 1", field=name)
    if int(widen_points) != widen_points or widen_points < 0:
        raise AnalysisInputError("must be a whole number ≥ 0", field="widen_points")

    spectra = np.atleast_2d(values)
    mask = _spike_points_threaded(
        spectra, threshold, int(max_spike_width_points), float(sharpness),
        _MAX_THREADS if max_threads is None else max_threads,
    )
    mask = _widen(mask, int(widen_points))
    cleaned = _replace_by_neighbour_mean(spectra, mask, int(replace_window_points))

    per_spectrum = mask.sum(axis=1)
    if values.ndim == 1:
        cleaned, mask = cleaned[0], mask[0]
    return SpikeRemoval(
        cleaned=cleaned,
        spike_mask=mask,
        replaced_per_spectrum=per_spectrum,
        replaced_count=int(per_spectrum.sum()),
        threshold=float(threshold),
    )


def _row_median_in_place(values: np.ndarray) -> np.ndarray:
    """Median of each row (as a column); partitions ``values`` in place (a scratch array)."""
    n = values.shape[1]
    middle = n // 2
    if n % 2:
        values.partition(middle, axis=1)
        return values[:, middle : middle + 1].copy()
    values.partition((middle - 1, middle), axis=1)
    return values[:, middle - 1 : middle + 1].mean(axis=1, keepdims=True)


# Rows per thread below which one thread does all (thread start-up would dominate; a
# map arrives in blocks of about a thousand spectra).
_ROWS_PER_THREAD = 500
_MAX_THREADS = 4


def _spike_points_threaded(spectra, threshold, max_width, sharpness, max_threads):
    """:func:`_spike_points` on row blocks in parallel threads; rows are independent, and
    numpy releases the GIL in the partitions that dominate, so the mask is the same."""
    n_threads = min(os.cpu_count() or 1, max_threads, spectra.shape[0] // _ROWS_PER_THREAD)
    if n_threads < 2:
        return _spike_points(spectra, threshold, max_width, sharpness)
    edges = np.linspace(0, spectra.shape[0], n_threads + 1).astype(int)
    with ThreadPoolExecutor(max_workers=n_threads) as pool:
        masks = pool.map(
            lambda rows: _spike_points(spectra[rows], threshold, max_width, sharpness),
            [slice(a, b) for a, b in itertools.pairwise(edges)],
        )
        return np.concatenate(list(masks))


def _spike_points(spectra: np.ndarray, threshold: float, max_width: int, sharpness: float):
    """Mark points enclosed by an abnormal sharp jump and an opposite abnormal sharp jump.

    ``|z| > threshold`` is tested as ``|Δ − median Δ| > threshold · MAD / 0.6745`` so no
    z array is formed; abnormal differences are rare, so the pairing and sharpness tests
    run on the few candidates only. Differences are stored in float32 (rounded from the
    float64 difference; exact for integer counts below 2²⁴, elsewhere a relative change of
    10⁻⁷ in z, far inside the threshold's own arbitrariness): the two row medians
    (partitions) are the cost here, and float32 halves it.
    """
    n_rows, n_points = spectra.shape
    deviation = np.empty((n_rows, n_points - 1), dtype=np.float32)
    np.subtract(spectra[:, 1:], spectra[:, :-1], out=deviation, casting="same_kind")
    scratch = deviation.copy()
    deviation -= _row_median_in_place(scratch)
    magnitude = np.abs(deviation, out=scratch)
    mad = _row_median_in_place(magnitude.copy())
    limit = np.where(mad > 0, threshold * mad / _MODIFIED_Z_FACTOR, np.inf).astype(np.float32)
    rows, cols = np.nonzero(magnitude > limit)
    mask = np.zeros((n_rows, n_points), dtype=bool)
    if rows.size == 0:
        return mask
    n_diff = n_points - 1
    sign = np.sign(deviation[rows, cols])
    jump = magnitude[rows, cols]
    outside_before = np.where(cols > 0, magnitude[rows, np.maximum(cols - 1, 0)], 0.0)
    outside_after = np.where(
        cols < n_diff - 1, magnitude[rows, np.minimum(cols + 1, n_diff - 1)], 0.0
    )
    sharp_open = jump > sharpness * outside_before
    sharp_close = jump > sharpness * outside_after
    keys = rows * n_diff + cols  # sorted, since np.nonzero returns row-major order
    for width in range(1, max_width + 1):
        # Δ[j] jumps one way and Δ[j + width] the other: points j+1 .. j+width are the spike.
        target = keys + width
        where = np.searchsorted(keys, target)
        where = np.minimum(where, keys.size - 1)
        closes = (
            (keys[where] == target)
            & (cols + width < n_diff)
            & sharp_open
            & sharp_close[where]
            & (sign[where] == -sign)
        )
        for offset in range(1, width + 1):
            mask[rows[closes], cols[closes] + offset] = True
    _mark_edge_spikes(mask, magnitude, rows, cols, jump, sharp_open, sharp_close, max_width,
                      sharpness)
    return mask


def _mark_edge_spikes(mask, magnitude, rows, cols, jump, sharp_open, sharp_close, max_width,
                      sharpness):
    """Spikes touching the first or last point, whose outer jump lies outside the spectrum.

    At the start, points 0..j form a spike when Δ[j] is an abnormal, sharp jump and the
    differences before it (inside the spike) are ``sharpness`` times smaller; at the end,
    symmetrically. Either sign is accepted (a dead pixel is a spike downwards); the
    inner-differences test keeps an interior spike's closing jump from being taken for
    an edge spike.
    """
    n_diff = magnitude.shape[1]
    width = min(max_width, n_diff - 1)
    # Largest |Δ| strictly between each candidate jump and the spectrum's end (0 if none).
    head = np.maximum.accumulate(magnitude[:, :width], axis=1)
    tail = np.maximum.accumulate(magnitude[:, ::-1][:, :width], axis=1)
    for at_start in (True, False):
        depth = cols if at_start else n_diff - 1 - cols  # differences between jump and end
        chosen = (depth < width) & (sharp_close if at_start else sharp_open)
        inner = np.zeros(jump.shape, dtype=magnitude.dtype)
        deep = chosen & (depth > 0)
        inner[deep] = (head if at_start else tail)[rows[deep], depth[deep] - 1]
        chosen &= jump > sharpness * inner
        for offset in range(width):  # the spike is the depth + 1 points beyond the jump
            hit = chosen & (depth >= offset)
            index = offset if at_start else mask.shape[1] - 1 - offset
            mask[rows[hit], index] = True


def _widen(mask: np.ndarray, points: int) -> np.ndarray:
    """Dilate a boolean mask along the last axis by ``points`` on each side."""
    widened = mask.copy()
    for shift in range(1, points + 1):
        widened[:, shift:] |= mask[:, :-shift]
        widened[:, :-shift] |= mask[:, shift:]
    return widened


def _window_sums(values: np.ndarray, half_width: int) -> np.ndarray:
    """Sum over ``[i - half_width, i + half_width]`` along the last axis, clipped at the ends."""
    n = values.shape[1]
    cumulative = np.zeros((values.shape[0], n + 1))
    np.cumsum(values, axis=1, out=cumulative[:, 1:])
    index = np.arange(n)
    upper = np.minimum(index + half_width + 1, n)
    lower = np.maximum(index - half_width, 0)
    return cumulative[:, upper] - cumulative[:, lower]


def _replace_by_neighbour_mean(spectra: np.ndarray, mask: np.ndarray, half_width: int):
    """Replace masked points by the mean of unmasked points in a window around them."""
    cleaned = spectra.copy()
    if not mask.any():
        return cleaned
    rows = np.flatnonzero(mask.any(axis=1))
    sub_values, sub_mask = spectra[rows], mask[rows]
    good = ~sub_mask
    clean_values = np.where(good, sub_values, 0.0)
    pending = sub_mask.copy()
    replacement = sub_values.copy()
    width = half_width
    while pending.any():
        if width > sub_values.shape[1]:
            raise AnalysisInputError(
                "a spectrum has no spike-free points to replace its spikes with",
                field="intensity",
            )
        total = _window_sums(clean_values, width)
        count = _window_sums(good.astype(float), width)
        ready = pending & (count > 0)
        replacement[ready] = total[ready] / count[ready]
        pending &= ~ready
        width *= 2
    cleaned[rows] = np.where(sub_mask, replacement, sub_values)
    return cleaned
