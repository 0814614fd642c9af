"""Input fields shared by the API's serializers: records by code, finite numbers, uploads."""

from __future__ import annotations

import math
from datetime import date
from typing import ClassVar

from django.conf import settings
from rest_framework import serializers

from inventory.codes import RecordNotFound, record_get

# Dates the API accepts.  Wider than any lab record needs, narrow enough that date
# arithmetic (expiry = date + shelf life) cannot run off the calendar.
EARLIEST_DATE = date(1900, 1, 1)
LATEST_DATE = date(2999, 12, 31)


class NamedRef(serializers.SlugRelatedField):
    """A row named by a unique text field (a reference analyte by its name)."""

    def __init__(self, model=None, **kwargs):
        if model is not None:
            kwargs["queryset"] = model.objects.all()
        super().__init__(**kwargs)

    def to_internal_value(self, data):
        if isinstance(data, str) and "\x00" in data:  # no database stores NUL in text
            self.fail("invalid")
        return super().to_internal_value(data)


class RecordRef(NamedRef):
    """A record named by its code (``SUB-00001``), case-insensitive."""

    def __init__(self, model=None, **kwargs):
        kwargs.setdefault("slug_field", "code")
        super().__init__(model, **kwargs)

    def to_internal_value(self, data):
        if isinstance(data, str):
            data = data.strip().upper()
        return super().to_internal_value(data)


class AnyRecordRef(serializers.CharField):
    """Any record of any kind, named by its code (a flag can target any record)."""

    default_error_messages: ClassVar[dict[str, str]] = {
        "does_not_exist": "No record has the ID '{code}'."
    }

    def to_internal_value(self, data):
        code = super().to_internal_value(data)
        try:
            return record_get(code)
        except RecordNotFound:
            self.fail("does_not_exist", code=code)

    def to_representation(self, value):
        return value.code


class FiniteFloat(serializers.FloatField):
    """A float that is a real number (no NaN or infinity)."""

    default_error_messages: ClassVar[dict[str, str]] = {
        "not_finite": "A finite number is required."
    }

    def to_internal_value(self, data):
        value = super().to_internal_value(data)
        if not math.isfinite(value):
            self.fail("not_finite")
        return value


class LabDate(serializers.DateField):
    """An ISO 8601 date between 1900 and 2999."""

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        self.validators.append(self._in_range)

    @staticmethod
    def _in_range(value: date) -> None:
        if not EARLIEST_DATE <= value <= LATEST_DATE:
            raise serializers.ValidationError(
                f"Give a date between {EARLIEST_DATE.isoformat()} and {LATEST_DATE.isoformat()}.",
                code="date_range")


class Upload(serializers.FileField):
    """An instrument file, kept exactly as uploaded; refused above the lab's size limit."""

    def to_internal_value(self, data):
        upload = super().to_internal_value(data)
        limit = settings.SERSLEDGER_MAX_UPLOAD_BYTES
        if upload.size > limit:
            raise serializers.ValidationError(
                f"{upload.name} is {upload.size} bytes; the limit is {limit} bytes.",
                code="too_large")
        return upload


def file_parts(upload) -> tuple[str, bytes]:
    """``(filename, content)`` as the services take a file."""
    upload.seek(0)
    return upload.name, upload.read()
