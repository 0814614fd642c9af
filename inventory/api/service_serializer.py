"""The base of every write serializer: a request parsed into one service's arguments."""

from __future__ import annotations

from django.db import models
from rest_framework import serializers

from inventory.models.ranges import Span

from .units import DocumentedFields, declare_range

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
