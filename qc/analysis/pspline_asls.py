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
    overwritten by the Cholesky factor ``L`` (same layout, the diagonal as ``1 / L[j, j]``)
    and ``rhs`` (n_coef, n) by α, which is returned. Runs the compiled factorisation and
    solve the map kernel uses.
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
    """In place: lower bands (4, n_coef) of an SPD matrix → bands of its Cholesky factor,
    the diagonal stored as ``1 / L[j, j]`` (the solves multiply: a division is the slowest
    step on their serial chain).

    ``bands[e, j]`` = ``A[j + e, j]``, zero beyond the matrix. Column j of L needs only the
    three columns before it, kept in registers (``c1`` = column j − 1, ...).
    """
    c1_1 = c1_2 = c1_3 = c2_2 = c2_3 = c3_3 = 0.0  # c{f}_{x} = L[j − f + x, j − f]
    for j in range(bands.shape[1]):
        inverse = 1.0 / np.sqrt(bands[0, j] - c1_1 * c1_1 - c2_2 * c2_2 - c3_3 * c3_3)
        l1 = (bands[1, j] - c1_2 * c1_1 - c2_3 * c2_2) * inverse
        l2 = (bands[2, j] - c1_3 * c1_1) * inverse
        l3 = bands[3, j] * inverse
        bands[0, j], bands[1, j], bands[2, j], bands[3, j] = inverse, l1, l2, l3
        c3_3 = c2_3
        c2_2, c2_3 = c1_2, c1_3
        c1_1, c1_2, c1_3 = l1, l2, l3


@njit(nogil=True, cache=True)
def solve_factored(factor, rhs):  # pragma: no cover - compiled
    """In place: rhs → α with L Lᵀ α = rhs, L as :func:`cholesky_banded` leaves it."""
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
        r3, r2, r1 = r2, r1, value * factor[0, j]
        rhs[j] = r1
    r1 = r2 = r3 = 0.0  # α[j + 1], α[j + 2], α[j + 3]
    for j in range(n_coef - 1, -1, -1):
        value = rhs[j] - factor[1, j] * r1 - factor[2, j] * r2 - factor[3, j] * r3
        r3, r2, r1 = r2, r1, value * factor[0, j]
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
    their pairwise products in the order of ``_PAIRS``.  Each spectrum is laid out as
    (h, n_intervals), point ``t`` of every knot interval in one row, so the evaluation of
    the baseline and the sums over the points run along contiguous rows of intervals and
    vectorise (along the spectrum, the 16-point intervals did not); the padding after the
    last real point is +inf in the data, so it is never low and never counted.
    """
    n_rows, n_shift = spectra.shape
    h = pieces_t.shape[1]
    n_coef = fixed_bands.shape[1]
    n_intervals = n_coef - 3
    low_weight = 1.0 - 2.0 * p
    alpha = np.empty(n_coef)
    fixed_rhs = np.empty(n_coef)
    low_rhs = np.empty(n_coef)
    bands = np.empty((4, n_coef))
    low_bands = np.empty((4, n_coef))
    y_t = np.empty((h, n_intervals))
    y32_t = np.empty((h, n_intervals), dtype=np.float32)
    z_t = np.empty((h, n_intervals), dtype=np.float32)
    low = np.empty((h, n_intervals))  # 1.0 where y ≤ z (weight 1 − p) in the last solve
    low_new = np.empty((h, n_intervals))  # the same for the baseline just evaluated
    product_sums = np.empty((10, n_intervals))
    basis_sums = np.empty((4, n_intervals))
    for row in range(n_rows):
        _to_intervals(spectra[row], y_t, y32_t)
        fixed_rhs[:] = 0.0
        _add_basis_sums(fixed_rhs, basis_sums, y_t, pieces_t)
        # Iteration 1 weighs every point 1: the shared, already factorised matrix.
        alpha[:] = fixed_rhs
        solve_factored(ones_factor, alpha)
        low[:, :] = 0.0
        n_low_old = 0.0
        done = False
        for iteration in range(1, max_iter + 2):
            _evaluate(alpha, pieces_t, y32_t, z_t, low_new)
            n_low = 0.0
            flips = 0.0
            for t in range(h):
                for k in range(n_intervals):
                    n_low += low_new[t, k]
                    flips += abs(low_new[t, k] - low[t, k])
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
                _low_sums(low_bands, low_rhs, product_sums, basis_sums, low_new, y_t,
                          products_t, pieces_t)
            else:
                for t in range(h):
                    for k in range(n_intervals):
                        if low_new[t, k] != low[t, k]:
                            _add_point(low_bands, low_rhs, products_t, pieces_t, k, t,
                                       low_new[t, k] - low[t, k], y_t[t, k])
            low, low_new = low_new, low
            for j in range(n_coef):
                alpha[j] = p * fixed_rhs[j] + low_weight * low_rhs[j]
                for d in range(4):
                    bands[d, j] = fixed_bands[d, j] + low_weight * low_bands[d, j]
            cholesky_banded(bands)
            solve_factored(bands, alpha)
            n_low_old = n_low
        # The baseline is the last evaluation: of the weights before they stopped changing.
        fitted = out[row]
        for k in range(n_intervals):
            for t in range(min(h, n_shift - k * h)):
                fitted[k * h + t] = z_t[t, k]
        converged[row] = done


@njit(nogil=True, cache=True)
def _to_intervals(y, y_t, y32_t):  # pragma: no cover - compiled
    """Spectrum → (h, n_intervals) layouts in float64 and float32, padded with 0 and +inf."""
    h, n_intervals = y_t.shape
    for k in range(n_intervals):
        for t in range(h):
            i = k * h + t
            if i < y.size:
                y_t[t, k] = y[i]
                y32_t[t, k] = y[i]
            else:
                y_t[t, k] = 0.0
                y32_t[t, k] = np.inf


@njit(nogil=True, cache=True, fastmath=_FAST)
def _evaluate(alpha, pieces_t, y32_t, z_t, low_new):  # pragma: no cover - compiled
    """Baseline z = B·α rounded to float32, and 1.0 where the data lie on or below it."""
    h, n_intervals = z_t.shape
    for t in range(h):
        q0, q1, q2, q3 = pieces_t[0, t], pieces_t[1, t], pieces_t[2, t], pieces_t[3, t]
        for k in range(n_intervals):
            z = np.float32(alpha[k] * q0 + alpha[k + 1] * q1 + alpha[k + 2] * q2
                           + alpha[k + 3] * q3)
            z_t[t, k] = z
            low_new[t, k] = 1.0 if y32_t[t, k] <= z else 0.0


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


@njit(nogil=True, cache=True, fastmath=_FAST)
def _add_basis_sums(target, sums, values_t, pieces_t):  # pragma: no cover - compiled
    """``target`` (n_coef,) += Bᵀ·values, from values in the (h, n_intervals) layout;
    ``sums`` (4, n_intervals) is scratch."""
    h, n_intervals = values_t.shape
    sums[:, :] = 0.0
    for t in range(h):
        q0, q1, q2, q3 = pieces_t[0, t], pieces_t[1, t], pieces_t[2, t], pieces_t[3, t]
        for k in range(n_intervals):
            v = values_t[t, k]
            sums[0, k] += v * q0
            sums[1, k] += v * q1
            sums[2, k] += v * q2
            sums[3, k] += v * q3
    for k in range(n_intervals):
        for a in range(4):
            target[k + a] += sums[a, k]


@njit(nogil=True, cache=True, fastmath=_FAST)
def _low_sums(
    bands, rhs, product_sums, basis_sums, low, y_t, products_t, pieces_t,
):  # pragma: no cover - compiled
    """``bands`` (lower, (4, n_coef)) = those of Bᵀ·diag(low)·B and ``rhs`` = Bᵀ·(low·y),
    from the (h, n_intervals) layout; ``product_sums`` and ``basis_sums`` are scratch.

    Row q of ``products_t`` is the product of basis values a and b of ``_PAIRS[q]``; it
    lands in band b − a at column k + a (written out below).
    """
    h, n_intervals = low.shape
    product_sums[:, :] = 0.0
    basis_sums[:, :] = 0.0
    for t in range(h):
        c0, c1, c2, c3, c4 = (products_t[0, t], products_t[1, t], products_t[2, t],
                              products_t[3, t], products_t[4, t])
        c5, c6, c7, c8, c9 = (products_t[5, t], products_t[6, t], products_t[7, t],
                              products_t[8, t], products_t[9, t])
        q0, q1, q2, q3 = pieces_t[0, t], pieces_t[1, t], pieces_t[2, t], pieces_t[3, t]
        for k in range(n_intervals):
            w = low[t, k]
            wy = w * y_t[t, k]
            product_sums[0, k] += w * c0
            product_sums[1, k] += w * c1
            product_sums[2, k] += w * c2
            product_sums[3, k] += w * c3
            product_sums[4, k] += w * c4
            product_sums[5, k] += w * c5
            product_sums[6, k] += w * c6
            product_sums[7, k] += w * c7
            product_sums[8, k] += w * c8
            product_sums[9, k] += w * c9
            basis_sums[0, k] += wy * q0
            basis_sums[1, k] += wy * q1
            basis_sums[2, k] += wy * q2
            basis_sums[3, k] += wy * q3
    bands[:, :] = 0.0
    rhs[:] = 0.0
    # _PAIRS: (0,0) (0,1) (0,2) (0,3) (1,1) (1,2) (1,3) (2,2) (2,3) (3,3)
    for k in range(n_intervals):
        bands[0, k] += product_sums[0, k]
        bands[1, k] += product_sums[1, k]
        bands[2, k] += product_sums[2, k]
        bands[3, k] += product_sums[3, k]
        bands[0, k + 1] += product_sums[4, k]
        bands[1, k + 1] += product_sums[5, k]
        bands[2, k + 1] += product_sums[6, k]
        bands[0, k + 2] += product_sums[7, k]
        bands[1, k + 2] += product_sums[8, k]
        bands[0, k + 3] += product_sums[9, k]
        for a in range(4):
            rhs[k + a] += basis_sums[a, k]
