"""QC endpoints: UV-vis records, reference and QC Raman measurements, and the lab's limits.

Creating a UV-vis record, reference or QC measurement is an upload (multipart): the response
is what the import computed, the same object the import commands print with ``--json``.
"""

from __future__ import annotations

from drf_spectacular.utils import extend_schema
from rest_framework import status
from rest_framework.exceptions import NotFound
from rest_framework.parsers import MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from inventory.api.base import (
    CorrectionsMixin,
    RecordViewSet,
    RoleMixin,
    SettingViewSet,
    filterset,
)
from inventory.api.serializers import read_serializer
from qc.models import (
    ColloidLimitSet,
    QcImport,
    QcLimitSet,
    QcMeasurement,
    ReferenceAnalyte,
    ReferenceMeasurement,
    UvVisRecord,
)

from . import serializers as s
from .results import (
    QcImportOut,
    QcResult,
    UvVisResult,
    qc_import_progress,
    qc_measurement_summary,
    uvvis_import_summary,
)

UvVisRecordOut = read_serializer(UvVisRecord)
ReferenceMeasurementOut = read_serializer(ReferenceMeasurement)
QcMeasurementOut = read_serializer(QcMeasurement)
# Lists leave out the per-point map values and EF inputs; the detail has them.
QcMeasurementListOut = read_serializer(QcMeasurement, exclude=("point_values", "ef_inputs"),
                                       name="QcMeasurementSummary")
QcLimitSetOut = read_serializer(QcLimitSet)
ColloidLimitSetOut = read_serializer(ColloidLimitSet)
ReferenceAnalyteOut = read_serializer(ReferenceAnalyte)


class UploadViewSet(CorrectionsMixin, RecordViewSet):
    """Create = upload one instrument file; the answer is the import's computed result."""

    parser_classes = (MultiPartParser,)
    result_serializer = None

    @classmethod
    def create_request_schema(cls):
        return {"multipart/form-data": cls.create_serializer}

    @classmethod
    def create_response_schema(cls):
        return {201: cls.result_serializer, 200: cls.result_serializer}

    def summary(self, result) -> tuple[object, bool]:
        """(what ``result_serializer`` shows, whether a new record was stored)."""
        raise NotImplementedError

    def create_record(self, request):
        serializer = self.create_serializer(data=request.data,
                                            context=self.get_serializer_context())
        serializer.is_valid(raise_exception=True)
        summary, created = self.summary(serializer.perform(actor=request.user))
        body = self.result_serializer(summary).data
        return Response(body, status=status.HTTP_201_CREATED if created else status.HTTP_200_OK)


class UvVisRecordViewSet(UploadViewSet):
    queryset = UvVisRecord.objects.all()
    serializer_class = UvVisRecordOut
    create_serializer = s.UvVisImport
    result_serializer = UvVisResult
    filterset_class = filterset(UvVisRecord, ranges=("measured_on", "peak_nm"), codes=("batch",))
    search_fields = ("code", "raw_file_name", "notes")
    ordering_fields = ("code", "created_at", "measured_on", "peak_nm")

    def summary(self, result):
        return uvvis_import_summary(result), not result.duplicate


class ReferenceMeasurementViewSet(UploadViewSet):
    queryset = ReferenceMeasurement.objects.all()
    serializer_class = ReferenceMeasurementOut
    create_serializer = s.ReferenceImport
    result_serializer = ReferenceMeasurementOut
    filterset_class = filterset(ReferenceMeasurement, ranges=("measured_on",),
                                codes=("analyte_lot",))
    search_fields = ("code", "raw_filename", "notes")
    ordering_fields = ("code", "created_at", "measured_on")

    def summary(self, result):
        return result, True


class QcMeasurementViewSet(UploadViewSet):
    queryset = QcMeasurement.objects.all()
    serializer_class = QcMeasurementOut
    list_serializer_class = QcMeasurementListOut
    create_serializer = s.QcImport
    result_serializer = QcResult
    filterset_class = filterset(QcMeasurement, exact=("passed", "product_kind", "is_map"),
                                ranges=("measured_on", "enhancement_factor", "rsd_percent"),
                                codes=("substrate", "analyte_lot", "reference"))
    search_fields = ("code", "raw_filename", "notes")
    ordering_fields = ("code", "created_at", "measured_on", "enhancement_factor",
                       "rsd_percent")

    def get_queryset(self):
        queryset = super().get_queryset()
        return queryset.defer("point_values", "ef_inputs") if self.action == "list" \
            else queryset

    @classmethod
    def create_response_schema(cls):
        return {201: cls.result_serializer, 200: cls.result_serializer, 202: QcImportOut}

    def summary(self, result):
        return qc_measurement_summary(result), True

    def create_record(self, request):
        """A small file is judged at once (201); a big one is queued: 202 and where to watch."""
        serializer = self.create_serializer(data=request.data,
                                            context=self.get_serializer_context())
        serializer.is_valid(raise_exception=True)
        result = serializer.perform(actor=request.user)
        if isinstance(result, QcImport):
            body = QcImportOut(qc_import_progress(result, request)).data
            return Response(body, status=status.HTTP_202_ACCEPTED,
                            headers={"Location": body["progress_url"]})
        return Response(self.result_serializer(qc_measurement_summary(result)).data,
                        status=status.HTTP_201_CREATED)


class QcImportView(RoleMixin, APIView):
    """Progress of a QC import analysed in the background (parsing, analysing, judging)."""

    @extend_schema(responses={200: QcImportOut})
    def get(self, request, pk):
        pending = QcImport.objects.select_related("measurement").filter(pk=pk).first()
        if pending is None:
            raise NotFound(f"No QC import has the ID '{pk}'.")
        return Response(QcImportOut(qc_import_progress(pending, request)).data)


class QcLimitSetViewSet(SettingViewSet):
    """Limits per product kind and analyte; a limit set also makes QC required for it."""

    queryset = QcLimitSet.objects.all()
    serializer_class = QcLimitSetOut
    create_serializer = s.QcLimitSetDefine
    filterset_class = filterset(QcLimitSet, exact=("product_kind", "is_example"))
    search_fields = ("rationale",)
    ordering_fields = ("id", "product_kind")


class ColloidLimitSetViewSet(SettingViewSet):
    queryset = ColloidLimitSet.objects.all()
    serializer_class = ColloidLimitSetOut
    create_serializer = s.ColloidLimitSetSet
    filterset_class = filterset(ColloidLimitSet, exact=("metal", "is_example"))
    search_fields = ("rationale",)
    ordering_fields = ("id", "metal")


class ReferenceAnalyteViewSet(SettingViewSet):
    """Molecules used to test substrates, with their QC band and monolayer density."""

    queryset = ReferenceAnalyte.objects.all()
    serializer_class = ReferenceAnalyteOut
    create_serializer = s.ReferenceAnalyteDefine
    filterset_class = filterset(ReferenceAnalyte, exact=("name",))
    search_fields = ("name",)
    ordering_fields = ("id", "name")
    ordering = ("name",)
