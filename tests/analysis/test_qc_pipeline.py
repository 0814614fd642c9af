"""Tests for qc.analysis.qc_pipeline on seeded synthetic spectra and maps."""

import numpy as np
import pytest
from pybaselines import Baseline

from qc.analysis import qc_pipeline
from qc.analysis.bands import band_metrics_map, lorentzian
from qc.analysis.baseline import lam_for_spacing
from qc.analysis.errors import AnalysisInputError
from qc.analysis.qc_pipeline import analyse_qc_map, analyse_qc_spectrum

POWER_mW, TIME_s = 2.0, 5.0


def _background(x, rng, n):
    slope = rng.uniform(0.6, 1.4, (n, 1))
    return 3000 + 2000 * slope * (x - 400) / 1300 + 4000 * np.exp(-(((x - 900) / 600) ** 2))


def _map(n_points=64, seed=3, rsd=0.10):
    rng = np.random.default_rng(seed)
    x = np.linspace(400, 1700, 700)
    heights = 4000 * (1 + rsd * rng.standard_normal(n_points))
    clean = _background(x, rng, n_points) + heights[:, None] * lorentzian(x, 1075.0, 1.0, 12.0)
    counts = rng.poisson(clean).astype(float)
    counts[5, 200] += 20000  # one cosmic ray
    return x, counts, heights


def test_spectrum_pipeline_recovers_normalised_planted_band():
    rng = np.random.default_rng(1)
    x = np.linspace(400, 1700, 700)
    h, fwhm = 3000.0, 12.0
    counts = rng.poisson(_background(x, rng, 1)[0] + lorentzian(x, 1075.0, h, fwhm)).astype(float)
    counts[300] += 15000
    result = analyse_qc_spectrum(
        x, counts, band_center_cm1=1075, band_window_cm1=80, power_mW=POWER_mW, integration_s=TIME_s
    )
    assert result.spikes_removed >= 1
    # normalised height = counts / (P·t) = 3000 / 10 = 300 counts/(mW·s); ASLS under a band
    # removes a little of its wings, so allow 5 %
    assert result.height_counts_per_mW_s == pytest.approx(h / (POWER_mW * TIME_s), rel=0.05)
    assert result.position_cm1 == pytest.approx(1075.0, abs=0.3)
    # FWHM within 4 fit standard errors of the planted width
    assert abs(result.fwhm_cm1 - fwhm) < 4 * result.band.fwhm_se_cm1
    assert result.snr > 20


def test_map_pipeline_uniformity_and_spikes():
    x, counts, heights = _map()
    result = analyse_qc_map(
        x,
        counts,
        band_center_cm1=1075,
        band_window_cm1=60,
        power_mW=POWER_mW,
        integration_s=TIME_s,
        grid_shape=(8, 8),
    )
    assert result.spikes_per_point[5] >= 1 and result.spikes_removed >= 1
    assert result.uniformity.heat_map.shape == (8, 8)
    # the per-point heights track the planted ones: Poisson noise of ~√11000 ≈ 105 counts on
    # a 4000-count band against a 10 % planted spread caps the correlation near 0.97
    planted = heights / (POWER_mW * TIME_s)
    assert np.corrcoef(result.height_per_point, planted)[0, 1] > 0.95
    # RSD of the planted heights, sample SD (ddof=1), recomputed here
    planted_rsd = 100 * np.std(planted, ddof=1) / planted.mean()
    assert result.rsd_percent == pytest.approx(planted_rsd, abs=1.5)
    assert result.mean_band.position_cm1 == pytest.approx(1075.0, abs=0.3)
    assert result.baseline_converged


def test_map_and_spectrum_paths_agree_on_the_same_data():
    x, counts, _ = _map(n_points=8, seed=9)
    whole = analyse_qc_map(
        x, counts, band_center_cm1=1075, band_window_cm1=60, power_mW=1, integration_s=1
    )
    single = analyse_qc_spectrum(
        x, counts[2], band_center_cm1=1075, band_window_cm1=60, power_mW=1, integration_s=1
    )
    # The map's fitted height (band shape of the mean spectrum, batched P-spline ASLS) and
    # the single-spectrum Lorentzian fit (pybaselines asls) agree within 2 %.
    assert whole.height_per_point[2] == pytest.approx(single.height_counts_per_mW_s, rel=0.02)
    assert whole.area_per_point[2] == pytest.approx(single.area_counts_per_mW_s_cm1, rel=0.02)


def test_map_heights_are_the_planted_lorentzian_heights_not_the_direct_reading():
    # Planted Lorentzian heights are the truth here.  The direct reading (maximum above the
    # line through the window edges) loses the wings: at ±30 cm⁻¹ a 12 cm⁻¹ Lorentzian still
    # stands at 1/(1 + 5²) = 3.8 % of its height, and the top falls between samples; the
    # fitted heights do not lose either.
    x, counts, planted = _map(n_points=32, seed=4)
    result = analyse_qc_map(
        x, counts, band_center_cm1=1075, band_window_cm1=60, power_mW=1, integration_s=1
    )
    ratio = np.median(result.height_per_point / planted)
    assert ratio == pytest.approx(1.0, abs=0.02)
    bands_only = planted[:, None] * lorentzian(x, 1075.0, 1.0, 12.0)
    direct = band_metrics_map(x, bands_only, band_center_cm1=1075, band_window_cm1=60)
    assert np.median(direct.height / planted) < 1 - 1 / 26


def test_bad_inputs_name_the_field():
    x, counts, _ = _map(n_points=8)
    common = {"band_center_cm1": 1075, "band_window_cm1": 60, "power_mW": 1.0, "integration_s": 1.0}
    for field, change in (("power_mW", {"power_mW": 0}), ("integration_s", {"integration_s": -2})):
        with pytest.raises(AnalysisInputError) as err:
            analyse_qc_map(x, counts, **{**common, **change})
        assert err.value.field == field
    with pytest.raises(AnalysisInputError) as err:
        analyse_qc_spectrum(x, counts[0], **{**common, "band_center_cm1": 2500})
    assert err.value.field == "band_center_cm1"
    bad = counts.copy()
    bad[2, 10] = np.nan
    with pytest.raises(AnalysisInputError) as err:
        analyse_qc_map(x, bad, **common)
    assert err.value.field == "counts_2d" and "point 2" in err.value.message


def test_a_float32_map_in_small_blocks_and_descending_gives_the_float64_heights(monkeypatch):
    """The lean path (float32 counts as the columnar reader gives them, blocks of spectra,
    a descending axis flipped block by block) against the float64 path in one block, and
    both against the reference: a per-spectrum pybaselines ``asls`` loop (Erb, pybaselines,
    doi:10.5281/zenodo.5608581) with the same λ and the same least-squares band height."""
    x, counts, _ = _map(n_points=40, seed=11)
    counts = counts * 1.0001  # not whole numbers, so float32 really rounds them
    settings = dict(band_center_cm1=1075, band_window_cm1=60, power_mW=1, integration_s=1)
    whole = analyse_qc_map(x, counts, **settings)
    monkeypatch.setattr(qc_pipeline, "MAP_BLOCK_POINTS", 7)  # 40 points: six blocks
    lean = analyse_qc_map(x[::-1], counts[:, ::-1].astype(np.float32), **settings)
    # float32 keeps 7 digits (relative rounding 6e-8); the baseline's iteration may settle a
    # point differently, so allow 1e-4 of the height, far below the 2 % against the reference.
    np.testing.assert_allclose(lean.height_per_point, whole.height_per_point, rtol=1e-4)
    np.testing.assert_array_equal(lean.spikes_per_point, whole.spikes_per_point)
    assert lean.spikes_per_point[5] >= 1  # the cosmic ray of point 5, found inside a block
    np.testing.assert_allclose(lean.mean_spectrum, whole.mean_spectrum, rtol=1e-4, atol=1e-2)
    fitter, band = Baseline(x), whole.mean_band
    inside = np.isin(x, band.window_shift_cm1)
    window = x[inside]
    design = np.column_stack([lorentzian(window, band.position_cm1, 1.0, band.fwhm_cm1),
                              np.ones_like(window), window - window.mean()])
    clean = whole.spikes_per_point == 0  # the loop removes no spikes
    reference = np.array([
        np.linalg.lstsq(design, (row - fitter.asls(row, lam=lam_for_spacing(x), p=0.01)[0])
                        [inside], rcond=None)[0][0] for row in counts[clean]])
    assert np.max(np.abs(lean.height_per_point[clean] / reference - 1)) < 0.02


def test_blocks_on_two_threads_equal_one_thread_and_name_the_first_bad_point(monkeypatch):
    """Blocks analysed side by side give the one-thread result bit for bit (spectra are
    independent), and of two bad points in different blocks the first is named."""
    x, counts, _ = _map(n_points=40, seed=11)
    settings = dict(band_center_cm1=1075, band_window_cm1=60, power_mW=1, integration_s=1)
    monkeypatch.setattr(qc_pipeline, "MAP_BLOCK_POINTS", 7)  # six blocks on two threads
    threaded = analyse_qc_map(x, counts, **settings)
    monkeypatch.setattr(qc_pipeline, "MAP_THREADS", 1)
    single = analyse_qc_map(x, counts, **settings)
    for name in ("height_per_point", "area_per_point", "spikes_per_point", "mean_spectrum",
                 "percentile_spectra", "sample_spectra", "sample_baselines"):
        np.testing.assert_array_equal(getattr(threaded, name), getattr(single, name))
    assert threaded.baseline_converged == single.baseline_converged
    monkeypatch.setattr(qc_pipeline, "MAP_THREADS", 2)
    bad = counts.copy()
    bad[30, 3] = np.inf
    bad[9, 100] = np.nan
    with pytest.raises(AnalysisInputError) as err:
        analyse_qc_map(x, bad, **settings)
    assert "point 9 " in err.value.message
