"""Which field a database constraint guards, so a refusal from the database names it.

Django reports a violated CHECK constraint without a field (it may span several), and a
write that reaches the database past the services (a race, a bug) ends in an
``IntegrityError`` that names only the constraint or the column.  Both are mapped here to the
field the constraint is about: the first field its condition (or its field list) mentions,
found by walking every installed model's ``Meta.constraints`` once.  The API's translation of
a broken rule (``inventory.api.errors``) asks the same table (:func:`fields_of_constraint`).
"""

from __future__ import annotations

import re
from functools import lru_cache

from django.apps import apps
from django.core.exceptions import ValidationError
from django.db import IntegrityError, models

from .errors import refusal

CODE = "constraint"


def _fields_in(condition) -> list[str]:
    """Field names a Q condition mentions, in order (``a__lte`` → ``a``, ``F("b")`` → ``b``)."""
    names: list[str] = []
    for child in getattr(condition, "children", ()):
        if isinstance(child, tuple):
            names.append(child[0].split("__")[0])
            if len(child) == 2 and isinstance(child[1], models.F):
                names.append(child[1].name)
        else:
            names.extend(_fields_in(child))
    return list(dict.fromkeys(names))


def constraint_fields(constraint: models.BaseConstraint) -> list[str]:
    """Every field ``constraint`` is about, in order: its named fields, else those of its rule."""
    fields = list(getattr(constraint, "fields", ()) or ())
    condition = getattr(constraint, "condition", None)
    if not fields and condition is not None:
        fields = _fields_in(condition)
    return fields


def constraint_field(constraint: models.BaseConstraint) -> str | None:
    """The field ``constraint`` is about (the one a refusal is keyed by): the first it names."""
    fields = constraint_fields(constraint)
    return fields[0] if fields else None


@lru_cache(maxsize=1)
def _by_name() -> dict[str, list[str]]:
    return {constraint.name: constraint_fields(constraint)
            for model in apps.get_models() for constraint in model._meta.constraints}


def fields_of_constraint(name: str | None) -> list[str]:
    """The fields the constraint called ``name`` is about (empty for an unknown name); the
    first is the one every refusal of it is keyed by (services, API, database errors)."""
    return _by_name().get(name, []) if name else []


def _column_field(table: str, column: str) -> str | None:
    for model in apps.get_models():
        if model._meta.db_table == table:
            return next((f.name for f in model._meta.concrete_fields if f.column == column),
                        column)
    return None


def integrity_refusal(error: IntegrityError) -> ValidationError:
    """The database's refusal as the one error shape, keyed by the field it guards.

    PostgreSQL (psycopg) names the constraint or column in ``diag``; SQLite in its message
    ("CHECK constraint failed: name", "NOT NULL constraint failed: table.column",
    "UNIQUE constraint failed: table.a, table.b").
    """
    diag = getattr(error.__cause__, "diag", None)
    name = getattr(diag, "constraint_name", None)
    column = getattr(diag, "column_name", None)
    table = getattr(diag, "table_name", None)
    text = str(error)
    if name is None and column is None:
        if match := re.search(r"CHECK constraint failed: (\w+)", text):
            name = match.group(1)
        elif match := re.search(r"(?:NOT NULL|UNIQUE) constraint failed: (\w+)\.(\w+)", text):
            table, column = match.groups()
    guarded = fields_of_constraint(name)
    field = guarded[0] if guarded else None
    if not guarded and column and table:
        field = _column_field(table, column)
    rule = f"the rule “{name}”" if name else f"a required or unique value ({column})"
    return refusal(field or "__all__", f"The database refused the change: it breaks {rule}; "
                                       "nothing was saved.", CODE)


def constraints_refusal(record: models.Model, error: ValidationError) -> ValidationError:
    """Django's whole-record constraint errors (``full_clean``) keyed by the guarded field."""
    if not hasattr(error, "error_dict") or "__all__" not in error.error_dict:
        return error
    for constraint in record._meta.constraints:
        field = constraint_field(constraint)
        for item in error.error_dict["__all__"]:
            if field and constraint.name in " ".join(item.messages):
                return refusal(field, " ".join(item.messages), CODE)
    return error
