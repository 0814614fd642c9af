"""Tests for qc.analysis.enhancement (Le Ru, Blackie, Meyer & Etchegoin, JPCC 2007)."""

import numpy as np
import pytest
from scipy.constants import Avogadro

from qc.analysis import enhancement as ef
from qc.analysis.errors import AnalysisInputError


def test_aef_worked_example_by_hand():
    # Le Ru et al. 2007 AEF = (I_SERS/c_SERS)/(I_RS/c_RS).
    # Hand arithmetic: (500 / 1e-6) / (2 / 0.1) = 5e8 / 20 = 2.5e7.
    result = ef.analytical_enhancement_factor(
        sers_intensity_counts_per_mW_s=500.0,
        sers_concentration_M=1e-6,
        raman_intensity_counts_per_mW_s=2.0,
        raman_concentration_M=0.1,
        sers_intensity_rel_u=0.10,
        raman_intensity_rel_u=0.05,
        sers_concentration_rel_u=0.02,
    )
    assert result.value == pytest.approx(2.5e7)
    # relative uncertainties in quadrature: √(0.1² + 0.05² + 0.02²) = √0.0129 = 0.11358
    assert result.relative_uncertainty == pytest.approx(np.sqrt(0.0129))
    assert result.log10_value == pytest.approx(7.39794, abs=1e-5)  # log10(2.5e7)
    assert result.log10_standard_uncertainty == pytest.approx(np.sqrt(0.0129) / np.log(10))


def test_ssef_worked_example_by_hand():
    # Neat benzenethiol, 9.74 M (density 1.073 g/mL / 110.18 g/mol, from memory),
    # spot 1 µm², H_eff 10 µm:
    #   N_Vol = 9.74 × 6.02214076e23 × 1e-15 × 1 × 10 = 5.8656e10 molecules.
    # Monolayer 6.8e14 molecules/cm² = 6.8 nm⁻² (from memory), roughness factor 1.5:
    #   N_Surf = 6.8 × 1e6 × 1.5 × 1 = 1.02e7 molecules.
    # I_SERS = 1000, I_RS = 0.5 counts/(mW·s):
    #   SSEF = (1000 / 1.02e7) / (0.5 / 5.8656e10) = 9.8039e-5 × 1.17312e11 = 1.1501e7.
    n_vol = ef.molecules_in_scattering_volume(
        concentration_M=9.74,
        spot_area_um2=1.0,
        effective_height_um=10.0,
        effective_height_rel_u=0.2,
    )
    assert n_vol.value == pytest.approx(9.74 * Avogadro * 1e-15 * 10.0)
    assert n_vol.value == pytest.approx(5.8656e10, rel=1e-4)
    n_surf = ef.molecules_on_surface(
        spot_area_um2=1.0,
        molecule_density_per_cm2=6.8e14,
        surface_area_factor=1.5,
        molecule_density_rel_u=0.1,
    )
    assert n_surf.value == pytest.approx(1.02e7)
    result = ef.substrate_enhancement_factor(
        sers_intensity_counts_per_mW_s=1000.0,
        raman_intensity_counts_per_mW_s=0.5,
        molecules_surface=n_surf,
        molecules_volume=n_vol,
    )
    assert result.value == pytest.approx(1.1501e7, rel=1e-4)
    assert result.relative_uncertainty == pytest.approx(np.hypot(0.2, 0.1))


def test_feature_construction_equals_direct_coverage():
    # μ_M·A_M is a metal area per projected area: 2 features/µm² × 0.75 µm² = factor 1.5.
    direct = ef.molecules_on_surface(
        spot_area_um2=3.0, molecule_density_per_nm2=4.0, surface_area_factor=1.5
    )
    features = ef.molecules_on_surface(
        spot_area_um2=3.0,
        molecule_density_per_nm2=4.0,
        feature_density_per_um2=2.0,
        metal_area_per_feature_um2=0.75,
    )
    assert features.value == pytest.approx(direct.value)
    assert direct.value == pytest.approx(4.0 * 1e6 * 1.5 * 3.0)


def test_propagated_uncertainty_matches_monte_carlo():
    # GUM Supplement 1 style check: sample the inputs, compare the relative SD of the output.
    rng = np.random.default_rng(123)
    n = 200_000
    rel = {"si": 0.03, "sc": 0.02, "ri": 0.04, "rc": 0.01}
    i_s = 500 * (1 + rel["si"] * rng.standard_normal(n))
    c_s = 1e-6 * (1 + rel["sc"] * rng.standard_normal(n))
    i_r = 2 * (1 + rel["ri"] * rng.standard_normal(n))
    c_r = 0.1 * (1 + rel["rc"] * rng.standard_normal(n))
    samples = (i_s / c_s) / (i_r / c_r)
    result = ef.analytical_enhancement_factor(
        sers_intensity_counts_per_mW_s=500,
        sers_concentration_M=1e-6,
        raman_intensity_counts_per_mW_s=2,
        raman_concentration_M=0.1,
        sers_intensity_rel_u=rel["si"],
        sers_concentration_rel_u=rel["sc"],
        raman_intensity_rel_u=rel["ri"],
        raman_concentration_rel_u=rel["rc"],
    )
    mc_rel = np.std(samples) / np.mean(samples)
    assert result.relative_uncertainty == pytest.approx(mc_rel, rel=0.05)


@pytest.mark.parametrize(
    "field",
    [
        "sers_intensity_counts_per_mW_s",
        "sers_concentration_M",
        "raman_intensity_counts_per_mW_s",
        "raman_concentration_M",
    ],
)
def test_non_positive_inputs_name_the_field(field):
    kwargs = {
        "sers_intensity_counts_per_mW_s": 1.0,
        "sers_concentration_M": 1.0,
        "raman_intensity_counts_per_mW_s": 1.0,
        "raman_concentration_M": 1.0,
    }
    kwargs[field] = 0.0
    with pytest.raises(AnalysisInputError) as err:
        ef.analytical_enhancement_factor(**kwargs)
    assert err.value.field == field


def test_surface_needs_exactly_one_density_and_one_construction():
    with pytest.raises(AnalysisInputError) as err:
        ef.molecules_on_surface(spot_area_um2=1.0, surface_area_factor=1.0)
    assert err.value.field == "molecule_density_per_nm2"
    with pytest.raises(AnalysisInputError) as err:
        ef.molecules_on_surface(spot_area_um2=1.0, molecule_density_per_nm2=4.0)
    assert err.value.field == "surface_area_factor"
    with pytest.raises(AnalysisInputError) as err:
        ef.analytical_enhancement_factor(
            sers_intensity_counts_per_mW_s=1,
            sers_concentration_M=1,
            raman_intensity_counts_per_mW_s=1,
            raman_concentration_M=1,
            sers_intensity_rel_u=-0.1,
        )
    assert err.value.field == "sers_intensity_rel_u"
