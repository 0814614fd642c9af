"""Read serializers, made from the models, and the fetch plan of each.

They show every stored field, other records by their code and people by their username;
:func:`read_plan` works out once per class what a list or detail read joins, prefetches and
loads, so it costs a fixed number of queries.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

from django.contrib.auth import get_user_model
from django.db import models
from rest_framework import serializers

from inventory.models import CodedRecord

from .units import DocumentedFields

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
