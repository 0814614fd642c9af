"""Baseline (fluorescence background) correction for Raman spectra and maps.

Single spectra go through pybaselines, the project's reference implementation of the
asymmetric least squares family. Maps use :func:`asls_baseline_map`, the same asymmetric
weighting on a penalised B-spline (P-spline) basis, solved for every spectrum at once.
"""

from __future__ import annotations

import itertools
import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
from pybaselines import Baseline
from scipy.linalg import solveh_banded
from threadpoolctl import threadpool_limits

from ._validation import (
    all_finite,
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_positive,
)
from .errors import AnalysisInputError

# Uniform cubic B-spline pieces on one knot interval, local coordinate u in [0, 1).
# Row a is the basis function that starts a knots before the interval (a = 0..3).
_CUBIC_PIECES = (
    lambda u: (1 - u) ** 3 / 6,
    lambda u: (3 * u**3 - 6 * u**2 + 4) / 6,
    lambda u: (-3 * u**3 + 3 * u**2 + 3 * u + 1) / 6,
    lambda u: u**3 / 6,
)
_PAIRS = tuple((a, b) for a in range(4) for b in range(a, 4))


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
    baseline, params = Baseline(axis).asls(
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
    baseline, params = Baseline(axis).arpls(
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

    Returns
    -------
    baseline : numpy.ndarray, shape (n_points, n_shift)
        Baselines (counts).
    diagnostics : dict
        ``iterations`` (per spectrum) and ``converged`` (bool per spectrum).

    Notes
    -----
    Why a spline basis: a point-by-point (Whittaker) system has ``n_shift`` unknowns per
    spectrum; with knots every ``h`` points the unknowns drop ``h``-fold. Because the knots
    are uniform in point index, every knot interval holds the same ``h`` basis values, and
    the work per reweighting is done for all spectra at once:

    * the weights take two values, ``w = p + (1 − 2p)·[y ≤ z]``, so ``BᵀWB`` is a fixed
      part plus, per interval, a sum over its low points — looked up from tables indexed by
      the bit pattern of those points (one table per byte of the pattern);
    * ``BᵀWy`` is ``p·Bᵀy`` (fixed) plus one matrix product over the low points;
    * the first iteration (all weights 1) shares one matrix across spectra: one LAPACK
      banded solve with many right-hand sides (``scipy.linalg.solveh_banded``);
    * later systems (half-bandwidth 3) are factorised by a banded Cholesky that runs down
      the coefficients once, vectorised across spectra;
    * data, baseline and comparisons are float32 (counts need no more; the relative
      rounding, 6·10⁻⁸, only decides points lying on the baseline), the normal equations
      and their solution float64; BLAS runs single-threaded inside (threadpoolctl) while
      blocks of spectra run on up to four threads, since numpy releases the GIL.

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
    spectra = np.asarray(intensity, dtype=float)
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

    basis = _SplineBasis(axis.size, int(points_per_knot), float(lam), float(p))
    n_points = spectra.shape[0]
    baseline = np.empty_like(spectra)
    iterations = np.zeros(n_points, dtype=int)
    converged = np.zeros(n_points, dtype=bool)
    n_workers = max(1, min(os.cpu_count() or 1, _MAX_THREADS))
    n_blocks = max(n_workers, -(-n_points // _BLOCK_SPECTRA)) if n_points >= 2 * _MIN_BLOCK else 1
    edges = np.linspace(0, n_points, n_blocks + 1).astype(int)
    blocks = [slice(a, b) for a, b in itertools.pairwise(edges) if b > a]

    def run(rows: slice) -> None:
        iterations[rows], converged[rows] = _asls_spline_block(
            spectra[rows], basis, max_iter, tol, out=baseline[rows]
        )

    with threadpool_limits(limits=1, user_api="blas"):
        if n_workers == 1 or len(blocks) == 1:
            for rows in blocks:
                run(rows)
        else:
            with ThreadPoolExecutor(max_workers=min(n_workers, len(blocks))) as pool:
                list(pool.map(run, blocks))
    return baseline, {"iterations": iterations, "converged": converged}


# Spectra solved together: large blocks keep the per-call cost of the vectorised Cholesky
# (a few thousand numpy calls per solve) small; one block per thread for a 10⁴ map.
_BLOCK_SPECTRA = 5000
_MIN_BLOCK = 256
_MAX_THREADS = 4
# A padding point compares above any baseline, so it never joins the low (weight 1 − p) set.
_PAD = np.float32(np.finfo(np.float32).max)
_POPCOUNT = np.array([v.bit_count() for v in range(256)], dtype=np.uint8)


class _SplineBasis:
    """Per-map constants: basis values on one knot interval, lookup tables, fixed bands."""

    def __init__(self, n_shift: int, h: int, lam: float, p: float):
        self.n_shift, self.h, self.p = n_shift, h, p
        self.n_intervals = -(-n_shift // h)
        self.n_coef = self.n_intervals + 3
        local = np.arange(h) / h
        pieces = np.stack([piece(local) for piece in _CUBIC_PIECES], axis=1)  # (h, 4)
        products = np.stack([pieces[:, a] * pieces[:, b] for a, b in _PAIRS], axis=1)
        real = np.arange(self.n_intervals * h).reshape(self.n_intervals, h) < n_shift
        gram_real = _scatter_gram(real.astype(float) @ products, self.n_coef)
        penalty = _second_difference_bands(self.n_coef, lam / h**3)
        self.all_ones_bands = penalty + gram_real  # lower form: bands[d, j] = A[j + d, j]
        self.fixed_bands = penalty + p * gram_real
        self.pieces = pieces
        self.pieces32 = pieces.astype(np.float32)
        self.pieces_t32 = np.ascontiguousarray(pieces.T, dtype=np.float32)
        self.low_pieces32 = ((1 - 2 * p) * pieces).astype(np.float32)
        n_bytes = -(-h // 8)
        padded = np.zeros((8 * n_bytes, len(_PAIRS)))
        padded[:h] = products
        bits = np.unpackbits(np.arange(256, dtype=np.uint8)[:, None], axis=1).astype(float)
        self.tables = [
            np.ascontiguousarray(((1 - 2 * p) * bits @ padded[8 * g : 8 * g + 8]).T)
            for g in range(n_bytes)
        ]


def _scatter_gram(parts: np.ndarray, n_coef: int) -> np.ndarray:
    """Add per-interval products (n_intervals, 10, ...) into lower bands (4, n_coef, ...)."""
    n_intervals = parts.shape[0]
    bands = np.zeros((4, n_coef) + parts.shape[2:])
    for k, (a, b) in enumerate(_PAIRS):
        bands[b - a, a : a + n_intervals] += parts[:, k]
    return bands


def _asls_spline_block(spectra, basis, max_iter, tol, out):
    """ASLS iterations for one block of spectra (rows), all solved together, into ``out``."""
    n, n_shift = spectra.shape
    h, n_int, p = basis.h, basis.n_intervals, basis.p
    work = _Workspace(n, basis)
    y, parts, parts_t = work.y, work.parts, work.parts_t
    y[:, :n_shift] = spectra
    y[:, n_shift:] = 0.0
    # Iteration 1 weighs every point 1, so all spectra share one matrix: one LAPACK call.
    np.matmul(y.reshape(n, n_int, h), basis.pieces32, out=parts)
    fixed_rhs = _scatter_rhs(parts, parts_t)
    alpha = solveh_banded(basis.all_ones_bands, fixed_rhs, lower=True)
    fixed_rhs *= p
    y[:, n_shift:] = _PAD
    result = out
    iterations = np.zeros(n, dtype=int)
    converged = np.zeros(n, dtype=bool)
    active = np.arange(n)  # block rows still iterating, in the order of the work arrays
    done = np.zeros(n, dtype=bool)  # converged, among the active rows
    packed_old = n_low_old = None  # the pattern the last solve was weighted with
    for iteration in range(1, max_iter + 2):
        y3, fitted, low = work.y3, work.fitted, work.low
        _evaluate(alpha, basis.pieces_t32, fitted, work.coef, work.windows)
        np.less_equal(y3, fitted, out=low)
        packed = _pack_intervals(low)
        m = active.size
        n_low = _POPCOUNT[packed.reshape(m, -1)].sum(axis=1, dtype=np.int64)
        if iteration == 1:  # the starting weights are all ones
            change = np.sqrt((n_shift - n_low) * (1 - p) ** 2 + n_low * p**2) / np.sqrt(n_shift)
        else:
            flips = _POPCOUNT[(packed ^ packed_old).reshape(m, -1)].sum(axis=1, dtype=np.int64)
            old_norm = np.sqrt(p**2 * (n_shift - n_low_old) + (1 - p) ** 2 * n_low_old)
            change = abs(1 - 2 * p) * np.sqrt(flips) / old_norm
        iterations[active[~done]] = iteration
        done |= change < tol
        if done.all() or iteration > max_iter:
            break
        if np.count_nonzero(done) * 4 >= m:
            # A quarter or more have converged: store their baselines (solved with the last
            # weights before these stopped changing) and go on with the others only.
            result[active[done]] = fitted.reshape(m, -1)[done, :n_shift]
            converged[active[done]] = True
            keep = ~done
            alpha, fixed_rhs = alpha[:, keep], fixed_rhs[:, keep]
            packed, n_low = packed[keep], n_low[keep]
            work.compact(keep)
            active, done = active[keep], done[keep]
            m = active.size
            y3, low = work.y3, work.low
        bands, rhs, low_y = work.bands, work.rhs, work.low_y
        # BᵀWB with W = p + (1 − 2p)·[y ≤ z]: fixed part plus table look-ups of each byte
        # of an interval's low-point pattern; BᵀWy likewise, the low part as one product.
        bands[:] = basis.fixed_bands[:, :, None]
        for g, table in enumerate(basis.tables):
            np.copyto(work.index, packed[:, :, g].T)
            for k, (a, b) in enumerate(_PAIRS):
                np.take(table[k], work.index, out=work.gathered)
                bands[b - a, a : a + n_int] += work.gathered
        np.multiply(y3, low, out=low_y)
        np.matmul(low_y, basis.low_pieces32, out=work.parts)
        np.add(fixed_rhs, _scatter_rhs(work.parts, work.parts_t), out=rhs)
        _solve_banded_batch(bands, rhs)
        # A converged spectrum keeps its coefficients, so its baseline stays the one solved
        # with the last weights before they stopped changing.
        np.copyto(alpha, rhs, where=~done[None, :])
        packed_old, n_low_old = packed, n_low
    # The last evaluation is of the final coefficients (the loop leaves before solving).
    result[active] = work.fitted.reshape(active.size, -1)[:, :n_shift]
    converged[active] = done
    return iterations, converged


class _Workspace:
    """Work arrays of one block; ``compact`` keeps the rows still iterating, in front."""

    def __init__(self, n: int, basis: _SplineBasis):
        n_int, h, n_coef = basis.n_intervals, basis.h, basis.n_coef
        # shape per spectrum, dtype, and whether spectra run along the last axis
        self._layout = {
            "y": ((n_int, h), np.float32, False),
            "fitted": ((n_int, h), np.float32, False),
            "low_y": ((n_int, h), np.float32, False),
            "low": ((n_int, h), bool, False),
            "coef": ((n_coef,), np.float32, False),
            "windows": ((n_int, 4), np.float32, False),
            "parts": ((n_int, 4), np.float32, False),
            "parts_t": ((4, n_int), np.float32, True),
            "bands": ((4, n_coef), float, True),
            "rhs": ((n_coef,), float, True),
            "index": ((n_int,), np.intp, True),
            "gathered": ((n_int,), float, True),
        }
        self._flat = {
            name: np.empty(n * int(np.prod(shape)), dtype=dtype)
            for name, (shape, dtype, _) in self._layout.items()
        }
        self._resize(n)

    def _resize(self, n: int) -> None:
        for name, (shape, _, last) in self._layout.items():
            size = n * int(np.prod(shape))
            full = shape + (n,) if last else (n,) + shape
            setattr(self, name, self._flat[name][:size].reshape(full))
        self.y3 = self.y
        self.y = self.y.reshape(n, -1)

    def compact(self, keep: np.ndarray) -> None:
        """Move the kept rows of the data to the front and shrink every view."""
        data, low = self.y3[keep], self.low[keep]
        self._resize(int(np.count_nonzero(keep)))
        self.y3[:], self.low[:] = data, low


def _pack_intervals(low: np.ndarray) -> np.ndarray:
    """Bit patterns of each knot interval's low points, (n, n_intervals, bytes) uint8."""
    n, n_int, h = low.shape
    if h % 8 == 0:  # whole bytes per interval: pack the flat array (much faster)
        return np.packbits(low.reshape(-1)).reshape(n, n_int, h // 8)
    return np.packbits(low, axis=-1)


def _scatter_rhs(parts: np.ndarray, parts_t: np.ndarray) -> np.ndarray:
    """Per-interval sums (n, n_intervals, 4) → right-hand sides (n_coef, n), float64."""
    n, n_int, _ = parts.shape
    np.copyto(parts_t, parts.transpose(2, 1, 0))
    rhs = np.zeros((n_int + 3, n))
    for a in range(4):
        rhs[a : a + n_int] += parts_t[a]
    return rhs


def _evaluate(alpha, pieces_t, out, coef, windows) -> None:
    """z[s, i, t] = Σ_a α[i + a, s] · piece_a(t), as one matrix product."""
    n_coef, n = alpha.shape
    n_int = n_coef - 3
    np.copyto(coef, alpha.T)
    for a in range(4):
        windows[:, :, a] = coef[:, a : a + n_int]
    np.matmul(windows.reshape(n * n_int, 4), pieces_t, out=out.reshape(n * n_int, -1))


def _second_difference_bands(n_coef: int, lam: float) -> np.ndarray:
    """Lower bands (diagonal, 1st, 2nd, 3rd sub-diagonal) of λ·DᵀD for second differences."""
    bands = np.zeros((4, n_coef))
    d = np.diff(np.eye(n_coef), n=2, axis=0)
    dtd = d.T @ d
    for offset in range(3):
        bands[offset, : n_coef - offset] = lam * np.diagonal(dtd, offset)
    return bands


def _solve_banded_batch(bands: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve A α = r for many symmetric positive definite matrices of half-bandwidth 3.

    ``bands[d, j]`` (shape (4, n_coef, n)) holds ``A[j + d, j]`` for every column; it is
    overwritten by the Cholesky factor ``L`` (same layout) and ``rhs`` (n_coef, n) by α,
    which is returned. Each step is a numpy operation on a vector over all spectra.
    """
    n_coef = bands.shape[1]
    for j in range(n_coef):
        for f in range(1, min(j, 3) + 1):
            bands[0, j] -= bands[f, j - f] ** 2
        np.sqrt(bands[0, j], out=bands[0, j])
        for e in range(1, min(3, n_coef - 1 - j) + 1):
            for f in range(1, min(j, 3 - e) + 1):
                bands[e, j] -= bands[e + f, j - f] * bands[f, j - f]
            bands[e, j] /= bands[0, j]
    for j in range(n_coef):
        for f in range(1, min(j, 3) + 1):
            rhs[j] -= bands[f, j - f] * rhs[j - f]
        rhs[j] /= bands[0, j]
    for j in range(n_coef - 1, -1, -1):
        for e in range(1, min(3, n_coef - 1 - j) + 1):
            rhs[j] -= bands[e, j] * rhs[j + e]
        rhs[j] /= bands[0, j]
    return rhs
