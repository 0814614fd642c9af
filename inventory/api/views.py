"""Record endpoints of the inventory: list, detail by code, create, lifecycle actions.

Each viewset names its read serializer, the service serializer that creates, and what a list
can be filtered, searched and ordered by; the shared behaviour is in ``base``.
"""

from __future__ import annotations

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import serializers as drf_serializers
from rest_framework import status
from rest_framework.decorators import action
from rest_framework.parsers import MultiPartParser
from rest_framework.response import Response

from inventory.models import (
    Dataset,
    DatasetFile,
    DepositionRun,
    DepositionTolerance,
    Flag,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    ReagentLot,
    ShelfLifeRule,
    SphereLot,
    StorageLocation,
    Substrate,
    TemplateAssembly,
)
from inventory.roles import MAKER, REVIEWER, VIEWER

from . import serializers as s
from .base import (
    CorrectionsMixin,
    RecordViewSet,
    SettingViewSet,
    SignedLifecycleMixin,
    filterset,
)
from .parsers import JsonParser
from .reports import ReadinessOut, readiness_data
from .results import ChronoamperogramResult, chronoamperogram_summary

LIFECYCLE_ORDERING = ("code", "created_at", "expires_on", "status")

StorageLocationOut = s.read_serializer(StorageLocation)
ReagentLotOut = s.read_serializer(ReagentLot)
SphereLotOut = s.read_serializer(SphereLot)
TemplateOut = s.read_serializer(TemplateAssembly)
DepositionRunOut = s.read_serializer(
    DepositionRun, substrates=drf_serializers.SlugRelatedField(
        slug_field="code", many=True, read_only=True, help_text="Codes of the pieces cut from it."),
    charge_source_label=drf_serializers.CharField(
        source="get_charge_source_display", read_only=True,
        help_text="Where charge_C came from, in words (blank while the run has no charge)."))
SubstrateOut = s.read_serializer(Substrate)


class SubstratePiecesOut(drf_serializers.Serializer):
    substrates = SubstrateOut(many=True, help_text="The pieces registered.")


LinkerLayerOut = s.read_serializer(LinkerLayer)
NanoparticleBatchOut = s.read_serializer(NanoparticleBatch)
ParticleAttachmentOut = s.read_serializer(ParticleAttachment)
DatasetFileOut = s.read_serializer(DatasetFile, exclude=("dataset", "id"))
DatasetOut = s.read_serializer(Dataset, files=DatasetFileOut(many=True, read_only=True))
FlagOut = s.read_serializer(Flag)
ShelfLifeRuleOut = s.read_serializer(ShelfLifeRule)
DepositionToleranceOut = s.read_serializer(DepositionTolerance)


class StorageLocationViewSet(CorrectionsMixin, RecordViewSet):
    queryset = StorageLocation.objects.all()
    serializer_class = StorageLocationOut
    create_serializer = s.StorageLocationCreate
    filterset_class = filterset(StorageLocation, exact=("kind", "room"))
    search_fields = ("code", "name", "room")
    ordering_fields = ("code", "name", "created_at")


class ReagentLotViewSet(SignedLifecycleMixin, RecordViewSet):
    queryset = ReagentLot.objects.all()
    serializer_class = ReagentLotOut
    create_serializer = s.ReagentLotReceive
    filterset_class = filterset(ReagentLot, exact=("status", "kind", "supplier"),
                                ranges=("expires_on", "received_on"), codes=("storage",))
    search_fields = ("code", "name", "supplier", "supplier_lot", "notes")
    ordering_fields = (*LIFECYCLE_ORDERING, "name", "kind", "received_on")

    @extend_schema(request=s.ReagentLotOpen, responses={200: ReagentLotOut})
    @action(detail=True, methods=["post"], required_role=MAKER)
    def open(self, request, code=None):
        """Record the day the lot was first opened (an opened-from rule then sets expiry)."""
        return self.run_service(s.ReagentLotOpen, record=self.get_object())


class SphereLotViewSet(SignedLifecycleMixin, RecordViewSet):
    queryset = SphereLot.objects.all()
    serializer_class = SphereLotOut
    create_serializer = s.SphereLotReceive
    filterset_class = filterset(SphereLot, exact=("status", "material"),
                                ranges=("expires_on", "received_on", "nominal_diameter_nm"))
    search_fields = ("code", "supplier", "supplier_lot", "notes")
    ordering_fields = (*LIFECYCLE_ORDERING, "received_on", "nominal_diameter_nm")


class TemplateViewSet(SignedLifecycleMixin, RecordViewSet):
    queryset = TemplateAssembly.objects.all()
    serializer_class = TemplateOut
    create_serializer = s.TemplateAssemble
    filterset_class = filterset(TemplateAssembly, exact=("status", "method"),
                                ranges=("expires_on", "made_on"),
                                codes=("sphere_lot", "base_slide_lot"))
    search_fields = ("code", "notes")
    ordering_fields = (*LIFECYCLE_ORDERING, "made_on")


class DepositionRunViewSet(CorrectionsMixin, RecordViewSet):
    queryset = DepositionRun.objects.all()
    serializer_class = DepositionRunOut
    create_serializer = s.DepositionRunRecord
    filterset_class = filterset(DepositionRun, exact=("metal", "mode"), ranges=("made_on",),
                                codes=("template", "bath_lot", "base_slide_lot"))
    search_fields = ("code", "notes", "chronoamperogram_name")
    ordering_fields = ("code", "created_at", "made_on", "height_over_diameter")

    @extend_schema(request={"multipart/form-data": s.ChronoamperogramAttach},
                   responses={200: ChronoamperogramResult, 201: ChronoamperogramResult})
    @action(detail=True, methods=["post"], required_role=MAKER,
            parser_classes=[MultiPartParser])
    def chronoamperogram(self, request, code=None):
        """Upload the run's chronoamperogram; returns the charge, film height and h/D computed
        from it, and any flag raised.  201 when stored, 200 when the run already held it."""
        serializer = s.ChronoamperogramAttach(data=request.data)
        serializer.is_valid(raise_exception=True)
        result = serializer.perform(actor=request.user, record=self.get_object())
        return Response(ChronoamperogramResult(chronoamperogram_summary(result)).data,
                        status=status.HTTP_200_OK if result.unchanged
                        else status.HTTP_201_CREATED)

    @extend_schema(request=s.ChargeEnter, responses={200: ChronoamperogramResult})
    @action(detail=True, methods=["post"], required_role=MAKER, parser_classes=(JsonParser,))
    def charge(self, request, code=None):
        """Enter the charge the potentiostat reported for a run without a file; returns the
        film height and h/D worked out from it, as the chronoamperogram upload does."""
        serializer = s.ChargeEnter(data=request.data)
        serializer.is_valid(raise_exception=True)
        result = serializer.perform(actor=request.user, record=self.get_object())
        return Response(ChronoamperogramResult(chronoamperogram_summary(result)).data)


class SubstrateViewSet(SignedLifecycleMixin, RecordViewSet):
    queryset = Substrate.objects.all()
    serializer_class = SubstrateOut
    create_serializer = s.SubstrateReceive
    filterset_class = filterset(Substrate, exact=("status", "stage"),
                                ranges=("expires_on", "made_on"),
                                codes=("deposition_run", "purchased_lot", "storage"))
    search_fields = ("code", "piece_label", "notes")
    ordering_fields = (*LIFECYCLE_ORDERING, "made_on", "stage")

    @classmethod
    def create_response_schema(cls):
        return {201: SubstratePiecesOut}

    def respond(self, result, status_code):
        """Receiving a purchased lot makes several pieces: ``{"substrates": [...]}``."""
        if not isinstance(result, list):
            return super().respond(result, status_code)
        return Response(SubstratePiecesOut({"substrates": result}).data, status=status_code)

    @extend_schema(responses={200: ReadinessOut}, parameters=[OpenApiParameter(
        "on", type=OpenApiTypes.DATE, required=False,
        description="Check as of this ISO 8601 date (default today).")])
    @action(detail=True, methods=["get"], required_role=VIEWER)
    def readiness(self, request, code=None):
        """READY or NOT READY today, with every reason: the same check as the Check page
        and the ``readiness`` command."""
        return Response(readiness_data(code, request.query_params))


class LinkerLayerViewSet(CorrectionsMixin, RecordViewSet):
    queryset = LinkerLayer.objects.all()
    serializer_class = LinkerLayerOut
    create_serializer = s.LinkerLayerApply
    filterset_class = filterset(LinkerLayer, ranges=("made_on",),
                                codes=("linker_lot", "substrates"))
    search_fields = ("code", "notes")
    ordering_fields = ("code", "created_at", "made_on")


class NanoparticleBatchViewSet(SignedLifecycleMixin, RecordViewSet):
    queryset = NanoparticleBatch.objects.all()
    serializer_class = NanoparticleBatchOut
    create_serializer = s.NanoparticleBatchMake
    filterset_class = filterset(NanoparticleBatch, exact=("status", "metal", "synthesis_method"),
                                ranges=("expires_on", "made_on"), codes=("source_lots",))
    search_fields = ("code", "notes")
    ordering_fields = (*LIFECYCLE_ORDERING, "made_on")


class ParticleAttachmentViewSet(CorrectionsMixin, RecordViewSet):
    queryset = ParticleAttachment.objects.all()
    serializer_class = ParticleAttachmentOut
    create_serializer = s.ParticleAttach
    filterset_class = filterset(ParticleAttachment, ranges=("made_on",),
                                codes=("substrate", "batch"))
    search_fields = ("code", "notes")
    ordering_fields = ("code", "created_at", "made_on")


class DatasetViewSet(CorrectionsMixin, RecordViewSet):
    queryset = Dataset.objects.all()
    serializer_class = DatasetOut
    create_serializer = s.DatasetRegister
    parser_classes = (JsonParser, MultiPartParser)
    filterset_class = filterset(Dataset, exact=("instrument", "operator"),
                                ranges=("acquired_on",), codes=("substrates",))
    search_fields = ("code", "title", "instrument", "operator", "notes")
    ordering_fields = ("code", "created_at", "acquired_on", "title")


class FlagViewSet(CorrectionsMixin, RecordViewSet):
    """Deviations on any record; an open flag blocks readiness downstream."""

    queryset = Flag.objects.all()
    serializer_class = FlagOut
    create_serializer = s.FlagRaise
    filterset_class = filterset(Flag, exact=("state", "category", "target_code"),
                                ranges=("created_at",))
    search_fields = ("code", "target_code", "message", "resolution")
    ordering_fields = ("code", "created_at", "state", "category", "target_code")

    @extend_schema(request=s.FlagResolve, responses={200: FlagOut})
    @action(detail=True, methods=["post"], required_role=REVIEWER)
    def resolve(self, request, code=None):
        """Close the flag with how the deviation was resolved."""
        return self.run_service(s.FlagResolve, record=self.get_object())


class ShelfLifeRuleViewSet(SettingViewSet):
    """How long each kind of record stays usable; setting one re-derives every expiry."""

    queryset = ShelfLifeRule.objects.all()
    serializer_class = ShelfLifeRuleOut
    create_serializer = s.ShelfLifeRuleSet
    filterset_class = filterset(ShelfLifeRule, exact=("record_kind", "reagent_kind",
                                                      "is_example"))
    search_fields = ("rationale",)
    ordering_fields = ("id", "record_kind", "shelf_life_days")


class DepositionToleranceViewSet(SettingViewSet):
    queryset = DepositionTolerance.objects.all()
    serializer_class = DepositionToleranceOut
    create_serializer = s.DepositionToleranceSet
    filterset_class = filterset(DepositionTolerance, exact=("metal", "is_example"))
    search_fields = ("metal", "rationale")
    ordering_fields = ("id", "metal")

