"""Raman QC part of the invented demo: example limits, benzenethiol, a reference, QC maps.

The files in fixtures/raman/ are INVENTED (see fixtures/raman/generate.py, which also gives
the acquisition settings used below).  The limit sets are example values (``is_example``):
a lab sets its own.  Outcomes: ``ready_a`` and ``ready_b`` pass and stay READY;
``flat_gold`` fails uniformity and ``bare_film`` fails enhancement (both flagged, held and
NOT READY); ``awaiting_qc`` gets no QC.
"""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

from django.conf import settings
from django.db import transaction

from inventory.demo import DemoScenario
from inventory.models import Substrate

from .models.raman import ReferenceAnalyte
from .services.raman import (
    qc_limit_set_define,
    qc_measurement_import,
    reference_analyte_define,
    reference_measurement_import,
)

__all__ = ["load_raman_demo"]

FIXTURES = Path(settings.SERSLEDGER_DEMO_FILES) / "raman"
DEMO_ANALYTE = "Benzenethiol"
MAP_SETTINGS = dict(laser_nm=785.0, power_mW=2.0, integration_s=1.0, accumulations=1,
                    objective="50× (demo)")
# (product kind, min EF, max RSD %, min S/N, tolerance cm⁻¹, valid days, why) — examples only.
EXAMPLE_LIMITS = [
    ("particles", 1e6, 20.0, 20.0, 3.0, 14, "particle-in-gap substrates reach 10⁶ and more"),
    ("film", 1e6, 25.0, 20.0, 3.0, 30, "structured films alone reach about 10⁶"),
]


def _fixture(name: str) -> tuple[str, bytes]:
    return name, (FIXTURES / name).read_bytes()


@transaction.atomic
def load_raman_demo(scenario: DemoScenario) -> None:
    """Add the Raman QC records to a loaded inventory demo (call once, after it)."""
    admin, maker = scenario.users["admin"], scenario.users["maker"]

    def day(n):
        return scenario.today - timedelta(days=n)

    lot = scenario.lots["analyte"]
    analyte = ReferenceAnalyte.objects.filter(name=DEMO_ANALYTE).first() or \
        reference_analyte_define(
            actor=admin, name=DEMO_ANALYTE, band_positions_cm1=[999, 1022, 1073, 1573],
            band_positions_source="from memory (SERS on gold)", qc_band_cm1=1073.0,
            qc_band_window_cm1=40.0, reference_band_cm1=1094.0,
            surface_density_per_nm2=6.8,
            surface_density_source="from memory (thiol monolayer on gold, about 6.8 per nm²)",
            lots=[lot])
    for kind, min_ef, max_rsd, min_snr, tolerance, days, why in EXAMPLE_LIMITS:
        qc_limit_set_define(actor=admin, product_kind=kind, analyte=analyte,
                            min_enhancement_factor=min_ef, max_rsd_percent=max_rsd,
                            min_snr=min_snr, band_position_tolerance_cm1=tolerance,
                            valid_days=days, is_example=True, rationale=f"Example value: {why}.")
    name, content = _fixture("reference_neat_benzenethiol.csv")
    reference = reference_measurement_import(
        actor=maker, analyte_lot=lot, filename=name, content=content, measured_on=day(5),
        laser_nm=785.0, power_mW=20.0, integration_s=10.0, objective="50× (demo)",
        concentration_mol_L=9.74, effective_height_um=12.0, effective_area_um2=1.5,
        effective_height_rel_u=0.15,
        notes="Invented demo file: neat benzenethiol, 9.74 mol/L (from memory).")
    outcomes = [("ready_a", "good_substrate_map.csv"), ("ready_b", "good_substrate_map.csv"),
                ("flat_gold", "nonuniform_substrate_map.csv"),
                ("bare_film", "weak_enhancement_map.csv")]
    for substrate_name, filename in outcomes:
        substrate = Substrate.objects.get(pk=scenario.substrates[substrate_name].pk)
        name, content = _fixture(filename)
        qc_measurement_import(actor=maker, substrate=substrate, analyte_lot=lot, filename=name,
                              content=content, measured_on=day(1), reference=reference,
                              surface_density_rel_u=0.2, notes="Invented demo map.",
                              # One invented file stands for several substrates' maps.
                              shared_measurement=True, **MAP_SETTINGS)
        scenario.substrates[substrate_name] = Substrate.objects.get(pk=substrate.pk)
