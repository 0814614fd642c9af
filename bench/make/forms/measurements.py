"""Make forms for instrument files: UV-vis of a colloid, reference and QC Raman, datasets."""

from __future__ import annotations

from typing import ClassVar

from django import forms

from inventory import services
from inventory.models import NanoparticleBatch, ReagentKind, Substrate
from inventory.services.toolkit import RawUpload
from qc.models import ReferenceMeasurement
from qc.services import qc_measurement_submit, reference_measurement_import, uvvis_record_import

from .base import (
    CodeChoiceField,
    CodeMultipleChoiceField,
    MakeForm,
    MultipleFileField,
    date_field,
    number,
)
from .fabrication import IN_PROGRESS, lots_of, notes_field

ANALYTE_ROLE = "reference analyte"  # the lineage role both Raman imports give the lot


class UvVisRecordForm(MakeForm):
    field_order = ("batch", "raw_file", "measured_on", "dilution_factor", "path_length_cm",
                   "blank_file")

    raw_file = forms.FileField(label="UV-vis spectrum (two-column text or JCAMP-DX, nm)")
    measured_on = date_field("Measured on")
    dilution_factor = number("Dilution factor (total volume ÷ colloid volume)", initial=1.0)
    path_length_cm = number("Cell path length (cm)", initial=1.0)
    blank_file = forms.FileField(label="Blank spectrum to subtract (optional)", required=False)
    notes = notes_field()

    def add_choices(self):
        self.fields["batch"] = CodeChoiceField(
            self.usable(NanoparticleBatch.objects, statuses=IN_PROGRESS), label="Colloid batch")

    def submit(self, actor):
        data = dict(self.cleaned_data)
        filename, content = self.upload("raw_file")
        blank = self.upload("blank_file")
        del data["raw_file"], data["blank_file"]
        return uvvis_record_import(actor=actor, filename=filename, content=content,
                                   blank=blank, **data).record


class _RamanForm(MakeForm):
    """Acquisition settings both Raman uploads state (laser, power at the sample, exposure)."""

    last_used: ClassVar[dict[str, str]] = {"analyte_lot": ANALYTE_ROLE}

    raw_file = forms.FileField(label="Raman file (spectrum, JCAMP-DX or map; shift in cm⁻¹)")
    measured_on = date_field("Measured on")
    laser_nm = number("Laser wavelength (nm)")
    power_mW = number("Laser power at the sample (mW)")
    integration_s = number("Integration time per accumulation (s)")
    accumulations = forms.IntegerField(label="Accumulations", min_value=1, initial=1)
    objective = forms.CharField(label="Objective (e.g. 50×, NA 0.75)", max_length=60,
                                required=False)
    notes = notes_field()

    def analyte_choice(self):
        return CodeChoiceField(self.usable(lots_of(ReagentKind.REFERENCE_ANALYTE)),
                               label="Reference-analyte lot")

    def raw(self) -> dict:
        """The cleaned data with the upload as the services take it: a ``RawUpload`` (a big
        file by its temporary file on disk, hashed there once, never read into memory)."""
        data = dict(self.cleaned_data)
        data["upload"] = RawUpload.of_django_file(data.pop("raw_file"))
        return data


class ReferenceMeasurementForm(_RamanForm):
    """The non-enhanced analyte at a known concentration, for enhancement factors."""

    field_order = ("analyte_lot", "raw_file", "measured_on", "laser_nm", "power_mW",
                   "integration_s", "accumulations", "objective")

    concentration_mol_L = number("Analyte concentration (mol/L)")
    concentration_rel_u = number("Relative standard uncertainty of the concentration "
                                 "(fraction)", initial=0.0)
    effective_height_um = number("Effective scattering height H_eff (µm)")
    effective_height_rel_u = number("Relative standard uncertainty of H_eff (fraction)",
                                    initial=0.0)
    effective_area_um2 = number("Effective laser spot area A_eff (µm²)")

    def add_choices(self):
        self.fields["analyte_lot"] = self.analyte_choice()

    def submit(self, actor):
        return reference_measurement_import(actor=actor, **self.raw())


class QcMeasurementForm(_RamanForm):
    """A reference-analyte spectrum or map on a substrate, judged against the lab's limits."""

    field_order = ("substrate", "analyte_lot", "reference", "raw_file", "measured_on",
                   "laser_nm", "power_mW", "integration_s", "accumulations", "objective")
    error_fields: ClassVar[dict[str, str]] = {"analyte": "analyte_lot"}

    surface_area_factor = number(
        "Metal surface area ÷ projected area (×), only if known from elsewhere; leave empty "
        "to derive it from the substrate's deposition (sphere diameter and film height)",
        required=False)
    surface_area_rel_u = number("Relative standard uncertainty of that factor (fraction)",
                                initial=0.0, required=False)
    surface_area_source = forms.CharField(
        label="Where that factor comes from (e.g. electrochemical surface area)",
        max_length=200, required=False)
    surface_area_assumed_one = forms.BooleanField(
        label="Assume a surface-area factor of 1 (the metal area is not known; the EF is then "
              "an upper bound and says so)", required=False)
    surface_density_rel_u = number("Relative standard uncertainty of the monolayer density "
                                   "(fraction)", initial=0.0)
    shared_measurement = forms.BooleanField(
        required=False, label="This one file measured several substrates",
        help_text="Tick only if so: a file already the QC of another substrate is otherwise "
                  "refused.")

    def add_choices(self):
        self.fields["substrate"] = CodeChoiceField(
            self.usable(Substrate.objects, statuses=IN_PROGRESS), label="Substrate measured")
        self.fields["analyte_lot"] = self.analyte_choice()
        references = ReferenceMeasurement.objects.select_related("analyte").order_by(
            "-measured_on", "-id")
        self.fields["reference"] = CodeChoiceField(
            references, required=False, label="Reference measurement (for the enhancement "
                                              "factor)", empty_label="— none: no EF —")
        self.fields["reference"].label_from_instance = lambda ref: (
            f"{ref.code} · {ref.analyte} · {ref.laser_nm:g} nm · {ref.measured_on.isoformat()}")
        newest = references.values_list("code", flat=True).first()
        if newest:
            self.fields["reference"].initial = newest

    def submit(self, actor):
        data = self.raw()
        if data["surface_area_rel_u"] is None:  # only meaningful with an entered factor
            data["surface_area_rel_u"] = 0.0
        return qc_measurement_submit(actor=actor, **data)


class DatasetForm(MakeForm):
    field_order = ("title", "substrates", "acquired_on", "files", "instrument", "operator",
                   "consume_substrates")
    error_fields: ClassVar[dict[str, str]] = {"made_on": "acquired_on"}

    title = forms.CharField(label="Title", max_length=200)
    acquired_on = date_field("Acquired on")
    files = MultipleFileField(label="Data files (any format; SHA-256 kept for each)",
                              required=False)
    instrument = forms.CharField(label="Instrument", max_length=120, required=False)
    operator = forms.CharField(label="Operator", max_length=120, required=False)
    consume_substrates = forms.BooleanField(
        label="The pieces are used up (mark released substrates consumed)", required=False)
    notes = notes_field()

    def add_choices(self):
        self.fields["substrates"] = CodeMultipleChoiceField(
            self.usable(Substrate.objects, statuses=IN_PROGRESS),
            label="Substrates measured (tick each)")

    def submit(self, actor):
        data = dict(self.cleaned_data)
        uploads = data.pop("files")
        data["files"] = [RawUpload.of_django_file(upload) for upload in uploads]
        return services.dataset_register(actor=actor, **data)
