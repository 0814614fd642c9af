"""A small realistic lab for the page tests, built only through the product's services.

The files are the invented fixtures in fixtures/ (raman, uvvis, chronoamperograms); the
acquisition settings are those the demo uses with them (qc/demo_raman.py).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pytest
from django.conf import settings

FIXTURES = Path(settings.BASE_DIR) / "fixtures"
MAP_SETTINGS = {"laser_nm": 785.0, "power_mW": 2.0, "integration_s": 1.0, "accumulations": 1}
ROLES = ("viewer", "maker", "reviewer", "administrator")


def fixture_bytes(*parts: str) -> bytes:
    return FIXTURES.joinpath(*parts).read_bytes()


@dataclass
class Lab:
    users: dict
    good: object = None  # released substrate, passing QC map
    failed: object = None  # QC failed: flagged, in quarantine
    waiting: object = None  # QC passed, in quarantine, not yet released
    qc_good: object = None
    qc_failed: object = None
    reference: object = None
    bath: object = None
    run: object = None
    batch: object = None
    dataset: object = None
    extra: dict = field(default_factory=dict)


def _rules(chain):
    for kind, days, counted in (("substrate", 30, "made"), ("nanoparticlebatch", 60, "made"),
                                ("reagentlot", 365, "received")):
        chain.s.shelf_life_rule_set(actor=None, record_kind=kind, shelf_life_days=days,
                                    counted_from=counted)


def _qc_setup(chain, admin):
    from qc.services.raman import (
        qc_limit_set_define,
        reference_analyte_define,
        reference_measurement_import,
    )

    lot = chain.lot("reference_analyte", ghs_hazard_codes="H226 H301 H310 H330")
    analyte = reference_analyte_define(
        actor=admin, name="Benzenethiol", band_positions_cm1=[999, 1022, 1073, 1573],
        band_positions_source="from memory (SERS on gold)", qc_band_cm1=1073.0,
        reference_band_cm1=1094.0, surface_density_per_nm2=6.8,
        surface_density_source="from memory", lots=[lot])
    for kind in ("particles", "film"):
        qc_limit_set_define(actor=admin, product_kind=kind, analyte=analyte,
                            min_enhancement_factor=1e6, max_rsd_percent=20.0, min_snr=20.0,
                            band_position_tolerance_cm1=3.0, valid_days=14, is_example=True)
    reference = reference_measurement_import(
        actor=chain.maker, analyte_lot=lot, filename="reference_neat_benzenethiol.csv",
        content=fixture_bytes("raman", "reference_neat_benzenethiol.csv"),
        measured_on=chain.day(5), laser_nm=785.0, power_mW=20.0, integration_s=10.0,
        concentration_mol_L=9.74, effective_height_um=12.0, effective_area_um2=1.5)
    return lot, reference


def _qc(chain, substrate, lot, reference, filename):
    from qc.services.raman import qc_measurement_import

    return qc_measurement_import(actor=chain.maker, substrate=substrate, analyte_lot=lot,
                                 filename=filename, content=fixture_bytes("raman", filename),
                                 measured_on=chain.day(1), reference=reference,
                                 surface_area_assumed_one=True, shared_measurement=True,
                                 **MAP_SETTINGS)


def build_lab(chain, users) -> Lab:
    from inventory.models import Substrate
    from qc.services.colloid import uvvis_record_import

    _rules(chain)
    lab = Lab(users=users)
    lab.bath = chain.lot("plating_bath", ghs_hazard_codes="H300 H310 H330 EUH032 H410")
    analyte_lot, lab.reference = _qc_setup(chain, users["administrator"])
    lab.batch = chain.batch(days_ago=10)
    for day in (0, 7):
        uvvis_record_import(actor=chain.maker, batch=lab.batch,
                            filename=f"ag_stable_day{day:02d}.csv",
                            content=fixture_bytes("uvvis", f"ag_stable_day{day:02d}.csv"),
                            measured_on=chain.day(10 - day), dilution_factor=10.0)
    lab.good = chain.decorated_substrate(batch=lab.batch)
    lab.failed = chain.decorated_substrate(batch=lab.batch)
    lab.waiting = chain.decorated_substrate(batch=lab.batch)
    lab.qc_good = _qc(chain, lab.good, analyte_lot, lab.reference, "good_substrate_map.csv")
    lab.qc_failed = _qc(chain, lab.failed, analyte_lot, lab.reference,
                        "nonuniform_substrate_map.csv")
    # The waiting piece goes back to quarantine and gets a passing QC: ready to be signed.
    chain.s.record_transition(actor=chain.reviewer, record=lab.waiting, to_status="quarantine",
                              reason="Re-test before use")
    _qc(chain, lab.waiting, analyte_lot, lab.reference, "good_substrate_map.csv")
    lab.run, _pieces = chain.run(pieces=2, bath=lab.bath)
    chain.s.deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=lab.run, filename="au_600nm_hd050.csv",
        content=fixture_bytes("chronoamperograms", "au_600nm_hd050.csv"))
    lab.dataset = chain.s.dataset_register(
        actor=chain.maker, title="Thiram screen, apple peel extract",
        substrates=[Substrate.objects.get(pk=lab.good.pk)], acquired_on=chain.today,
        files=[("scan01.csv", b"shift,counts\n1000,12\n1001,13\n")], instrument="bench Raman")
    lab.good = Substrate.objects.get(pk=lab.good.pk)
    return lab


@pytest.fixture
def lab(chain, viewer, maker, reviewer, administrator):
    users = {"viewer": viewer, "maker": maker, "reviewer": reviewer,
             "administrator": administrator}
    return build_lab(chain, users)


@pytest.fixture
def login(client):
    """Sign ``client`` in as one of the lab's users by role name."""
    def sign_in(lab: Lab, role: str):
        client.force_login(lab.users[role])
        return client
    return sign_in
