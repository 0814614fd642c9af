"""Serializers: the read side made from the models, the write side shaped like the services.

Read serializers show every stored field, other records by their code and people by their
username.  Write serializers only parse: each names the service it feeds, and its fields are
that service's keyword arguments, so a service refusal keyed by ``made_on`` points at the
request field ``made_on``.  No rule is checked here that a service also checks.

The read side is in ``record_serializers``, the write base in ``service_serializer``, the
serializers that act on a stored record (signatures, void, amend) in
``signing_serializers``; all are named here.
"""

from __future__ import annotations

from rest_framework import serializers

from inventory import services
from inventory.models import (
    DepositionRun,
    NanoparticleBatch,
    ReagentKind,
    ReagentLot,
    RecordKind,
    ShelfLifeRule,
    SphereLot,
    StorageLocation,
    Substrate,
    TemplateAssembly,
)
from inventory.physics.chronoamperogram import CURRENT_UNITS_A, TIME_UNITS_S
from inventory.services.uploads import RawUpload

from .fields import AnyRecordRef, FiniteFloat, LabDate, RecordRef, Upload, file_parts
from .record_serializers import ReadPlan, RecordSerializer, read_plan, read_serializer
from .service_serializer import NUMERIC_FIELDS, ServiceSerializer
from .signing_serializers import Amend, RejectSign, ReleaseSign, Void
from .units import integer_bounds

__all__ = [
    "NUMERIC_FIELDS", "Amend", "ReadPlan", "RecordSerializer", "RejectSign", "ReleaseSign",
    "ServiceSerializer", "Void", "read_plan", "read_serializer",
]


class StorageLocationCreate(ServiceSerializer):
    service = staticmethod(services.storage_location_create)
    name = serializers.CharField(max_length=120)
    kind = serializers.ChoiceField(choices=StorageLocation.Kind.choices)
    room = serializers.CharField(max_length=60, required=False, allow_blank=True)


class ReagentLotReceive(ServiceSerializer):
    ranges_model = ReagentLot
    service = staticmethod(services.reagent_lot_receive)
    name = serializers.CharField(max_length=160)
    kind = serializers.ChoiceField(choices=ReagentKind.choices)
    supplier = serializers.CharField(max_length=120, required=False, allow_blank=True)
    supplier_lot = serializers.CharField(max_length=80, required=False, allow_blank=True)
    received_on = LabDate(required=False, allow_null=True, help_text="Date received.")
    opened_on = LabDate(required=False, allow_null=True, help_text="Date first opened.")
    prepared_on = LabDate(required=False, allow_null=True,
                          help_text="Date prepared (a solution made in the lab).")
    prepared_from = RecordRef(ReagentLot, many=True, required=False,
                              help_text="Codes of the reagent lots it was prepared from.")
    ghs_hazard_codes = serializers.CharField(max_length=200, required=False, allow_blank=True,
                                             help_text="GHS hazard statement codes, e.g. "
                                                       "'H300 H310'.")
    quantity = serializers.DecimalField(max_digits=12, decimal_places=3,
                                        min_value=ReagentLot.RANGES["quantity"].low,
                                        required=False, allow_null=True)
    quantity_unit = serializers.CharField(max_length=16, required=False, allow_blank=True,
                                          help_text="Unit of quantity, e.g. 'mL' or 'g'.")
    concentration_mM = FiniteFloat(required=False, allow_null=True)
    storage = RecordRef(StorageLocation, required=False, allow_null=True,
                        help_text="Code of the storage location.")
    notes = serializers.CharField(required=False, allow_blank=True)


class ReagentLotOpen(ServiceSerializer):
    service = staticmethod(services.reagent_lot_open)
    record_argument = "lot"
    opened_on = LabDate(help_text="Date first opened.")


class SphereLotReceive(ServiceSerializer):
    ranges_model = SphereLot
    service = staticmethod(services.sphere_lot_receive)
    material = serializers.ChoiceField(choices=SphereLot.Material.choices)
    nominal_diameter_nm = FiniteFloat()
    solids_percent_w_v = FiniteFloat()
    received_on = LabDate()
    size_cv_percent = FiniteFloat(required=False, allow_null=True,
                                  help_text="Coefficient of variation of the sphere size.")
    supplier = serializers.CharField(max_length=120, required=False, allow_blank=True)
    supplier_lot = serializers.CharField(max_length=80, required=False, allow_blank=True)
    volume_mL = FiniteFloat(required=False, allow_null=True)
    storage = RecordRef(StorageLocation, required=False, allow_null=True)
    notes = serializers.CharField(required=False, allow_blank=True)


class TemplateAssemble(ServiceSerializer):
    ranges_model = TemplateAssembly
    service = staticmethod(services.template_assemble)
    sphere_lot = RecordRef(SphereLot)
    base_slide_lot = RecordRef(ReagentLot)
    method = serializers.ChoiceField(choices=TemplateAssembly.Method.choices)
    slide_area_cm2 = FiniteFloat()
    made_on = LabDate()
    coverage_percent = FiniteFloat(required=False, allow_null=True)
    suspension_volume_uL = FiniteFloat(required=False, allow_null=True,
                                       help_text="Suspension volume actually dispensed.")
    sphere_density_g_cm3 = FiniteFloat(required=False, allow_null=True,
                                       help_text="Sphere density; blank for the material's "
                                                 "typical value.")
    suspension_excess_factor = FiniteFloat(required=False, default=1.0)
    storage = RecordRef(StorageLocation, required=False, allow_null=True)
    notes = serializers.CharField(required=False, allow_blank=True)


class DepositionRunRecord(ServiceSerializer):
    ranges_model = DepositionRun
    service = staticmethod(services.deposition_run_record)
    bath_lot = RecordRef(ReagentLot, help_text="Code of the plating bath lot.")
    metal = serializers.CharField(max_length=4, help_text="Element symbol, e.g. 'Au'.")
    electrons_per_atom = serializers.IntegerField(
        **integer_bounds(DepositionRun.RANGES["electrons_per_atom"]))
    mode = serializers.ChoiceField(choices=DepositionRun.Mode.choices)
    electrode_area_cm2 = FiniteFloat()
    made_on = LabDate()
    pieces = serializers.IntegerField(min_value=1, max_value=200,
                                      help_text="Substrates the film is cut into.")
    template = RecordRef(TemplateAssembly, required=False, allow_null=True,
                         help_text="Code of the template plated through (or give "
                                   "base_slide_lot for a flat film).")
    base_slide_lot = RecordRef(ReagentLot, required=False, allow_null=True)
    current_efficiency = FiniteFloat(required=False, default=1.0)
    setpoint_potential_V = FiniteFloat(required=False, allow_null=True)
    setpoint_current_mA = FiniteFloat(required=False, allow_null=True)
    target_height_over_diameter = FiniteFloat(required=False, allow_null=True)
    piece_area_cm2 = FiniteFloat(required=False, allow_null=True)
    charge_C = FiniteFloat(required=False, allow_null=True,
                           help_text="Deposition charge as the potentiostat reported it, when "
                                     "no chronoamperogram is attached; the film height and "
                                     "h/D are worked out from it.")
    storage = RecordRef(StorageLocation, required=False, allow_null=True)
    notes = serializers.CharField(required=False, allow_blank=True)

    def perform(self, *, actor, record=None):
        run, _pieces = super().perform(actor=actor)
        return run


class ChronoamperogramAttach(ServiceSerializer):
    ranges_model = DepositionRun
    service = staticmethod(services.deposition_run_attach_chronoamperogram)
    record_argument = "run"
    chronoamperogram = Upload(help_text="The potentiostat's text export (time, current).")
    time_unit = serializers.ChoiceField(choices=sorted(TIME_UNITS_S), required=False,
                                        allow_null=True,
                                        help_text="Time unit if the file's header names none.")
    current_unit = serializers.ChoiceField(choices=sorted(CURRENT_UNITS_A), required=False,
                                           allow_null=True, help_text="Current unit if the "
                                                                      "file's header names none.")
    cathodic_sign = serializers.ChoiceField(choices=DepositionRun.CathodicSign.choices,
                                            required=False,
                                            default=DepositionRun.CathodicSign.NEGATIVE)
    start_s = FiniteFloat(required=False, allow_null=True, help_text="Start of the charge "
                                                                    "window.")
    end_s = FiniteFloat(required=False, allow_null=True, help_text="End of the charge window.")

    def arguments(self) -> dict:
        data = super().arguments()
        data["filename"], data["content"] = file_parts(data.pop("chronoamperogram"))
        return data


class ChargeEnter(ServiceSerializer):
    ranges_model = DepositionRun
    service = staticmethod(services.deposition_run_enter_charge)
    record_argument = "run"
    charge_C = FiniteFloat(help_text="Deposition charge as the potentiostat reported it; the "
                                     "film height and h/D are worked out from it.  Refused "
                                     "on a run whose charge was integrated from its file.")
    reason = serializers.CharField(required=False, allow_blank=True, default="",
                                   help_text="Why, kept in the run's history.")


class SubstrateReceive(ServiceSerializer):
    ranges_model = Substrate
    service = staticmethod(services.substrate_receive)
    purchased_lot = RecordRef(ReagentLot, help_text="Code of the purchased-substrate lot.")
    pieces = serializers.IntegerField(min_value=1, max_value=200)
    received_on = LabDate()
    storage = RecordRef(StorageLocation, required=False, allow_null=True)


class LinkerLayerApply(ServiceSerializer):
    service = staticmethod(services.linker_layer_apply)
    linker_lot = RecordRef(ReagentLot, help_text="Code of the linker thiol lot.")
    substrates = RecordRef(Substrate, many=True, help_text="Codes of the substrates immersed.")
    concentration_mM = FiniteFloat()
    immersion_h = FiniteFloat()
    made_on = LabDate()
    solvent_lot = RecordRef(ReagentLot, required=False, allow_null=True)
    notes = serializers.CharField(required=False, allow_blank=True)


class NanoparticleBatchMake(ServiceSerializer):
    ranges_model = NanoparticleBatch
    service = staticmethod(services.nanoparticle_batch_make)
    metal = serializers.CharField(max_length=4, help_text="Element symbol, e.g. 'Ag'.")
    synthesis_method = serializers.ChoiceField(choices=NanoparticleBatch.Method.choices)
    volume_mL = FiniteFloat()
    made_on = LabDate()
    source_lots = RecordRef(ReagentLot, many=True, required=False)
    target_diameter_nm = FiniteFloat(required=False, allow_null=True)
    storage = RecordRef(StorageLocation, required=False, allow_null=True)
    notes = serializers.CharField(required=False, allow_blank=True)


class ParticleAttach(ServiceSerializer):
    service = staticmethod(services.particle_attach)
    substrate = RecordRef(Substrate)
    batch = RecordRef(NanoparticleBatch, help_text="Code of the colloid batch.")
    immersion_min = FiniteFloat()
    made_on = LabDate()
    notes = serializers.CharField(required=False, allow_blank=True)


class DatasetRegister(ServiceSerializer):
    service = staticmethod(services.dataset_register)
    title = serializers.CharField(max_length=200)
    substrates = RecordRef(Substrate, many=True)
    acquired_on = LabDate()
    files = serializers.ListField(child=Upload(), required=False, help_text="Data files; each "
                                 "is stored with its SHA-256 digest (multipart only).")
    instrument = serializers.CharField(max_length=120, required=False, allow_blank=True)
    operator = serializers.CharField(max_length=120, required=False, allow_blank=True)
    consume_substrates = serializers.BooleanField(required=False, default=False,
                                                  help_text="Mark released substrates "
                                                            "consumed.")
    notes = serializers.CharField(required=False, allow_blank=True)

    def arguments(self) -> dict:
        data = dict(self.validated_data)
        data["files"] = [RawUpload.of_django_file(upload) for upload in data.get("files", [])]
        return data


class FlagRaise(ServiceSerializer):
    service = staticmethod(services.flag_raise)
    target = AnyRecordRef(help_text="Code of the record the deviation concerns.")
    category = serializers.CharField(max_length=40, help_text="e.g. 'qc', 'colloid', "
                                                              "'deposition', 'handling'.")
    # Blank text is the service's to refuse, in its own words.
    message = serializers.CharField(allow_blank=True, help_text="What deviates.")


class FlagResolve(ServiceSerializer):
    service = staticmethod(services.flag_resolve)
    record_argument = "flag"
    resolution = serializers.CharField(allow_blank=True,
                                       help_text="How the deviation was resolved.")


class ShelfLifeRuleSet(ServiceSerializer):
    ranges_model = ShelfLifeRule
    service = staticmethod(services.shelf_life_rule_set)
    record_kind = serializers.ChoiceField(choices=RecordKind.choices)
    shelf_life_days = serializers.IntegerField(
        **integer_bounds(ShelfLifeRule.RANGES["shelf_life_days"]))
    counted_from = serializers.ChoiceField(choices=ShelfLifeRule.CountedFrom.choices)
    reagent_kind = serializers.ChoiceField(choices=[("", "every kind"), *ReagentKind.choices],
                                           required=False, default="")
    is_example = serializers.BooleanField(required=False, default=False)
    rationale = serializers.CharField(required=False, allow_blank=True)


class DepositionToleranceSet(ServiceSerializer):
    service = staticmethod(services.deposition_tolerance_set)
    max_abs_deviation_height_over_diameter = FiniteFloat(
        help_text="Largest accepted |h/D − target h/D|.")
    metal = serializers.CharField(max_length=4, required=False, default="", allow_blank=True,
                                  help_text="Element symbol; blank for every metal.")
    is_example = serializers.BooleanField(required=False, default=False)
    rationale = serializers.CharField(required=False, allow_blank=True)
