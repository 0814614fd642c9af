"""Mie model: quasi-static limit, resonance positions, Kreibig damping, fit round trip."""

from pathlib import Path

import miepython
import numpy as np
import pytest

from qc.analysis import mie_model
from qc.analysis.errors import AnalysisInputError
from qc.analysis.optical_constants import johnson_christy_permittivity

# A 2 nm grid keeps the one-off cross-section table cheap in tests.
GRID_NM = np.arange(340.0, 801.0, 2.0)


def test_small_sphere_matches_quasi_static_limit():
    # Bohren & Huffman (1983) eq. 5.8 (small-sphere limit): Q_ext ≈ 4x·Im[(m²−1)/(m²+2)], x ≪ 1.
    wavelength = np.array([450.0, 520.0, 600.0])
    diameter = 2.0  # x ≈ 0.018
    sigma = mie_model.extinction_cross_section_nm2("Au", wavelength, [diameter], medium_n=1.333)[0]
    q_ext = sigma / (np.pi * diameter**2 / 4)
    eps = mie_model.size_corrected_permittivity("Au", wavelength, [diameter])[0]
    m2 = eps / 1.333**2
    x = np.pi * diameter * 1.333 / wavelength
    expected = 4 * x * np.imag((m2 - 1) / (m2 + 2))
    assert q_ext == pytest.approx(expected, rel=2e-3)


def test_kreibig_damping_vanishes_for_large_radius():
    # Kreibig (1974): Γ(R) → Γ_bulk as R → ∞, so ε(ω, R) → ε_bulk (Johnson & Christy).
    wavelength = np.array([400.0, 520.0, 700.0])
    big = mie_model.size_corrected_permittivity("Au", wavelength, [1e7])[0]
    assert big == pytest.approx(johnson_christy_permittivity("Au", wavelength), rel=1e-5)
    assert mie_model.damping_rate_rad_s(1e9, "Ag") == pytest.approx(2.7e13, rel=1e-4)
    # Γ(R) = Γ_bulk + v_F/R with v_F = 1.4e8 cm/s = 1.4e15 nm/s (Haiss et al. 2007), R = 10 nm.
    assert mie_model.damping_rate_rad_s(10.0, "Au") == pytest.approx(3.33e13 + 1.4e14)


def test_small_particles_are_damped_more():
    # Kreibig (1974): ε2 grows as R shrinks (more surface scattering).
    eps = mie_model.size_corrected_permittivity("Ag", [500.0], [5.0, 50.0])
    assert eps[0, 0].imag > eps[1, 0].imag


def test_resonances_where_the_trade_expects_them():
    # Common practice: ~20 nm Au in water peaks near 520 nm; small Ag near 400 nm.
    au = mie_model.mean_cross_section_nm2("Au", GRID_NM, 20.0, 1.05)
    ag = mie_model.mean_cross_section_nm2("Ag", GRID_NM, 20.0, 1.05)
    assert 515 <= GRID_NM[np.argmax(au)] <= 528
    assert 385 <= GRID_NM[np.argmax(ag)] <= 410


def test_absorbance_from_cross_section_beer_lambert():
    # A = N·C·L/ln10 with 1 nm² = 1e-14 cm² (unit conversion, geometric identity).
    assert mie_model.absorbance_from_cross_section(1000.0, 1e11, 1.0) == pytest.approx(
        1e11 * 1000 * 1e-14 / np.log(10)
    )


def _miepython_gold_spectrum(median_nm, sigma_g=1.1, nodes=21):
    """Extinction of a log-normal gold colloid computed with miepython alone.

    Outside reference: miepython's own copy of the Johnson & Christy (Phys. Rev. B 6, 4370,
    1972) gold table (bulk constants, no size correction) and ``miepython.efficiencies`` in
    water n = 1.333 (Haiss et al., Anal. Chem. 79, 4215, 2007); the size distribution is
    averaged here by a plain weighted sum over ±3 σ in ln d.  Scaled to a peak of 1.
    """
    blocks = (Path(miepython.__file__).parent / "data" / "Johnson.txt").read_text().split("wl")
    columns = [np.array([line.split() for line in b.splitlines()[1:] if line.strip()], float)
               for b in blocks[1:3]]
    n = np.interp(GRID_NM, columns[0][:, 0] * 1000, columns[0][:, 1])
    k = np.interp(GRID_NM, columns[1][:, 0] * 1000, columns[1][:, 1])
    z = np.linspace(-3, 3, nodes)
    weights = np.exp(-(z**2) / 2)
    total = np.zeros(GRID_NM.size)
    for d, weight in zip(median_nm * sigma_g**z, weights / weights.sum(), strict=True):
        q_ext = [miepython.efficiencies(complex(ni, -ki), d, lam, n_env=1.333)[0]
                 for ni, ki, lam in zip(n, k, GRID_NM, strict=True)]
        total += weight * np.asarray(q_ext) * np.pi * d**2 / 4
    return total / total.max()


@pytest.mark.parametrize("diameter_nm", [40.0, 80.0])
def test_fit_sizes_a_spectrum_computed_by_miepython(diameter_nm):
    # Above ~30 nm the size-dependent damping our model adds barely changes the band, so the
    # fitted median must match the size miepython was given (within 5 %).
    fit = mie_model.fit_lognormal_mie(GRID_NM, _miepython_gold_spectrum(diameter_nm), "Au")
    assert fit.has_size and fit.median_diameter_nm == pytest.approx(diameter_nm, rel=0.05)
    low, high = fit.median_diameter_ci95_nm
    assert low < fit.median_diameter_nm < high
    assert fit.median_diameter_u_nm > 0


def test_large_colloid_is_outside_the_fit_range_and_gives_no_size():
    # 150 nm gold (miepython): a broad dipole with a quadrupole shoulder, beyond the
    # 5–120 nm search range.
    fit = mie_model.fit_lognormal_mie(GRID_NM, _miepython_gold_spectrum(150.0), "Au")
    assert not fit.has_size and fit.diameter_bound == "upper"
    assert fit.diameter_bound_nm == 120.0 and fit.median_diameter_ci95_nm is None
    assert "outside the fit range" in fit.limit_note and "120 nm" in fit.limit_note


def test_width_at_its_lower_bound_is_reported_as_unresolved():
    # A single size (miepython, σ_g = 1) cannot give a width the spectrum resolves.
    fit = mie_model.fit_lognormal_mie(GRID_NM, _miepython_gold_spectrum(60.0, 1.0, 1), "Au")
    assert fit.sigma_bound == "lower"
    assert "narrower than the spectrum resolves" in fit.limit_note


def test_calibration_from_the_same_model_is_not_an_independent_check():
    result = mie_model.compare_sizes(40.0, 40.5, calibration_independent=False)
    assert result.agrees is None and "not an independent check" in result.message


def test_compare_sizes_tolerance():
    assert mie_model.compare_sizes(22.0, 20.0, tolerance_percent=15).agrees
    result = mie_model.compare_sizes(26.0, 20.0, tolerance_percent=15)
    assert not result.agrees and result.difference_percent == pytest.approx(30.0)


@pytest.mark.parametrize(
    "call",
    [
        lambda: mie_model.mean_cross_section_nm2("Pt", GRID_NM, 20.0),
        lambda: mie_model.mean_cross_section_nm2("Au", GRID_NM, 20.0, 0.9),
        lambda: mie_model.mean_cross_section_nm2("Au", GRID_NM, 150.0, 1.5),
        lambda: mie_model.fit_lognormal_mie(GRID_NM[:5], np.ones(5), "Au"),
        lambda: mie_model.fit_lognormal_mie(GRID_NM, np.ones(GRID_NM.size - 1), "Au"),
        lambda: mie_model.absorbance_from_cross_section(1.0, -1.0),
    ],
)
def test_bad_input_raises(call):
    with pytest.raises(AnalysisInputError):
        call()
