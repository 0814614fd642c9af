"""Baseline (fluorescence background) correction for Raman spectra and maps.

Single spectra go through pybaselines, the project's reference implementation of the
asymmetric least squares family. Maps use :func:`asls_baseline_map`, the same asymmetric
weighting on a penalised B-spline (P-spline) basis, solved by a compiled kernel per spectrum.
"""

from __future__ import annotations

import itertools
import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ._validation import (
    all_finite,
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_positive,
)
from .errors import AnalysisInputError
from .pspline_asls import SplineBasis, asls_spline_rows

#: Baseline stiffness on the wavenumber scale, (cm⁻¹)⁴: λ = 10⁶ at 2 cm⁻¹ spacing, the
#: spacing of a typical dispersive Raman spectrometer (common practice).
DEFAULT_STIFFNESS_CM4 = 1.6e7



def _pybaselines(axis: np.ndarray):
    """pybaselines' fitter for one spectrum, imported on first use: it loads scipy.signal and
    scipy.stats (about 30 MiB, 1.4 s), which a worker judging maps (the numba kernel below)
    never needs."""
    from pybaselines import Baseline

    return Baseline(axis)


def lam_for_spacing(shift_cm1, stiffness_cm4: float = DEFAULT_STIFFNESS_CM4,
                    *, diff_order: int = 2) -> float:
    """Point-scale smoothness λ that gives the same baseline whatever the sampling.

    The Whittaker penalty λ·Σ(Δ^d z_i)² acts on point index.  For a smooth curve sampled at
    spacing Δx, Δ^d z ≈ Δx^d·z⁽ᵈ⁾ and each sum over points is (1/Δx)·∫ dx, so the objective
    Σw(y − z)² + λΣ(Δ^d z)² ≈ (1/Δx)·[∫w(y − z)² dx + λ·Δx^(2d)·∫(z⁽ᵈ⁾)² dx]: the physical
    stiffness is λ·Δx^(2d).  Holding it fixed, λ = stiffness / Δx^(2d) (Δx the mean
    absolute spacing), which makes the baseline a property of the spectrum, not of the
    instrument's step.  This is a scaling argument (the Whittaker smoother of Eilers,
    Anal. Chem. 75, 3631 (2003) read as a discretised continuous penalty), checked in the
    tests by one spectrum sampled at two spacings.

    Parameters
    ----------
    shift_cm1 : array_like
        Raman shift axis, cm⁻¹ (strictly monotonic).
    stiffness_cm4 : float, default :data:`DEFAULT_STIFFNESS_CM4`
        λ·Δx^(2d) in (cm⁻¹)^(2d) (for d = 2, cm⁻¹ to the fourth).
    diff_order : int, default 2

    Returns
    -------
    float
        λ for :func:`asls_baseline` or :func:`asls_baseline_map` on this axis.
    """
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=2)
    stiffness = require_positive(stiffness_cm4, field="baseline_stiffness_cm4")
    spacing = abs(axis[-1] - axis[0]) / (axis.size - 1)
    return stiffness / spacing ** (2 * diff_order)


def _check_spectrum(shift_cm1, intensity) -> tuple[np.ndarray, np.ndarray]:
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=5)
    values = as_finite_1d(intensity, field="intensity")
    if values.size != axis.size:
        raise AnalysisInputError(
            f"has {values.size} points but shift_cm1 has {axis.size}", field="intensity"
        )
    return axis, values


def _check_iteration(lam: float, max_iter: int, tol: float) -> None:
    require_positive(lam, field="lam")
    require_positive(tol, field="tol")
    if int(max_iter) != max_iter or max_iter < 1:
        raise AnalysisInputError("must be a whole number ≥ 1", field="max_iter")


def asls_baseline(
    shift_cm1,
    intensity,
    *,
    lam: float = 1e6,
    p: float = 1e-2,
    diff_order: int = 2,
    max_iter: int = 50,
    tol: float = 1e-3,
) -> tuple[np.ndarray, dict]:
    """Asymmetric least squares baseline of one spectrum (Eilers & Boelens 2005).

    Minimises ``Σ w_i (y_i − z_i)² + λ Σ (Δ^d z_i)²`` and reweights
    ``w_i = p`` where ``y_i > z_i`` and ``1 − p`` elsewhere, until the weights settle.

    Parameters
    ----------
    shift_cm1 : array_like, shape (n,)
        Raman shift axis (cm⁻¹), strictly monotonic.
    intensity : array_like, shape (n,)
        Intensities (counts).
    lam : float, default 1e6
        Smoothness λ (the paper suggests 10²–10⁹).
    p : float, default 0.01
        Asymmetry (the paper suggests 0.001–0.1).
    diff_order, max_iter, tol
        Difference order of the penalty, iteration cap, and convergence tolerance on the
        relative change of the weights (pybaselines' defaults).

    Returns
    -------
    baseline : numpy.ndarray, shape (n,)
        Baseline (counts); subtract it from ``intensity``.
    diagnostics : dict
        pybaselines' parameters dict (``weights``, ``tol_history``).

    References
    ----------
    .. [1] Eilers, P. H. C.; Boelens, H. F. M. Baseline correction with asymmetric least
       squares smoothing. Leiden University Medical Centre report, 2005.
    .. [2] Erb, D. pybaselines: a Python library of algorithms for the baseline correction
       of experimental data (https://doi.org/10.5281/zenodo.5608581).
    """
    axis, values = _check_spectrum(shift_cm1, intensity)
    _check_iteration(lam, max_iter, tol)
    if not 0 < p < 1:
        raise AnalysisInputError(f"must lie strictly between 0 and 1, got {p}", field="p")
    baseline, params = _pybaselines(axis).asls(
        values, lam=lam, p=p, diff_order=diff_order, max_iter=max_iter, tol=tol
    )
    return baseline, params


def arpls_baseline(
    shift_cm1,
    intensity,
    *,
    lam: float = 1e5,
    diff_order: int = 2,
    max_iter: int = 50,
    tol: float = 1e-3,
) -> tuple[np.ndarray, dict]:
    """Asymmetrically reweighted penalised least squares baseline (Baek et al. 2015).

    Same penalised smoother as ASLS, but the weights follow a logistic function of the
    residual scaled by the mean and standard deviation of the negative residuals, so no
    asymmetry parameter is needed.

    Parameters
    ----------
    shift_cm1, intensity : array_like, shape (n,)
        Raman shift axis (cm⁻¹) and intensities (counts).
    lam : float, default 1e5
        Smoothness λ.
    diff_order, max_iter, tol
        As for :func:`asls_baseline`.

    Returns
    -------
    baseline : numpy.ndarray
        Baseline (counts).
    diagnostics : dict
        pybaselines' parameters dict.

    References
    ----------
    .. [1] Baek, S.-J.; Park, A.; Ahn, Y.-J.; Choo, J. Baseline correction using
       asymmetrically reweighted penalized least squares smoothing. Analyst 2015, 140,
       250–257.
    """
    axis, values = _check_spectrum(shift_cm1, intensity)
    _check_iteration(lam, max_iter, tol)
    baseline, params = _pybaselines(axis).arpls(
        values, lam=lam, diff_order=diff_order, max_iter=max_iter, tol=tol
    )
    return baseline, params


def asls_baseline_map(
    shift_cm1,
    intensity,
    *,
    lam: float = 1e6,
    p: float = 1e-2,
    points_per_knot: int = 16,
    max_iter: int = 50,
    tol: float = 1e-3,
    max_threads: int | None = None,
) -> tuple[np.ndarray, dict]:
    """ASLS baselines of every spectrum in a map at once, on a P-spline basis.

    Each baseline is a cubic B-spline ``z = B α`` with knots every ``points_per_knot``
    points, and ``α`` minimises ``Σ w_i (y_i − z_i)² + λ_s Σ (Δ² α_j)²`` (Eilers & Marx
    1996) with the ASLS weights of Eilers & Boelens 2005 (``p`` above, ``1 − p`` below).

    Parameters
    ----------
    shift_cm1 : array_like, shape (n_shift,)
        Raman shift axis (cm⁻¹), strictly monotonic.
    intensity : array_like, shape (n_points, n_shift)
        One spectrum per row (counts).
    lam : float, default 1e6
        Smoothness on the Whittaker (point-by-point) scale, as for :func:`asls_baseline`;
        converted to the spline scale by ``λ_s = λ / h³`` with ``h = points_per_knot``.
    p : float, default 0.01
        Asymmetry, as in :func:`asls_baseline`.
    points_per_knot : int, default 16
        Knot spacing in points.
    max_iter, tol : int, float
        Iteration cap and tolerance on ``‖w_new − w_old‖ / ‖w_old‖``, tested per spectrum
        (pybaselines' rule); a converged spectrum keeps its coefficients.
    max_threads : int, optional
        Threads the spectra may be split over (default: up to four); 1 for a caller that
        already runs blocks of a map side by side.

    Returns
    -------
    baseline : numpy.ndarray, shape (n_points, n_shift)
        Baselines (counts).
    diagnostics : dict
        ``iterations`` (per spectrum) and ``converged`` (bool per spectrum).

    Notes
    -----
    Why a spline basis: a point-by-point (Whittaker) system has ``n_shift`` unknowns per
    spectrum; with knots every ``h`` points the unknowns drop ``h``-fold, and the normal
    equations ``(BᵀWB + λ_s DᵀD) α = BᵀWy`` are banded (half-bandwidth 3 for cubic splines).

    Each spectrum runs end to end in one compiled kernel (numba, ``nogil``), so its data stay
    in cache across the reweightings:

    * ``B`` is never formed: each point has four nonzero basis values, the same ``h`` rows for
      every knot interval (the knots are uniform in point index); the spectrum is held as
      (point in interval, interval), so the evaluation and the sums run along contiguous
      rows of intervals and vectorise;
    * the weights take two values, ``w = p + (1 − 2p)·[y ≤ z]``, so ``BᵀWB`` and ``BᵀWy`` are a
      fixed part plus ``(1 − 2p)`` times sums over the low points; those sums are formed afresh
      while many points change side, then updated only at the points that changed side since
      the last solve (after the first reweightings, a handful per spectrum);
    * data and sums are float64; the baseline is rounded to float32 before it is compared
      with the data (also float32), so a point lying on the baseline (a flat background)
      compares the same way every time and the weights settle;
    * the first iteration (all weights 1) shares one matrix across spectra, factorised once;
      later systems by a banded Cholesky of half-bandwidth 3;
    * blocks of spectra run on up to ``max_threads`` threads, since the kernel releases the
      GIL.

    The compiled kernel is cached on disk (``cache=True``), so its compile time is paid once
    per machine, on the first call.

    The penalty acts on point index, like pybaselines' ``asls``. The λ conversion follows
    from ``Δ²α ≈ h² z''`` for a smooth curve summed over ``n/h`` coefficients; it is a
    scaling argument, checked in the tests by band heights agreeing with pybaselines'
    ``asls`` within 2 %. The iteration and stopping rule are those of pybaselines (the
    baseline returned is the one solved with the last weights before they stopped
    changing); the results do not depend on the block size or thread count.

    References
    ----------
    .. [1] Eilers, P. H. C.; Boelens, H. F. M. Baseline correction with asymmetric least
       squares smoothing. Leiden University Medical Centre report, 2005.
    .. [2] Eilers, P. H. C.; Marx, B. D. Flexible smoothing with B-splines and penalties.
       Statistical Science 1996, 11, 89–121.
    """
    axis = as_strictly_monotonic_axis(shift_cm1, field="shift_cm1", min_points=5)
    spectra = np.ascontiguousarray(intensity, dtype=float)
    if spectra.ndim != 2 or spectra.shape[1] != axis.size:
        raise AnalysisInputError(
            f"expected shape (n_points, {axis.size}), got {spectra.shape}", field="intensity"
        )
    if not all_finite(spectra):
        raise AnalysisInputError("contains NaN or infinite values", field="intensity")
    _check_iteration(lam, max_iter, tol)
    if not 0 < p < 1:
        raise AnalysisInputError(f"must lie strictly between 0 and 1, got {p}", field="p")
    if int(points_per_knot) != points_per_knot or not 1 <= points_per_knot <= axis.size // 4:
        raise AnalysisInputError(
            f"must be a whole number between 1 and {axis.size // 4}", field="points_per_knot"
        )

    basis = SplineBasis(axis.size, int(points_per_knot), float(lam), float(p))
    n_points = spectra.shape[0]
    baseline = np.empty_like(spectra)
    iterations = np.zeros(n_points, dtype=np.int64)
    converged = np.zeros(n_points, dtype=np.bool_)
    n_workers = max(1, min(os.cpu_count() or 1,
                           _MAX_THREADS if max_threads is None else max_threads))
    n_blocks = max(n_workers, -(-n_points // _BLOCK_SPECTRA)) if n_points >= 2 * _MIN_BLOCK else 1
    edges = np.linspace(0, n_points, n_blocks + 1).astype(int)
    blocks = [slice(a, b) for a, b in itertools.pairwise(edges) if b > a]

    def run(rows: slice) -> None:
        asls_spline_rows(
            spectra[rows], basis.pieces_t, basis.products_t, basis.fixed_bands,
            basis.ones_factor, basis.p,
            int(max_iter), float(tol), baseline[rows], iterations[rows], converged[rows],
        )

    if n_workers == 1 or len(blocks) == 1:
        for rows in blocks:
            run(rows)
    else:
        with ThreadPoolExecutor(max_workers=min(n_workers, len(blocks))) as pool:
            list(pool.map(run, blocks))
    return baseline, {"iterations": iterations.astype(int), "converged": converged}


# Spectra per block handed to a thread: several blocks per thread even out the load of a
# shared machine; a small map runs in one block (thread start-up would dominate).
_BLOCK_SPECTRA = 1000
_MIN_BLOCK = 256
_MAX_THREADS = 4
