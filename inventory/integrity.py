"""Which field a database constraint guards, so a refusal from the database names it.

Django reports a violated CHECK constraint without a field (it may span several), and a
write that reaches the database past the services (a race, a bug) ends in an
``IntegrityError`` that names only the constraint or the column.  Both are mapped here to the
field the constraint is about: the first field its condition (or its field list) mentions,
found by walking every installed model's ``Meta.constraints`` once.
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
    """Field names a Q condition mentions, in order (``a__lte`` → ``a``)."""
    names = []
    for child in getattr(condition, "children", ()):
        if isinstance(child, tuple):
            names.append(child[0].split("__")[0])
        else:
            names.extend(_fields_in(child))
    return names


def constraint_field(constraint: models.BaseConstraint) -> str | None:
    """The field ``constraint`` is about: its first named field, else the first in its rule."""
    fields = list(getattr(constraint, "fields", ()) or ())
    condition = getattr(constraint, "condition", None)
    if not fields and condition is not None:
        fields = _fields_in(condition)
    return fields[0] if fields else None


@lru_cache(maxsize=1)
def _by_name() -> dict[str, tuple[type[models.Model], str | None]]:
    return {constraint.name: (model, constraint_field(constraint))
            for model in apps.get_models() for constraint in model._meta.constraints}


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
    field = None
    if name in _by_name():
        field = _by_name()[name][1]
    elif column and table:
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
