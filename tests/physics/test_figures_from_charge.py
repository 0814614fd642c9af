"""A run's figures from its charge alone (the charge a potentiostat reports, no curve).

Checked against Faraday's law worked by hand from outside constants, and against the figures of
a chronoamperogram that integrates to the same charge (the file path = integrate, then this).
"""

from __future__ import annotations

import math

import numpy as np
import periodictable
import pytest
from scipy.constants import physical_constants

from inventory.physics.electrodeposition import analyse_deposition, figures_from_charge
from inventory.physics.errors import AnalysisInputError

# CODATA value through scipy.constants (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021).
FARADAY_C_MOL = physical_constants["Faraday constant"][0]
# Molar mass of gold from periodictable (IUPAC standard atomic weight 196.966570).
GOLD_MOLAR_MASS_G_MOL = periodictable.Au.mass
# Density of gold: periodictable gives 19.3 g/cm³; the CRC Handbook 19.32 g/cm³ at 20 °C.
GOLD_DENSITY_PERIODICTABLE_G_CM3 = periodictable.Au.density


def test_one_coulomb_of_gold_i_deposits_m_over_nf_grams():
    figures = figures_from_charge(charge_C=1.0, electrode_area_cm2=1.0, metal="Au",
                                  electrons_per_atom=1)
    # Faraday's law (Bard and Faulkner, Electrochemical Methods, 2nd ed., 2001, ch. 1):
    # m = Q·M/(n·F) = 196.96657/96485.33212 g ≈ 2.0414 mg per coulomb for Au(I).
    expected_mass_g = 1.0 * GOLD_MOLAR_MASS_G_MOL / (1 * FARADAY_C_MOL)
    assert expected_mass_g == pytest.approx(196.96657 / 96485.33212, rel=1e-6)
    assert figures.metal_amount_mol * GOLD_MOLAR_MASS_G_MOL == pytest.approx(expected_mass_g,
                                                                          rel=1e-9)
    # The volume with periodictable's (rounded) density, within that rounding (0.1 %).
    assert figures.metal_volume_cm3 == pytest.approx(
        expected_mass_g / GOLD_DENSITY_PERIODICTABLE_G_CM3, rel=2e-3)
    # On 1 cm² a volume V cm³ is a flat film V·1e7 nm thick (1 cm = 1e7 nm).
    assert figures.equivalent_thickness_nm == pytest.approx(figures.metal_volume_cm3 * 1e7,
                                                            rel=1e-12)
    assert figures.film_height_nm == figures.equivalent_thickness_nm  # flat: no template
    assert figures.height_over_diameter is None
    assert (figures.start_s, figures.end_s, figures.cathodic_sign) == (None, None, None)


def test_efficiency_and_electrons_scale_the_metal_as_faradays_law_says():
    base = figures_from_charge(charge_C=0.2, electrode_area_cm2=0.5, metal="Au",
                               electrons_per_atom=1)
    half = figures_from_charge(charge_C=0.2, electrode_area_cm2=0.5, metal="Au",
                               electrons_per_atom=3, current_efficiency=0.5)
    # n = ηQ/(zF): η/z goes from 1 to 0.5/3 (hand arithmetic).
    assert half.metal_amount_mol == pytest.approx(base.metal_amount_mol * 0.5 / 3, rel=1e-12)


def test_the_figures_of_a_curve_are_those_of_its_integral():
    # A constant cathodic current (negative, IUPAC) of 0.5 mA for 200 s passes 0.1 C
    # (Q = I·t, hand arithmetic).
    time_s = np.linspace(0.0, 200.0, 201)
    current_A = np.full(time_s.size, -0.5e-3)
    inputs = {"electrode_area_cm2": 1.0, "metal": "Au", "electrons_per_atom": 1,
              "current_efficiency": 0.95, "sphere_diameter_nm": 600.0}
    curve = analyse_deposition(time_s=time_s, current_A=current_A, **inputs)
    entered = figures_from_charge(charge_C=0.1, **inputs)
    assert curve.charge_C == pytest.approx(0.1, rel=1e-12)
    for name in ("metal_amount_mol", "metal_volume_cm3", "equivalent_thickness_nm",
                 "film_height_nm", "height_over_diameter"):
        assert getattr(entered, name) == pytest.approx(getattr(curve, name), rel=1e-12), name
    assert (curve.start_s, curve.end_s, curve.cathodic_sign) == (0.0, 200.0, "negative")


@pytest.mark.parametrize("charge", [0.0, -0.1, math.nan, math.inf, None])
def test_a_charge_that_is_not_positive_and_finite_is_refused(charge):
    with pytest.raises(AnalysisInputError) as refused:
        figures_from_charge(charge_C=charge, electrode_area_cm2=1.0, metal="Au",
                            electrons_per_atom=1)
    assert refused.value.field == "charge_C"
