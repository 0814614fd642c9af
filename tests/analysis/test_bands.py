"""Tests for qc.analysis.bands: planted bands recovered, analytic area identities."""

import numpy as np
import pytest
from scipy.integrate import quad

from qc.analysis import bands
from qc.analysis.errors import AnalysisInputError


def test_lorentzian_area_identity():
    # Analytic identity: ∫ h / (1 + ((x−x0)/(Γ/2))²) dx = π·h·Γ/2 (integral computed by quad).
    area, _ = quad(lambda x: bands.lorentzian(x, 1000.0, 3.0, 8.0), -np.inf, np.inf)
    assert area == pytest.approx(np.pi * 3.0 * 8.0 / 2, rel=1e-8)


def test_pseudo_voigt_area_factor_against_numerical_integral():
    # Gaussian of FWHM Γ and peak h has area h·Γ·√(π/(4 ln2)) (analytic identity); check the
    # mixture against scipy quad.
    h, gamma, eta = 2.0, 10.0, 0.3
    area, _ = quad(lambda x: bands.pseudo_voigt(x, 0.0, h, gamma, eta), -np.inf, np.inf)
    expected = eta * np.pi * h * gamma / 2 + (1 - eta) * h * gamma * np.sqrt(
        np.pi / (4 * np.log(2))
    )
    assert area == pytest.approx(expected, rel=1e-7)


def test_fit_recovers_planted_lorentzian():
    rng = np.random.default_rng(42)
    x = np.linspace(950, 1200, 400)
    x0, h, fwhm = 1076.3, 1800.0, 11.0
    y = bands.lorentzian(x, x0, h, fwhm) + 150 + 0.3 * (x - 1075) + rng.normal(0, 10, x.size)
    fit = bands.fit_band(x, y, band_center_cm1=1075, band_window_cm1=80)
    # the planted values must lie within ~3 standard errors
    assert abs(fit.position_cm1 - x0) < 3 * fit.position_se_cm1 + 0.05
    assert abs(fit.height - h) < 3 * fit.height_se + 10
    assert abs(fit.fwhm_cm1 - fwhm) < 3 * fit.fwhm_se_cm1 + 0.1
    assert fit.area == pytest.approx(np.pi * fit.height * fit.fwhm_cm1 / 2)  # π·h·Γ/2
    assert fit.area == pytest.approx(np.pi * h * fwhm / 2, rel=0.02)
    # S/N is height over the residual SD (noise SD 10 planted)
    assert fit.residual_sd == pytest.approx(10, rel=0.15)
    assert fit.snr == pytest.approx(fit.height / fit.residual_sd)


def test_fit_standard_errors_match_monte_carlo_scatter():
    # The covariance-based SE of the position should match the scatter of repeated fits.
    x = np.linspace(1000, 1150, 150)
    rng = np.random.default_rng(0)
    positions, ses = [], []
    for _ in range(60):
        y = bands.lorentzian(x, 1075.0, 500.0, 12.0) + rng.normal(0, 20, x.size)
        fit = bands.fit_band(x, y, band_center_cm1=1075, band_window_cm1=60)
        positions.append(fit.position_cm1)
        ses.append(fit.position_se_cm1)
    assert np.std(positions, ddof=1) == pytest.approx(np.mean(ses), rel=0.3)


def test_pseudo_voigt_fit_recovers_eta():
    rng = np.random.default_rng(9)
    x = np.linspace(1500, 1660, 300)
    y = bands.pseudo_voigt(x, 1580.0, 1000.0, 14.0, 0.6) + rng.normal(0, 3, x.size)
    fit = bands.fit_band(x, y, band_center_cm1=1580, band_window_cm1=120, profile="pseudo_voigt")
    assert fit.eta == pytest.approx(0.6, abs=0.05)
    assert fit.fwhm_cm1 == pytest.approx(14.0, rel=0.02)


def test_map_metrics_on_planted_bands():
    x = np.linspace(900, 1300, 801)  # 0.5 cm⁻¹ step
    heights = np.array([100.0, 250.0, 900.0])
    spectra = heights[:, None] * bands.lorentzian(x, 1075.0, 1.0, 10.0)[None, :] + 40.0
    metrics = bands.band_metrics_map(x, spectra, band_center_cm1=1075, band_window_cm1=200)
    # the edge line removes the constant offset but also the Lorentzian tails at ±100 cm⁻¹:
    # tail value h/(1+(100/5)²) = h/401 (analytic)
    np.testing.assert_allclose(metrics.height, heights * (1 - 1 / 401), rtol=2e-3)
    np.testing.assert_allclose(metrics.position_cm1, 1075.0)
    # area over ±100 cm⁻¹: h·Γ·atan(2·100/Γ) (analytic), minus the tail line's rectangle
    expected = heights * 10.0 * np.arctan(20.0) - 200 * heights / 401
    np.testing.assert_allclose(metrics.area, expected, rtol=5e-3)


def test_normalisation_divides_by_power_time_and_summed_accumulations():
    assert bands.normalised_intensity(1200.0, power_mW=2.0, integration_s=10.0) == 60.0
    assert bands.normalised_intensity(
        1200.0, power_mW=2.0, integration_s=10.0, accumulations=3
    ) == pytest.approx(20.0)
    assert (
        bands.normalised_intensity(
            1200.0, power_mW=2.0, integration_s=10.0, accumulations=3, accumulations_summed=False
        )
        == 60.0
    )


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"power_mW": 0, "integration_s": 1}, "power_mW"),
        ({"power_mW": 1, "integration_s": -1}, "integration_s"),
        ({"power_mW": 1, "integration_s": 1, "accumulations": 0}, "accumulations"),
    ],
)
def test_bad_acquisition_settings_name_the_field(kwargs, field):
    with pytest.raises(AnalysisInputError) as err:
        bands.normalised_intensity(1.0, **kwargs)
    assert err.value.field == field


def test_band_outside_range_is_refused():
    x = np.linspace(400, 900, 200)
    with pytest.raises(AnalysisInputError) as err:
        bands.fit_band(x, np.ones(200), band_center_cm1=1075, band_window_cm1=40)
    assert err.value.field == "band_center_cm1"
    with pytest.raises(AnalysisInputError) as err:
        bands.band_metrics_map(x, np.ones((2, 200)), band_center_cm1=1075, band_window_cm1=40)
    assert err.value.field == "band_center_cm1"


def test_band_outside_its_window_is_reported_at_the_bound():
    # A band centred 40 cm⁻¹ from the expected position, outside a 40 cm⁻¹ window: the fit
    # can only put the position at the window edge, which is no measurement.
    x = np.linspace(900, 1200, 600)
    y = 1000 / (1 + ((x - 1113.0) / 6.0) ** 2)
    fit = bands.fit_band(x, y, band_center_cm1=1073, band_window_cm1=40)
    assert "position" in fit.at_bound
    assert "edge of the fitting window" in fit.limit_note
    inside = bands.fit_band(x, y, band_center_cm1=1110, band_window_cm1=40)
    assert inside.at_bound == () and inside.limit_note == ""
