"""QC request parsers: uploads (UV-vis, reference and QC Raman) and the lab's limits.

Fields are the keyword arguments of the qc services; file fields carry the name the service
uses in its refusals (``raw_file``, ``blank_file``), so an error on line 12 of the upload
comes back as ``{"field": "raw_file", ...}``.
"""

from __future__ import annotations

from django.utils import timezone
from rest_framework import serializers

from inventory.api.fields import FiniteFloat, LabDate, NamedRef, RecordRef, Upload, file_parts
from inventory.api.serializers import ServiceSerializer
from inventory.api.units import integer_bounds
from inventory.models import NanoparticleBatch, ReagentLot, Substrate
from inventory.services.toolkit import RawUpload
from qc import services
from qc.models import (
    ColloidLimitSet,
    ColloidMetal,
    IntensityMeasure,
    QcLimitSet,
    QcMeasurement,
    ReferenceAnalyte,
    ReferenceMeasurement,
    UvVisRecord,
)


def _analyte(**kwargs):
    return NamedRef(ReferenceAnalyte, slug_field="name", **kwargs)


class _FileImport(ServiceSerializer):
    """An import of one instrument file given as ``raw_file``; ``measured_on`` defaults to
    today, as on the command line."""

    raw_file = Upload(help_text="The instrument's export, kept exactly as uploaded.")
    measured_on = LabDate(required=False, help_text="Date measured (default today).")
    notes = serializers.CharField(required=False, allow_blank=True)

    def arguments(self) -> dict:
        data = super().arguments()
        data.update(self.file_arguments(data.pop("raw_file")))
        data.setdefault("measured_on", timezone.localdate())
        return data

    def file_arguments(self, upload) -> dict:
        filename, content = file_parts(upload)
        return {"filename": filename, "content": content}


class _Acquisition(_FileImport):
    """A Raman acquisition: the upload is handed over as a ``RawUpload`` (a big one by its
    temporary file on disk, hashed there once), never read into memory here."""

    analyte_lot = RecordRef(ReagentLot, help_text="Code of the reference-analyte lot.")
    laser_nm = FiniteFloat(help_text="Excitation wavelength.")
    power_mW = FiniteFloat(help_text="Laser power at the sample.")
    integration_s = FiniteFloat(help_text="Integration time per accumulation.")
    accumulations = serializers.IntegerField(default=1)  # bounds: the kind's range table
    objective = serializers.CharField(max_length=60, required=False, allow_blank=True)
    analyte = _analyte(required=False, allow_null=True, help_text="Name of the analyte, when "
                       "the lot is linked to more than one.")

    def file_arguments(self, upload) -> dict:
        return {"upload": RawUpload.of_django_file(upload)}


class UvVisImport(_FileImport):
    ranges_model = UvVisRecord
    service = staticmethod(services.uvvis_record_import)
    batch = RecordRef(NanoparticleBatch, help_text="Code of the colloid batch.")
    dilution_factor = FiniteFloat(default=1.0, help_text="Total volume / colloid volume.")
    path_length_cm = FiniteFloat(default=1.0, help_text="Cell path length.")
    blank_file = Upload(required=False, help_text="Blank spectrum to subtract point by point.")

    def arguments(self) -> dict:
        data = super().arguments()
        blank = data.pop("blank_file", None)
        data["blank"] = None if blank is None else file_parts(blank)
        return data


class QcImport(_Acquisition):
    ranges_model = QcMeasurement
    service = staticmethod(services.qc_measurement_submit)
    substrate = RecordRef(Substrate, help_text="Code of the substrate measured.")
    reference = RecordRef(ReferenceMeasurement, required=False, allow_null=True,
                          help_text="Code of the reference measurement, for the enhancement "
                                    "factor.")
    surface_density_per_nm2 = FiniteFloat(required=False, allow_null=True,
                                          help_text="Analyte molecules per nm² (default: the "
                                                    "analyte's monolayer density).")
    surface_density_rel_u = FiniteFloat(default=0.0)
    surface_area_factor = FiniteFloat(
        required=False, allow_null=True,
        help_text="Metal area / projected area, when entered (give surface_area_source). "
                  "Left out: derived from the substrate's deposition (sphere diameter and "
                  "film height).")
    surface_area_rel_u = FiniteFloat(default=0.0, help_text="Relative standard uncertainty "
                                     "of an entered surface-area factor.")
    surface_area_source = serializers.CharField(required=False, allow_blank=True, default="",
                                                help_text="Where an entered factor comes "
                                                          "from.")
    surface_area_assumed_one = serializers.BooleanField(
        default=False, help_text="Assume a factor of 1 (the metal area is not known); "
                                 "recorded as 'assumed 1' with the EF.")
    shared_measurement = serializers.BooleanField(
        default=False, help_text="True when this one file really measured several substrates "
                                 "(otherwise a file already the QC of another substrate is "
                                 "refused).")


class ReferenceImport(_Acquisition):
    ranges_model = ReferenceMeasurement
    service = staticmethod(services.reference_measurement_import)
    concentration_mol_L = FiniteFloat(help_text="Analyte concentration of the neat/standard "
                                                "sample.")
    effective_height_um = FiniteFloat(help_text="Effective scattering height H_eff (Le Ru et "
                                                "al. 2007).")
    effective_area_um2 = FiniteFloat(help_text="Effective spot area A_eff.")
    concentration_rel_u = FiniteFloat(default=0.0)
    effective_height_rel_u = FiniteFloat(default=0.0)


class QcLimitSetDefine(ServiceSerializer):
    ranges_model = QcLimitSet
    service = staticmethod(services.qc_limit_set_define)
    product_kind = serializers.ChoiceField(choices=Substrate.Stage.choices,
                                           help_text="Substrate stage these limits judge.")
    analyte = _analyte(help_text="Name of the reference analyte.")
    band_position_tolerance_cm1 = FiniteFloat(help_text="Largest accepted distance of the "
                                                        "fitted band from the QC band.")
    valid_days = serializers.IntegerField(**integer_bounds(QcLimitSet.RANGES["valid_days"]),
                                          help_text="How long a passed QC stays current.")
    min_enhancement_factor = FiniteFloat(required=False, allow_null=True)
    max_rsd_percent = FiniteFloat(required=False, allow_null=True, help_text="Largest RSD "
                                  "of the band height over a map.")
    min_snr = FiniteFloat(required=False, allow_null=True)
    min_map_points = serializers.IntegerField(
        **integer_bounds(QcLimitSet.RANGES["min_map_points"]), default=25,
        help_text="Fewest map points that can show uniformity (a smaller map fails it).")
    is_example = serializers.BooleanField(default=False)
    rationale = serializers.CharField(required=False, allow_blank=True)
    intensity_measure = serializers.ChoiceField(
        choices=IntensityMeasure.choices, default=IntensityMeasure.HEIGHT,
        help_text="Band figure for enhancement factors and map uniformity.")


class ColloidLimitSetSet(ServiceSerializer):
    ranges_model = ColloidLimitSet
    service = staticmethod(services.colloid_limit_set_set)
    metal = serializers.ChoiceField(choices=ColloidMetal.choices)
    peak_min_nm = FiniteFloat()
    peak_max_nm = FiniteFloat()
    fwhm_max_nm = FiniteFloat()
    peak_shift_max_nm = FiniteFloat()
    absorbance_loss_max_fraction = FiniteFloat()
    aggregation_index_max = FiniteFloat()
    size_tolerance_percent = FiniteFloat(default=15.0, help_text="Largest accepted Mie "
                                         "versus calibration size difference.")
    flag_size_disagreement = serializers.BooleanField(default=False)
    is_example = serializers.BooleanField(default=False)
    rationale = serializers.CharField(required=False, allow_blank=True)


class ReferenceAnalyteDefine(ServiceSerializer):
    ranges_model = ReferenceAnalyte
    service = staticmethod(services.reference_analyte_define)
    name = serializers.CharField(max_length=120)
    band_positions_cm1 = serializers.ListField(child=FiniteFloat(), max_length=50)
    band_positions_source = serializers.CharField(max_length=200, help_text="Where the band "
                                                  "positions come from ('from memory' if "
                                                  "recalled).")
    qc_band_cm1 = FiniteFloat(help_text="The band measured for QC.")
    qc_band_window_cm1 = FiniteFloat(default=40.0)
    reference_band_cm1 = FiniteFloat(required=False, allow_null=True)
    surface_density_per_nm2 = FiniteFloat(help_text="Molecules per nm² in a full monolayer.")
    surface_density_source = serializers.CharField(max_length=200)
    lots = RecordRef(ReagentLot, many=True, required=False)
