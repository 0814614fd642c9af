"""Tests for inventory.physics.electrodeposition against constants, handbook data, geometry and
hand arithmetic."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import periodictable
import pytest

from inventory.physics.chronoamperogram import parse_chronoamperogram
from inventory.physics.electrodeposition import (
    SUPPORTED_METALS,
    analyse_deposition,
    charge_for_target_height_C,
    deposition_charge_C,
    equivalent_thickness_nm,
    faraday_constant_C_mol,
    graded_deposition,
    metal_amount_mol,
    metal_properties,
    metal_volume_cm3,
)
from inventory.physics.errors import AnalysisInputError
from inventory.physics.template_geometry import equivalent_thickness_for_height_nm, film_height_nm

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "chronoamperograms"
SPHERE_VOLUME_FRACTION = math.pi / (3.0 * math.sqrt(3.0))  # geometric identity, ≈ 0.6046
AREA_FRACTION = math.pi / (2.0 * math.sqrt(3.0))  # geometric identity, ≈ 0.9069
GOLD = {"metal": "Au", "electrons_per_atom": 1}  # Au(I) bath: 1 e⁻ per atom (REFERENCES.md)


def _constant_run(charge_C: float, duration_s: float = 200.0, points: int = 201):
    """A constant cathodic current (IUPAC negative) that passes exactly ``charge_C``."""
    time_s = np.linspace(0.0, duration_s, points)
    return time_s, np.full(points, -charge_C / duration_s)


# ------------------------------------------------------------------ constants and metals


def test_faraday_constant_is_codata():
    # CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021): F = 96 485.33212 C/mol,
    # exact in the 2019 SI as F = e·N_A with e = 1.602176634e-19 C, N_A = 6.02214076e23 /mol.
    assert faraday_constant_C_mol() == pytest.approx(96485.33212, abs=1e-5)
    assert faraday_constant_C_mol() == pytest.approx(1.602176634e-19 * 6.02214076e23, rel=1e-15)


def test_gold_density_matches_crc_and_periodictable():
    gold = metal_properties("Au")
    # CRC Handbook of Chemistry and Physics: gold 19.32 g/cm³ at 20 °C.
    assert gold.density_g_cm3 == 19.32
    # periodictable (an outside check within its rounding) gives 19.3.
    assert gold.density_g_cm3 == pytest.approx(periodictable.Au.density, abs=0.05)
    # IUPAC standard atomic weight of gold 196.966570 (from memory).
    assert gold.molar_mass_g_mol == pytest.approx(196.96657, abs=1e-4)


@pytest.mark.parametrize(
    "metal, molar_mass, density",
    # Standard atomic weights and room-temperature densities, CRC Handbook (from memory).
    [("Ag", 107.8682, 10.49), ("Cu", 63.546, 8.96), ("Pt", 195.084, 21.45), ("Ni", 58.6934, 8.90)],
)
def test_other_metals_match_handbook(metal, molar_mass, density):
    properties = metal_properties(metal)
    assert properties.molar_mass_g_mol == pytest.approx(molar_mass, rel=1e-4)
    assert properties.density_g_cm3 == pytest.approx(density, rel=0.01)
    element = periodictable.elements.symbol(metal)
    assert properties.molar_mass_g_mol == element.mass
    # periodictable's densities, within its rounding (silver: CRC 10.49 at 20 °C is used).
    assert properties.density_g_cm3 == pytest.approx(element.density, abs=0.05)


def test_required_metals_supported():
    assert {"Au", "Ag", "Cu", "Pt", "Ni"} <= set(SUPPORTED_METALS)


@pytest.mark.parametrize("metal", ["Zn", "gold", "Xx", ""])
def test_unknown_metal_refused(metal):
    with pytest.raises(AnalysisInputError) as caught:
        metal_properties(metal)
    assert caught.value.field == "metal"


# ------------------------------------------------------------------ Faraday's law


def test_flat_gold_film_hand_worked_example():
    # Hand arithmetic (Faraday's law, Bard & Faulkner 2001): 1 C through 1 cm², Au(I), 100 %:
    #   moles  = 1 C / 96485.33212 C/mol          = 1.0364270e-5 mol
    #   mass   = 1.0364270e-5 mol × 196.96657 g/mol = 2.0414146e-3 g
    #   volume = 2.0414146e-3 g / 19.32 g/cm³       = 1.0566328e-4 cm³  (CRC ρ, 20 °C)
    #   thickness = 1.0566328e-4 cm³ / 1 cm²        = 1.0566328e-4 cm = 1056.6328 nm
    moles = metal_amount_mol(1.0, electrons_per_atom=1)
    assert moles == pytest.approx(1.0364270e-5, rel=1e-7)
    volume = metal_volume_cm3(moles, metal="Au")
    assert volume == pytest.approx(1.0566328e-4, rel=1e-7)
    thickness = equivalent_thickness_nm(volume, electrode_area_cm2=1.0)
    assert thickness == pytest.approx(1056.6328, rel=1e-7)

    time_s, current_A = _constant_run(1.0)
    result = analyse_deposition(time_s=time_s, current_A=current_A, electrode_area_cm2=1.0, **GOLD)
    assert result.charge_C == pytest.approx(1.0, rel=1e-12)
    assert result.film_height_nm == pytest.approx(1056.6328, rel=1e-7)  # flat: h = t
    assert result.height_over_diameter is None


def test_electrons_and_efficiency_scale_the_amount():
    # Faraday's law n = ηQ/(zF): Au(III) gives a third of Au(I); η = 0.8 gives 80 %.
    au1 = metal_amount_mol(0.5, electrons_per_atom=1)
    assert metal_amount_mol(0.5, electrons_per_atom=3) == pytest.approx(au1 / 3.0)
    at_80_percent = metal_amount_mol(0.5, electrons_per_atom=1, current_efficiency=0.8)
    assert at_80_percent == pytest.approx(0.8 * au1)


def test_area_divides_thickness():
    # 1e-5 cm³ / 2 cm² = 5e-6 cm = 50 nm.
    assert equivalent_thickness_nm(1e-5, electrode_area_cm2=2.0) == pytest.approx(50.0)


@pytest.mark.parametrize("value", [0, 9, 1.5, "two", None, True])
def test_bad_electrons_per_atom_refused(value):
    with pytest.raises(AnalysisInputError) as caught:
        metal_amount_mol(1.0, electrons_per_atom=value)
    assert caught.value.field == "electrons_per_atom"


@pytest.mark.parametrize("value", [0.0, -0.1, 1.2, float("nan")])
def test_bad_current_efficiency_refused(value):
    with pytest.raises(AnalysisInputError) as caught:
        metal_amount_mol(1.0, electrons_per_atom=1, current_efficiency=value)
    assert caught.value.field == "current_efficiency"


@pytest.mark.parametrize("value", [0.0, -1.0])
def test_non_positive_area_refused(value):
    with pytest.raises(AnalysisInputError) as caught:
        equivalent_thickness_nm(1e-5, electrode_area_cm2=value)
    assert caught.value.field == "electrode_area_cm2"


# ------------------------------------------------------------------ charge integration


def test_constant_current_charge():
    # Q = I·t: 0.5 mA for 200 s = 0.1 C.
    time_s = np.linspace(0.0, 200.0, 11)
    assert deposition_charge_C(time_s, np.full(11, -0.5e-3)) == pytest.approx(0.1, rel=1e-12)


def test_exponential_decay_matches_analytic_integral():
    # ∫0^T I0·exp(−t/τ) dt = I0·τ·(1 − exp(−T/τ)); trapezoid error ~ (Δt/τ)²/12 ≈ 2e-8 here.
    i0_A, tau_s, end_s = 2e-3, 20.0, 150.0
    time_s = np.linspace(0.0, end_s, 15001)
    current_A = -i0_A * np.exp(-time_s / tau_s)
    expected = i0_A * tau_s * (1.0 - math.exp(-end_s / tau_s))
    assert deposition_charge_C(time_s, current_A) == pytest.approx(expected, rel=1e-6)


def test_bounds_between_samples_are_interpolated():
    # The trapezoid rule is exact for a linear current; bounds at 1.3 s and 7.8 s fall
    # between samples. I = −(a + b·t): Q = a(t2 − t1) + b(t2² − t1²)/2.
    a, b = 1e-4, 2e-5
    time_s = np.arange(0.0, 11.0, 1.0)
    charge = deposition_charge_C(time_s, -(a + b * time_s), start_s=1.3, end_s=7.8)
    assert charge == pytest.approx(a * 6.5 + b * (7.8**2 - 1.3**2) / 2.0, rel=1e-12)


def test_sign_conventions():
    time_s = np.linspace(0.0, 10.0, 11)
    negative, positive = np.full(11, -1e-3), np.full(11, 1e-3)
    # Q = 1 mA × 10 s = 0.01 C in every convention that matches the record.
    assert deposition_charge_C(time_s, negative, cathodic_sign="negative") == pytest.approx(0.01)
    assert deposition_charge_C(time_s, positive, cathodic_sign="positive") == pytest.approx(0.01)
    assert deposition_charge_C(time_s, positive, cathodic_sign="auto") == pytest.approx(0.01)
    assert deposition_charge_C(time_s, negative, cathodic_sign="auto") == pytest.approx(0.01)


def test_net_charge_counts_an_anodic_excursion():
    # −1 mA for 10 s then +1 mA for 4 s (stripping): net cathodic 6 mC with sharp steps.
    time_s = np.array([0.0, 10.0, 10.0 + 1e-9, 14.0])
    current_A = np.array([-1e-3, -1e-3, 1e-3, 1e-3])
    assert deposition_charge_C(time_s, current_A) == pytest.approx(6e-3, rel=1e-6)


@pytest.mark.parametrize(
    "current, convention", [(1e-3, "negative"), (-1e-3, "positive")]
)
def test_net_anodic_refused(current, convention):
    time_s = np.linspace(0.0, 10.0, 11)
    with pytest.raises(AnalysisInputError) as caught:
        deposition_charge_C(time_s, np.full(11, current), cathodic_sign=convention)
    assert "anodic" in caught.value.message
    assert caught.value.field == "current_A"


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"start_s": -1.0}, "start_s"),
        ({"end_s": 11.0}, "end_s"),
        ({"start_s": 5.0, "end_s": 5.0}, "end_s"),
        ({"start_s": 6.0, "end_s": 4.0}, "end_s"),
        ({"cathodic_sign": "down"}, "cathodic_sign"),
    ],
)
def test_bad_charge_options_refused(kwargs, field):
    time_s = np.linspace(0.0, 10.0, 11)
    with pytest.raises(AnalysisInputError) as caught:
        deposition_charge_C(time_s, np.full(11, -1e-3), **kwargs)
    assert caught.value.field == field


@pytest.mark.parametrize(
    "time_s, current_A, field",
    [
        ([0.0, 1.0, 2.0], [-1e-3, -1e-3], "current_A"),
        ([0.0, 1.0, 1.0], [-1e-3] * 3, "time_s"),
        ([0.0, 2.0, 1.0], [-1e-3] * 3, "time_s"),
        ([0.0, 1.0, 2.0], [-1e-3, float("nan"), -1e-3], "current_A"),
        ([0.0, 1.0, 2.0], [0.0, 0.0, 0.0], "current_A"),
    ],
)
def test_bad_records_refused(time_s, current_A, field):
    with pytest.raises(AnalysisInputError) as caught:
        deposition_charge_C(time_s, current_A)
    assert caught.value.field == field


# ------------------------------------------------------------------ template geometry


def test_slab_one_diameter_high_holds_sphere_volume_fraction():
    # Geometric identity: close-packed spheres fill π/(3√3) of a slab one diameter thick, so
    # metal filling to h = D has t = D·(1 − π/(3√3)); at h = R half of each sphere is below,
    # so t = R·(1 − π/(3√3)).
    diameter = 600.0
    heights = np.array([diameter / 2.0, diameter])
    thickness = equivalent_thickness_for_height_nm(heights, sphere_diameter_nm=diameter)
    np.testing.assert_allclose(thickness, heights * (1 - SPHERE_VOLUME_FRACTION), rtol=1e-12)


def test_above_the_spheres_the_film_grows_one_for_one():
    # Geometric identity: above h = D only metal is added, dt/dh = 1.
    heights = np.array([600.0, 750.0, 1500.0])
    t = equivalent_thickness_for_height_nm(heights, sphere_diameter_nm=600.0)
    np.testing.assert_allclose(np.diff(t), [150.0, 750.0], rtol=1e-12)


def test_growth_rate_at_equator_is_open_area_fraction():
    # Geometric identity: dt/dh at height h is the open area 1 − n·πr(h)²; at the equator
    # r = R, so dt/dh = 1 − π/(2√3) ≈ 0.0931. Central difference, step 1e-3 nm.
    radius, step = 300.0, 1e-3
    heights = np.array([radius - step, radius + step])
    t = equivalent_thickness_for_height_nm(heights, sphere_diameter_nm=600.0)
    assert (t[1] - t[0]) / (2 * step) == pytest.approx(1.0 - AREA_FRACTION, rel=1e-6)


def test_no_template_is_flat_film():
    assert equivalent_thickness_for_height_nm(123.4, sphere_diameter_nm=None) == 123.4
    assert film_height_nm(123.4, sphere_diameter_nm=None) == 123.4


@pytest.mark.parametrize("ratio", [0.02, 0.1, 0.3, 0.5, 0.7, 0.95, 1.0, 1.2, 2.5])
def test_height_inversion_recovers_height(ratio):
    # The inversion must undo the geometric identity t(h) at every height, including above D.
    diameter = 600.0
    thickness = equivalent_thickness_for_height_nm(ratio * diameter, sphere_diameter_nm=diameter)
    height = film_height_nm(thickness, sphere_diameter_nm=diameter)
    assert height == pytest.approx(ratio * diameter, rel=1e-9)


@pytest.mark.parametrize(
    "call, field",
    [
        (lambda: film_height_nm(-1.0, sphere_diameter_nm=600.0), "equivalent_thickness_nm"),
        (lambda: film_height_nm(10.0, sphere_diameter_nm=0.0), "sphere_diameter_nm"),
        (
            lambda: equivalent_thickness_for_height_nm(-5.0, sphere_diameter_nm=600.0),
            "film_height_nm",
        ),
    ],
)
def test_bad_geometry_inputs_refused(call, field):
    with pytest.raises(AnalysisInputError) as caught:
        call()
    assert caught.value.field == field


# ------------------------------------------------------------------ targets and round trip


def test_charge_for_half_height_hand_worked():
    # h/D = 0.5 with D = 600 nm: t = 300 nm × (1 − π/(3√3)) = 118.620 nm (geometric identity);
    # Au(I) on 1 cm² deposits 1056.6328 nm per coulomb (hand example above), so
    # Q = 118.620 / 1056.6328 = 0.112262 C.
    charge = charge_for_target_height_C(
        target_height_over_diameter=0.5, sphere_diameter_nm=600.0, electrode_area_cm2=1.0, **GOLD
    )
    assert charge == pytest.approx(300.0 * (1 - SPHERE_VOLUME_FRACTION) / 1056.6328, rel=1e-6)


@pytest.mark.parametrize("ratio", [0.1, 0.3, 0.5, 0.8, 1.0, 1.25, 2.0])
def test_round_trip_target_to_charge_to_height(ratio):
    diameter, area = 450.0, 0.8
    charge = charge_for_target_height_C(
        target_height_over_diameter=ratio, sphere_diameter_nm=diameter, electrode_area_cm2=area,
        metal="Ag", electrons_per_atom=1, current_efficiency=0.9,
    )
    time_s, current_A = _constant_run(charge)
    result = analyse_deposition(
        time_s=time_s, current_A=current_A, electrode_area_cm2=area, metal="Ag",
        electrons_per_atom=1, current_efficiency=0.9, sphere_diameter_nm=diameter,
    )
    assert result.height_over_diameter == pytest.approx(ratio, rel=1e-8)


# ------------------------------------------------------------------ graded runs


def test_graded_zones_hand_worked_flat():
    # Constant 1 mA; zones of 0.5, 0.3, 0.2 cm² withdrawn at 100, 200, 300 s (uniform j):
    #   zone 1: 1e-3 A × 100 s / 1.0 cm²                  = 0.1 C/cm²
    #   zone 2: 0.1 + 1e-3 × 100 / (0.3 + 0.2 = 0.5 cm²)   = 0.3 C/cm²
    #   zone 3: 0.3 + 1e-3 × 100 / 0.2 cm²                 = 0.8 C/cm²
    # Flat gold thickness 1056.6328 nm per C/cm² (hand example above).
    time_s = np.linspace(0.0, 300.0, 61)
    result = graded_deposition(
        time_s, np.full(61, -1e-3), zone_area_cm2=[0.5, 0.3, 0.2],
        withdrawal_time_s=[100.0, 200.0, 300.0], **GOLD,
    )
    np.testing.assert_allclose(result.charge_density_C_cm2, [0.1, 0.3, 0.8], rtol=1e-12)
    expected_nm = np.array([0.1, 0.3, 0.8]) * 1056.6328
    np.testing.assert_allclose(result.film_height_nm, expected_nm, rtol=1e-7)
    assert result.height_over_diameter is None


def test_graded_charge_is_conserved_and_heights_follow_template():
    # Conservation: every coulomb goes to an immersed zone, so Σ A_k·q_k = ∫ I dt up to the
    # last withdrawal, whatever the current. Withdrawal times fall between samples.
    rng = np.random.default_rng(7)
    time_s = np.linspace(0.0, 240.0, 2401)
    current_A = -(4e-4 + 2e-3 * np.exp(-time_s / 2.0) + rng.normal(0.0, 1e-5, time_s.size))
    areas = np.array([0.25, 0.25, 0.25, 0.25])
    result = graded_deposition(
        time_s, current_A, zone_area_cm2=areas, withdrawal_time_s=[60.05, 120.03, 180.07, 240.0],
        sphere_diameter_nm=600.0, **GOLD,
    )
    total = deposition_charge_C(time_s, current_A)
    assert np.sum(areas * result.charge_density_C_cm2) == pytest.approx(total, rel=1e-10)
    assert np.all(np.diff(result.height_over_diameter) > 0)  # later withdrawal, thicker film
    # Each zone's height is that of a single run with the zone's charge density on 1 cm².
    for density, height in zip(result.charge_density_C_cm2, result.film_height_nm, strict=True):
        t, i = _constant_run(density)
        single = analyse_deposition(
            time_s=t, current_A=i, electrode_area_cm2=1.0, sphere_diameter_nm=600.0, **GOLD
        )
        assert height == pytest.approx(single.film_height_nm, rel=1e-9)


@pytest.mark.parametrize(
    "areas, withdrawals, field",
    [
        ([0.5, 0.5], [100.0], "withdrawal_time_s"),
        ([0.5, 0.0], [100.0, 200.0], "zone_area_cm2"),
        ([0.5, 0.5], [200.0, 100.0], "withdrawal_time_s"),
        ([0.5, 0.5], [100.0, 400.0], "withdrawal_time_s"),
        ([0.5, 0.5], [0.0, 200.0], "withdrawal_time_s"),
    ],
)
def test_bad_graded_inputs_refused(areas, withdrawals, field):
    time_s = np.linspace(0.0, 300.0, 31)
    with pytest.raises(AnalysisInputError) as caught:
        graded_deposition(
            time_s, np.full(31, -1e-3), zone_area_cm2=areas, withdrawal_time_s=withdrawals,
            **GOLD,
        )
    assert caught.value.field == field


def test_graded_zone_with_net_anodic_charge_refused():
    time_s = np.linspace(0.0, 300.0, 31)
    current_A = np.where(time_s < 100.0, 1e-3, -5e-3)  # anodic first: zone 1 dissolves
    with pytest.raises(AnalysisInputError) as caught:
        graded_deposition(
            time_s, current_A, zone_area_cm2=[0.5, 0.5], withdrawal_time_s=[90.0, 300.0],
            **GOLD,
        )
    assert caught.value.message.startswith("zone 1")


# ------------------------------------------------------------------ the invented fixtures


@pytest.mark.parametrize(
    "name, target", [("au_600nm_hd050.csv", 0.50), ("au_600nm_hd030.txt", 0.30)]
)
def test_fixture_runs_reach_the_height_they_were_made_for(name, target):
    # generate.py scales each invented trace with its own closed-form geometry and Faraday
    # arithmetic (not this code) to the target h/D for 600 nm spheres, Au(I), 1.00 cm².
    record = parse_chronoamperogram((FIXTURES / name).read_text(encoding="utf-8"))
    result = analyse_deposition(
        time_s=record.time_s, current_A=record.current_A, electrode_area_cm2=1.0,
        sphere_diameter_nm=600.0, **GOLD,
    )
    assert result.height_over_diameter == pytest.approx(target, abs=1e-4)
    assert (result.metal, result.electrons_per_atom, result.sphere_diameter_nm) == ("Au", 1, 600.0)
    assert (result.start_s, result.end_s) == (record.time_s[0], record.time_s[-1])
    assert result.faraday_constant_C_mol == pytest.approx(96485.33212, abs=1e-5)  # CODATA 2018
