"""The P-spline basis and the compiled kernel of :func:`qc.analysis.baseline.asls_baseline_map`.

Asymmetric least squares (Eilers & Boelens 2005) on a cubic B-spline basis with a
second-difference penalty (Eilers & Marx 1996): the per-map constants (:class:`SplineBasis`)
and, compiled with numba, a banded Cholesky factorisation and solve of half-bandwidth 3 and
the per-spectrum reweighting loop.  The method, its parameters and references are documented
on :func:`~qc.analysis.baseline.asls_baseline_map`, which validates the input and runs this
kernel on blocks of spectra.
"""

from __future__ import annotations

import numpy as np
from numba import njit

# Uniform cubic B-spline pieces on one knot interval, local coordinate u in [0, 1).
# Row a is the basis function that starts a knots before the interval (a = 0..3).
_CUBIC_PIECES = (
    lambda u: (1 - u) ** 3 / 6,
    lambda u: (3 * u**3 - 6 * u**2 + 4) / 6,
    lambda u: (-3 * u**3 + 3 * u**2 + 3 * u + 1) / 6,
    lambda u: u**3 / 6,
)
_PAIRS = tuple((a, b) for a in range(4) for b in range(a, 4))


class SplineBasis:
    """Per-map constants: basis values on one knot interval and the fixed bands."""

    def __init__(self, n_shift: int, h: int, lam: float, p: float):
        self.p = p
        n_intervals = -(-n_shift // h)
        n_coef = n_intervals + 3
        local = np.arange(h) / h
        pieces = np.stack([piece(local) for piece in _CUBIC_PIECES], axis=1)  # (h, 4)
        products = np.stack([pieces[:, a] * pieces[:, b] for a, b in _PAIRS], axis=1)
        real = np.arange(n_intervals * h).reshape(n_intervals, h) < n_shift
        gram_real = _scatter_gram(real.astype(float) @ products, n_coef)
        penalty = _second_difference_bands(n_coef, lam / h**3)
        self.pieces_t = np.ascontiguousarray(pieces.T)
        self.products_t = np.ascontiguousarray(products.T)
        self.fixed_bands = penalty + p * gram_real  # lower form: bands[d, j] = A[j + d, j]
        self.ones_factor = penalty + gram_real  # all weights 1, factorised below
        cholesky_banded(self.ones_factor)


def _scatter_gram(parts: np.ndarray, n_coef: int) -> np.ndarray:
    """Add per-interval products (n_intervals, 10) into lower bands (4, n_coef)."""
    n_intervals = parts.shape[0]
    bands = np.zeros((4, n_coef))
    for k, (a, b) in enumerate(_PAIRS):
        bands[b - a, a : a + n_intervals] += parts[:, k]
    return bands


def _second_difference_bands(n_coef: int, lam: float) -> np.ndarray:
    """Lower bands (diagonal, 1st, 2nd, 3rd sub-diagonal) of λ·DᵀD for second differences."""
    bands = np.zeros((4, n_coef))
    d = np.diff(np.eye(n_coef), n=2, axis=0)
    dtd = d.T @ d
    for offset in range(3):
        bands[offset, : n_coef - offset] = lam * np.diagonal(dtd, offset)
    return bands


def solve_banded_batch(bands: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve A α = r for many symmetric positive definite matrices of half-bandwidth 3.

    ``bands[d, j, s]`` (shape (4, n_coef, n)) holds ``A[j + d, j]`` of system ``s``; it is
    overwritten by the Cholesky factor ``L`` (same layout) and ``rhs`` (n_coef, n) by α,
    which is returned. Runs the compiled factorisation and solve the map kernel uses.
    """
    for s in range(rhs.shape[1]):
        factor = np.ascontiguousarray(bands[:, :, s])
        column = np.ascontiguousarray(rhs[:, s])
        cholesky_banded(factor)
        solve_factored(factor, column)
        bands[:, :, s], rhs[:, s] = factor, column
    return rhs


@njit(nogil=True, cache=True)
def cholesky_banded(bands):  # pragma: no cover - compiled
    """In place: lower bands (4, n_coef) of an SPD matrix → bands of its Cholesky factor.

    ``bands[e, j]`` = ``A[j + e, j]``, zero beyond the matrix. Column j of L needs only the
    three columns before it, kept in registers (``c1`` = column j − 1, ...).
    """
    c1_1 = c1_2 = c1_3 = c2_2 = c2_3 = c3_3 = 0.0  # c{f}_{x} = L[j − f + x, j − f]
    for j in range(bands.shape[1]):
        diagonal = np.sqrt(bands[0, j] - c1_1 * c1_1 - c2_2 * c2_2 - c3_3 * c3_3)
        inverse = 1.0 / diagonal
        l1 = (bands[1, j] - c1_2 * c1_1 - c2_3 * c2_2) * inverse
        l2 = (bands[2, j] - c1_3 * c1_1) * inverse
        l3 = bands[3, j] * inverse
        bands[0, j], bands[1, j], bands[2, j], bands[3, j] = diagonal, l1, l2, l3
        c3_3 = c2_3
        c2_2, c2_3 = c1_2, c1_3
        c1_1, c1_2, c1_3 = l1, l2, l3


@njit(nogil=True, cache=True)
def solve_factored(factor, rhs):  # pragma: no cover - compiled
    """In place: rhs → α with L Lᵀ α = rhs, L in lower-band form (4, n_coef), zero beyond."""
    n_coef = factor.shape[1]
    r1 = r2 = r3 = 0.0  # rhs[j − 1], rhs[j − 2], rhs[j − 3] (solved)
    for j in range(n_coef):
        value = rhs[j]
        if j >= 1:
            value -= factor[1, j - 1] * r1
        if j >= 2:
            value -= factor[2, j - 2] * r2
        if j >= 3:
            value -= factor[3, j - 3] * r3
        r3, r2, r1 = r2, r1, value / factor[0, j]
        rhs[j] = r1
    r1 = r2 = r3 = 0.0  # α[j + 1], α[j + 2], α[j + 3]
    for j in range(n_coef - 1, -1, -1):
        value = rhs[j] - factor[1, j] * r1 - factor[2, j] * r2 - factor[3, j] * r3
        r3, r2, r1 = r2, r1, value / factor[0, j]
        rhs[j] = r1


# Floating-point sums may be reassociated (and multiply-adds fused) so the sums over an
# interval's points vectorise; this changes results only by rounding.
_FAST = {"reassoc", "contract"}


@njit(nogil=True, cache=True, fastmath=_FAST)
def asls_spline_rows(
    spectra, pieces_t, products_t, fixed_bands, ones_factor, p, max_iter, tol, out, iterations,
    converged,
):  # pragma: no cover - compiled
    """ASLS on the P-spline basis for each row of ``spectra``, one spectrum at a time.

    ``pieces_t`` (4, h) holds the basis values on one knot interval, ``products_t`` (10, h)
    their pairwise products in the order of ``_PAIRS``.
    """
    n_rows, n_shift = spectra.shape
    h = pieces_t.shape[1]
    n_coef = fixed_bands.shape[1]
    low_weight = 1.0 - 2.0 * p
    alpha = np.empty(n_coef)
    fixed_rhs = np.empty(n_coef)
    low_rhs = np.empty(n_coef)
    bands = np.empty((4, n_coef))
    low_bands = np.empty((4, n_coef))
    y32 = np.empty(n_shift, dtype=np.float32)
    low = np.empty(n_shift)  # 1.0 where y ≤ z (weight 1 − p) in the last solve, else 0.0
    low_new = np.empty(n_shift)  # the same for the baseline just evaluated
    low_y = np.empty(n_shift)
    for row in range(n_rows):
        y = spectra[row]
        fitted = out[row]
        y32[:] = y
        fixed_rhs[:] = 0.0
        _add_basis_sums(fixed_rhs, y, pieces_t, n_shift)
        # Iteration 1 weighs every point 1: the shared, already factorised matrix.
        alpha[:] = fixed_rhs
        solve_factored(ones_factor, alpha)
        low[:] = 0.0
        n_low_old = 0.0
        done = False
        for iteration in range(1, max_iter + 2):
            n_low = 0.0
            flips = 0.0
            for k in range(n_coef - 3):
                a0, a1, a2, a3 = alpha[k], alpha[k + 1], alpha[k + 2], alpha[k + 3]
                start = k * h
                for t in range(min(h, n_shift - start)):
                    i = start + t
                    z = np.float32(a0 * pieces_t[0, t] + a1 * pieces_t[1, t]
                                   + a2 * pieces_t[2, t] + a3 * pieces_t[3, t])
                    fitted[i] = z
                    is_low = 1.0 if y32[i] <= z else 0.0
                    n_low += is_low
                    flips += abs(is_low - low[i])
                    low_new[i] = is_low
            # pybaselines' rule ‖w_new − w_old‖ / ‖w_old‖ < tol, from the two-valued weights
            if iteration == 1:  # the starting weights are all ones
                change = np.sqrt(
                    (n_shift - n_low) * (1 - p) ** 2 + n_low * p**2
                ) / np.sqrt(n_shift)
            else:
                old_norm = np.sqrt(p**2 * (n_shift - n_low_old) + (1 - p) ** 2 * n_low_old)
                change = abs(low_weight) * np.sqrt(flips) / old_norm
            iterations[row] = iteration
            if change < tol:
                done = True
                break
            if iteration > max_iter:
                break
            # BᵀWB and BᵀWy with W = p + (1 − 2p)·[y ≤ z]: fixed part plus low-point sums,
            # summed afresh while many points change side, then updated at those that do.
            if iteration == 1 or 8 * flips > n_shift:
                low_bands[:, :] = 0.0
                low_rhs[:] = 0.0
                for i in range(n_shift):
                    low_y[i] = low_new[i] * y[i]
                _add_product_sums(low_bands, low_new, products_t, n_shift)
                _add_basis_sums(low_rhs, low_y, pieces_t, n_shift)
            else:
                for i in range(n_shift):
                    if low_new[i] != low[i]:
                        _add_point(low_bands, low_rhs, products_t, pieces_t, i // h, i % h,
                                   low_new[i] - low[i], y[i])
            low, low_new = low_new, low
            for j in range(n_coef):
                alpha[j] = p * fixed_rhs[j] + low_weight * low_rhs[j]
                for d in range(4):
                    bands[d, j] = fixed_bands[d, j] + low_weight * low_bands[d, j]
            cholesky_banded(bands)
            solve_factored(bands, alpha)
            n_low_old = n_low
        # The baseline is the last evaluation: of the weights before they stopped changing.
        converged[row] = done


@njit(nogil=True, cache=True, inline="always")
def _add_point(bands, rhs, products_t, pieces_t, k, t, sign, y):  # pragma: no cover - compiled
    """Add ``sign`` (±1) × point t of interval k to the sums of the two functions below."""
    bands[0, k] += sign * products_t[0, t]
    bands[1, k] += sign * products_t[1, t]
    bands[2, k] += sign * products_t[2, t]
    bands[3, k] += sign * products_t[3, t]
    bands[0, k + 1] += sign * products_t[4, t]
    bands[1, k + 1] += sign * products_t[5, t]
    bands[2, k + 1] += sign * products_t[6, t]
    bands[0, k + 2] += sign * products_t[7, t]
    bands[1, k + 2] += sign * products_t[8, t]
    bands[0, k + 3] += sign * products_t[9, t]
    for a in range(4):
        rhs[k + a] += sign * y * pieces_t[a, t]


@njit(nogil=True, cache=True, fastmath=_FAST, inline="always")
def _add_basis_sums(target, values, pieces_t, n_shift):  # pragma: no cover - compiled
    """``target`` (n_coef,) += Bᵀ·values, summed knot interval by knot interval."""
    h = pieces_t.shape[1]
    for k in range(-(-n_shift // h)):
        start = k * h
        s0 = s1 = s2 = s3 = 0.0  # separate sums run in parallel in the processor
        for t in range(min(h, n_shift - start)):
            v = values[start + t]
            s0 += v * pieces_t[0, t]
            s1 += v * pieces_t[1, t]
            s2 += v * pieces_t[2, t]
            s3 += v * pieces_t[3, t]
        target[k] += s0
        target[k + 1] += s1
        target[k + 2] += s2
        target[k + 3] += s3


@njit(nogil=True, cache=True, fastmath=_FAST, inline="always")
def _add_product_sums(bands, values, products_t, n_shift):  # pragma: no cover - compiled
    """Lower bands (4, n_coef) += those of Bᵀ·diag(values)·B, interval by interval.

    Row q of ``products_t`` is the product of basis values a and b of ``_PAIRS[q]``; it
    lands in band b − a at column k + a (written out below so the ten sums stay in
    registers).
    """
    h = products_t.shape[1]
    for k in range(-(-n_shift // h)):
        start = k * h
        s0 = s1 = s2 = s3 = s4 = s5 = s6 = s7 = s8 = s9 = 0.0
        for t in range(min(h, n_shift - start)):
            v = values[start + t]
            s0 += v * products_t[0, t]
            s1 += v * products_t[1, t]
            s2 += v * products_t[2, t]
            s3 += v * products_t[3, t]
            s4 += v * products_t[4, t]
            s5 += v * products_t[5, t]
            s6 += v * products_t[6, t]
            s7 += v * products_t[7, t]
            s8 += v * products_t[8, t]
            s9 += v * products_t[9, t]
        # _PAIRS: (0,0) (0,1) (0,2) (0,3) (1,1) (1,2) (1,3) (2,2) (2,3) (3,3)
        bands[0, k] += s0
        bands[1, k] += s1
        bands[2, k] += s2
        bands[3, k] += s3
        bands[0, k + 1] += s4
        bands[1, k + 1] += s5
        bands[2, k + 1] += s6
        bands[0, k + 2] += s7
        bands[1, k + 2] += s8
        bands[0, k + 3] += s9
