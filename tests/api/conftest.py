"""API fixtures: clients per role, and a lab built through the services (never the API under test).

The Raman files are the invented demo files in fixtures/raman (fixtures/raman/generate.py
gives their acquisition settings and what each should show); the chronoamperograms are the
invented files in fixtures/chronoamperograms (made for h/D 0.50 and 0.30, Au(I), 600 nm
spheres, 1.00 cm²).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures"
RAMAN = FIXTURES / "raman"
CHRONO = FIXTURES / "chronoamperograms"
UVVIS = FIXTURES / "uvvis"

# fixtures/raman/generate.py: "Acquisition settings assumed".
MAP_SETTINGS = {"laser_nm": 785.0, "power_mW": 2.0, "integration_s": 1.0, "accumulations": 1}


def upload(path: Path) -> SimpleUploadedFile:
    """A fixture file as a multipart upload."""
    return SimpleUploadedFile(path.name, path.read_bytes())


def client_for(user) -> APIClient:
    """A client authenticated the way scripts are: with the user's token."""
    client = APIClient()
    if user is not None:
        token, _ = Token.objects.get_or_create(user=user)
        client.credentials(HTTP_AUTHORIZATION=f"Token {token.key}")
    return client


@pytest.fixture
def clients(viewer, maker, reviewer, administrator):
    return {"anonymous": APIClient(), "viewer": client_for(viewer), "maker": client_for(maker),
            "reviewer": client_for(reviewer), "administrator": client_for(administrator)}


class QcLab:
    """Benzenethiol with the demo's example limits, its neat reference, and a ready substrate."""

    def __init__(self, chain, administrator):
        from qc.services import (
            qc_limit_set_define,
            reference_analyte_define,
            reference_measurement_import,
        )

        self.chain = chain
        self.lot = chain.lot("reference_analyte", days_ago=20)
        self.analyte = reference_analyte_define(
            actor=administrator, name="Benzenethiol", band_positions_cm1=[999, 1022, 1073, 1573],
            band_positions_source="from memory", qc_band_cm1=1073.0, qc_band_window_cm1=40.0,
            reference_band_cm1=1094.0, surface_density_per_nm2=6.8,
            surface_density_source="from memory", lots=[self.lot])
        for kind in ("particles", "linker", "film"):
            qc_limit_set_define(actor=administrator, product_kind=kind, analyte=self.analyte,
                                min_enhancement_factor=1e5, max_rsd_percent=20.0, min_snr=20.0,
                                band_position_tolerance_cm1=3.0, valid_days=14)
        self.reference = reference_measurement_import(
            actor=chain.maker, analyte_lot=self.lot, filename="reference.csv",
            content=(RAMAN / "reference_neat_benzenethiol.csv").read_bytes(),
            measured_on=chain.day(5), laser_nm=785.0, power_mW=20.0, integration_s=10.0,
            concentration_mol_L=9.74, effective_height_um=12.0, effective_area_um2=1.5)

    def upload_fields(self, substrate, name: str) -> dict:
        """Multipart fields of a QC upload of fixture ``name`` on ``substrate``."""
        return {"substrate": substrate.code, "analyte_lot": self.lot.code,
                "reference": self.reference.code, "measured_on": self.chain.day(1).isoformat(),
                "raw_file": upload(RAMAN / name), **MAP_SETTINGS}

    def measure(self, substrate, name: str):
        from qc.services import qc_measurement_import

        return qc_measurement_import(
            actor=self.chain.maker, substrate=substrate, analyte_lot=self.lot,
            filename=name, content=(RAMAN / name).read_bytes(), measured_on=self.chain.day(1),
            reference=self.reference, **MAP_SETTINGS)


@pytest.fixture
def qc_lab(chain, administrator):
    return QcLab(chain, administrator)
