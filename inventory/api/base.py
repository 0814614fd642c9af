"""What every API view shares: role permissions, pagination, filters and the record viewset.

A view parses the request, calls one service or selector and renders; these classes make that
the shortest path.  Roles come from ``inventory.roles`` (viewer reads, maker records,
reviewer signs, administrator sets limits); the services check them again, and a refusal
from either side is the same 403 body.
"""

from __future__ import annotations

import datetime as dt
from typing import ClassVar

import django_filters
from django.core.exceptions import ValidationError
from django.db.models import DateTimeField
from django_filters.fields import IsoDateTimeField
from drf_spectacular.utils import extend_schema
from rest_framework import exceptions, mixins, permissions, status, viewsets
from rest_framework.decorators import action
from rest_framework.exceptions import ErrorDetail
from rest_framework.exceptions import ValidationError as DRFValidationError
from rest_framework.response import Response

from inventory.roles import ADMINISTRATOR, MAKER, REVIEWER, VIEWER, require_role

from .pagination import CURSOR_PARAM, PAGE_SIZE_PARAM, Keyset
from .parsers import JsonParser
from .serializers import Amend, RejectSign, ReleaseSign, Void, read_plan

# Query parameters every list takes besides its own filters.
LIST_PARAMETERS = ("search", "ordering", CURSOR_PARAM, PAGE_SIZE_PARAM, "format")


class HasRole(permissions.BasePermission):
    """The role a view's action needs, checked with the same function the services use."""

    def has_permission(self, request, view) -> bool:
        # A method the path does not take is a 405 for everyone, not a role refusal.
        if request.method not in view.allowed_methods:
            raise exceptions.MethodNotAllowed(request.method)
        require_role(request.user, view.role_needed(), action=view.action_label())
        return True


class RoleMixin:
    """Role per action: reads for viewers, creation for makers, anything else declared."""

    permission_classes = (permissions.IsAuthenticated, HasRole)
    action_roles: ClassVar[dict[str, str]] = {
        "list": VIEWER,
        "retrieve": VIEWER,
        "metadata": VIEWER,
        "create": MAKER,
        "get": VIEWER,
    }
    # Set per route by @action(required_role=...); an undeclared action needs the top role.
    required_role: str | None = None

    def role_needed(self) -> str:
        action = getattr(self, "action", None) or self.request.method.lower()
        return self.required_role or self.action_roles.get(action, ADMINISTRATOR)

    def action_label(self) -> str:
        action = getattr(self, "action", None) or self.request.method.lower()
        name = getattr(self, "basename", None) or type(self).__name__
        return f"{action.replace('_', ' ')} on {name.replace('-', ' ')}"


class UtcDateTimeField(IsoDateTimeField):
    """An ISO 8601 date-time, converted to UTC (PostgreSQL refuses offsets beyond ±15:59)."""

    def to_python(self, value):
        value = super().to_python(value)
        try:
            return None if value is None else value.astimezone(dt.UTC)
        except OverflowError:
            raise ValidationError("This date-time is outside the calendar once in UTC.",
                                  code="invalid") from None


class UtcDateTimeFilter(django_filters.IsoDateTimeFilter):
    field_class = UtcDateTimeField


def _datetime_ranges(model, names) -> dict:
    return {f"{name}{suffix}": UtcDateTimeFilter(field_name=name, lookup_expr=lookup)
            for name in names if isinstance(model._meta.get_field(name), DateTimeField)
            for suffix, lookup in (("", "exact"), ("__gte", "gte"), ("__lte", "lte"))}


def filterset(model, *, exact=(), ranges=(), codes=(), help_texts=None):
    """A django-filter FilterSet: ``exact`` fields, ``ranges`` with ``__gte``/``__lte``,
    and ``codes``: relations filtered by the related record's code."""
    help_texts = help_texts or {}
    declared = _datetime_ranges(model, ranges)
    declared |= {
        name: django_filters.CharFilter(
            field_name=f"{name}__code", distinct=True,
            help_text=help_texts.get(name, f"Code of the {name.replace('_', ' ')}."))
        for name in codes
    }
    fields = {name: ["exact"] for name in exact}
    fields.update({name: ["exact", "gte", "lte"] for name in ranges
                   if not isinstance(model._meta.get_field(name), DateTimeField)})
    meta = type("Meta", (), {"model": model, "fields": fields})
    return type(f"{model.__name__}Filter", (django_filters.FilterSet,),
                {"Meta": meta, **declared})


class RecordViewSet(RoleMixin, mixins.ListModelMixin, mixins.RetrieveModelMixin,
                    viewsets.GenericViewSet):
    """List with filters, search, ordering and pages; detail by code; create via a service.

    Subclasses set ``queryset``, ``serializer_class`` (read), optionally
    ``list_serializer_class`` (a lighter read for lists), ``create_serializer`` (a
    ``ServiceSerializer``), ``filterset_class``, ``search_fields`` and ``ordering_fields``.
    """

    lookup_field = "code"
    lookup_value_regex = r"[A-Za-z]+-[0-9]+"
    pagination_class = Keyset
    list_serializer_class = None
    create_serializer = None
    # Newest first by primary key: ids grow with creation and, unlike created_at, are indexed,
    # so a page never sorts the whole table (measured in benchmarks/REPORT.md).
    ordering = ("-id",)

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        if "__doc__" not in cls.__dict__ or not cls.__doc__:
            cls.__doc__ = cls.describe()
        if cls.create_serializer is None:
            return

        # A function of this class's own, so each viewset's schema names its own serializers.
        def create(self, request, *args, **kwargs):
            return self.create_record(request)

        cls.create = extend_schema(request=cls.create_request_schema(),
                                   responses=cls.create_response_schema())(create)

    @classmethod
    def describe(cls) -> str:
        if getattr(cls, "queryset", None) is None:
            return ""
        kinds = cls.queryset.model._meta.verbose_name_plural
        return (f"{kinds.capitalize()}: list (filter, search, order, pages), read one, "
                "and record a new one through the same service as the pages.")

    @classmethod
    def create_request_schema(cls):
        return cls.create_serializer

    @classmethod
    def create_response_schema(cls):
        return {201: cls.serializer_class}

    def get_serializer_class(self):
        if self.action == "list" and self.list_serializer_class is not None:
            return self.list_serializer_class
        if self.action == "create" and self.create_serializer is not None:
            return self.create_serializer
        return self.serializer_class

    def read_serializer_class(self):
        return self.list_serializer_class if self.action == "list" and \
            self.list_serializer_class else self.serializer_class

    def get_queryset(self):
        plan = read_plan(self.read_serializer_class())
        queryset = super().get_queryset().select_related(*plan.select).prefetch_related(
            *plan.prefetch)
        # Plain reads load only the columns shown; actions hand the record to a service,
        # which gets it whole.
        if plan.columns is not None and getattr(self, "action", None) in ("list", "retrieve"):
            queryset = queryset.only(*plan.columns)
        return queryset

    def filter_queryset(self, queryset):
        # Filters, search and ordering shape a list; a record fetched by its code needs none,
        # and building the filter set cost about a sixth of a detail request's CPU.
        if (self.lookup_url_kwarg or self.lookup_field) in self.kwargs:
            return queryset
        if getattr(self, "action", None) == "list":
            self.refuse_unknown_parameters()
        return super().filter_queryset(queryset)

    def refuse_unknown_parameters(self) -> None:
        """A misspelt or unknown filter would silently return the whole list: refuse it."""
        known = {*LIST_PARAMETERS, *getattr(self.filterset_class, "base_filters", {})}
        unknown = sorted(set(self.request.query_params) - known)
        if unknown:
            raise DRFValidationError({name: [ErrorDetail(
                f"'{name}' is not a filter of this list; it takes: {', '.join(sorted(known))}.",
                code="unknown_filter")] for name in unknown})

    def get_object(self):
        if self.lookup_field == "code":
            self.kwargs["code"] = self.kwargs["code"].strip().upper()
        return super().get_object()

    def run_service(self, serializer_class, *, record=None, success=status.HTTP_200_OK):
        """Parse the request with ``serializer_class``, call its service, show the record."""
        serializer = serializer_class(data=self.request.data,
                                      context=self.get_serializer_context())
        serializer.is_valid(raise_exception=True)
        result = serializer.perform(actor=self.request.user, record=record)
        return self.respond(result, success)

    def respond(self, result, status_code):
        many = isinstance(result, (list, tuple))
        body = self.serializer_class(result, many=many,
                                     context=self.get_serializer_context()).data
        return Response(body, status=status_code)

    def create_record(self, request):
        return self.run_service(self.create_serializer, success=status.HTTP_201_CREATED)


class SettingViewSet(RecordViewSet):
    """The lab's limits and rules: rows without a code, set (created or replaced) by an
    administrator through an upsert service; 201 when new, 200 when replaced."""

    lookup_field = "pk"
    lookup_value_regex = r"[0-9]+"
    action_roles: ClassVar[dict[str, str]] = {**RecordViewSet.action_roles, "create": ADMINISTRATOR}
    ordering = ("id",)

    @classmethod
    def create_response_schema(cls):
        return {200: cls.serializer_class, 201: cls.serializer_class}

    def respond(self, result, status_code):
        created = status_code == status.HTTP_201_CREATED and result.version == 1
        return super().respond(result, status_code if created else status.HTTP_200_OK)


class CorrectionsMixin:
    """Corrections of a coded record: ``POST {code}/void/`` (made in error: kept, never
    deleted) and ``POST {code}/amend/`` (typed fields, against the version seen)."""

    @extend_schema(request=Amend)
    @action(detail=True, methods=["post"], required_role=MAKER, parser_classes=(JsonParser,))
    def amend(self, request, code=None):
        """Change typed fields; refused with code 'version_conflict' if someone changed the
        record since ``expected_version``.  Every amendment is kept in the history."""
        return self.run_service(Amend, record=self.get_object())

    @extend_schema(request=Void)
    @action(detail=True, methods=["post"], required_role=REVIEWER, parser_classes=(JsonParser,))
    def void(self, request, code=None):
        """Void the record (kept in lineage and history, no longer usable or ready)."""
        return self.run_service(Void, record=self.get_object())


class SignedLifecycleMixin(CorrectionsMixin):
    """``POST {code}/release/`` and ``{code}/reject/`` under an electronic signature."""

    @extend_schema(request=ReleaseSign)
    @action(detail=True, methods=["post"], required_role=REVIEWER, parser_classes=(JsonParser,))
    def release(self, request, code=None):
        """Release from quarantine: re-enter your password and choose the meaning.  The
        maker cannot release their own record; a substrate also needs a passed QC."""
        return self.run_service(ReleaseSign, record=self.get_object())

    @extend_schema(request=RejectSign)
    @action(detail=True, methods=["post"], required_role=REVIEWER, parser_classes=(JsonParser,))
    def reject(self, request, code=None):
        """Reject, with a reason, under an electronic signature."""
        return self.run_service(RejectSign, record=self.get_object())
