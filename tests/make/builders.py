"""Builders shared by the Make page tests and the browser tests, all through services.

The QC set-up they share with the API tests is ``tests.qc_lab.QcLab``.
"""

from __future__ import annotations

from pathlib import Path

from django.core.files.uploadedfile import SimpleUploadedFile

from tests.qc_lab import QcLab  # noqa: F401  (re-exported for the Make and browser tests)

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures"


def fixture_upload(relative: str, *, name: str | None = None) -> SimpleUploadedFile:
    path = FIXTURES / relative
    return SimpleUploadedFile(name or path.name, path.read_bytes())


def template_600nm(chain):
    """A released template of 600 nm spheres, as the example chronoamperograms assume."""
    spheres = chain.s.sphere_lot_receive(actor=chain.maker, material="polystyrene",
                                         nominal_diameter_nm=600, solids_percent_w_v=10,
                                         received_on=chain.day(30))
    chain.release(spheres)
    return chain.template(spheres=spheres, days_ago=10)


# Acquisition settings fixtures/raman/generate.py states for its SERS maps, as form values.
MAP_SETTINGS = {"laser_nm": "785", "power_mW": "2.0", "integration_s": "1.0",
                "accumulations": "1"}
