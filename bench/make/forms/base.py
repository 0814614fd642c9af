"""What every Make form shares: today's date, usable-input fields, files, and service errors.

A form only collects and types the input; its ``submit(actor)`` hands it to the service
(keyword for keyword) and returns the new record.  The view runs ``submit`` in one
transaction and puts a service refusal beside the field it names.
"""

from __future__ import annotations

from typing import ClassVar

from django import forms
from django.conf import settings
from django.core.exceptions import ValidationError
from django.utils import timezone

from inventory.models import CodedRecord

from ...refusals import form_add_refusal
from .. import defaults


class DateInput(forms.DateInput):
    """A native date picker (ISO 8601 value), keyboard-usable and large on a tablet."""

    input_type = "date"

    def __init__(self, attrs=None):
        super().__init__(attrs=attrs, format="%Y-%m-%d")


def date_field(label: str, *, required: bool = True, today: bool = True) -> forms.DateField:
    field = forms.DateField(label=label, required=required, widget=DateInput())
    field.defaults_to_today = today
    return field


def number(label: str, *, required: bool = True, initial=None, step: str = "any",
           help_text: str = "") -> forms.FloatField:
    return forms.FloatField(label=label, required=required, initial=initial,
                            help_text=help_text,
                            widget=forms.NumberInput(attrs={"step": step, "inputmode": "decimal"}))


class CodeChoiceField(forms.ModelChoiceField):
    """A choice of record by its code; the option reads "CODE  name/details"."""

    def __init__(self, queryset, **kwargs):
        kwargs.setdefault("empty_label", "— choose —")
        super().__init__(queryset, to_field_name="code", **kwargs)

    def label_from_instance(self, obj) -> str:
        return record_label(obj)


class CodeMultipleChoiceField(forms.ModelMultipleChoiceField):
    widget = forms.CheckboxSelectMultiple

    def __init__(self, queryset, **kwargs):
        super().__init__(queryset, to_field_name="code", **kwargs)

    def label_from_instance(self, obj) -> str:
        return record_label(obj)


def record_label(obj) -> str:
    """One line that lets a maker pick the right bottle or piece."""
    parts = [str(obj.code)]
    for name in ("name", "piece_label"):
        if getattr(obj, name, ""):
            parts.append(getattr(obj, name))
    if hasattr(obj, "get_stage_display"):
        parts.append(f"{obj.get_stage_display().lower()}, {obj.get_status_display().lower()}")
    if getattr(obj, "sphere_lot_id", None):
        parts.append(f"{obj.sphere_lot.nominal_diameter_nm:g} nm spheres")
    if hasattr(obj, "synthesis_method"):
        parts.append(f"{obj.metal}, {obj.get_synthesis_method_display().lower()}")
    if getattr(obj, "made_on", None):
        parts.append(f"made {obj.made_on.isoformat()}")
    if getattr(obj, "ghs_hazard_codes", ""):
        parts.append(f"⚠ {obj.ghs_hazard_codes}")
    if getattr(obj, "expires_on", None):
        parts.append(f"use by {obj.expires_on.isoformat()}")
    return " · ".join(parts)


class MultipleFileInput(forms.ClearableFileInput):
    allow_multiple_selected = True


class MultipleFileField(forms.FileField):
    """Several files in one input (Django's documented pattern for multiple uploads)."""

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("widget", MultipleFileInput())
        super().__init__(*args, **kwargs)

    def clean(self, data, initial=None):
        single = super().clean
        if isinstance(data, (list, tuple)):
            return [single(item, initial) for item in data if item] or \
                ([] if not self.required else [single(None, initial)])
        return [single(data, initial)] if data else \
            ([] if not self.required else [single(None, initial)])


class MakeForm(forms.Form):
    """Base of every Make form.

    ``error_fields`` maps a field name a service may refuse to the form field shown beside
    it (when the names differ); anything unknown becomes a form-wide error naming the field.
    ``last_used`` maps a choice field to the lineage role whose last-used input it defaults to.
    """

    error_fields: ClassVar[dict[str, str]] = {}
    last_used: ClassVar[dict[str, str]] = {}

    def __init__(self, *args, user=None, **kwargs):
        super().__init__(*args, **kwargs)
        self.user = user
        self.today = timezone.localdate()
        self.add_choices()
        if self.field_order:
            self.order_fields(self.field_order)
        for field in self.fields.values():
            if getattr(field, "defaults_to_today", False):
                field.initial = self.today
                field.widget.attrs.setdefault("max", self.today.isoformat())
        for name, role in self.last_used.items():
            code = defaults.last_used_code(user, role=role)
            if code and self.fields[name].queryset.filter(code=code).exists():
                self.fields[name].initial = code

    def add_choices(self) -> None:
        """Add the fields whose choices are read from the database (usable records only)."""

    def usable(self, queryset, **kwargs):
        return defaults.usable(queryset, on_date=timezone.localdate(), **kwargs)

    def clean(self):
        data = super().clean()
        limit = settings.SERSLEDGER_MAX_UPLOAD_BYTES
        for name, value in list(data.items()):
            for upload in value if isinstance(value, list) else [value]:
                if hasattr(upload, "size") and hasattr(upload, "read") and upload.size > limit:
                    self.add_error(name, f"{upload.name} is {upload.size / 1e6:.1f} MB; the "
                                         f"limit is {limit / 1e6:.0f} MB.")
        return data

    def upload(self, name: str) -> tuple[str, bytes] | None:
        """A cleaned upload as the services take it: ``(filename, content)``."""
        upload = self.cleaned_data.get(name)
        if not upload:
            return None
        upload.seek(0)
        return upload.name, upload.read()

    def submit(self, actor) -> CodedRecord:
        """Call this form's service with the cleaned data; every logging form defines it."""
        raise NotImplementedError

    def add_service_error(self, error: ValidationError) -> None:
        """Put a service refusal beside the field it names (or above the form)."""
        form_add_refusal(self, error, field_map=self.error_fields)
