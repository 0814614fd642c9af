"""Builders shared by the Make page tests and the browser tests, all through services."""

from __future__ import annotations

from pathlib import Path

from django.core.files.uploadedfile import SimpleUploadedFile

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


class QcLab:
    """Benzenethiol, example limits and the neat reference, as the demo sets them up.

    Acquisition settings are the ones fixtures/raman/generate.py states for its files.
    """

    def __init__(self, chain, administrator):
        from qc.services import (
            qc_limit_set_define,
            reference_analyte_define,
            reference_measurement_import,
        )

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
        path = FIXTURES / "raman" / "reference_neat_benzenethiol.csv"
        self.reference = reference_measurement_import(
            actor=chain.maker, analyte_lot=self.lot, filename=path.name,
            content=path.read_bytes(), measured_on=chain.day(5), laser_nm=785.0,
            power_mW=20.0, integration_s=10.0, concentration_mol_L=9.74,
            effective_height_um=12.0, effective_area_um2=1.5, effective_height_rel_u=0.15)
