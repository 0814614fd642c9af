"""API of sheet imports: upload a sheet (multipart) for its dry run, then confirm or abandon.

    POST   /api/v1/sheet-imports/            kind, sheet -> 200 the dry-run report and the
                                             upload's id; row errors -> 400 (nothing kept)
    POST   /api/v1/sheet-imports/<id>/confirm/   import every row in one transaction -> 201
    DELETE /api/v1/sheet-imports/<id>/       abandon: the stored file is deleted -> 204

The same service functions as the page and the command (``exchange.uploads`` around
``exchange.importer.import_sheet``).  Every refusal is the project's one error shape
(``{"errors": [{"field", "message", "code"}]}``); a row error adds its ``row`` and
``column`` and its ``field`` reads ``rows.<row>.<column>``.
"""

from __future__ import annotations

from typing import ClassVar

from django.urls import path, reverse
from drf_spectacular.utils import extend_schema, inline_serializer
from rest_framework import serializers, status
from rest_framework.exceptions import NotFound
from rest_framework.parsers import MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from inventory.api.base import RoleMixin
from inventory.errors import refusal
from inventory.roles import MAKER, VIEWER

from . import uploads
from .import_report import ImportReport
from .kinds import KINDS
from .models import SheetUpload
from .sheets import max_bytes


def report_body(report: ImportReport) -> dict:
    """The dry-run or import report: rows to create and change, with their row numbers."""
    return {"kind": report.kind, "file_name": report.file_name, "sha256": report.sha256,
            "rows": report.rows, "committed": report.committed,
            "create": [{"row": o.row, "key": o.key, "code": o.code} for o in report.created],
            "change": [{"row": o.row, "key": o.key, "code": o.code, "changes": o.changes}
                       for o in report.changed],
            "unchanged": [{"row": o.row, "key": o.key, "code": o.code}
                          for o in report.unchanged],
            "columns": report.columns, "unmapped_headers": report.unmapped_headers}


def row_errors_response(report: ImportReport) -> Response:
    errors = [{"field": f"rows.{e.row}.{e.column}" if e.column else f"rows.{e.row}",
               "message": f"row {e.row}" + (f", {e.column}" if e.column else "")
               + f": {e.reason}", "code": e.code, "row": e.row, "column": e.column}
              for e in report.errors]
    return Response({"errors": errors, "report": report_body(report)},
                    status=status.HTTP_400_BAD_REQUEST)


class SheetImportIn(serializers.Serializer):
    kind = serializers.ChoiceField(choices=sorted(KINDS))
    sheet = serializers.FileField(allow_empty_file=True)


REPORT_SCHEMA = inline_serializer("SheetImportReport", {
    "upload": serializers.IntegerField(
        allow_null=True, help_text="The stored upload to confirm or abandon; null when the "
        "sheet had row errors (nothing kept). Unit: none (the id of the upload)."),
    "confirm_url": serializers.CharField(allow_null=True),
    "report": serializers.DictField()})


class SheetImportView(RoleMixin, APIView):
    """Upload a sheet of one record kind and get its dry run; nothing is imported yet."""

    parser_classes = (MultiPartParser,)
    action_roles: ClassVar[dict[str, str]] = {**RoleMixin.action_roles, "post": MAKER}

    @extend_schema(request={"multipart/form-data": SheetImportIn},
                   responses={200: REPORT_SCHEMA})
    def post(self, request):
        given = SheetImportIn(data=request.data)
        given.is_valid(raise_exception=True)
        sheet = given.validated_data["sheet"]
        if sheet.size > max_bytes():
            raise refusal("sheet", f"{sheet.name} is {sheet.size / 2**20:.1f} MB; the limit "
                                   f"is {max_bytes() // 2**20} MB.", "file_too_large")
        upload, report = uploads.sheet_upload_check(
            actor=request.user, kind=given.validated_data["kind"], file_name=sheet.name,
            content=sheet.read(), keep_when_rows_fail=False)
        if upload is None:
            return row_errors_response(report)
        return Response({"upload": upload.pk, "report": report_body(report),
                         "confirm_url": reverse("api:sheet-import-confirm", args=[upload.pk])})


def _own_upload(request, pk: int) -> SheetUpload:
    upload = SheetUpload.objects.filter(pk=pk, uploaded_by=request.user,
                                        confirmed_at__isnull=True).first()
    if upload is None:
        raise NotFound(f"No sheet upload of yours waits with the ID '{pk}'.")
    return upload


class SheetImportDetailView(RoleMixin, APIView):
    """Abandon an upload that will not be imported (its stored file is deleted)."""

    action_roles: ClassVar[dict[str, str]] = {**RoleMixin.action_roles, "delete": MAKER,
                                              "get": VIEWER}

    @extend_schema(responses={204: None})
    def delete(self, request, pk: int):
        uploads.sheet_upload_abandon(actor=request.user, upload=_own_upload(request, pk))
        return Response(status=status.HTTP_204_NO_CONTENT)


class SheetImportConfirmView(RoleMixin, APIView):
    """Import the uploaded sheet: every row in one transaction, or none."""

    action_roles: ClassVar[dict[str, str]] = {**RoleMixin.action_roles, "post": MAKER}

    @extend_schema(request=None, responses={201: REPORT_SCHEMA})
    def post(self, request, pk: int):
        upload = _own_upload(request, pk)
        report = uploads.sheet_upload_confirm(actor=request.user, upload=upload)
        if not report.committed:
            return row_errors_response(report)
        return Response({"upload": upload.pk, "report": report_body(report),
                         "confirm_url": None}, status=status.HTTP_201_CREATED)


urlpatterns = [
    path("sheet-imports/", SheetImportView.as_view(), name="sheet-import"),
    path("sheet-imports/<int:pk>/", SheetImportDetailView.as_view(),
         name="sheet-import-detail"),
    path("sheet-imports/<int:pk>/confirm/", SheetImportConfirmView.as_view(),
         name="sheet-import-confirm"),
]
