"""Write serializers that act on an existing record: signed release and reject, void, amend.

Each names the service it feeds (``inventory.services.record_*``); a signature carries the
re-entered password and its meaning as one ``SignatureIntent``.
"""

from __future__ import annotations

from django.db import models
from rest_framework import serializers

from inventory import services
from inventory.models import CodedRecord
from inventory.signatures import REJECT_MEANINGS, RELEASE_MEANINGS, SignatureIntent

from .fields import RecordRef
from .service_serializer import ServiceSerializer


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
