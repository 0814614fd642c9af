"""The one QC set-up the API, Make-page and browser tests share, built through the services.

Benzenethiol with the demo's example limits (EF ≥ 10⁶, RSD ≤ 20 %, S/N ≥ 20), its neat
reference spectrum, and helpers to measure or upload the invented maps of fixtures/raman
(fixtures/raman/generate.py gives their acquisition settings and what each should show).
"""

from __future__ import annotations

from pathlib import Path
from unittest import mock

from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures"
RAMAN = FIXTURES / "raman"

# fixtures/raman/generate.py: "Acquisition settings assumed".
MAP_SETTINGS = {"laser_nm": 785.0, "power_mW": 2.0, "integration_s": 1.0, "accumulations": 1}


def run_db_worker() -> None:
    """Run the task database backend's real worker in this process until the queue is empty.

    The worker calls ``close_old_connections`` between tasks, which closes a connection that
    is inside a transaction; under a test that is the test's own transaction (on PostgreSQL
    the connection really closes; SQLite's in-memory database ignores it).  A worker process
    holds no transaction there, so here, and only here, that call is left out.
    """
    with mock.patch("django_tasks_db.management.commands.db_worker.close_old_connections"):
        call_command("db_worker", "--batch", "--no-startup-delay", "--interval", "0",
                     verbosity=0)


class QcLab:
    """Benzenethiol, example limits and the neat reference, as the demo sets them up."""

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
        for kind in ("particles", "film", "linker"):
            qc_limit_set_define(actor=administrator, product_kind=kind, analyte=self.analyte,
                                min_enhancement_factor=1e6, max_rsd_percent=20.0, min_snr=20.0,
                                band_position_tolerance_cm1=3.0, valid_days=14, is_example=True)
        path = RAMAN / "reference_neat_benzenethiol.csv"
        self.reference = reference_measurement_import(
            actor=chain.maker, analyte_lot=self.lot, filename=path.name,
            content=path.read_bytes(), measured_on=chain.day(5), laser_nm=785.0,
            power_mW=20.0, integration_s=10.0, concentration_mol_L=9.74,
            effective_height_um=12.0, effective_area_um2=1.5, effective_height_rel_u=0.15)

    def upload_fields(self, substrate, name: str) -> dict:
        """Multipart fields of an API QC upload of fixture ``name`` on ``substrate``."""
        return {"substrate": substrate.code, "analyte_lot": self.lot.code,
                "reference": self.reference.code, "measured_on": self.chain.day(1).isoformat(),
                "raw_file": SimpleUploadedFile(name, (RAMAN / name).read_bytes()),
                "surface_area_assumed_one": "true", **MAP_SETTINGS}

    def measure(self, substrate, name: str):
        """Import fixture map ``name`` on ``substrate`` through the service."""
        from qc.services import qc_measurement_import

        return qc_measurement_import(
            actor=self.chain.maker, substrate=substrate, analyte_lot=self.lot,
            filename=name, content=(RAMAN / name).read_bytes(), measured_on=self.chain.day(1),
            # The few fixture maps stand for many substrates' own maps (stated, as required).
            reference=self.reference, surface_area_assumed_one=True, shared_measurement=True,
            **MAP_SETTINGS)
