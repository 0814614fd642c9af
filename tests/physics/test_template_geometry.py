"""Tests for inventory.physics.template_geometry: geometric identities and hand arithmetic."""

from __future__ import annotations

import math

import pytest

from inventory.physics.errors import AnalysisInputError
from inventory.physics.template_geometry import (
    CLOSE_PACKED_AREA_FRACTION,
    TYPICAL_SPHERE_DENSITY_G_CM3,
    close_packed_spheres_per_cm2,
    close_packed_spheres_per_um2,
    suspension_volume_for_monolayer,
)


@pytest.mark.parametrize("diameter_nm", [200.0, 600.0, 1000.0])
def test_sphere_count_times_disc_area_is_hexagonal_packing_fraction(diameter_nm):
    # Geometric identity (Conway & Sloane 1999, ch. 1): hexagonal circle packing covers
    # π/(2√3) ≈ 0.9069 of the plane, so n·πR² must equal it.
    radius_um = diameter_nm / 2000.0
    covered = close_packed_spheres_per_um2(diameter_nm) * math.pi * radius_um**2
    assert covered == pytest.approx(math.pi / (2.0 * math.sqrt(3.0)), rel=1e-12)
    assert covered == pytest.approx(0.9069, abs=5e-5)  # the rounded value in REFERENCES.md


def test_area_fraction_constant_is_pi_over_two_root_three():
    # Geometric identity, computed here independently.
    assert pytest.approx(math.pi / math.sqrt(12.0), rel=1e-15) == CLOSE_PACKED_AREA_FRACTION


def test_one_sphere_per_hexagonal_unit_cell():
    # Geometric identity: a rhombic cell of side D and angle 60° has area (√3/2)·D² and holds
    # one sphere; for D = 500 nm = 0.5 µm the cell is √3/2 · 0.25 µm² = 0.21651 µm².
    cell_area_um2 = math.sqrt(3.0) / 2.0 * 0.5**2
    assert close_packed_spheres_per_um2(500.0) == pytest.approx(1.0 / cell_area_um2, rel=1e-12)


def test_per_cm2_is_per_um2_times_1e8():
    # Unit identity: 1 cm² = 10⁸ µm².
    assert close_packed_spheres_per_cm2(600.0) == pytest.approx(
        close_packed_spheres_per_um2(600.0) * 1e8, rel=1e-12
    )


def test_suspension_volume_hand_worked_example():
    # Hand arithmetic for 1 cm² of 1000 nm polystyrene (1.05 g/cm³) from 1 % w/v:
    #   n = 2/(√3 · 1 µm²) = 1.15470 µm⁻² = 1.15470e8 cm⁻²  -> N = 1.15470e8 spheres
    #   sphere volume = π/6 µm³ = 5.23599e-13 cm³
    #   mass = 1.15470e8 × 5.23599e-13 cm³ × 1.05 g/cm³ = 6.3485e-5 g
    #   1 % w/v = 0.01 g/mL -> volume = 6.3485e-3 mL = 6.3485 µL
    need = suspension_volume_for_monolayer(
        slide_area_cm2=1.0, diameter_nm=1000.0, solids_percent_w_v=1.0, sphere_density_g_cm3=1.05
    )
    assert need.sphere_count == pytest.approx(1.15470e8, rel=1e-5)
    assert need.sphere_mass_g == pytest.approx(6.3485e-5, rel=1e-4)
    assert need.suspension_volume_uL == pytest.approx(6.3485, rel=1e-4)


def test_suspension_mass_equals_slab_volume_fraction_times_density():
    # Geometric identity: close-packed spheres fill π/(3√3) ≈ 0.6046 of a slab one diameter
    # thick, so the sphere mass per area is 0.6046 · D · ρ (independent of the count).
    diameter_nm, area_cm2, density = 600.0, 2.5, 2.0
    need = suspension_volume_for_monolayer(
        slide_area_cm2=area_cm2, diameter_nm=diameter_nm, solids_percent_w_v=5.0,
        sphere_density_g_cm3=density,
    )
    slab_cm3 = area_cm2 * diameter_nm * 1e-7
    expected_g = math.pi / (3.0 * math.sqrt(3.0)) * slab_cm3 * density
    assert need.sphere_mass_g == pytest.approx(expected_g, rel=1e-12)


def test_excess_factor_scales_volume_and_mass_but_not_count():
    base = suspension_volume_for_monolayer(
        slide_area_cm2=1.0, diameter_nm=600.0, solids_percent_w_v=2.5, sphere_density_g_cm3=1.05
    )
    doubled = suspension_volume_for_monolayer(
        slide_area_cm2=1.0, diameter_nm=600.0, solids_percent_w_v=2.5, sphere_density_g_cm3=1.05,
        excess_factor=2.0,
    )
    assert doubled.suspension_volume_uL == pytest.approx(2.0 * base.suspension_volume_uL)
    assert doubled.sphere_mass_g == pytest.approx(2.0 * base.sphere_mass_g)
    assert doubled.sphere_count == base.sphere_count
    assert doubled.excess_factor == 2.0


def test_typical_densities():
    # Polystyrene 1.05 g/cm³: common practice (supplier data sheets). Silica 2.0: from memory.
    assert TYPICAL_SPHERE_DENSITY_G_CM3["polystyrene"] == pytest.approx(1.05, abs=0.01)
    assert 1.9 <= TYPICAL_SPHERE_DENSITY_G_CM3["silica"] <= 2.2


@pytest.mark.parametrize(
    "field, value",
    [
        ("slide_area_cm2", 0.0),
        ("diameter_nm", -600.0),
        ("solids_percent_w_v", 0.0),
        ("solids_percent_w_v", 150.0),
        ("sphere_density_g_cm3", float("nan")),
        ("excess_factor", 0.5),
    ],
)
def test_bad_suspension_inputs_name_the_field(field, value):
    kwargs = {
        "slide_area_cm2": 1.0,
        "diameter_nm": 600.0,
        "solids_percent_w_v": 2.5,
        "sphere_density_g_cm3": 1.05,
    }
    kwargs[field] = value
    with pytest.raises(AnalysisInputError) as caught:
        suspension_volume_for_monolayer(**kwargs)
    assert caught.value.field == field


@pytest.mark.parametrize("function", [close_packed_spheres_per_um2, close_packed_spheres_per_cm2])
def test_non_positive_diameter_refused(function):
    with pytest.raises(AnalysisInputError) as caught:
        function(0.0)
    assert caught.value.field == "diameter_nm"
