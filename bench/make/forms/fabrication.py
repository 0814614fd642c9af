"""Make forms for the fabrication chain: template, deposition run, linker, colloid, particles."""

from __future__ import annotations

from typing import ClassVar

from django import forms

from inventory import services
from inventory.models import (
    DepositionRun,
    NanoparticleBatch,
    ReagentKind,
    ReagentLot,
    SphereLot,
    Status,
    Substrate,
    TemplateAssembly,
)
from inventory.physics.chronoamperogram import CURRENT_UNITS_A, TIME_UNITS_S
from inventory.physics.electrodeposition import COMMON_ELECTRONS_PER_ATOM, SUPPORTED_METALS
from qc.models.colloid import ColloidMetal
from qc.services import uvvis_record_import

from .base import CodeChoiceField, CodeMultipleChoiceField, MakeForm, date_field, number
from .materials import storage_choice

IN_PROGRESS = (Status.QUARANTINE, Status.RELEASED)


def notes_field() -> forms.CharField:
    return forms.CharField(label="Notes", required=False,
                           widget=forms.Textarea(attrs={"rows": 2}))


def unit_choice(label: str, units: dict[str, float]) -> forms.ChoiceField:
    """One entry per unit: the reader's aliases (sec, secs, uA …) share a scale, so the menu
    offers the first spelling of each scale, the micro sign for micro."""
    by_scale: dict[float, str] = {}
    for unit, scale in units.items():
        if scale not in by_scale or unit.startswith("\u00b5"):
            by_scale[scale] = unit
    return forms.ChoiceField(label=label, required=False,
                             choices=[("", "as the file's header says")]
                             + [(unit, unit) for unit in by_scale.values()])


def lots_of(*kinds: str):
    return ReagentLot.objects.filter(kind__in=kinds)


class TemplateAssemblyForm(MakeForm):
    method = forms.ChoiceField(label="Method", choices=TemplateAssembly.Method.choices)
    slide_area_cm2 = number("Slide area (cm²)")
    made_on = date_field("Made on")
    coverage_percent = number("Coverage seen (%)", required=False)
    suspension_volume_uL = number("Suspension dispensed (µL)", required=False)
    suspension_excess_factor = number("Excess over one monolayer (×, for the computed need)",
                                      initial=1.0)
    notes = notes_field()

    field_order = ("sphere_lot", "base_slide_lot")

    def add_choices(self):
        self.fields["sphere_lot"] = CodeChoiceField(self.usable(SphereLot.objects),
                                                    label="Sphere lot")
        self.fields["base_slide_lot"] = CodeChoiceField(
            self.usable(lots_of(ReagentKind.BASE_SLIDE)), label="Base-slide lot")
        self.fields["storage"] = storage_choice()

    def submit(self, actor):
        return services.template_assemble(actor=actor, **self.cleaned_data)


class DepositionRunForm(MakeForm):
    """One run and all its pieces in one submission, optionally with its chronoamperogram
    (or, without one, the charge the potentiostat reported)."""

    last_used: ClassVar[dict[str, str]] = {"bath_lot": "plating bath"}

    metal = forms.ChoiceField(label="Metal deposited", choices=[(m, m) for m in SUPPORTED_METALS])
    electrons_per_atom = forms.IntegerField(
        label="Electrons per atom (n)", min_value=1, initial=1,
        help_text="Usual values: " + ", ".join(f"{ion} {n}"
                                               for ion, n in COMMON_ELECTRONS_PER_ATOM.items()))
    current_efficiency = number("Current efficiency (fraction, 0–1)", initial=1.0)
    mode = forms.ChoiceField(label="Mode", choices=DepositionRun.Mode.choices)
    setpoint_potential_V = number("Set potential (V vs reference)", required=False)
    setpoint_current_mA = number("Set current (mA)", required=False)
    electrode_area_cm2 = number("Electrode area (cm²)")
    target_height_over_diameter = number("Target film height h/D (fraction of sphere diameter)",
                                         required=False)
    made_on = date_field("Plated on")
    pieces = forms.IntegerField(label="Pieces cut from the film (number of substrates)",
                                min_value=1, max_value=200, initial=1)
    piece_area_cm2 = number("Area of each piece (cm²)", required=False)
    chronoamperogram = forms.FileField(label="Chronoamperogram (potentiostat text export)",
                                       required=False)
    time_unit = unit_choice("Time unit in the file", TIME_UNITS_S)
    current_unit = unit_choice("Current unit in the file", CURRENT_UNITS_A)
    cathodic_sign = forms.ChoiceField(label="Sign of the deposition current in the file",
                                      choices=DepositionRun.CathodicSign.choices,
                                      initial=DepositionRun.CathodicSign.NEGATIVE)
    start_s = number("Charge counted from (s)", required=False)
    end_s = number("Charge counted until (s)", required=False)
    charge_C = number("Or, without the file: the charge the potentiostat reported (C)",
                      required=False)
    notes = notes_field()

    field_order = ("template", "base_slide_lot", "bath_lot", "metal", "electrons_per_atom",
                   "current_efficiency", "mode", "setpoint_potential_V", "setpoint_current_mA",
                   "electrode_area_cm2", "target_height_over_diameter", "made_on", "pieces",
                   "piece_area_cm2", "storage")

    def add_choices(self):
        self.fields["template"] = CodeChoiceField(
            self.usable(TemplateAssembly.objects.select_related("sphere_lot")),
            label="Template (blank for a flat film)", required=False)
        self.fields["base_slide_lot"] = CodeChoiceField(
            self.usable(lots_of(ReagentKind.BASE_SLIDE)),
            label="Base-slide lot (flat film only)", required=False)
        self.fields["bath_lot"] = CodeChoiceField(
            self.usable(lots_of(ReagentKind.PLATING_BATH)), label="Plating bath lot")
        self.fields["storage"] = storage_choice()

    def submit(self, actor):
        data = dict(self.cleaned_data)
        data["chronoamperogram"] = self.upload("chronoamperogram")
        data["time_unit"] = data["time_unit"] or None
        data["current_unit"] = data["current_unit"] or None
        run, _pieces = services.deposition_run_record(actor=actor, **data)
        return run


class LinkerLayerForm(MakeForm):
    """One immersion: the same linker solution on one or more pieces."""

    last_used: ClassVar[dict[str, str]] = {"linker_lot": "linker"}
    field_order = ("linker_lot", "substrates", "concentration_mM", "immersion_h", "made_on",
                   "solvent_lot")

    concentration_mM = number("Linker concentration (mM)")
    immersion_h = number("Immersion time (h)")
    made_on = date_field("Immersed on")
    notes = notes_field()

    def add_choices(self):
        self.fields["linker_lot"] = CodeChoiceField(
            self.usable(lots_of(ReagentKind.LINKER_THIOL)), label="Linker thiol lot")
        self.fields["substrates"] = CodeMultipleChoiceField(
            self.usable(Substrate.objects.exclude(stage=Substrate.Stage.PARTICLES),
                        statuses=IN_PROGRESS), label="Substrates immersed (tick each piece)")
        self.fields["solvent_lot"] = CodeChoiceField(
            self.usable(lots_of(ReagentKind.SOLVENT)), label="Solvent lot", required=False)

    def submit(self, actor):
        return services.linker_layer_apply(actor=actor, **self.cleaned_data)


class NanoparticleBatchForm(MakeForm):
    """A colloid batch and, optionally, its first UV-vis spectrum in the same submission."""

    field_order = ("metal", "synthesis_method", "volume_mL", "made_on", "target_diameter_nm",
                   "source_lots", "storage", "notes")
    # A UV-vis refusal about the batch is about the metal chosen here.
    error_fields: ClassVar[dict[str, str]] = {"batch": "metal"}

    metal = forms.ChoiceField(label="Metal", choices=ColloidMetal.choices)
    synthesis_method = forms.ChoiceField(label="Synthesis",
                                         choices=NanoparticleBatch.Method.choices)
    volume_mL = number("Volume made (mL)")
    made_on = date_field("Made on")
    target_diameter_nm = number("Target particle diameter (nm)", required=False)
    notes = notes_field()
    raw_file = forms.FileField(label="UV-vis spectrum (optional; wavelength in nm)",
                               required=False)
    measured_on = date_field("Spectrum measured on")
    dilution_factor = number("Dilution factor (total volume ÷ colloid volume)", initial=1.0)
    path_length_cm = number("Cell path length (cm)", initial=1.0)
    blank_file = forms.FileField(label="Blank spectrum to subtract (optional)", required=False)

    def add_choices(self):
        self.fields["source_lots"] = CodeMultipleChoiceField(
            self.usable(lots_of(ReagentKind.METAL_SALT, ReagentKind.REDUCTANT,
                                ReagentKind.STABILISER, ReagentKind.SOLVENT,
                                ReagentKind.OTHER)),
            label="Reagent lots used (tick each)", required=False)
        self.fields["storage"] = storage_choice()

    def submit(self, actor):
        data = dict(self.cleaned_data)
        spectrum = self.upload("raw_file")
        uvvis = {name: data.pop(name) for name in ("measured_on", "dilution_factor",
                                                    "path_length_cm")}
        blank = self.upload("blank_file")
        del data["raw_file"], data["blank_file"]
        batch = services.nanoparticle_batch_make(actor=actor, **data)
        if spectrum is None:
            return batch
        filename, content = spectrum
        return uvvis_record_import(actor=actor, batch=batch, filename=filename,
                                   content=content, blank=blank, **uvvis).record


class ParticleAttachmentForm(MakeForm):
    field_order = ("substrate", "batch", "immersion_min", "made_on")

    immersion_min = number("Immersion time in the colloid (min)")
    made_on = date_field("Bound on")
    notes = notes_field()

    def add_choices(self):
        self.fields["substrate"] = CodeChoiceField(
            self.usable(Substrate.objects.filter(stage=Substrate.Stage.LINKER),
                        statuses=IN_PROGRESS), label="Substrate (with a linker layer)")
        self.fields["batch"] = CodeChoiceField(self.usable(NanoparticleBatch.objects),
                                               label="Colloid batch (released)")

    def submit(self, actor):
        return services.particle_attach(actor=actor, **self.cleaned_data)
