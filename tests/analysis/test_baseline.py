"""Tests for qc.analysis.baseline against pybaselines (the reference implementation)."""

import numpy as np
import pytest
from pybaselines import Baseline
from scipy.interpolate import BSpline

from qc.analysis import baseline as bl
from qc.analysis.errors import AnalysisInputError


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


def test_spline_solve_matches_dense_penalised_spline_solution():
    # Independent check of the batched banded solve: build the same P-spline system with
    # scipy's B-spline design matrix (Eilers & Marx 1996) and solve it densely with numpy.
    rng = np.random.default_rng(2)
    h, n_intervals, n_cols = 4, 10, 3
    padded = h * n_intervals
    y = rng.normal(100, 10, (padded, n_cols))
    w = rng.uniform(0.01, 1, (padded, n_cols))
    lam_s = 50.0
    local = np.arange(h) / h
    pieces = np.stack([f(local) for f in bl._CUBIC_PIECES], axis=1)
    products = np.stack([pieces[:, a] * pieces[:, b] for a, b in bl._PAIRS], axis=1)
    penalty = bl._second_difference_bands(n_intervals + 3, lam_s)
    work = bl._SplineWorkspace(n_intervals, h, n_cols)
    coef = bl._solve_spline_system(w, w * y, pieces, products, penalty, work).copy()

    knots = np.arange(-3, n_intervals + 4, dtype=float)  # uniform cubic knots in interval units
    design = BSpline.design_matrix(np.arange(padded) / h, knots, 3).toarray()
    d2 = np.diff(np.eye(n_intervals + 3), n=2, axis=0)
    for col in range(n_cols):
        lhs = design.T @ (w[:, col, None] * design) + lam_s * d2.T @ d2
        expected = np.linalg.solve(lhs, design.T @ (w[:, col] * y[:, col]))
        np.testing.assert_allclose(coef[:, col], expected, rtol=1e-9, atol=1e-9)


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
