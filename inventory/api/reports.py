"""Read-only answers across records: readiness, lineage, expiring soon, a record by its code,
its history and its signatures.

Each calls the same selector as the page and the command (``substrate_check_readiness``,
``record_get_ancestors``/``record_get_descendants``, ``records_expiring_within``) and only
shapes the answer as data.
"""

from __future__ import annotations

from datetime import date

from django.urls import NoReverseMatch, reverse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, PolymorphicProxySerializer, extend_schema
from rest_framework import exceptions, serializers
from rest_framework.response import Response
from rest_framework.utils.urls import replace_query_param
from rest_framework.views import APIView

from inventory.codes import record_get
from inventory.models import LifecycleRecord
from inventory.prov import lineage_as_prov
from inventory.selectors import (
    record_get_ancestors,
    record_get_descendants,
    record_get_history,
    record_get_signatures,
    records_expiring_page,
    substrate_check_readiness,
)
from inventory.signatures import MEANINGS

from .base import RoleMixin
from .fields import LabDate
from .pagination import (
    CURSOR_PARAM,
    DEFAULT_PAGE_SIZE,
    MAX_PAGE_SIZE,
    PAGE_SIZE_PARAM,
    pack_cursor,
    unpack_cursor,
)
from .units import DocumentedFields


def _query(field: serializers.Field, params, name: str, default=None):
    """One query parameter parsed by a serializer field; a bad value is a 400 naming it."""
    if name not in params:
        return default
    try:
        return field.run_validation(params[name])
    except serializers.ValidationError as error:
        raise serializers.ValidationError({name: error.detail}) from None


# ----------------------------------------------------------------------------- readiness


class ReasonOut(serializers.Serializer):
    code = serializers.CharField(help_text="Stable reason code, e.g. 'expired', 'qc_failed', "
                                           "'open_flag', 'linker_layer_too_old'.")
    message = serializers.CharField(help_text="The reason as a sentence.")
    record_code = serializers.CharField(help_text="Code of the record at fault.")


class ReadinessOut(DocumentedFields, serializers.Serializer):
    substrate_code = serializers.CharField()
    checked_on = serializers.DateField(help_text="Day the check applies to.")
    ready = serializers.BooleanField()
    verdict = serializers.ChoiceField(choices=["READY", "NOT READY"])
    reasons = ReasonOut(many=True, help_text="Every reason it is not ready; empty when ready.")


def readiness_data(code: str, params) -> dict:
    on_date = _query(LabDate(), params, "on")
    try:
        result = substrate_check_readiness(code.strip().upper(), on_date=on_date)
    except ValueError as error:  # the code names a record that is not a substrate
        raise exceptions.NotFound(str(error)) from None
    return ReadinessOut(result).data


# ------------------------------------------------------------------------------- lineage


class NodeOut(DocumentedFields, serializers.Serializer):
    code = serializers.CharField()
    kind = serializers.CharField(help_text="Kind of record, e.g. 'substrate'.")
    depth = serializers.IntegerField(help_text="Steps from the root. Unit: count.")
    status = serializers.CharField(allow_null=True, help_text="Lifecycle status, for "
                                                              "materials; null otherwise.")


class EdgeOut(DocumentedFields, serializers.Serializer):
    parent_code = serializers.CharField(help_text="The input.")
    child_code = serializers.CharField(help_text="What was made from it.")
    role = serializers.CharField(help_text="How it was used, e.g. 'plating bath'.")
    used_on = serializers.DateField(help_text="Date of the step that used it.")


class LineageOut(serializers.Serializer):
    root = serializers.CharField(help_text="Code of the record asked about.")
    direction = serializers.ChoiceField(choices=["ancestors", "descendants"])
    nodes = NodeOut(many=True, help_text="Every record reached, nearest first.")
    edges = EdgeOut(many=True)


def lineage_data(lineage) -> dict:
    nodes = []
    for code in lineage.codes():
        record = lineage.records.get(code)
        nodes.append({
            "code": code, "depth": lineage.depth[code],
            "kind": record._meta.verbose_name if record is not None else "unknown",
            "status": record.status if isinstance(record, LifecycleRecord) else None,
        })
    return {"root": lineage.root.code, "direction": lineage.direction, "nodes": nodes,
            "edges": [vars(edge) for edge in lineage.edges]}


class ProvDocumentOut(serializers.Serializer):
    """A W3C PROV-JSON document (https://www.w3.org/submissions/prov-json/): records as
    entities, the steps that made them and the signatures as activities, people as agents."""

    prefix = serializers.DictField(child=serializers.CharField(), help_text="Namespaces.")
    entity = serializers.DictField(required=False, help_text="Records, keyed by qualified "
                                                             "code.")
    activity = serializers.DictField(required=False)
    agent = serializers.DictField(required=False)
    wasGeneratedBy = serializers.DictField(required=False)
    used = serializers.DictField(required=False)
    wasDerivedFrom = serializers.DictField(required=False)
    wasAttributedTo = serializers.DictField(required=False)
    wasAssociatedWith = serializers.DictField(required=False)


DIRECTIONS = {"ancestors": record_get_ancestors, "descendants": record_get_descendants}


class LineageView(RoleMixin, APIView):
    """Everything a record was made from (ancestors) or everything made from it
    (descendants), however deep, in a bounded number of queries."""

    @extend_schema(
        parameters=[
            OpenApiParameter("direction", enum=list(DIRECTIONS), default="ancestors",
                             description="ancestors: what it was made from; descendants: "
                                         "everything made from it (for a recall)."),
            OpenApiParameter("as", enum=["json", "prov"], default="json",
                             description="prov: the same lineage as a W3C PROV-JSON document "
                                         "(the `lineage --prov` command's output)."),
        ],
        responses={200: PolymorphicProxySerializer(
            component_name="LineageOrProv", serializers=[LineageOut, ProvDocumentOut],
            resource_type_field_name=None)},
        operation_id="records_lineage")
    def get(self, request, code: str):
        direction = _query(serializers.ChoiceField(choices=list(DIRECTIONS)),
                           request.query_params, "direction", "ancestors")
        form = _query(serializers.ChoiceField(choices=["json", "prov"]), request.query_params,
                      "as", "json")
        record = record_get(code)
        if form == "prov":
            return Response(lineage_as_prov(record, direction=direction))
        return Response(LineageOut(lineage_data(DIRECTIONS[direction](record))).data)


# ------------------------------------------------------------------------------ records


class RecordOut(serializers.Serializer):
    code = serializers.CharField()
    kind = serializers.CharField(help_text="Kind of record, e.g. 'substrate'.")
    url = serializers.CharField(allow_null=True, help_text="Its detail endpoint in this API.")


# Record kind (model name, lower case) -> route basename of its detail endpoint.
DETAIL_ROUTES: dict[str, str] = {}


class RecordView(RoleMixin, APIView):
    """Find any record by its code (as a label's QR code gives it) and where to read it."""

    @extend_schema(responses={200: RecordOut}, operation_id="records_retrieve")
    def get(self, request, code: str):
        record = record_get(code)
        basename = DETAIL_ROUTES.get(record._meta.model_name)
        try:
            url = request.build_absolute_uri(reverse(f"api:{basename}-detail",
                                                     args=[record.code])) if basename else None
        except NoReverseMatch:
            url = None
        return Response({"code": record.code, "kind": record._meta.verbose_name, "url": url})


# ----------------------------------------------------------------------------- expiring


class ExpiringOut(DocumentedFields, serializers.Serializer):
    code = serializers.CharField()
    kind = serializers.CharField(help_text="Kind of record, e.g. 'reagent lot'.")
    status = serializers.CharField(help_text="Lifecycle status (quarantine or released).")
    expires_on = serializers.DateField()
    days_left = serializers.IntegerField()


class ExpiringPageOut(serializers.Serializer):
    next = serializers.URLField(allow_null=True, help_text="The following page (same days and "
                                "page size), or null on the last page.")
    results = ExpiringOut(many=True)


def _expiring_after(params):
    """The (expires_on, code) a cursor carries; a cursor not given out here is a 400."""
    cursor = params.get(CURSOR_PARAM)
    if not cursor:
        return None
    day, code = unpack_cursor(cursor, "d", "c")
    try:
        return date.fromisoformat(day), str(code)
    except (ValueError, TypeError):
        raise serializers.ValidationError({CURSOR_PARAM: [
            "This cursor is not one this API gave out."]}) from None


class ExpiringView(RoleMixin, APIView):
    """Active records (quarantine or released) expiring within ``days`` days, soonest first;
    already expired ones are included (negative days_left).  Paged like the other lists:
    ``page_size`` rows (``limit`` is its older name), then follow ``next``; every page costs
    the same however large the lab."""

    @extend_schema(parameters=[
        OpenApiParameter("days", type=OpenApiTypes.INT, default=14,
                         description="Horizon in days (0–3650)."),
        OpenApiParameter(PAGE_SIZE_PARAM, type=OpenApiTypes.INT, default=DEFAULT_PAGE_SIZE,
                         description=f"Rows per page (1–{MAX_PAGE_SIZE})."),
        OpenApiParameter("limit", type=OpenApiTypes.INT,
                         description=f"Older name of {PAGE_SIZE_PARAM}."),
        OpenApiParameter(CURSOR_PARAM, type=OpenApiTypes.STR,
                         description="Opaque position from the previous page's 'next'.")],
        responses={200: ExpiringPageOut})
    def get(self, request):
        days = _query(serializers.IntegerField(min_value=0, max_value=3650),
                      request.query_params, "days", 14)
        size_field = serializers.IntegerField(min_value=1, max_value=MAX_PAGE_SIZE)
        size = _query(size_field, request.query_params, "limit", DEFAULT_PAGE_SIZE)
        size = _query(size_field, request.query_params, PAGE_SIZE_PARAM, size)
        page = records_expiring_page(days, after=_expiring_after(request.query_params),
                                     limit=size)
        next_url = None
        if page.next_after is not None:
            day, code = page.next_after
            next_url = replace_query_param(request.build_absolute_uri(), CURSOR_PARAM,
                                           pack_cursor({"d": day, "c": code}))
        return Response({"next": next_url, "results": ExpiringOut([
            {"code": item.record.code, "kind": item.kind_label, "status": item.record.status,
             "expires_on": item.expires_on, "days_left": item.days_left}
            for item in page.items], many=True).data})


# ------------------------------------------------------------- history and signatures


class FieldChangeOut(serializers.Serializer):
    field = serializers.CharField()
    label = serializers.CharField(help_text="The field's name as the pages show it.")
    old = serializers.JSONField(allow_null=True, help_text="Value before (records by code).")
    new = serializers.JSONField(allow_null=True, help_text="Value after (records by code).")


class HistoryEntryOut(DocumentedFields, serializers.Serializer):
    when = serializers.DateTimeField()
    who = serializers.CharField(help_text="Username, or 'system' for the demo loader.")
    kind = serializers.ChoiceField(choices=["created", "changed", "deleted"])
    version = serializers.IntegerField()
    changes = FieldChangeOut(many=True)
    reason = serializers.CharField(allow_blank=True)


class SignatureOut(DocumentedFields, serializers.Serializer):
    signer_username = serializers.CharField()
    signer_name = serializers.CharField(help_text="The signer's printed name when signing.")
    signed_at = serializers.DateTimeField()
    meaning = serializers.ChoiceField(choices=list(MEANINGS))
    action = serializers.CharField(help_text="'release' or 'reject'.")
    to_status = serializers.CharField()
    reason = serializers.CharField(allow_blank=True)
    record_code = serializers.CharField()
    record_version = serializers.IntegerField()
    content_sha256 = serializers.CharField(help_text="SHA-256 of the record's content as "
                                                     "signed (hex).")
    content_matches = serializers.BooleanField(help_text="Whether the record still holds "
                                                         "exactly the signed content.")


class HistoryView(RoleMixin, APIView):
    """Every create and change of a record, newest first: when, who, old and new, why."""

    @extend_schema(responses={200: HistoryEntryOut(many=True)}, operation_id="records_history")
    def get(self, request, code: str):
        return Response(HistoryEntryOut(record_get_history(code.strip().upper()), many=True).data)


class SignaturesView(RoleMixin, APIView):
    """The electronic signatures on a record, oldest first."""

    @extend_schema(responses={200: SignatureOut(many=True)},
                   operation_id="records_signatures")
    def get(self, request, code: str):
        signatures = record_get_signatures(code.strip().upper())
        return Response(SignatureOut(signatures, many=True).data)
