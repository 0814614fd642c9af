"""Serializers: the read side made from the models, the write side shaped like the services.

Read serializers show every stored field, other records by their code and people by their
username.  Write serializers only parse: each names the service it feeds, and its fields are
that service's keyword arguments, so a service refusal keyed by ``made_on`` points at the
request field ``made_on``.  No rule is checked here that a service also checks.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

from django.contrib.auth import get_user_model
from django.db import models
from rest_framework import serializers

from inventory import services
from inventory.models import (
    CodedRecord,
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
from inventory.models.ranges import Span
from inventory.physics.chronoamperogram import CURRENT_UNITS_A, TIME_UNITS_S
from inventory.signatures import REJECT_MEANINGS, RELEASE_MEANINGS, SignatureIntent

from .fields import AnyRecordRef, FiniteFloat, LabDate, RecordRef, Upload, file_parts
from .units import DocumentedFields, declare_range

# Files are reported by name and digest; the stored path is an implementation detail.
_HIDDEN_FILE_FIELDS = (models.FileField,)


def _slug_of(model) -> str | None:
    """How a related record is named in the API: code, username, or a unique name."""
    if issubclass(model, CodedRecord):
        return "code"
    if model is get_user_model():
        return model.USERNAME_FIELD
    name = next((f for f in model._meta.fields if f.name == "name" and f.unique), None)
    return None if name is None else "name"


class RecordSerializer(DocumentedFields, serializers.ModelSerializer):
    """Read-only view of a stored record."""

    def build_standard_field(self, field_name, model_field):
        field_class, kwargs = super().build_standard_field(field_name, model_field)
        # DRF drops allow_blank on read-only fields, but a computed choice may be blank.
        if kwargs.get("read_only") and "choices" in kwargs and model_field.blank:
            kwargs["allow_blank"] = True
        return field_class, kwargs

    def build_relational_field(self, field_name, relation_info):
        slug = _slug_of(relation_info.related_model)
        if slug is None:
            return super().build_relational_field(field_name, relation_info)
        kwargs = {"slug_field": slug, "read_only": True}
        if relation_info.to_many:
            kwargs["many"] = True
        elif relation_info.model_field is not None and relation_info.model_field.null:
            kwargs["allow_null"] = True
        return serializers.SlugRelatedField, kwargs


def read_serializer(model, *, exclude: tuple[str, ...] = (), name: str | None = None,
                    **declared) -> type[RecordSerializer]:
    """A read serializer of ``model``: every field except files, ids of coded records and
    ``exclude``; ``declared`` adds fields (e.g. reverse relations)."""
    hidden = [f.name for f in model._meta.fields if isinstance(f, _HIDDEN_FILE_FIELDS)]
    if issubclass(model, CodedRecord):
        hidden.append("id")
    meta = type("Meta", (), {"model": model, "exclude": (*hidden, *exclude),
                             "read_only_fields": ()})
    return type(name or model.__name__, (RecordSerializer,), {"Meta": meta, **declared})


@dataclass(frozen=True)
class ReadPlan:
    """How to fetch what a read serializer shows, in a fixed number of queries.

    ``select``/``prefetch`` are the related paths; ``columns`` the ``.only()`` list when the
    serializer names every related record by one field (its code or username), else None.
    """

    select: tuple[str, ...]
    prefetch: tuple[str, ...]
    columns: tuple[str, ...] | None


@cache
def read_plan(serializer_class) -> ReadPlan:
    """The fetch plan of a read serializer, worked out once per class (building a
    serializer's fields was a tenth of an API read's CPU)."""
    serializer = serializer_class()
    model = serializer_class.Meta.model
    concrete = {f.name for f in model._meta.get_fields()}
    select, prefetch, named_by = [], [], []
    trimmable = True
    for name, field in serializer.fields.items():
        source = name if field.source == "*" else field.source
        if isinstance(field, serializers.ManyRelatedField):
            if source.split(".")[0] in concrete:
                prefetch.append(source.replace(".", "__"))
        elif isinstance(field, serializers.RelatedField):
            if source.split(".")[0] not in concrete:
                trimmable = False  # a property or method: it may read anything
                continue
            select.append(source.replace(".", "__"))
            if isinstance(field, serializers.SlugRelatedField) and "." not in source:
                named_by.append(f"{source}__{field.slug_field}")
            else:
                trimmable = False
        elif isinstance(field, serializers.ListSerializer) and source in concrete:
            prefetch.append(source)  # nested rows of a reverse relation (a dataset's files)
            trimmable = False
        elif "." in source or field.source == "*" or isinstance(
                field, serializers.BaseSerializer | serializers.SerializerMethodField):
            trimmable = False  # it may read anything of the record or its relations
    own = [f.name for f in model._meta.concrete_fields
           if f.name in serializer.fields and not f.is_relation]
    columns = (model._meta.pk.name, *own, *named_by) if trimmable else None
    return ReadPlan(tuple(select), tuple(prefetch), columns)


# ---------------------------------------------------------------------------- write side


NUMERIC_FIELDS = (serializers.IntegerField, serializers.FloatField, serializers.DecimalField)


class ServiceSerializer(DocumentedFields, serializers.Serializer):
    """Parses a request into a service's keyword arguments and calls that service.

    ``ranges_model`` names the kind the service writes: its numeric fields that the kind's
    range table (``inventory.models.ranges``) bounds are declared with those bounds in the
    schema, so the API documents exactly what the database enforces (the service refuses
    values outside them with a 400 naming the field).
    """

    service = None  # set by each subclass with staticmethod(...)
    record_argument = ""  # the service's keyword for the record an action acts on
    ranges_model: type[models.Model] | None = None

    def get_fields(self):
        fields = super().get_fields()
        for name, field in fields.items():
            span = getattr(self.ranges_model, "RANGES", {}).get(name)
            if isinstance(span, Span) and isinstance(field, NUMERIC_FIELDS):
                declare_range(field, span)
        return fields

    def arguments(self) -> dict:
        return dict(self.validated_data)

    def perform(self, *, actor, record=None):
        arguments = self.arguments()
        if record is not None:
            arguments[self.record_argument] = record
        return type(self).service(actor=actor, **arguments)


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
    quantity = serializers.DecimalField(max_digits=12, decimal_places=3, min_value=0,
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
    electrons_per_atom = serializers.IntegerField(min_value=1, max_value=8)
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
        data["files"] = [file_parts(upload) for upload in data.get("files", [])]
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
    shelf_life_days = serializers.IntegerField(min_value=1, max_value=36500)
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


# ------------------------------------------------------------------ signatures and void


class _Signed(ServiceSerializer):
    """An electronic signature: the signer's password, re-entered, and its meaning."""

    record_argument = "record"
    # Blank or wrong passwords are the signature service's to refuse, in its words.
    password = serializers.CharField(write_only=True, allow_blank=True, trim_whitespace=False,
                                     style={"input_type": "password"},
                                     help_text="The signer's password, re-entered.")

    def arguments(self) -> dict:
        data = dict(self.validated_data)
        data["signature"] = SignatureIntent(password=data.pop("password"),
                                            meaning=data.pop("meaning"))
        return data


class ReleaseSign(_Signed):
    service = staticmethod(services.record_release)
    meaning = serializers.ChoiceField(choices=RELEASE_MEANINGS,
                                      help_text="What the signature means.")


class RejectSign(_Signed):
    service = staticmethod(services.record_reject)
    meaning = serializers.ChoiceField(choices=REJECT_MEANINGS, default=REJECT_MEANINGS[0],
                                      help_text="What the signature means.")
    reason = serializers.CharField(allow_blank=True, help_text="Why it is rejected.")


class Void(ServiceSerializer):
    service = staticmethod(services.record_void)
    record_argument = "record"
    reason = serializers.CharField(allow_blank=True, help_text="Why the record is void (made "
                                                                "in error); it is kept.")


class Amend(ServiceSerializer):
    """A correction of typed fields, made against the version the editor saw."""

    service = staticmethod(services.record_amend)
    record_argument = "record"
    changes = serializers.DictField(
        child=serializers.JSONField(allow_null=True),
        help_text="Field name → new value, in the units of the field's name; the storage "
                  "location by its code.  Which fields may change depends on the record.")
    reason = serializers.CharField(allow_blank=True, required=False, default="",
                                   help_text="Why (required once a record has left "
                                             "quarantine or was signed).")
    expected_version = serializers.IntegerField(min_value=1, max_value=2**31 - 1,
                                                help_text="The version the editor saw; a "
                                                          "newer one refuses the change.")

    def perform(self, *, actor, record=None):
        arguments = self.arguments()
        arguments["changes"] = _model_values(type(record), arguments["changes"])
        return services.record_amend(actor=actor, record=record, **arguments)


def _record_by_code(model, name: str, code):
    try:
        return RecordRef(model).run_validation(code)
    except serializers.ValidationError as error:
        raise serializers.ValidationError({name: error.detail}) from None


def _model_values(model, changes: dict) -> dict:
    """Request values as the model takes them: linked rows by code, dates as text.

    Only JSON scalars are accepted; the model's own field cleaning does the rest (in the
    service), so a bad value is refused by the same rule as everywhere else.
    """
    values = {}
    for name, value in changes.items():
        if isinstance(value, (dict, list)):
            raise serializers.ValidationError({name: "Give a single value."})
        field = next((f for f in model._meta.concrete_fields if f.name == name), None)
        if field is not None and field.is_relation and value is not None \
                and issubclass(field.related_model, CodedRecord):
            values[name] = _record_by_code(field.related_model, name, value)
        elif isinstance(field, (models.DateField, models.DateTimeField)) and value is not None:
            values[name] = str(value)
        else:
            values[name] = value
    return values
