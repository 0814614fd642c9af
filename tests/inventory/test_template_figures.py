"""Template assemblies store close-packed coverage and the suspension a slide needs."""

from __future__ import annotations

import math

import pytest
from django.core.exceptions import ValidationError

from inventory.models import TemplateAssembly


def _spheres(chain, material="polystyrene", diameter_nm=600.0, solids=10.0):
    lot = chain.s.sphere_lot_receive(actor=chain.maker, material=material,
                                     nominal_diameter_nm=diameter_nm, solids_percent_w_v=solids,
                                     received_on=chain.day(30))
    return chain.release(lot)


def _assemble(chain, spheres, **extra):
    return chain.s.template_assemble(actor=chain.maker, sphere_lot=spheres,
                                     base_slide_lot=chain.lot("base_slide"),
                                     method="interface_transfer", slide_area_cm2=2.5,
                                     made_on=chain.day(2), **extra)


def _volume_uL(area_cm2, diameter_nm, solids_percent, density_g_cm3, excess):
    """By hand: N = 2A/(√3·D²); m = f·N·ρ·πD³/6; V = m/(c/100) (hexagonal close packing)."""
    diameter_cm = diameter_nm * 1e-7
    count = 2 * area_cm2 / (math.sqrt(3) * diameter_cm**2)
    mass_g = excess * count * density_g_cm3 * math.pi * diameter_cm**3 / 6
    return mass_g / (solids_percent / 100) * 1e3


def test_close_packed_figures_are_stored(chain):
    template = TemplateAssembly.objects.get(pk=_assemble(chain, _spheres(chain)).pk)
    # n = 2/(√3·D²), Conway & Sloane ch. 1; D = 600 nm = 6e-5 cm.
    assert template.spheres_per_cm2 == pytest.approx(2 / (math.sqrt(3) * 6e-5**2), rel=1e-12)
    # Geometric identity: n·πD²/4 is the packing fraction π/(2√3).
    assert template.spheres_per_cm2 * math.pi * 6e-5**2 / 4 == pytest.approx(
        math.pi / (2 * math.sqrt(3)), rel=1e-12)
    # Polystyrene 1.05 g/cm³ (common practice; supplier sheets 1.04–1.06), excess 1.
    assert template.sphere_density_g_cm3 == 1.05 and template.suspension_excess_factor == 1.0
    assert template.suspension_volume_computed_uL == pytest.approx(
        _volume_uL(2.5, 600, 10, 1.05, 1.0), rel=1e-12)
    assert template.suspension_volume_uL is None  # nothing was typed


def test_the_makers_volume_is_kept_beside_the_computed_one(chain):
    template = _assemble(chain, _spheres(chain), suspension_volume_uL=40.0,
                         sphere_density_g_cm3=1.06, suspension_excess_factor=3.0)
    template.refresh_from_db()
    assert template.suspension_volume_uL == 40.0
    assert template.suspension_volume_computed_uL == pytest.approx(
        _volume_uL(2.5, 600, 10, 1.06, 3.0), rel=1e-12)
    assert (template.sphere_density_g_cm3, template.suspension_excess_factor) == (1.06, 3.0)


def test_without_a_known_density_the_volume_is_left_blank(chain):
    template = _assemble(chain, _spheres(chain, material="pmma", diameter_nm=400.0))
    template.refresh_from_db()
    assert template.spheres_per_cm2 == pytest.approx(2 / (math.sqrt(3) * 4e-5**2), rel=1e-12)
    assert template.suspension_volume_computed_uL is None
    assert template.sphere_density_g_cm3 is None


@pytest.mark.parametrize("extra,field", [
    ({"suspension_excess_factor": 0.5}, "suspension_excess_factor"),
    ({"sphere_density_g_cm3": -1.0}, "sphere_density_g_cm3"),
])
def test_bad_figures_are_refused_and_nothing_is_saved(chain, extra, field):
    spheres = _spheres(chain)
    with pytest.raises(ValidationError) as error:
        _assemble(chain, spheres, **extra)
    assert set(error.value.error_dict) == {field}
    assert TemplateAssembly.objects.count() == 0
