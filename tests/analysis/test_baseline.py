"""Tests for qc.analysis.baseline against pybaselines (the reference implementation)."""

import numpy as np
import pytest
from pybaselines import Baseline
from scipy.interpolate import BSpline

from qc.analysis import baseline as bl
from qc.analysis import pspline_asls
from qc.analysis.bands import fit_band
from qc.analysis.errors import AnalysisInputError
from qc.analysis.qc_pipeline import analyse_qc_spectrum


def _lorentzian(x, x0, height, fwhm):
    return height / (1 + ((x - x0) / (fwhm / 2)) ** 2)


def _synthetic_map(n_points=60, n_shift=1024, seed=5):
    """Fluorescence-like sloped and curved backgrounds, Lorentzian bands, Poisson noise."""
    rng = np.random.default_rng(seed)
    x = np.linspace(300, 1800, n_shift)
    slope = rng.uniform(0.5, 1.5, (n_points, 1))
    hump = rng.uniform(0.5, 1.5, (n_points, 1))
    background = (
        2000 + 1500 * slope * (x - 300) / 1500 + 3000 * hump * np.exp(-(((x - 900) / 700) ** 2))
    )
    height = rng.uniform(400, 1500, (n_points, 1))
    bands = height * _lorentzian(x, 1075, 1, 12) + 800 * _lorentzian(x, 1580, 1, 14)
    counts = rng.poisson(background + bands).astype(float)
    return x, counts


def test_single_spectrum_wrappers_equal_pybaselines():
    x, counts = _synthetic_map(n_points=1)
    ours, _ = bl.asls_baseline(x, counts[0], lam=1e6, p=0.01)
    ref, _ = Baseline(x).asls(counts[0], lam=1e6, p=0.01)
    np.testing.assert_allclose(ours, ref)
    ours, _ = bl.arpls_baseline(x, counts[0], lam=1e5)
    ref, _ = Baseline(x).arpls(counts[0], lam=1e5)
    np.testing.assert_allclose(ours, ref)


def test_map_band_heights_agree_with_pybaselines_asls_within_2_percent():
    x, counts = _synthetic_map()
    corrected_map = counts - bl.asls_baseline_map(x, counts, lam=1e6, p=0.01)[0]
    fitter = Baseline(x)
    reference = np.array([row - fitter.asls(row, lam=1e6, p=0.01)[0] for row in counts])
    window = (x > 1060) & (x < 1090)
    ours = corrected_map[:, window].max(axis=1)
    ref = reference[:, window].max(axis=1)
    # brief: within 2 % of the per-spectrum pybaselines result
    assert np.max(np.abs(ours / ref - 1)) < 0.02


def _dense_pspline_asls(y, h, lam, p, max_iter=50, tol=1e-3):
    """Independent P-spline ASLS: scipy's B-spline design matrix (Eilers & Marx 1996) and a
    dense numpy solve per iteration, with pybaselines' reweighting and stopping rule
    (Eilers & Boelens 2005): w = p above the baseline, 1 − p elsewhere."""
    n = y.size
    n_intervals = -(-n // h)
    knots = np.arange(-3, n_intervals + 4, dtype=float)  # uniform cubic knots, interval units
    design = BSpline.design_matrix(np.arange(n) / h, knots, 3).toarray()
    d2 = np.diff(np.eye(n_intervals + 3), n=2, axis=0)
    penalty = lam / h**3 * d2.T @ d2
    weights = np.ones(n)
    for iteration in range(1, max_iter + 2):
        lhs = design.T @ (weights[:, None] * design) + penalty
        baseline = design @ np.linalg.solve(lhs, design.T @ (weights * y))
        new = np.where(y > baseline, p, 1 - p)
        if np.linalg.norm(new - weights) / np.linalg.norm(weights) < tol or iteration > max_iter:
            return baseline, iteration
        weights = new


@pytest.mark.parametrize("n_shift, h", [(1024, 16), (700, 16), (300, 12), (200, 5)])
def test_map_baselines_equal_an_independent_dense_pspline_asls(n_shift, h):
    # Same model, solved densely one spectrum at a time: baselines and iteration counts must
    # match. Covers a ragged last knot interval (700 = 43·16 + 12) and patterns that are
    # not whole bytes (h = 12, 5). The map code stores data and baseline in float32, so
    # agreement is to float32 rounding of counts of a few thousand.
    x, counts = _synthetic_map(n_points=5, n_shift=n_shift, seed=9)
    lam = 1e6 * (h / 16) ** 4  # a similar smoothness relative to the knot spacing
    ours, diag = bl.asls_baseline_map(x, counts, lam=lam, p=0.01, points_per_knot=h)
    for row, baseline, iterations in zip(counts, ours, diag["iterations"], strict=True):
        expected, expected_iterations = _dense_pspline_asls(row, h, lam, 0.01)
        np.testing.assert_allclose(baseline, expected, rtol=0, atol=0.05)
        assert iterations == expected_iterations
    assert diag["converged"].all()


def test_batched_banded_cholesky_matches_dense_solves():
    rng = np.random.default_rng(2)
    n_coef, n_cols = 12, 5
    dense = []
    bands = np.zeros((4, n_coef, n_cols))
    for col in range(n_cols):
        a = rng.normal(size=(n_coef, n_coef))
        a = np.triu(np.tril(a @ a.T, 3), -3) + 50 * np.eye(n_coef)  # SPD, half-bandwidth 3
        dense.append(a)
        for d in range(4):
            bands[d, : n_coef - d, col] = np.diagonal(a, -d)
    rhs = rng.normal(size=(n_coef, n_cols))
    expected = np.stack([np.linalg.solve(a, rhs[:, c]) for c, a in enumerate(dense)], axis=1)
    solved = pspline_asls.solve_banded_batch(bands, rhs.copy())
    np.testing.assert_allclose(solved, expected, rtol=1e-10)


def test_result_does_not_depend_on_blocks_or_threads(monkeypatch):
    x, counts = _synthetic_map(n_points=700, n_shift=256, seed=4)
    whole, diag = bl.asls_baseline_map(x, counts)
    monkeypatch.setattr(bl, "_BLOCK_SPECTRA", 100)
    monkeypatch.setattr(bl, "_MIN_BLOCK", 50)
    blocked, blocked_diag = bl.asls_baseline_map(x, counts)
    np.testing.assert_array_equal(blocked, whole)
    np.testing.assert_array_equal(blocked_diag["iterations"], diag["iterations"])


def test_flat_background_is_recovered():
    # A constant background with no bands: the baseline must be that constant (ASLS identity).
    x = np.linspace(0, 100, 200)
    counts = np.full((4, 200), 500.0)
    baseline, diag = bl.asls_baseline_map(x, counts)
    np.testing.assert_allclose(baseline, 500.0, rtol=1e-6)
    assert diag["converged"].all()


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"lam": 0}, "lam"),
        ({"p": 1.5}, "p"),
        ({"points_per_knot": 0}, "points_per_knot"),
        ({"max_iter": 0}, "max_iter"),
    ],
)
def test_bad_map_parameters_name_the_field(kwargs, field):
    x, counts = _synthetic_map(n_points=2, n_shift=100)
    with pytest.raises(AnalysisInputError) as err:
        bl.asls_baseline_map(x, counts, **kwargs)
    assert err.value.field == field


def test_shape_mismatch_is_refused():
    with pytest.raises(AnalysisInputError) as err:
        bl.asls_baseline_map(np.arange(10.0), np.ones((3, 12)))
    assert err.value.field == "intensity"


def test_compiled_map_path_agrees_with_pybaselines_per_spectrum_on_threaded_blocks(monkeypatch):
    # Enough spectra for several blocks on worker threads, so the compiled kernel runs as in a
    # full map; every spectrum's band height must stay within 2 % of pybaselines' asls
    # (Eilers & Boelens 2005; pybaselines, Erb, doi:10.5281/zenodo.5608581), the tolerance
    # of the test above, and one block on one thread must give the identical result.
    monkeypatch.setattr(bl, "_BLOCK_SPECTRA", 64)
    monkeypatch.setattr(bl, "_MIN_BLOCK", 32)
    x, counts = _synthetic_map(n_points=300, n_shift=512, seed=11)
    threaded, diag = bl.asls_baseline_map(x, counts, lam=1e6, p=0.01)
    assert diag["converged"].all()
    fitter = Baseline(x)
    window = (x > 1060) & (x < 1090)
    for row, baseline in zip(counts[::10], threaded[::10], strict=True):
        reference = row - fitter.asls(row, lam=1e6, p=0.01)[0]
        ours = (row - baseline)[window].max()
        assert abs(ours / reference[window].max() - 1) < 0.02
    monkeypatch.setattr(bl, "_MAX_THREADS", 1)
    single, _ = bl.asls_baseline_map(x, counts, lam=1e6, p=0.01)
    np.testing.assert_array_equal(single, threaded)


def _sampled(step_cm1):
    """One physical spectrum: strong narrow fluorescence (90 cm⁻¹ Gaussian, 10× the band)
    under a 10 cm⁻¹ Lorentzian band at 1073 cm⁻¹, sampled every ``step_cm1``."""
    x = np.arange(600.0, 1500.0 + 1e-9, step_cm1)
    background = 2000 + 30000 * np.exp(-(((x - 1000) / 90) ** 2))
    return x, background + 3000 / (1 + ((x - 1073.0) / 5.0) ** 2)


def test_baseline_stiffness_in_wavenumber_terms_does_not_depend_on_sampling():
    settings = dict(band_center_cm1=1073.0, band_window_cm1=60.0, power_mW=1.0,
                    integration_s=1.0)
    fine, coarse = (analyse_qc_spectrum(*_sampled(step), **settings).height_counts_per_mW_s
                    for step in (1.0, 2.5))
    assert coarse == pytest.approx(fine, rel=0.01)
    # The same λ per point on both axes (the old behaviour) differs by more: the check bites.
    heights = []
    for step in (1.0, 2.5):
        x, y = _sampled(step)
        corrected = y - bl.asls_baseline(x, y, lam=1e6, p=0.01)[0]
        heights.append(fit_band(x, corrected, band_center_cm1=1073.0, band_window_cm1=60.0).height)
    assert abs(heights[1] / heights[0] - 1) > 0.02


def test_lam_for_spacing_scales_with_the_fourth_power_of_the_step():
    # Second differences: λ·Δx⁴ fixed, so halving the step multiplies λ by 16.
    assert bl.lam_for_spacing(np.arange(0.0, 100.0, 0.5), 1.0) == pytest.approx(
        16 * bl.lam_for_spacing(np.arange(0.0, 100.0, 1.0), 1.0))
